package stats

import (
	"math"
	"sync"
)

// Sample is a sample of values split into classes, each value from one
// independent unit (a crest or whitecap track; values of one unit are
// correlated).
type Sample struct {
	Values []float64
	// Unit[i] is the unit of value i, 0 ≤ Unit < Units.
	Unit  []int32
	Units int
	// Class[i] is the class of value i, −1 for none (counted in "all"
	// only); Bounds are the classes' [min, max) of the classifying
	// variable.
	Class  []int8
	Bounds [][2]float64
	// Stratum, when not nil, gives the stratum of each unit (len Units,
	// 0 ≤ Stratum < the number of strata): a resample then draws, within
	// each stratum, as many units as the stratum has (stratified
	// resampling; see Describe). Nil is one stratum: every unit drawn
	// from all.
	Stratum []int32
}

// Classify makes a Sample: value i comes from the unit identified by
// ids[i] (any number; units are numbered in order of appearance) and
// belongs to the class of bounds (see ClassBounds of inner; at most 127
// classes) that holds by[i].
func Classify(values, by, ids []float64, inner []float64) Sample {
	s := Sample{Values: values, Unit: make([]int32, len(values)), Class: make([]int8, len(values)), Bounds: ClassBounds(inner)}
	index := map[float64]int32{}
	for i := range values {
		u, _ := appearanceIndex(index, ids[i])
		s.Unit[i] = u
		s.Class[i] = int8(ClassOf(s.Bounds, by[i]))
	}
	s.Units = len(index)
	return s
}

// ClassifyStratified is Classify for values from several strata (the
// deployments of a campaign): value i comes from the unit identified by
// the pair (strata[i], ids[i]) — the same id in two strata names two
// units — and the unit lies in stratum strata[i]. Strata and units are
// numbered in order of appearance.
func ClassifyStratified(values, by, ids, strata []float64, inner []float64) Sample {
	s := Sample{Values: values, Unit: make([]int32, len(values)), Class: make([]int8, len(values)), Bounds: ClassBounds(inner)}
	type key struct{ stratum, id float64 }
	units := map[key]int32{}
	strataIndex := map[float64]int32{}
	for i := range values {
		st, _ := appearanceIndex(strataIndex, strata[i])
		u, isNew := appearanceIndex(units, key{strata[i], ids[i]})
		if isNew {
			s.Stratum = append(s.Stratum, st)
		}
		s.Unit[i] = u
		s.Class[i] = int8(ClassOf(s.Bounds, by[i]))
	}
	s.Units = len(units)
	return s
}

// appearanceIndex returns the number of k in index, numbering keys in
// order of appearance: a key not seen yet gets the next number (and isNew).
func appearanceIndex[K comparable](index map[K]int32, k K) (n int32, isNew bool) {
	n, ok := index[k]
	if !ok {
		n = int32(len(index))
		index[k] = n
	}
	return n, !ok
}

// Distribution is the estimated distribution of the values of one class
// (or of all): statistics, normalised histogram and kernel density curve.
type Distribution struct {
	Stats Stats
	Hist  Histogram
	PDF   Curve
	// Values are the finite values, sorted (with Options.Curves).
	Values []float64
}

// Distributions are the distributions of a Sample per class and over all
// values.
type Distributions struct {
	Classes []Distribution
	All     Distribution
}

// Stats returns the statistics alone.
func (d Distributions) Stats() RatioStats {
	out := RatioStats{All: d.All.Stats}
	for _, c := range d.Classes {
		out.Classes = append(out.Classes, c.Stats)
	}
	return out
}

// Options say what Describe computes.
type Options struct {
	// Intervals asks for the bootstrap intervals, drawn as Bootstrap says.
	Intervals bool
	Bootstrap BootstrapOptions
	// ScaleUncertainty is the relative standard uncertainty of a factor
	// all values share (0 or NaN: none); it widens every interval (see
	// the package documentation).
	ScaleUncertainty float64
	// Curves asks for the histogram and density curve of each group.
	Curves bool
}

// Describe computes the distribution of each class of s and of all its
// finite values: n, units, mean, median, 5 and 95 % points, the mode of
// the binned kernel estimate, with Options.Intervals the centred
// bootstrap intervals of the mean, median and mode resampling whole units
// (classes are domains of the resample: a class's statistic is computed
// on the resampled values that fall in it), and with Options.Curves the
// Freedman–Diaconis histogram and the kernel density curve. A group with
// fewer than two units has unknown intervals. The result depends only on
// s and the options, not on the number of workers.
//
// With s.Stratum set the resampling is stratified: each resample draws,
// for every stratum h, n_h of its n_h units with replacement, so that the
// strata (the deployments of a campaign, independent samples of fixed
// size) keep their numbers of units and a resample never moves weight
// from one to another — the bootstrap of several independent samples
// (Efron & Tibshirani 1993, An Introduction to the Bootstrap, ch. 8;
// Davison & Hinkley 1997, Bootstrap Methods and their Application, §3.2,
// "several samples"; chapter and section from memory). The point
// estimates do not depend on the strata.
func Describe(s Sample, opt Options) Distributions {
	bs := newBootSample(s)
	var reps [][nStats][]float64
	var wg sync.WaitGroup
	if opt.Intervals {
		wg.Add(1)
		go func() { defer wg.Done(); reps = bs.replicates(opt.Bootstrap) }()
	}
	modes := bs.modes()
	all := [2]float64{0, math.Inf(1)}
	out := Distributions{Classes: make([]Distribution, len(s.Bounds))}
	for g := range bs.groups {
		b := all
		if g < len(s.Bounds) {
			b = s.Bounds[g]
		}
		d := describeGroup(&bs.groups[g], modes[g], b, opt.Curves)
		if g < len(s.Bounds) {
			out.Classes[g] = d
		} else {
			out.All = d
		}
	}
	wg.Wait()
	if !opt.Intervals {
		return out
	}
	u := opt.ScaleUncertainty
	if math.IsNaN(u) {
		u = 0
	}
	for g := range bs.groups {
		st := &out.All.Stats
		if g < len(s.Bounds) {
			st = &out.Classes[g].Stats
		}
		if bs.groups[g].units < 2 {
			continue
		}
		st.MeanCI = centredInterval(reps[g][statMean], st.Mean, u)
		st.MedianCI = centredInterval(reps[g][statMedian], st.Median, u)
		st.ModeCI = centredInterval(reps[g][statMode], st.Mode, u)
	}
	return out
}

// describeGroup gives the point estimates of one group (and its curves).
func describeGroup(gr *group, mode float64, bounds [2]float64, curves bool) Distribution {
	v := gr.sorted
	nan := math.NaN()
	st := Stats{ScMin: bounds[0], ScMax: bounds[1], N: len(v), Tracks: gr.units,
		Mean: nan, Median: nan, Mode: nan, P05: nan, P95: nan,
		MeanCI: NoInterval(), MedianCI: NoInterval(), ModeCI: NoInterval()}
	if len(v) > 0 {
		var sum float64
		for _, x := range v {
			sum += x
		}
		st.Mean = sum / float64(len(v))
		st.Median, st.P05, st.P95 = Quantile(v, 0.5), Quantile(v, 0.05), Quantile(v, 0.95)
		st.Mode = mode
	}
	d := Distribution{Stats: st}
	if curves {
		d.Hist = FreedmanDiaconis(v)
		d.PDF = DensityCurve(v)
		d.Values = v
	}
	return d
}
