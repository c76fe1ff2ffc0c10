// Package report turns analysed crest tracks into what a scientist reads and
// publishes. It computes statistics, never physics: every speed and ratio
// comes from package speed.
//
// # Model
//
// A report is built from a Deployment: the crest table (one row per crest
// tip per frame, the columns of crests.csv), the summary of the tracking
// run (summary.json: sea state, counts, provenance) and the record's
// frequency spectrum (spectrum.csv). "crestspeed track" hands it over in
// memory (DeploymentFromRecord); "crestspeed report" reads it back from
// those files (LoadDeployment), and both give the same numbers because the
// CSV files keep every float64 exactly.
//
// For each crest-speed ratio (c_cr/c_p and c_cr/c_loc) and each steepness
// class, and for all crests, DistributionsOf gives the statistics (n,
// tracks, mean, median, mode, 5 and 95 % points), a Freedman–Diaconis
// histogram, a Gaussian kernel density curve and bootstrap confidence
// intervals. Rows of one crest track are correlated, so the bootstrap
// resamples whole tracks (BootstrapTracks).
//
// WriteReport writes report.html (self-contained), the figures as PNG and
// SVG (six on crest speeds, up to four on whitecaps and breaking), the crest tracks as CF-1.8 trajectories (crest_tracks.nc) and
// summary.json with the intervals and the path of every output; all files
// appear together or not at all.
package report

import (
	"math"
	"sort"
)

// Stats summarises a sample of ratios.
type Stats struct {
	ScMin  float64 `json:"sc_min"`
	ScMax  float64 `json:"sc_max"` // +Inf is written as null
	N      int     `json:"n"`
	Mean   float64 `json:"mean"`
	Median float64 `json:"median"`
	Mode   float64 `json:"mode"` // maximum of the Gaussian kernel density estimate
	P05    float64 `json:"p05"`
	P95    float64 `json:"p95"`
	// Tracks is the number of distinct crest tracks the N values come from;
	// rows of one track are correlated, so this is the number of
	// independent units behind the statistics.
	Tracks int `json:"tracks"`
	// MeanCI, MedianCI and ModeCI are bootstrap percentile confidence
	// intervals at level CILevel, resampling whole tracks (see
	// BootstrapTracks); NaN when not computed or not computable.
	MeanCI   Interval `json:"mean_ci90"`
	MedianCI Interval `json:"median_ci90"`
	ModeCI   Interval `json:"mode_ci90"`
}

// CILevel is the confidence level of the intervals in Stats.
const CILevel = 0.90

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

// SilvermanBandwidth is the rule-of-thumb Gaussian kernel bandwidth
// 0.9·min(σ, IQR/1.34)·n^(−1/5) (Silverman 1986, Density Estimation, eq.
// 3.31).
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
	sd := math.Sqrt(v / float64(n-1))
	iqr := Quantile(sorted, 0.75) - Quantile(sorted, 0.25)
	s := sd
	if iqr > 0 {
		s = math.Min(sd, iqr/1.34)
	}
	if s == 0 {
		return math.NaN()
	}
	return 0.9 * s * math.Pow(float64(n), -0.2)
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

// Mode returns the location of the maximum of the kernel density estimate
// of sorted data on a grid of 512 points over the data range padded by 3h
// (common practice), or the median when the bandwidth is undefined.
func Mode(sorted []float64) float64 {
	h := SilvermanBandwidth(sorted)
	if math.IsNaN(h) {
		return Quantile(sorted, 0.5)
	}
	lo, hi := sorted[0]-3*h, sorted[len(sorted)-1]+3*h
	const m = 512
	xs := make([]float64, m)
	for i := range xs {
		xs[i] = lo + (hi-lo)*float64(i)/(m-1)
	}
	d := KDE(sorted, h, xs)
	best := 0
	for i := range d {
		if d[i] > d[best] {
			best = i
		}
	}
	// parabolic refinement of the maximum
	if best > 0 && best < m-1 {
		den := d[best-1] - 2*d[best] + d[best+1]
		if den < 0 {
			return xs[best] + 0.5*(d[best-1]-d[best+1])/den*(xs[1]-xs[0])
		}
	}
	return xs[best]
}

// Summarise computes the statistics of values (NaNs ignored).
func Summarise(values []float64, scMin, scMax float64) Stats {
	v := make([]float64, 0, len(values))
	for _, x := range values {
		if !math.IsNaN(x) && !math.IsInf(x, 0) {
			v = append(v, x)
		}
	}
	sort.Float64s(v)
	st := Stats{ScMin: scMin, ScMax: scMax, N: len(v), MeanCI: NoInterval(), MedianCI: NoInterval(), ModeCI: NoInterval()}
	if len(v) == 0 {
		st.Mean, st.Median, st.Mode, st.P05, st.P95 = math.NaN(), math.NaN(), math.NaN(), math.NaN(), math.NaN()
		return st
	}
	var s float64
	for _, x := range v {
		s += x
	}
	st.Mean = s / float64(len(v))
	st.Median = Quantile(v, 0.5)
	st.P05 = Quantile(v, 0.05)
	st.P95 = Quantile(v, 0.95)
	st.Mode = Mode(v)
	return st
}

// ClassBounds turns the inner boundaries of the steepness classes (for
// example 0.1, 0.2) into [min, max) intervals starting at 0 and ending at
// +Inf.
func ClassBounds(inner []float64) [][2]float64 {
	b := append([]float64{0}, inner...)
	b = append(b, math.Inf(1))
	out := make([][2]float64, len(b)-1)
	for i := range out {
		out[i] = [2]float64{b[i], b[i+1]}
	}
	return out
}
