// Package stats holds the statistics of the report: quantiles, kernel
// density estimates, histograms, and the statistics of a sample of
// correlated values split into classes (steepness classes of crest-speed
// or whitecap-speed ratios), with bootstrap confidence intervals that
// resample whole tracks. It knows nothing of files or physics.
//
// # Estimates and intervals
//
// For each class and for all values together, Describe gives n, the
// number of independent units (tracks) behind them, the mean, the median,
// the 5 and 95 % points (Hyndman & Fan 1996, type 7) and the mode, the
// maximum of a linearly binned Gaussian kernel density estimate with the
// Silverman (1986) bandwidth. The mode of the sample and the mode of every
// bootstrap resample are computed by one estimator, on one grid, with one
// bandwidth rule (see bootstrap.go), so that the spread of the resampled
// modes measures the variation of the estimate that is reported.
//
// Each interval is centred on its estimate: θ̂ ± ξ, ξ the Level point of
// the absolute deviations |θ*_b − θ̂| of the B bootstrap replicates (the
// symmetric percentile interval; Hall 1988, J. R. Statist. Soc. B 50,
// 35–45, from memory; Efron & Tibshirani 1993, An Introduction to the
// Bootstrap, ch. 13, for the percentile method). It therefore contains its
// estimate by construction, whatever the skew of the replicates. Where the
// values share a factor known only to a relative standard uncertainty u
// (c_cr/c_p shares 1/c_p), the half-width is combined with that of the
// factor in quadrature, √(ξ² + (z u θ̂)²), z the two-sided normal point of
// the level (the law of propagation of uncertainty of the Guide to the
// Expression of Uncertainty in Measurement, JCGM 100:2008, §5.1).
package stats

import (
	"encoding/json"
	"fmt"
	"math"
	"sort"
)

// Level is the confidence level of the intervals.
const Level = 0.90

// Interval is a confidence interval [Lo, Hi]; both NaN when unknown.
type Interval struct{ Lo, Hi float64 }

// NoInterval is the unknown interval.
func NoInterval() Interval { return Interval{math.NaN(), math.NaN()} }

// Known reports whether both ends are finite numbers.
func (iv Interval) Known() bool {
	return !math.IsNaN(iv.Lo) && !math.IsNaN(iv.Hi) && !math.IsInf(iv.Lo, 0) && !math.IsInf(iv.Hi, 0)
}

// Contains reports whether v lies in [Lo, Hi].
func (iv Interval) Contains(v float64) bool { return iv.Known() && v >= iv.Lo && v <= iv.Hi }

// Stats summarises the values of one class (or of all classes).
type Stats struct {
	ScMin  float64 `json:"sc_min"`
	ScMax  float64 `json:"sc_max"` // +Inf is written as null
	N      int     `json:"n"`
	Mean   float64 `json:"mean"`
	Median float64 `json:"median"`
	Mode   float64 `json:"mode"` // maximum of the binned Gaussian kernel density estimate
	P05    float64 `json:"p05"`
	P95    float64 `json:"p95"`
	// Tracks is the number of distinct tracks (independent units) the N
	// values come from.
	Tracks int `json:"tracks"`
	// MeanCI, MedianCI and ModeCI are the intervals at Level centred on
	// their estimates (see the package documentation); unknown when not
	// computed or not computable (fewer than two tracks).
	MeanCI   Interval `json:"mean_ci90"`
	MedianCI Interval `json:"median_ci90"`
	ModeCI   Interval `json:"mode_ci90"`
}

// RatioStats are the statistics of one ratio per class and over all.
type RatioStats struct {
	Classes []Stats `json:"classes"`
	All     Stats   `json:"all"`
}

// Groups returns the classes followed by all.
func (r RatioStats) Groups() []Stats { return append(append([]Stats(nil), r.Classes...), r.All) }

// MarshalJSON writes NaN and infinite values as null (JSON has no NaN).
func (s Stats) MarshalJSON() ([]byte, error) {
	m := []struct {
		k string
		v any
	}{
		{"sc_min", jsonNum(s.ScMin)}, {"sc_max", jsonNum(s.ScMax)}, {"n", s.N}, {"tracks", s.Tracks},
		{"mean", jsonNum(s.Mean)}, {"mean_ci90", jsonInterval(s.MeanCI)},
		{"median", jsonNum(s.Median)}, {"median_ci90", jsonInterval(s.MedianCI)},
		{"mode", jsonNum(s.Mode)}, {"mode_ci90", jsonInterval(s.ModeCI)},
		{"p05", jsonNum(s.P05)}, {"p95", jsonNum(s.P95)},
	}
	b := []byte{'{'}
	for i, kv := range m {
		if i > 0 {
			b = append(b, ',')
		}
		kb, _ := json.Marshal(kv.k)
		vb, err := json.Marshal(kv.v)
		if err != nil {
			return nil, err
		}
		b = append(append(append(b, kb...), ':'), vb...)
	}
	return append(b, '}'), nil
}

func jsonInterval(iv Interval) any {
	if !iv.Known() {
		return nil
	}
	return []float64{iv.Lo, iv.Hi}
}

func jsonNum(v float64) any {
	if math.IsNaN(v) || math.IsInf(v, 0) {
		return nil
	}
	return v
}

// UnmarshalJSON reads what MarshalJSON writes: null numbers become NaN (a
// null sc_max is the open upper end, +Inf), null intervals unknown.
func (s *Stats) UnmarshalJSON(b []byte) error {
	var m struct {
		ScMin    *float64  `json:"sc_min"`
		ScMax    *float64  `json:"sc_max"`
		Mean     *float64  `json:"mean"`
		Median   *float64  `json:"median"`
		Mode     *float64  `json:"mode"`
		P05      *float64  `json:"p05"`
		P95      *float64  `json:"p95"`
		N        int       `json:"n"`
		Tracks   int       `json:"tracks"`
		MeanCI   []float64 `json:"mean_ci90"`
		MedianCI []float64 `json:"median_ci90"`
		ModeCI   []float64 `json:"mode_ci90"`
	}
	if err := json.Unmarshal(b, &m); err != nil {
		return fmt.Errorf("statistics: %w", err)
	}
	num := func(p *float64, null float64) float64 {
		if p == nil {
			return null
		}
		return *p
	}
	iv := func(v []float64) Interval {
		if len(v) != 2 {
			return NoInterval()
		}
		return Interval{v[0], v[1]}
	}
	nan := math.NaN()
	*s = Stats{
		ScMin: num(m.ScMin, nan), ScMax: num(m.ScMax, math.Inf(1)), N: m.N, Tracks: m.Tracks,
		Mean: num(m.Mean, nan), Median: num(m.Median, nan), Mode: num(m.Mode, nan),
		P05: num(m.P05, nan), P95: num(m.P95, nan),
		MeanCI: iv(m.MeanCI), MedianCI: iv(m.MedianCI), ModeCI: iv(m.ModeCI),
	}
	return nil
}

// Quantile returns the q-quantile of sorted data by linear interpolation
// between order statistics (Hyndman & Fan 1996, definition 7; the default
// of numpy.percentile and R). NaN for an empty sample.
func Quantile(sorted []float64, q float64) float64 {
	n := len(sorted)
	if n == 0 {
		return math.NaN()
	}
	h := q * float64(n-1)
	lo := int(math.Floor(h))
	if lo >= n-1 {
		return sorted[n-1]
	}
	return sorted[lo] + (h-float64(lo))*(sorted[lo+1]-sorted[lo])
}

// Median returns the median of the finite values (NaN if none); values is
// not changed.
func Median(values []float64) float64 {
	v := finiteSorted(values)
	return Quantile(v, 0.5)
}

// finiteSorted returns the finite values, sorted, in a new slice.
func finiteSorted(values []float64) []float64 {
	v := make([]float64, 0, len(values))
	for _, x := range values {
		if !math.IsNaN(x) && !math.IsInf(x, 0) {
			v = append(v, x)
		}
	}
	sort.Float64s(v)
	return v
}

// SilvermanBandwidth is the rule-of-thumb Gaussian kernel bandwidth
// 0.9·min(σ, IQR/1.34)·n^(−1/5) (Silverman 1986, Density Estimation, eq.
// 3.31); NaN below two values or without spread.
func SilvermanBandwidth(sorted []float64) float64 {
	n := len(sorted)
	if n < 2 {
		return math.NaN()
	}
	var m, v float64
	for _, x := range sorted {
		m += x
	}
	m /= float64(n)
	for _, x := range sorted {
		v += (x - m) * (x - m)
	}
	return silverman(math.Sqrt(v/float64(n-1)), Quantile(sorted, 0.75)-Quantile(sorted, 0.25), float64(n))
}

// silverman is the Silverman bandwidth from the standard deviation, the
// interquartile range and the number of values.
func silverman(sd, iqr, n float64) float64 {
	s := sd
	if iqr > 0 {
		s = math.Min(sd, iqr/1.34)
	}
	if !(s > 0) {
		return math.NaN()
	}
	return 0.9 * s * math.Pow(n, -0.2)
}

// KDE evaluates the Gaussian kernel density estimate of sorted data with
// bandwidth h at the points xs. Kernels further than 8h from a point are
// skipped (their weight is below 1e-14).
func KDE(sorted []float64, h float64, xs []float64) []float64 {
	out := make([]float64, len(xs))
	n := float64(len(sorted))
	norm := 1 / (n * h * math.Sqrt(2*math.Pi))
	for i, x := range xs {
		lo := sort.SearchFloat64s(sorted, x-8*h)
		var s float64
		for j := lo; j < len(sorted) && sorted[j] <= x+8*h; j++ {
			u := (x - sorted[j]) / h
			s += math.Exp(-0.5 * u * u)
		}
		out[i] = s * norm
	}
	return out
}

// ClassBounds turns the inner boundaries of the classes (for example 0.1,
// 0.2) into [min, max) intervals starting at 0 and ending at +Inf.
func ClassBounds(inner []float64) [][2]float64 {
	b := append([]float64{0}, inner...)
	b = append(b, math.Inf(1))
	out := make([][2]float64, len(b)-1)
	for i := range out {
		out[i] = [2]float64{b[i], b[i+1]}
	}
	return out
}

// ClassOf returns the class of bounds whose [min, max) holds v, −1 if none
// (or v is NaN).
func ClassOf(bounds [][2]float64, v float64) int {
	for k, b := range bounds {
		if v >= b[0] && v < b[1] {
			return k
		}
	}
	return -1
}
