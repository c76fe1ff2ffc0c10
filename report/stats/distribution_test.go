package stats

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
