package campaign

import (
	"math"
	"math/rand/v2"
	"testing"

	"crestspeed/internal/pyref"
	"crestspeed/report"
	"crestspeed/report/summary"
	"crestspeed/report/table"
)

// syntheticDeployment is a deployment made in memory: nTracks crest
// tracks of 3–30 rows whose c_cr/c_p share a track effect, v =
// exp(mu + u_t + e_i), u ~ N(0, su²), e ~ N(0, se²) (rows of a track are
// correlated; the marginal is log-normal with median exp(mu)), S_c
// uniform in 0–0.3, c_p = cp.
func syntheticDeployment(rng *rand.Rand, dir string, nTracks int, mu, su, se, cp float64) Deployment {
	var rows int
	type row struct {
		id, tm, sc, r float64
	}
	var rs []row
	for tr := 1; tr <= nTracks; tr++ {
		u := su * rng.NormFloat64()
		n := 3 + rng.IntN(28)
		for i := 0; i < n; i++ {
			rs = append(rs, row{float64(tr), 0.1 * float64(rows), 0.3 * rng.Float64(), math.Exp(mu + u + se*rng.NormFloat64())})
			rows++
		}
	}
	t := table.New(table.Crests, len(rs))
	for i, r := range rs {
		t.Cols[table.CrestTrack][i], t.Cols[table.CrestTime][i] = r.id, r.tm
		t.Cols[table.CrestSteepness][i], t.Cols[table.CrestRatioPeak][i] = r.sc, r.r
		t.Cols[table.CrestSpeed][i] = r.r * cp
		t.Cols[table.CrestFoam][i] = 0
		t.Cols[table.Crests.Index("frame")][i] = float64(i)
	}
	sum := &report.Summary{
		Tool: map[string]string{"name": "crestspeed"}, Record: summary.RecordSummary{Attributes: map[string]string{}},
		SeaState: summary.SeaStateSummary{Hm0: 1, Tp: 5, PeakPhaseSpeed: cp, PeakWavelength: 5 * cp, PeakPhaseSpeedUncertainty: math.NaN()},
		Method:   map[string]any{"steepness_bounds": []float64{0.1, 0.2}, "steepness": "S_c = a_c * pi / w_c"},
	}
	return Deployment{Deployment: &report.Deployment{Crests: t, Summary: sum, TracksDir: dir}}
}

// Coverage of the stratified bootstrap (common practice; Efron &
// Tibshirani 1993, ch. 13): in 100 independent campaigns of two
// deployments of 80 and 50 tracks whose medians differ (log-normal rows
// with a track effect, medians exp(−0.30) and exp(−0.12)), the 90 %
// interval of the pooled median covers the median of the mixture the rows
// come from in at least 85 — as the single-deployment intervals, the
// first deployment's here, cover its own median. The mixture median is
// computed by scipy (brentq on the mixture of the two log-normal
// marginals, weights the deployments' shares of tracks: the number of
// rows per track has the same law in both).
func TestStratifiedCoverage(t *testing.T) {
	const trials = 100
	muA, muB, su, se := -0.30, -0.12, 0.12, 0.08
	nA, nB := 80, 50
	var truth struct{ Median float64 }
	pyref.JSON(t, `
import json, sys
import numpy as np
from scipy.stats import norm
from scipy.optimize import brentq
d = json.load(sys.stdin)
s = np.hypot(d["su"], d["se"]); w = d["nA"] / (d["nA"] + d["nB"])
f = lambda x: w * norm.cdf((np.log(x) - d["muA"]) / s) + (1 - w) * norm.cdf((np.log(x) - d["muB"]) / s) - 0.5
print(json.dumps({"Median": brentq(f, 0.1, 10, xtol=1e-14)}))
`, map[string]float64{"muA": muA, "muB": muB, "su": su, "se": se, "nA": float64(nA), "nB": float64(nB)}, &truth)
	pooledCovered, singleCovered := 0, 0
	for k := 0; k < trials; k++ {
		rng := rand.New(rand.NewPCG(uint64(2000+k), 29))
		deps := []Deployment{
			syntheticDeployment(rng, "a", nA, muA, su, se, 6),
			syntheticDeployment(rng, "b", nB, muB, su, se, 4.5),
		}
		opt := DefaultOptions()
		opt.Bootstrap.Seed, opt.Bootstrap.Workers = uint64(k), 2
		res, err := Analyse(deps, opt)
		if err != nil {
			t.Fatal(err)
		}
		if res.Summary.Campaign.CrestRatio["peak"].All.MedianCI.Contains(truth.Median) {
			pooledCovered++
		}
		if res.Summary.Campaign.Deployments[0].CrestRatio["peak"].All.MedianCI.Contains(math.Exp(muA)) {
			singleCovered++
		}
	}
	t.Logf("90 %% intervals covered the true median: pooled (stratified) %d of %d, single deployment %d of %d (mixture median %.5f)",
		pooledCovered, trials, singleCovered, trials, truth.Median)
	if pooledCovered < 85 || singleCovered < 85 {
		t.Fatalf("coverage pooled %d/%d, single %d/%d; want at least 85 each", pooledCovered, trials, singleCovered, trials)
	}
}
