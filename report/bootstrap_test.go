package report

import (
	"math"
	"math/rand/v2"
	"testing"
)

// clustered makes nTracks tracks of 3–30 rows whose values share a track
// effect: v = exp(mu + u_t + e_i), u ~ N(0, su²), e ~ N(0, se²), so the
// marginal distribution is log-normal with median exp(mu) and rows of a
// track are correlated. Groups cycle 0, 1, −1 by row.
func clustered(rng *rand.Rand, nTracks int, mu, su, se float64) (v []float64, tr []int32, gr []int8) {
	for t := 0; t < nTracks; t++ {
		u := su * rng.NormFloat64()
		n := 3 + rng.IntN(28)
		for i := 0; i < n; i++ {
			v = append(v, math.Exp(mu+u+se*rng.NormFloat64()))
			tr = append(tr, int32(t))
			gr = append(gr, int8(len(v)%3-1))
		}
	}
	return
}

// The statistics of a resample, computed from track multiplicities
// without building the resample, must equal those of the explicit
// resample (every row of a track repeated as often as the track was
// drawn) computed by the reference libraries: numpy.average and
// numpy.percentile (linear interpolation, Hyndman & Fan type 7) for the
// mean and median, and the maximum of scipy.stats.gaussian_kde with the
// Silverman (1986, eq. 3.31) bandwidth for the mode.
func TestBootstrapResampleStatisticsMatchNumpy(t *testing.T) {
	rng := rand.New(rand.NewPCG(3, 4))
	v, tr, gr := clustered(rng, 40, -0.3, 0.15, 0.1)
	const nTracks, nGroups = 40, 2
	bs := newBootSample(v, tr, gr, nTracks, nGroups)
	sc := bs.newScratch()
	type ref struct {
		Mean, Median, Mode, H []float64
	}
	type input struct {
		V      []float64
		Tracks []int32
		Groups []int8
		W      [][]int32
	}
	in := input{V: v, Tracks: tr, Groups: gr}
	var got [][3][3]float64 // [resample][group][stat]
	for r := 0; r < 4; r++ {
		clear(sc.w)
		for range nTracks {
			sc.w[rng.IntN(nTracks)]++
		}
		in.W = append(in.W, append([]int32(nil), sc.w...))
		bs.accumulate(sc)
		var row [3][3]float64
		for g := 0; g <= nGroups; g++ {
			m, med, mode := bs.stats(sc, g)
			row[g] = [3]float64{m, med, mode}
		}
		got = append(got, row)
	}
	var want []ref
	python(t, `
import json, sys
import numpy as np
from scipy.stats import gaussian_kde
d = json.load(sys.stdin)
v = np.array(d["V"]); tr = np.array(d["Tracks"]); gr = np.array(d["Groups"])
out = []
for w in d["W"]:
    rep = np.array(w)[tr]
    r = {"Mean": [], "Median": [], "Mode": [], "H": []}
    for g in (0, 1, None):
        sel = np.ones(len(v), bool) if g is None else (gr == g)
        x = np.repeat(v[sel], rep[sel])
        r["Mean"].append(float(np.average(x)))
        r["Median"].append(float(np.percentile(x, 50)))
        sd = np.std(x, ddof=1)
        iqr = np.percentile(x, 75) - np.percentile(x, 25)
        h = 0.9 * min(sd, iqr / 1.34) * len(x) ** -0.2
        kde = gaussian_kde(x, bw_method=h / sd)
        grid = np.linspace(x.min(), x.max(), 20001)
        r["Mode"].append(float(grid[np.argmax(kde(grid))]))
        r["H"].append(float(h))
    out.append(r)
print(json.dumps(out))
`, in, &want)
	for r := range got {
		for g := 0; g <= nGroups; g++ {
			m, med, mode := got[r][g][0], got[r][g][1], got[r][g][2]
			w := want[r]
			if math.Abs(m-w.Mean[g]) > 1e-12 {
				t.Errorf("resample %d group %d: mean %.15g, numpy.average %.15g", r, g, m, w.Mean[g])
			}
			if math.Abs(med-w.Median[g]) > 1e-12 {
				t.Errorf("resample %d group %d: median %.15g, numpy.percentile %.15g", r, g, med, w.Median[g])
			}
			// binned estimate on a grid of h/4 cells: within 5 % of a bandwidth
			if math.Abs(mode-w.Mode[g]) > 0.05*w.H[g] {
				t.Errorf("resample %d group %d: mode %.6g, scipy gaussian_kde maximum %.6g (h = %.3g)", r, g, mode, w.Mode[g], w.H[g])
			}
		}
	}
}

// Coverage property of the bootstrap (common practice; Efron & Tibshirani
// 1993, ch. 13): a 90 % percentile interval of the median, resampling
// whole tracks of correlated rows, covers the true median of the
// generating distribution in about 90 of 100 independent samples; the
// check asks for at least 85. The distribution is log-normal (skewed)
// with median exp(mu) = exp(−0.25); a track effect makes rows of a track
// correlated.
func TestBootstrapMedianCoverage(t *testing.T) {
	const trials = 100
	truth := math.Exp(-0.25)
	covered := 0
	for k := 0; k < trials; k++ {
		rng := rand.New(rand.NewPCG(uint64(1000+k), 17))
		v, tr, gr := clustered(rng, 120, -0.25, 0.12, 0.08)
		for i := range gr {
			gr[i] = -1
		}
		ci := BootstrapTracks(v, tr, gr, 120, 0, BootstrapOptions{Resamples: 1000, Seed: uint64(k), Workers: 2})
		if ci[0].Median.Contains(truth) {
			covered++
		}
	}
	t.Logf("90 %% interval of the median covered the true median in %d of %d trials", covered, trials)
	if covered < 85 {
		t.Fatalf("coverage %d/%d < 85", covered, trials)
	}
}

// Results are the same for any number of workers (DESIGN.md: results are
// deterministic whatever the worker count), and a different seed gives a
// different resampling.
func TestBootstrapDeterministic(t *testing.T) {
	rng := rand.New(rand.NewPCG(9, 9))
	v, tr, gr := clustered(rng, 50, 0, 0.2, 0.1)
	a := BootstrapTracks(v, tr, gr, 50, 2, BootstrapOptions{Resamples: 200, Seed: 5, Workers: 1})
	b := BootstrapTracks(v, tr, gr, 50, 2, BootstrapOptions{Resamples: 200, Seed: 5, Workers: 3})
	c := BootstrapTracks(v, tr, gr, 50, 2, BootstrapOptions{Resamples: 200, Seed: 6, Workers: 1})
	for g := range a {
		if a[g] != b[g] {
			t.Errorf("group %d: 1 worker %+v, 3 workers %+v", g, a[g], b[g])
		}
		if !a[g].Median.Known() || !a[g].Mode.Known() || !a[g].Mean.Known() {
			t.Errorf("group %d: interval unknown: %+v", g, a[g])
		}
	}
	if a[2] == c[2] {
		t.Errorf("seeds 5 and 6 gave identical intervals %+v", a[2])
	}
}

// A group with a single track cannot be bootstrapped over tracks.
func TestBootstrapSingleTrack(t *testing.T) {
	v := []float64{0.7, 0.8, 0.9, 0.75}
	ci := BootstrapTracks(v, []int32{0, 0, 0, 0}, []int8{0, 0, 0, 0}, 1, 1, BootstrapOptions{Resamples: 50})
	if ci[0].Median.Known() || ci[1].Median.Known() {
		t.Fatalf("single-track intervals should be unknown: %+v", ci)
	}
}
