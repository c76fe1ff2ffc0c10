package analysis_test

import (
	"math"
	"testing"

	"crestspeed/samples"
	"crestspeed/speed/analysis"
)

// exactSurfaceSpeed is what the surface-velocity estimator stands for at
// (x, y, t): the sum over the generator's components travelling within 90°
// of θ0 of each one's linear surface orbital speed in its own direction of
// travel, a σ coth(kh) cos(k·x − ωt + φ) (Dean & Dalrymple 1991; σ = ω
// without a current).
func exactSurfaceSpeed(sea *samples.LinearSea, x, y, t, theta float64) float64 {
	var u float64
	for _, c := range sea.Components {
		if math.Cos(c.Dir-theta) <= 0 {
			continue
		}
		coth := 1.0
		if sea.DepthM > 0 {
			coth = 1 / math.Tanh(c.K*sea.DepthM)
		}
		kx, ky := c.K*math.Cos(c.Dir), c.K*math.Sin(c.Dir)
		u += c.Amp * c.Omega * coth * math.Cos(kx*(x-sea.X0)+ky*(y-sea.Y0)-c.Omega*(t-sea.T0)+c.Phase)
	}
	return u
}

// The surface speed at the crest tips of a directional random sea against
// its exact linear value from the generator's components, with every
// frequency computed and with the waves' band only (frames decimated in
// time): the band may lose 1e-4 of the speed variance, so both must agree
// with the exact value alike and with each other within 0.5 % RMS (measured 3.0 %, 3.0 % and 0.1 %). Sea:
// JONSWAP Hs 1 m, Tp 4 s, s = 10, components to 3 f_p, 0.5 m grid at
// 10 Hz for 60 s (a window of 3 Tp, 120 frames).
func TestSurfaceSpeedRandomSeaExact(t *testing.T) {
	sc := samples.Scenario{Kind: samples.KindJONSWAP,
		JONSWAP: samples.JONSWAPSea{HsM: 1, TpS: 4, Gamma: 3.3, Spreading: 10, DirectionDeg: 20, Seed: 5, Components: 256, FMaxRatio: 3},
		Grid:    grid(128, 112, 0.5, 10, 60),
	}
	sea, err := sc.Sea()
	if err != nil {
		t.Fatal(err)
	}
	run := func(loss float64) (*analysis.Record, map[[2]int]float64, float64, float64) {
		opt := analysis.DefaultOptions()
		opt.VelocityBandLoss = loss
		rec, _ := analyse(t, sc, opt)
		got := map[[2]int]float64{}
		var num, den, sum float64
		for _, r := range rec.Rows {
			if math.IsNaN(r.SurfaceSpeed) {
				continue
			}
			want := exactSurfaceSpeed(sea, r.X, r.Y, r.Time, rec.Refs.Theta)
			got[[2]int{r.TrackID, r.Frame}] = r.SurfaceSpeed
			num += (r.SurfaceSpeed - want) * (r.SurfaceSpeed - want)
			den += want * want
			sum += r.SurfaceSpeed / want
		}
		return rec, got, math.Sqrt(num / den), sum / float64(len(got))
	}
	full, uf, relFull, meanFull := run(0)
	band, ub, relBand, meanBand := run(analysis.DefaultOptions().VelocityBandLoss)
	var num, den float64
	common := 0
	for k, v := range ub {
		if w, ok := uf[k]; ok {
			num += (v - w) * (v - w)
			den += w * w
			common++
		}
	}
	between := math.Sqrt(num / den)
	t.Logf("every frequency: %d rows, RMS error %.4f of the exact speed (mean ratio %.4f); band %.3f Hz, decimation %d: %d rows, RMS error %.4f (mean ratio %.4f); between them %.4f over %d rows",
		len(uf), relFull, meanFull, band.VelocityBandHz, band.VelocityDecimation, len(ub), relBand, meanBand, between, common)
	if full.VelocityDecimation != 1 || band.VelocityDecimation < 2 {
		t.Fatalf("decimation %d (every frequency) and %d (band): the case must compare no decimation with some", full.VelocityDecimation, band.VelocityDecimation)
	}
	if len(ub) < len(uf)*9/10 || len(uf) < 200 {
		t.Errorf("rows with a surface speed: %d with every frequency, %d in the band", len(uf), len(ub))
	}
	if !(relFull <= 0.04) || !(relBand <= relFull+0.005) {
		t.Errorf("RMS error against the exact speed %.4f (every frequency), %.4f (band); want ≤ 0.04 and the band within 0.005 of it", relFull, relBand)
	}
	if !(between <= 0.005) {
		t.Errorf("band against every frequency: RMS difference %.4f, want ≤ 0.005", between)
	}
	_ = full
}
