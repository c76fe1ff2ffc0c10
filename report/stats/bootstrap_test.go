package stats

import (
	"math"
	"math/rand/v2"
	"testing"
)

// clustered makes nTracks tracks of 3–30 rows whose values share a track
// effect: v = exp(mu + u_t + e_i), u ~ N(0, su²), e ~ N(0, se²), so the
// marginal distribution is log-normal with median exp(mu) and rows of a
// track are correlated. Classes cycle 0, 1, −1 by row.
func clustered(rng *rand.Rand, nTracks int, mu, su, se float64) Sample {
	s := Sample{Units: nTracks, Bounds: [][2]float64{{0, 1}, {1, 2}}}
	for t := 0; t < nTracks; t++ {
		u := su * rng.NormFloat64()
		n := 3 + rng.IntN(28)
		for i := 0; i < n; i++ {
			s.Values = append(s.Values, math.Exp(mu+u+se*rng.NormFloat64()))
			s.Unit = append(s.Unit, int32(t))
			s.Class = append(s.Class, int8(len(s.Values)%3-1))
		}
	}
	return s
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
	s := clustered(rng, 40, -0.3, 0.15, 0.1)
	bs := newBootSample(s)
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
	in := input{V: s.Values, Tracks: s.Unit, Groups: s.Class}
	var got [][3][nStats]float64 // [resample][group][stat]
	for r := 0; r < 5; r++ {
		if r == 0 {
			bs.identity(sc) // the sample itself: the point estimates
		} else {
			bs.resample(sc, rng)
		}
		in.W = append(in.W, append([]int32(nil), sc.w...))
		var row [3][nStats]float64
		for g := 0; g < 3; g++ {
			row[g] = bs.stats(sc, g)
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
		for g := 0; g < 3; g++ {
			m, med, mode := got[r][g][statMean], got[r][g][statMedian], got[r][g][statMode]
			w := want[r]
			if math.Abs(m-w.Mean[g]) > 1e-12 {
				t.Errorf("resample %d group %d: mean %.15g, numpy.average %.15g", r, g, m, w.Mean[g])
			}
			if math.Abs(med-w.Median[g]) > 1e-12 {
				t.Errorf("resample %d group %d: median %.15g, numpy.percentile %.15g", r, g, med, w.Median[g])
			}
			// binned estimate on a grid of cells a quarter of the sample's
			// bandwidth: within 5 % of a bandwidth
			if math.Abs(mode-w.Mode[g]) > 0.05*w.H[g] {
				t.Errorf("resample %d group %d: mode %.6g, scipy gaussian_kde maximum %.6g (h = %.3g)", r, g, mode, w.Mode[g], w.H[g])
			}
		}
	}
}

// Coverage property of the bootstrap (common practice; Efron & Tibshirani
// 1993, ch. 13): a 90 % interval of the median, resampling whole tracks
// of correlated rows, covers the true median of the generating
// distribution in about 90 of 100 independent samples; the check asks for
// at least 85. The distribution is log-normal (skewed) with median
// exp(mu) = exp(−0.25); a track effect makes rows of a track correlated.
func TestBootstrapMedianCoverage(t *testing.T) {
	const trials = 100
	truth := math.Exp(-0.25)
	covered := 0
	for k := 0; k < trials; k++ {
		rng := rand.New(rand.NewPCG(uint64(1000+k), 17))
		s := clustered(rng, 120, -0.25, 0.12, 0.08)
		d := Describe(s, Options{Intervals: true, Bootstrap: BootstrapOptions{Resamples: 1000, Seed: uint64(k), Workers: 2}})
		if d.All.Stats.MedianCI.Contains(truth) {
			covered++
		}
	}
	t.Logf("90 %% interval of the median covered the true median in %d of %d trials", covered, trials)
	if covered < 85 {
		t.Fatalf("coverage %d/%d < 85", covered, trials)
	}
}

// Results are the same for any number of workers (results are
// deterministic whatever the worker count), and a different seed gives a
// different resampling.
func TestBootstrapDeterministic(t *testing.T) {
	rng := rand.New(rand.NewPCG(9, 9))
	s := clustered(rng, 50, 0, 0.2, 0.1)
	opt := func(seed uint64, workers int) Options {
		return Options{Intervals: true, Bootstrap: BootstrapOptions{Resamples: 200, Seed: seed, Workers: workers}}
	}
	a := Describe(s, opt(5, 1)).Stats().Groups()
	b := Describe(s, opt(5, 3)).Stats().Groups()
	c := Describe(s, opt(6, 1)).Stats().Groups()
	for g := range a {
		if a[g] != b[g] {
			t.Errorf("group %d: 1 worker %+v, 3 workers %+v", g, a[g], b[g])
		}
		if !a[g].MedianCI.Known() || !a[g].ModeCI.Known() || !a[g].MeanCI.Known() {
			t.Errorf("group %d: interval unknown: %+v", g, a[g])
		}
	}
	if a[2] == c[2] {
		t.Errorf("seeds 5 and 6 gave identical intervals %+v", a[2])
	}
}

// A class with a single track cannot be bootstrapped over tracks.
func TestBootstrapSingleTrack(t *testing.T) {
	s := Sample{Values: []float64{0.7, 0.8, 0.9, 0.75}, Unit: []int32{0, 0, 0, 0}, Units: 1,
		Class: []int8{0, 0, 0, 0}, Bounds: [][2]float64{{0, 1}}}
	d := Describe(s, Options{Intervals: true, Bootstrap: BootstrapOptions{Resamples: 100}})
	if d.Classes[0].Stats.MedianCI.Known() || d.All.Stats.MedianCI.Known() || d.All.Stats.Tracks != 1 {
		t.Fatalf("single-track intervals should be unknown: %+v", d.All.Stats)
	}
}

// randomSample draws a sample of the kinds a deployment gives: from one
// to a few hundred tracks of one to forty rows, values normal, skewed,
// bimodal, discrete (many ties), constant within a track, or with wild
// outliers, in up to four classes with rows of no class.
func randomSample(rng *rand.Rand) Sample {
	nTracks := 1 + rng.IntN([]int{3, 12, 60, 300}[rng.IntN(4)])
	nClasses := 1 + rng.IntN(4)
	s := Sample{Units: nTracks}
	for k := 0; k < nClasses; k++ {
		s.Bounds = append(s.Bounds, [2]float64{float64(k), float64(k + 1)})
	}
	kind := rng.IntN(6)
	for t := 0; t < nTracks; t++ {
		rows := 1 + rng.IntN(40)
		base := 0.6 + 0.2*rng.NormFloat64()
		for i := 0; i < rows; i++ {
			var v float64
			switch kind {
			case 0:
				v = base + 0.05*rng.NormFloat64()
			case 1:
				v = math.Exp(base + 0.3*rng.NormFloat64())
			case 2:
				v = float64(rng.IntN(2)) + 0.05*rng.NormFloat64()
			case 3:
				v = math.Round(base*20) / 20
			case 4:
				v = base
			default:
				v = base + 0.02*rng.NormFloat64()
				if rng.IntN(50) == 0 {
					v = 40 * rng.NormFloat64()
				}
			}
			if rng.IntN(30) == 0 {
				v = math.NaN()
			}
			s.Values = append(s.Values, v)
			s.Unit = append(s.Unit, int32(t))
			s.Class = append(s.Class, int8(rng.IntN(nClasses+1)-1))
		}
	}
	return s
}

// Property: every interval Describe reports, of every statistic, every
// class and all values, contains its estimate — over many random samples
// of every kind randomSample makes, with and without the uncertainty of
// a common factor. (The intervals are centred on their estimates by
// construction; this checks that what is reported is the estimate they
// are centred on.) Most intervals must be known, so the check is not
// empty.
func TestEveryIntervalContainsItsEstimate(t *testing.T) {
	rng := rand.New(rand.NewPCG(11, 12))
	known, checked := 0, 0
	for trial := 0; trial < 400; trial++ {
		s := randomSample(rng)
		u := []float64{0, math.NaN(), 0.01, 0.05}[rng.IntN(4)]
		d := Describe(s, Options{Intervals: true, ScaleUncertainty: u,
			Bootstrap: BootstrapOptions{Resamples: 100 + rng.IntN(100), Seed: uint64(trial), Workers: 2}})
		for g, st := range d.Stats().Groups() {
			for _, c := range []struct {
				name string
				est  float64
				iv   Interval
			}{{"mean", st.Mean, st.MeanCI}, {"median", st.Median, st.MedianCI}, {"mode", st.Mode, st.ModeCI}} {
				if st.Tracks >= 2 {
					checked++
				}
				if !c.iv.Known() {
					continue
				}
				known++
				if !c.iv.Contains(c.est) {
					t.Fatalf("trial %d group %d: %s %.6g outside its interval [%.6g, %.6g]", trial, g, c.name, c.est, c.iv.Lo, c.iv.Hi)
				}
			}
		}
	}
	t.Logf("%d intervals known of %d for groups of two or more tracks; all contain their estimates", known, checked)
	if known < checked*9/10 {
		t.Errorf("only %d of %d intervals are known", known, checked)
	}
}

// The mode is the maximum of the kernel density estimate: on a large
// sample with a few wild values (as crest-speed ratios have), the point
// estimate lies within 5 % of a bandwidth of the maximum of
// scipy.stats.gaussian_kde (Silverman bandwidth) on a fine grid, and its
// interval contains it.
func TestModeOfLargeSampleWithOutliers(t *testing.T) {
	rng := rand.New(rand.NewPCG(21, 22))
	s := Sample{Bounds: nil}
	for tr := 0; tr < 2000; tr++ {
		u := 0.05 * rng.NormFloat64()
		for i := 0; i < 10; i++ {
			v := math.Exp(-0.7 + u + 0.15*rng.NormFloat64())
			if rng.IntN(400) == 0 {
				v = 3 + 2*rng.Float64()
			}
			s.Values = append(s.Values, v)
			s.Unit = append(s.Unit, int32(tr))
			s.Class = append(s.Class, -1)
		}
	}
	s.Units = 2000
	d := Describe(s, Options{Intervals: true, Bootstrap: BootstrapOptions{Resamples: 300, Seed: 1, Workers: 2}})
	st := d.All.Stats
	var want struct{ Mode, H float64 }
	python(t, `
import json, sys
import numpy as np
from scipy.stats import gaussian_kde
x = np.array(json.load(sys.stdin))
sd = np.std(x, ddof=1)
iqr = np.percentile(x, 75) - np.percentile(x, 25)
h = 0.9 * min(sd, iqr / 1.34) * len(x) ** -0.2
grid = np.linspace(0.35, 0.65, 3001)
print(json.dumps({"Mode": float(grid[np.argmax(gaussian_kde(x, bw_method=h / sd)(grid))]), "H": float(h)}))
`, s.Values, &want)
	t.Logf("mode %.5f, interval %.5f–%.5f; scipy gaussian_kde maximum %.5f (h = %.4f)", st.Mode, st.ModeCI.Lo, st.ModeCI.Hi, want.Mode, want.H)
	if math.Abs(st.Mode-want.Mode) > 0.05*want.H {
		t.Errorf("mode %.6f, scipy %.6f: more than 5 %% of h = %.4g apart", st.Mode, want.Mode, want.H)
	}
	if !st.ModeCI.Contains(st.Mode) {
		t.Errorf("mode outside its interval")
	}
}

// The uncertainty u of a factor common to all values widens each
// half-width to √(ξ² + (z u θ̂)²), z = 1.6449 the two-sided 90 % normal
// point (JCGM 100:2008 §5.1; the value of z from any normal table).
func TestScaleUncertaintyWidensInQuadrature(t *testing.T) {
	s := clustered(rand.New(rand.NewPCG(5, 5)), 80, -0.3, 0.1, 0.1)
	o := Options{Intervals: true, Bootstrap: BootstrapOptions{Resamples: 200, Seed: 3, Workers: 2}}
	a := Describe(s, o).All.Stats
	o.ScaleUncertainty = 0.02
	b := Describe(s, o).All.Stats
	const z = 1.6448536269514722
	for _, c := range []struct {
		est      float64
		was, now Interval
	}{{a.Mean, a.MeanCI, b.MeanCI}, {a.Median, a.MedianCI, b.MedianCI}, {a.Mode, a.ModeCI, b.ModeCI}} {
		xi := (c.was.Hi - c.was.Lo) / 2
		want := math.Hypot(xi, z*0.02*c.est)
		if got := (c.now.Hi - c.now.Lo) / 2; math.Abs(got-want) > 1e-12 {
			t.Errorf("half-width %.12g, want √(ξ² + (z u θ)²) = %.12g", got, want)
		}
	}
}
