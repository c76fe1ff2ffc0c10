package samples

import (
	"fmt"
	"math"
	"math/rand/v2"
	"sort"

	"crestspeed/speed"
)

// JONSWAPSea describes a directional JONSWAP random sea.
type JONSWAPSea struct {
	HsM          float64       `json:"hs_m" yaml:"hs_m"`                   // significant wave height (4√m0 of the target spectrum)
	TpS          float64       `json:"tp_s" yaml:"tp_s"`                   // peak period (absolute frequency)
	Gamma        float64       `json:"gamma" yaml:"gamma"`                 // peak enhancement factor, 3.3 by default
	Spreading    float64       `json:"spreading_s" yaml:"spreading_s"`     // s of cos^2s((θ−θ0)/2); larger is narrower
	DirectionDeg float64       `json:"direction_deg" yaml:"direction_deg"` // mean direction of travel, counter-clockwise from +x
	DepthM       float64       `json:"depth_m" yaml:"depth_m"`             // 0 = deep water
	Current      speed.Current `json:"current_mps" yaml:"current"`
	Seed         uint64        `json:"seed" yaml:"seed"`
	Components   int           `json:"components" yaml:"components"`       // number of free components
	FMinRatio    float64       `json:"f_min_over_fp" yaml:"f_min_over_fp"` // lowest frequency / fp (default 0.5)
	FMaxRatio    float64       `json:"f_max_over_fp" yaml:"f_max_over_fp"` // highest frequency / fp (default 4)
}

// JONSWAPDensity is the Hs-normalised JONSWAP spectral density S(ω) in
// m² s rad⁻¹ (Hasselmann et al. 1973; normalisation of DNV-RP-C205 §3.5.5):
//
//	S(ω) = A_γ (5/16) Hs² ωp⁴ ω⁻⁵ exp(−(5/4)(ω/ωp)⁻⁴) γ^r,
//	r = exp(−(ω−ωp)² / (2σ²ωp²)), σ = 0.07 (ω ≤ ωp) else 0.09,
//	A_γ = 1 − 0.287 ln γ.
func JONSWAPDensity(omega, hs, tp, gamma float64) float64 {
	if omega <= 0 {
		return 0
	}
	wp := 2 * math.Pi / tp
	sigma := 0.09
	if omega <= wp {
		sigma = 0.07
	}
	r := math.Exp(-(omega - wp) * (omega - wp) / (2 * sigma * sigma * wp * wp))
	ag := 1 - 0.287*math.Log(gamma)
	return ag * 5.0 / 16.0 * hs * hs * math.Pow(wp, 4) * math.Pow(omega, -5) *
		math.Exp(-1.25*math.Pow(omega/wp, -4)) * math.Pow(gamma, r)
}

func (j *JONSWAPSea) defaults() {
	if j.Gamma == 0 {
		j.Gamma = 3.3
	}
	if j.Components == 0 {
		j.Components = 256
	}
	if j.FMinRatio == 0 {
		j.FMinRatio = 0.5
	}
	if j.FMaxRatio == 0 {
		j.FMaxRatio = 4
	}
}

// Validate reports the first absurd setting.
func (j JONSWAPSea) Validate() error {
	j.defaults()
	switch {
	case !(j.HsM > 0):
		return fmt.Errorf("JONSWAP sea needs a positive significant wave height, got %g m", j.HsM)
	case !(j.TpS > 0):
		return fmt.Errorf("JONSWAP sea needs a positive peak period, got %g s", j.TpS)
	case !(j.Gamma >= 1 && j.Gamma <= 10):
		return fmt.Errorf("JONSWAP peak enhancement γ = %g is outside 1–10", j.Gamma)
	case !(j.Spreading >= 0):
		return fmt.Errorf("spreading exponent s = %g must be zero or positive", j.Spreading)
	case j.DepthM < 0:
		return fmt.Errorf("water depth %g m is negative; use 0 for deep water", j.DepthM)
	case j.Components < 1 || j.Components > 100000:
		return fmt.Errorf("number of wave components %d is outside 1–100000", j.Components)
	case !(j.FMinRatio > 0 && j.FMaxRatio > j.FMinRatio):
		return fmt.Errorf("frequency range %g–%g × fp is empty", j.FMinRatio, j.FMaxRatio)
	}
	return nil
}

// Sea draws the random sea. Frequencies are spread evenly over
// [FMinRatio, FMaxRatio]·ωp with a random offset inside each band (which
// keeps the record from repeating), amplitudes a_n = √(2 S(ω_n) Δω), one
// direction per component drawn from D(θ) ∝ cos^{2s}((θ−θ0)/2)
// (Longuet-Higgins, Cartwright & Smith 1963) by inverse transform sampling,
// and uniformly random phases. The same seed gives the same sea.
func (j JONSWAPSea) Sea() (*LinearSea, error) {
	if err := j.Validate(); err != nil {
		return nil, err
	}
	j.defaults()
	rng := rand.New(rand.NewPCG(j.Seed, 0x63726573747370)) // second word fixed: stream of this generator
	wp := 2 * math.Pi / j.TpS
	w0, w1 := j.FMinRatio*wp, j.FMaxRatio*wp
	dw := (w1 - w0) / float64(j.Components)
	dirs := newSpreadSampler(j.Spreading)
	theta0 := j.DirectionDeg * math.Pi / 180
	sea := &LinearSea{DepthM: j.DepthM}
	for n := 0; n < j.Components; n++ {
		w := w0 + (float64(n)+rng.Float64())*dw
		a := math.Sqrt(2 * JONSWAPDensity(w, j.HsM, j.TpS, j.Gamma) * dw)
		dir := theta0 + dirs.draw(rng.Float64())
		c, err := speed.PhaseSpeedFromPeriod(2*math.Pi/w, j.DepthM, j.Current, dir, 0)
		if err != nil {
			return nil, err
		}
		sea.Components = append(sea.Components, Component{
			Amp: a, K: w / c, Omega: w, Dir: dir, Phase: 2 * math.Pi * rng.Float64(),
		})
	}
	return sea, nil
}

// spreadSampler draws angles from D(θ) ∝ cos^{2s}(θ/2) on (−π, π] by
// inverting its cumulative distribution tabulated on a fine grid.
type spreadSampler struct{ theta, cdf []float64 }

func newSpreadSampler(s float64) spreadSampler {
	const n = 4096
	sp := spreadSampler{theta: make([]float64, n+1), cdf: make([]float64, n+1)}
	for i := 0; i <= n; i++ {
		sp.theta[i] = -math.Pi + 2*math.Pi*float64(i)/n
	}
	for i := 1; i <= n; i++ {
		tm := 0.5 * (sp.theta[i] + sp.theta[i-1])
		sp.cdf[i] = sp.cdf[i-1] + math.Pow(math.Abs(math.Cos(tm/2)), 2*s)
	}
	for i := range sp.cdf {
		sp.cdf[i] /= sp.cdf[n]
	}
	return sp
}

func (sp spreadSampler) draw(u float64) float64 {
	i := sort.SearchFloat64s(sp.cdf, u)
	if i <= 0 {
		return sp.theta[0]
	}
	if i >= len(sp.cdf) {
		return sp.theta[len(sp.theta)-1]
	}
	f := (u - sp.cdf[i-1]) / (sp.cdf[i] - sp.cdf[i-1])
	return sp.theta[i-1] + f*(sp.theta[i]-sp.theta[i-1])
}

// FocusingPacket describes a unidirectional dispersive focusing packet
// (Rapp & Melville 1990): components of a Gaussian energy spectrum, all in
// phase (crests coinciding) at the focus point and time.
type FocusingPacket struct {
	CentrePeriodS float64 `json:"centre_period_s" yaml:"centre_period_s"`
	// Bandwidth is the standard deviation of the Gaussian energy spectrum
	// divided by the centre angular frequency (relative bandwidth).
	Bandwidth    float64 `json:"relative_bandwidth" yaml:"relative_bandwidth"`
	FocusXM      float64 `json:"focus_x_m" yaml:"focus_x_m"`
	FocusYM      float64 `json:"focus_y_m" yaml:"focus_y_m"`
	FocusTimeS   float64 `json:"focus_time_s" yaml:"focus_time_s"`
	FocusEtaM    float64 `json:"focus_elevation_m" yaml:"focus_elevation_m"` // Σ a_n: linear elevation at the focus
	DirectionDeg float64 `json:"direction_deg" yaml:"direction_deg"`
	DepthM       float64 `json:"depth_m" yaml:"depth_m"`
	Components   int     `json:"components" yaml:"components"`
}

// Validate reports the first absurd setting.
func (p FocusingPacket) Validate() error {
	switch {
	case !(p.CentrePeriodS > 0):
		return fmt.Errorf("focusing packet needs a positive centre period, got %g s", p.CentrePeriodS)
	case !(p.Bandwidth > 0 && p.Bandwidth < 0.6):
		return fmt.Errorf("relative bandwidth %g is outside (0, 0.6)", p.Bandwidth)
	case !(p.FocusEtaM > 0):
		return fmt.Errorf("focus elevation must be positive, got %g m", p.FocusEtaM)
	case p.DepthM < 0:
		return fmt.Errorf("water depth %g m is negative; use 0 for deep water", p.DepthM)
	case p.Components < 0 || p.Components > 100000:
		return fmt.Errorf("number of wave components %d is outside 1–100000", p.Components)
	}
	return nil
}

// Sea builds the packet: ω_n spread evenly over ωc(1 ± 3ν), amplitudes
// proportional to √(S(ω_n)) of the Gaussian energy spectrum
// S ∝ exp(−(ω−ωc)²/(2ν²ωc²)), scaled so that Σ a_n equals the focus
// elevation, and phases zero at the focus.
func (p FocusingPacket) Sea() (*LinearSea, error) {
	if err := p.Validate(); err != nil {
		return nil, err
	}
	n := p.Components
	if n == 0 {
		n = 64
	}
	wc := 2 * math.Pi / p.CentrePeriodS
	w0 := wc * math.Max(1-3*p.Bandwidth, 0.05)
	w1 := wc * (1 + 3*p.Bandwidth)
	dir := p.DirectionDeg * math.Pi / 180
	sea := &LinearSea{DepthM: p.DepthM, X0: p.FocusXM, Y0: p.FocusYM, T0: p.FocusTimeS}
	var sum float64
	for i := 0; i < n; i++ {
		w := w0 + (w1-w0)*(float64(i)+0.5)/float64(n)
		a := math.Exp(-(w - wc) * (w - wc) / (4 * p.Bandwidth * p.Bandwidth * wc * wc))
		k, err := speed.WaveNumber(w, p.DepthM)
		if err != nil {
			return nil, err
		}
		sea.Components = append(sea.Components, Component{Amp: a, K: k, Omega: w, Dir: dir})
		sum += a
	}
	for i := range sea.Components {
		sea.Components[i].Amp *= p.FocusEtaM / sum
	}
	return sea, nil
}
