package report

import (
	"math"
	"math/rand/v2"
	"sort"
	"testing"
)

func sample(rng *rand.Rand, n int, gen func() float64) []float64 {
	v := make([]float64, n)
	for i := range v {
		v[i] = gen()
	}
	sort.Float64s(v)
	return v
}

// Histogram edges and counts equal numpy.histogram(x, bins="fd")
// (Freedman & Diaconis 1981 bin width, as numpy implements it); the
// counts sum to n and the normalised bars have unit area (a probability
// density integrates to 1).
func TestFreedmanDiaconisMatchesNumpy(t *testing.T) {
	rng := rand.New(rand.NewPCG(1, 2))
	cases := map[string][]float64{
		"normal":    sample(rng, 1000, func() float64 { return 0.8 + 0.2*rng.NormFloat64() }),
		"lognormal": sample(rng, 777, func() float64 { return math.Exp(0.5 * rng.NormFloat64()) }),
		"small":     sample(rng, 7, func() float64 { return rng.Float64() }),
		"outliers": sample(rng, 500, func() float64 {
			if rng.IntN(50) == 0 {
				return 40 * rng.NormFloat64()
			}
			return rng.NormFloat64()
		}),
	}
	var want map[string]struct {
		Edges  []float64
		Counts []int
	}
	python(t, `
import json, sys
import numpy as np
out = {}
for name, x in json.load(sys.stdin).items():
    c, e = np.histogram(np.array(x), bins="fd")
    out[name] = {"Edges": e.tolist(), "Counts": c.tolist()}
print(json.dumps(out))
`, cases, &want)
	for name, x := range cases {
		h := FreedmanDiaconis(x)
		w := want[name]
		if len(h.Edges) != len(w.Edges) {
			t.Errorf("%s: %d edges, numpy %d", name, len(h.Edges), len(w.Edges))
			continue
		}
		for i := range w.Edges {
			if math.Abs(h.Edges[i]-w.Edges[i]) > 1e-12*math.Max(1, math.Abs(w.Edges[i])) {
				t.Errorf("%s: edge %d = %.17g, numpy %.17g", name, i, h.Edges[i], w.Edges[i])
			}
		}
		sum := 0
		for i := range w.Counts {
			if h.Counts[i] != w.Counts[i] {
				t.Errorf("%s: count %d = %d, numpy %d", name, i, h.Counts[i], w.Counts[i])
			}
			sum += h.Counts[i]
		}
		if sum != len(x) {
			t.Errorf("%s: counts sum to %d, n = %d", name, sum, len(x))
		}
		var area float64
		for i, d := range h.Density {
			area += d * (h.Edges[i+1] - h.Edges[i])
		}
		if math.Abs(area-1) > 1e-6 {
			t.Errorf("%s: histogram area %.12f, want 1 within 1e-6", name, area)
		}
	}
}

// The kernel density curve equals scipy.stats.gaussian_kde with the same
// bandwidth (kernel sd = factor × sample sd, so factor = h/sd), and
// integrates to 1 within 1e-6 (a probability density; trapezoidal rule).
func TestDensityCurveMatchesScipyAndIntegratesToOne(t *testing.T) {
	rng := rand.New(rand.NewPCG(5, 6))
	cases := map[string][]float64{
		"normal":    sample(rng, 2000, func() float64 { return 0.75 + 0.15*rng.NormFloat64() }),
		"bimodal":   sample(rng, 600, func() float64 { return float64(rng.IntN(2)) + 0.1*rng.NormFloat64() }),
		"skewed":    sample(rng, 300, func() float64 { return rng.ExpFloat64() }),
		"two":       {0.5, 0.9},
		"outlier":   append(sample(rng, 400, rng.NormFloat64), 300),
		"lognormal": sample(rng, 5000, func() float64 { return math.Exp(0.4 * rng.NormFloat64()) }),
	}
	type job struct {
		X, Grid []float64
		H       float64
	}
	jobs := map[string]job{}
	curves := map[string]Curve{}
	for name, x := range cases {
		sort.Float64s(x)
		c := DensityCurve(x)
		curves[name] = c
		jobs[name] = job{x, c.X, c.Bandwidth}
		if got := c.Integral(); math.Abs(got-1) > 1e-6 {
			t.Errorf("%s: density integrates to %.12f, want 1 within 1e-6", name, got)
		}
	}
	var want map[string][]float64
	python(t, `
import json, sys
import numpy as np
from scipy.stats import gaussian_kde
out = {}
for name, d in json.load(sys.stdin).items():
    x = np.array(d["X"]); sd = np.std(x, ddof=1)
    out[name] = gaussian_kde(x, bw_method=d["H"] / sd)(np.array(d["Grid"])).tolist()
print(json.dumps(out))
`, jobs, &want)
	for name, c := range curves {
		peak := 0.0
		for _, w := range want[name] {
			peak = math.Max(peak, w)
		}
		for i, w := range want[name] {
			if math.Abs(c.Density[i]-w) > 1e-9*peak {
				t.Errorf("%s: density at %.4g = %.12g, scipy %.12g", name, c.X[i], c.Density[i], w)
				break
			}
		}
	}
}

// Per-class distributions: the class counts add up to the all-crests
// count, each histogram's counts sum to its n, and every PDF integrates
// to 1 within 1e-6.
func TestDistributionsOfTable(t *testing.T) {
	tab := syntheticTable(rand.New(rand.NewPCG(7, 7)), 200, 25)
	rd := DistributionsOf(tab, ColRatioPeak, []float64{0.1, 0.2}, BootstrapOptions{Resamples: 200, Seed: 1, Workers: 2})
	n := 0
	for k, d := range append(rd.Classes, rd.All) {
		sum := 0
		for _, c := range d.Hist.Counts {
			sum += c
		}
		if sum != d.Stats.N {
			t.Errorf("group %d: histogram counts sum to %d, n = %d", k, sum, d.Stats.N)
		}
		if d.Stats.N > 1 {
			if got := d.PDF.Integral(); math.Abs(got-1) > 1e-6 {
				t.Errorf("group %d: PDF integrates to %.12f", k, got)
			}
			if !d.Stats.MedianCI.Contains(d.Stats.Median) {
				t.Errorf("group %d: median %.4f outside its interval %+v", k, d.Stats.Median, d.Stats.MedianCI)
			}
		}
		if k < len(rd.Classes) {
			n += d.Stats.N
		}
	}
	if n != rd.All.Stats.N {
		t.Errorf("class counts sum to %d, all crests %d", n, rd.All.Stats.N)
	}
	// and the statistics equal those BuildSummary's ClassStatistics gives
	// for the same rows
	rs := ClassStatistics(tableRows(tab), []float64{0.1, 0.2}, func(r rowView) float64 { return r.RatioPeak })
	for k := range rs.Classes {
		a, b := rs.Classes[k], rd.Classes[k].Stats
		if b.N == 0 {
			t.Errorf("class %d is empty; the synthetic rows should fill every class", k)
		}
		if a.N != b.N || a.Tracks != b.Tracks || !same(a.Median, b.Median) || !same(a.Mean, b.Mean) || !same(a.Mode, b.Mode) {
			t.Errorf("class %d: ClassStatistics %+v, DistributionsOf %+v", k, a, b)
		}
	}
}

// same compares floats, NaN equal to NaN.
func same(a, b float64) bool { return a == b || (math.IsNaN(a) && math.IsNaN(b)) }
