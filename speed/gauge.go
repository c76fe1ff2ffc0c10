package speed

import (
	"errors"
	"fmt"
	"math"
	"sort"
)

// GaugeComparison compares the maps, sampled at an instrument's position
// (a virtual probe), with the instrument's own elevation series.
type GaugeComparison struct {
	// StartS and EndS bound the common span, seconds on the maps' time
	// base; Samples is the number of probe samples in it where both series
	// are known.
	StartS, EndS float64
	Samples      int
	// Maps and Gauge are the sea states of the two series over the common
	// span, by the same estimator (SeriesSeaState).
	Maps, Gauge SeaState
	// LagS is the time by which the gauge's record lags the maps' (positive:
	// the same wave reaches the gauge's series later), found as the maximum
	// of the cross-correlation within ±MaxLagS, refined by a parabola;
	// Correlation is the Pearson correlation coefficient at the whole-sample
	// lag nearest LagS, ZeroLagCorrelation at lag 0.
	LagS, MaxLagS                   float64
	Correlation, ZeroLagCorrelation float64
}

// ErrNoOverlap marks series whose time spans do not overlap enough.
var ErrNoOverlap = errors.New("the time spans do not overlap")

// CompareGauge compares a probe series of the maps (probe[k] at time
// t0 + k·dt, NaN where unknown) with a gauge series (times gt, increasing,
// on the same time base; elevations ge, NaN where unknown). The gauge is
// linearly interpolated to the probe's times over the common span; both
// series' sea states come from SeriesSeaState. maxLag bounds the lag
// searched, seconds (0: a quarter of the common span, at most 60 s).
//
// Method: the normalised cross-correlation of the two mean-removed series
// over their pairwise known samples (Bendat & Piersol, Random Data, 2010,
// §5.1 — from memory), its maximum refined by a parabola through the three
// highest lags.
func CompareGauge(probe []float32, t0, dt float64, gt, ge []float64, maxLag float64) (*GaugeComparison, error) {
	if len(gt) != len(ge) || len(gt) < 2 {
		return nil, fmt.Errorf("the gauge series has %d times and %d elevations; it needs two or more of each", len(gt), len(ge))
	}
	probeEnd := t0 + float64(len(probe)-1)*dt
	start, end := math.Max(t0, gt[0]), math.Min(probeEnd, gt[len(gt)-1])
	if !(end-start >= 16*dt) {
		return nil, fmt.Errorf("%w: the maps cover %.6g–%.6g s and the gauge %.6g–%.6g s on the maps' time base; give the gauge's times as utc instants, or on the maps' time base", ErrNoOverlap, t0, probeEnd, gt[0], gt[len(gt)-1])
	}
	k0 := int(math.Ceil((start - t0) / dt))
	k1 := int(math.Floor((end-t0)/dt)) + 1
	n := k1 - k0
	a := make([]float32, n)
	b := make([]float32, n)
	j := 0
	c := &GaugeComparison{StartS: t0 + float64(k0)*dt, EndS: t0 + float64(k1-1)*dt}
	for i := 0; i < n; i++ {
		t := t0 + float64(k0+i)*dt
		for j+1 < len(gt)-1 && gt[j+1] <= t {
			j++
		}
		w := (t - gt[j]) / (gt[j+1] - gt[j])
		g := (1-w)*ge[j] + w*ge[j+1]
		if w < 0 || w > 1 {
			g = math.NaN()
		}
		a[i], b[i] = probe[k0+i], float32(g)
		if !math.IsNaN(float64(a[i])) && !math.IsNaN(g) {
			c.Samples++
		}
	}
	var err error
	if c.Maps, err = SeriesSeaState(a, dt); err != nil {
		return nil, fmt.Errorf("the maps at the gauge: %w", err)
	}
	// The gauge's sea state from its own samples over the common span when
	// they are regular (interpolation to the maps' times would smooth its
	// high frequencies), else from the interpolated series.
	if native, gdt, ok := regularSpan(gt, ge, c.StartS, c.EndS); ok {
		c.Gauge, err = SeriesSeaState(native, gdt)
	} else {
		c.Gauge, err = SeriesSeaState(b, dt)
	}
	if err != nil {
		return nil, fmt.Errorf("the gauge series: %w", err)
	}
	c.MaxLagS = maxLag
	if c.MaxLagS <= 0 {
		c.MaxLagS = math.Min(60, 0.25*(c.EndS-c.StartS))
	}
	m := max(1, min(int(c.MaxLagS/dt), n/4))
	r := make([]float64, 2*m+1)
	best := 0
	for l := -m; l <= m; l++ {
		r[l+m] = correlation(a, b, l)
		if math.IsNaN(r[best]) || r[l+m] > r[best] {
			best = l + m
		}
	}
	c.ZeroLagCorrelation, c.Correlation = r[m], r[best]
	lag := float64(best - m)
	if best > 0 && best < 2*m {
		if den := r[best-1] - 2*r[best] + r[best+1]; den < 0 {
			lag += 0.5 * (r[best-1] - r[best+1]) / den
		}
	}
	c.LagS = lag * dt
	return c, nil
}

// correlation is the Pearson correlation of a[i] and b[i+lag] over the
// pairs where both are known; NaN with fewer than 8 pairs.
func correlation(a, b []float32, lag int) float64 {
	var n, sa, sb, saa, sbb, sab float64
	for i := range a {
		j := i + lag
		if j < 0 || j >= len(b) {
			continue
		}
		x, y := float64(a[i]), float64(b[j])
		if math.IsNaN(x) || math.IsNaN(y) {
			continue
		}
		n++
		sa += x
		sb += y
		saa += x * x
		sbb += y * y
		sab += x * y
	}
	if n < 8 {
		return math.NaN()
	}
	cov := sab/n - (sa/n)*(sb/n)
	va, vb := saa/n-(sa/n)*(sa/n), sbb/n-(sb/n)*(sb/n)
	if !(va > 0) || !(vb > 0) {
		return math.NaN()
	}
	return cov / math.Sqrt(va*vb)
}

// regularSpan returns the samples of (t, v) within [start, end] when they
// are regularly spaced (every step within 1 % of the median), with their
// interval.
func regularSpan(t, v []float64, start, end float64) ([]float32, float64, bool) {
	i0 := sort.SearchFloat64s(t, start)
	i1 := sort.SearchFloat64s(t, end+1e-9)
	if i1-i0 < 16 {
		return nil, 0, false
	}
	steps := make([]float64, 0, i1-i0-1)
	for i := i0 + 1; i < i1; i++ {
		steps = append(steps, t[i]-t[i-1])
	}
	sort.Float64s(steps)
	d := steps[len(steps)/2]
	if !(d > 0) || steps[0] < 0.99*d || steps[len(steps)-1] > 1.01*d {
		return nil, 0, false
	}
	out := make([]float32, i1-i0)
	for i := range out {
		out[i] = float32(v[i0+i])
	}
	return out, d, true
}
