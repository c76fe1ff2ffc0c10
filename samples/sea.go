// Package samples makes synthetic sea states with known truth, for the demo
// and for tests of the rest of crestspeed.
//
// Every synthetic sea here is a linear superposition of free wave
// components,
//
//	η(x, y, t) = Σ a_n cos(k_n·(x − x_0) − ω_n (t − t_0) + φ_n),
//
// each component obeying the linear dispersion relation with depth and an
// optional uniform current, ω_n = σ(k_n) + k_n·U, σ² = g k tanh(k h)
// (Dean & Dalrymple 1991). Because the field is known in closed form, any
// quantity a later stage measures (significant wave height, peak period,
// direction, the speed of a crest at a focus) can be derived exactly from the
// components and compared with what was measured.
//
// Three families are provided: a regular wave, a directional JONSWAP random
// sea (Hasselmann et al. 1973, in the Hs-normalised form of DNV-RP-C205) with
// cos^2s spreading (Longuet-Higgins, Cartwright & Smith 1963), and a
// dispersive focusing packet (Rapp & Melville 1990). The package must not be
// imported by the science packages; it is a source of test and demo data.
package samples

import (
	"fmt"
	"math"
	"sync"

	"crestspeed/speed"
)

// Component is one free linear wave component.
type Component struct {
	Amp   float64 `json:"amplitude_m"`          // a_n, metres
	K     float64 `json:"wavenumber_rad_per_m"` // |k_n|, rad/m
	Omega float64 `json:"omega_rad_per_s"`      // absolute (fixed-frame) angular frequency, rad/s
	Dir   float64 `json:"direction_rad"`        // direction of travel, radians counter-clockwise from +x
	Phase float64 `json:"phase_rad"`            // φ_n, radians
}

// LinearSea is a sum of free linear wave components referred to an origin
// (X0, Y0) and a time T0.
type LinearSea struct {
	Components []Component
	X0, Y0, T0 float64
	DepthM     float64 // 0 = deep water
}

// Eta evaluates the surface elevation at one point, by direct summation.
func (s *LinearSea) Eta(x, y, t float64) float64 {
	var sum float64
	for _, c := range s.Components {
		kx, ky := c.K*math.Cos(c.Dir), c.K*math.Sin(c.Dir)
		sum += c.Amp * math.Cos(kx*(x-s.X0)+ky*(y-s.Y0)-c.Omega*(t-s.T0)+c.Phase)
	}
	return sum
}

// Filtered returns the sea with each component's amplitude multiplied by
// gain(|k|), the components of zero gain left out: what a linear filter
// in wavenumber leaves of the sea (linear superposition).
func (s *LinearSea) Filtered(gain func(k float64) float64) *LinearSea {
	out := &LinearSea{X0: s.X0, Y0: s.Y0, T0: s.T0, DepthM: s.DepthM}
	for _, c := range s.Components {
		if g := gain(c.K); g > 0 {
			c.Amp *= g
			out.Components = append(out.Components, c)
		}
	}
	return out
}

// Variance returns Σ a_n²/2, the variance (m0) of the field at any point.
func (s *LinearSea) Variance() float64 {
	var v float64
	for _, c := range s.Components {
		v += c.Amp * c.Amp / 2
	}
	return v
}

// MaxWavenumber returns the largest |k_n| in the sea.
func (s *LinearSea) MaxWavenumber() float64 {
	var m float64
	for _, c := range s.Components {
		m = math.Max(m, c.K)
	}
	return m
}

// FrameEvaluator evaluates a LinearSea on a regular grid, frame after frame.
// It precomputes the separable factors e^{i k_x x} and e^{i k_y y} of every
// component once, so a frame costs one complex multiply-add per component
// per grid cell and no trigonometric calls in the inner loop.
type FrameEvaluator struct {
	sea      *LinearSea
	nx, ny   int
	exr, exi []float64 // [n*nx+ix]
	eyr, eyi []float64 // [n*ny+iy]
	workers  int
}

// NewFrameEvaluator prepares evaluation of sea on the grid with cell
// centres xs, ys. workers ≤ 0 means one.
func NewFrameEvaluator(sea *LinearSea, xs, ys []float64, workers int) *FrameEvaluator {
	n := len(sea.Components)
	e := &FrameEvaluator{
		sea: sea, nx: len(xs), ny: len(ys), workers: max(workers, 1),
		exr: make([]float64, n*len(xs)), exi: make([]float64, n*len(xs)),
		eyr: make([]float64, n*len(ys)), eyi: make([]float64, n*len(ys)),
	}
	for i, c := range sea.Components {
		kx, ky := c.K*math.Cos(c.Dir), c.K*math.Sin(c.Dir)
		for ix, x := range xs {
			s, co := math.Sincos(kx * (x - sea.X0))
			e.exr[i*e.nx+ix], e.exi[i*e.nx+ix] = co, s
		}
		for iy, y := range ys {
			s, co := math.Sincos(ky * (y - sea.Y0))
			e.eyr[i*e.ny+iy], e.eyi[i*e.ny+iy] = co, s
		}
	}
	return e
}

// Frame writes η at time t into dst (row-major, dst[iy*nx+ix]), which must
// hold nx*ny values. Rows are shared among the evaluator's workers; the
// result does not depend on the number of workers.
func (e *FrameEvaluator) Frame(t float64, dst []float32) error {
	if len(dst) != e.nx*e.ny {
		return fmt.Errorf("samples: frame buffer holds %d values, grid needs %d", len(dst), e.nx*e.ny)
	}
	nc := len(e.sea.Components)
	// Time factor a_n e^{i(φ_n − ω_n (t − T0))} per component.
	cr := make([]float64, nc)
	ci := make([]float64, nc)
	for i, c := range e.sea.Components {
		s, co := math.Sincos(c.Phase - c.Omega*(t-e.sea.T0))
		cr[i], ci[i] = c.Amp*co, c.Amp*s
	}
	var wg sync.WaitGroup
	rows := make(chan int, e.ny)
	for iy := 0; iy < e.ny; iy++ {
		rows <- iy
	}
	close(rows)
	for w := 0; w < e.workers; w++ {
		wg.Add(1)
		go func() {
			defer wg.Done()
			acc := make([]float64, e.nx)
			for iy := range rows {
				clear(acc)
				for i := 0; i < nc; i++ {
					// a = c_n · e^{i k_y y}
					yr, yi := e.eyr[i*e.ny+iy], e.eyi[i*e.ny+iy]
					ar := cr[i]*yr - ci[i]*yi
					ai := cr[i]*yi + ci[i]*yr
					xr := e.exr[i*e.nx : (i+1)*e.nx]
					xi := e.exi[i*e.nx : (i+1)*e.nx]
					for ix := range acc {
						acc[ix] += ar*xr[ix] - ai*xi[ix]
					}
				}
				row := dst[iy*e.nx : (iy+1)*e.nx]
				for ix, v := range acc {
					row[ix] = float32(v)
				}
			}
		}()
	}
	wg.Wait()
	return nil
}

// RegularWave describes a single linear wave.
type RegularWave struct {
	HeightM      float64       `json:"height_m" yaml:"height_m"`           // crest-to-trough height H = 2a
	PeriodS      float64       `json:"period_s" yaml:"period_s"`           // absolute period seen by a fixed observer
	DirectionDeg float64       `json:"direction_deg" yaml:"direction_deg"` // direction of travel, counter-clockwise from +x
	DepthM       float64       `json:"depth_m" yaml:"depth_m"`             // 0 = deep water
	Current      speed.Current `json:"current_mps" yaml:"current"`         // uniform current (x, y components), m/s
}

// Sea builds the LinearSea of a regular wave. The period is the absolute
// (fixed-frame) one, so with a current the wavenumber solves
// ω = σ(k) + k·U (Doppler-shifted linear dispersion).
func (r RegularWave) Sea() (*LinearSea, error) {
	if !(r.HeightM > 0) || !(r.PeriodS > 0) {
		return nil, fmt.Errorf("regular wave needs a positive height and period, got H = %g m, T = %g s", r.HeightM, r.PeriodS)
	}
	if r.DepthM < 0 {
		return nil, fmt.Errorf("water depth %g m is negative; use 0 for deep water", r.DepthM)
	}
	dir := r.DirectionDeg * math.Pi / 180
	omega := 2 * math.Pi / r.PeriodS
	c, err := speed.PhaseSpeedFromPeriod(r.PeriodS, r.DepthM, r.Current, dir, 0)
	if err != nil {
		return nil, err
	}
	k := omega / c
	return &LinearSea{
		DepthM:     r.DepthM,
		Components: []Component{{Amp: r.HeightM / 2, K: k, Omega: omega, Dir: dir}},
	}, nil
}
