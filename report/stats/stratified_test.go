package stats

import (
	"math"
	"math/rand/v2"
	"testing"
)

// twoStrata makes a sample of one value per unit in two strata of n0 and
// n1 units with very different levels (means 0.6 and 0.9, spread 0.05 and
// 0.08), the case where resampling across strata would move weight from
// one to the other.
func twoStrata(rng *rand.Rand, n0, n1 int) Sample {
	var values, by, ids, strata []float64
	for h, n := range []int{n0, n1} {
		mu, sd := []float64{0.6, 0.9}[h], []float64{0.05, 0.08}[h]
		for u := 0; u < n; u++ {
			values = append(values, mu+sd*rng.NormFloat64())
			by = append(by, 0.5)
			ids = append(ids, float64(u+1)) // the same ids in both strata
			strata = append(strata, float64(10*h+3))
		}
	}
	return ClassifyStratified(values, by, ids, strata, nil)
}

// ClassifyStratified numbers units by (stratum, id): the same track id in
// two deployments is two units, each in its own stratum.
func TestClassifyStratified(t *testing.T) {
	s := ClassifyStratified(
		[]float64{1, 2, 3, 4, 5, 6},
		[]float64{0.05, 0.15, 0.25, 0.05, 0.15, 0.25},
		[]float64{7, 7, 8, 7, 7, 9},
		[]float64{2, 2, 2, 5, 5, 5}, []float64{0.1, 0.2})
	wantUnit := []int32{0, 0, 1, 2, 2, 3}
	for i, u := range wantUnit {
		if s.Unit[i] != u {
			t.Fatalf("units %v, want %v", s.Unit, wantUnit)
		}
	}
	if s.Units != 4 || len(s.Stratum) != 4 || s.Stratum[0] != 0 || s.Stratum[1] != 0 || s.Stratum[2] != 1 || s.Stratum[3] != 1 {
		t.Fatalf("units %d, strata %v; want 4 units in strata [0 0 1 1]", s.Units, s.Stratum)
	}
	if s.Class[0] != 0 || s.Class[1] != 1 || s.Class[2] != 2 {
		t.Fatalf("classes %v", s.Class)
	}
}

// Every stratified resample draws exactly n_h units of stratum h (with
// replacement) and none of another stratum's.
func TestStratifiedResampleKeepsStrataSizes(t *testing.T) {
	rng := rand.New(rand.NewPCG(1, 1))
	s := twoStrata(rng, 37, 11)
	bs := newBootSample(s)
	sc := bs.newScratch()
	differ := 0
	for r := 0; r < 200; r++ {
		bs.resample(sc, rand.New(rand.NewPCG(9, uint64(r))))
		var drawn [2]int32
		for u, w := range sc.w {
			drawn[s.Stratum[u]] += w
		}
		if drawn[0] != 37 || drawn[1] != 11 {
			t.Fatalf("resample %d drew %d and %d units from strata of 37 and 11", r, drawn[0], drawn[1])
		}
		if sc.w[0] != 1 {
			differ++
		}
	}
	if differ == 0 {
		t.Fatal("the resamples never changed the multiplicity of unit 0")
	}
}

// The bootstrap variance of a mean of one value per unit is known in
// closed form (the plug-in variance; Efron & Tibshirani 1993, ch. 5 and
// 8, from memory): Σ_h (n_h/N)² σ̂_h²/n_h when resampling within strata,
// with σ̂_h² the variance of stratum h divided by n_h, and σ̂²/N over all
// units otherwise. The spread of B = 4000 resampled means matches each
// within 7 % (Monte Carlo error of a variance from B draws: about
// √(2/B) = 2.2 %), and the stratified one is the smaller here, because
// the strata differ in level.
func TestStratifiedBootstrapVarianceOfMean(t *testing.T) {
	rng := rand.New(rand.NewPCG(2, 3))
	s := twoStrata(rng, 40, 20)
	plugin := func(v []float64) (mean, variance float64) {
		for _, x := range v {
			mean += x
		}
		mean /= float64(len(v))
		for _, x := range v {
			variance += (x - mean) * (x - mean)
		}
		return mean, variance / float64(len(v))
	}
	_, v0 := plugin(s.Values[:40])
	_, v1 := plugin(s.Values[40:])
	_, vall := plugin(s.Values)
	N := 60.0
	wantStrat := (40/N)*(40/N)*v0/40 + (20/N)*(20/N)*v1/20
	wantAll := vall / N
	const B = 4000
	spread := func(s Sample) float64 {
		reps := newBootSample(s).replicates(BootstrapOptions{Resamples: B, Seed: 5, Workers: 2})
		_, v := plugin(reps[len(reps)-1][statMean])
		return v
	}
	gotStrat := spread(s)
	flat := s
	flat.Stratum = nil
	gotAll := spread(flat)
	t.Logf("variance of the resampled mean: stratified %.4g (closed form %.4g), over all units %.4g (closed form %.4g)", gotStrat, wantStrat, gotAll, wantAll)
	if math.Abs(gotStrat/wantStrat-1) > 0.07 {
		t.Errorf("stratified: %.4g, closed form %.4g", gotStrat, wantStrat)
	}
	if math.Abs(gotAll/wantAll-1) > 0.07 {
		t.Errorf("unstratified: %.4g, closed form %.4g", gotAll, wantAll)
	}
	if !(wantStrat < 0.5*wantAll) {
		t.Errorf("the example should make stratification matter: %.4g vs %.4g", wantStrat, wantAll)
	}
}

// Stratified intervals are the same for any number of workers, and the
// point estimates do not depend on the strata.
func TestStratifiedDeterministic(t *testing.T) {
	rng := rand.New(rand.NewPCG(4, 4))
	s := clustered(rng, 60, -0.3, 0.1, 0.1)
	s.Stratum = make([]int32, s.Units)
	for u := range s.Stratum {
		s.Stratum[u] = int32(u % 3)
	}
	opt := func(workers int) Options {
		return Options{Intervals: true, Bootstrap: BootstrapOptions{Resamples: 200, Seed: 7, Workers: workers}}
	}
	a := Describe(s, opt(1)).Stats().Groups()
	b := Describe(s, opt(3)).Stats().Groups()
	flat := s
	flat.Stratum = nil
	c := Describe(flat, opt(1)).Stats().Groups()
	for g := range a {
		if a[g] != b[g] {
			t.Errorf("group %d: 1 worker %+v, 3 workers %+v", g, a[g], b[g])
		}
		if a[g].Median != c[g].Median || a[g].Mode != c[g].Mode || a[g].N != c[g].N || a[g].Tracks != c[g].Tracks {
			t.Errorf("group %d: point estimates depend on the strata: %+v vs %+v", g, a[g], c[g])
		}
	}
}
