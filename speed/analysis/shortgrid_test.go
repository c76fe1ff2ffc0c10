package analysis_test

import (
	"math"
	"testing"

	"crestspeed/samples"
	"crestspeed/speed"
	"crestspeed/speed/analysis"
)

// A grid shorter than a wavelength along the waves: a 5 s regular wave in
// deep water (L = gT²/2π = 39 m; Dean & Dalrymple 1991) on a grid 20 m
// long along θ0 and 15 m across, at 10 Hz for 60 s. Few crests are
// enclosed by both zero crossings, so crests that run into the grid's
// edge are followed for their speed: the median crest speed must be the
// linear phase speed g T/2π within 3 %, and Hm0 = 2√2 a within 3 % (m0 =
// a²/2, linear theory). Such crests have no zero-crossing width. The same
// holds for the wave travelling at 30° to the grid in 8 m of water (L =
// 34.9 m from ω² = gk tanh kh; the grid is 23 m long along θ0). Measured:
// 7.816 against 7.804 m/s and 7.043 against 6.976 m/s; Hm0 exact to 0.1 %.
func TestShortGridRegularWave(t *testing.T) {
	t.Run("deep, along x", func(t *testing.T) { shortGridCase(t, 0, 0) })
	t.Run("8 m, 30 degrees", func(t *testing.T) { shortGridCase(t, 30, 8) })
}

func shortGridCase(t *testing.T, dirDeg, depth float64) {
	a, T := 0.3, 5.0
	sc := samples.Scenario{Kind: samples.KindRegular,
		Regular: samples.RegularWave{HeightM: 2 * a, PeriodS: T, DirectionDeg: dirDeg, DepthM: depth},
		Grid:    grid(41, 31, 0.5, 10, 60)}
	opt := analysis.DefaultOptions()
	opt.BreakingIndex = false
	rec, truth := analyse(t, sc, opt)
	c := truth.Components[0].Omega / truth.Components[0].K
	med, n := medianOf(rec.Rows, func(r speed.CrestRow) float64 { return r.CrestSpeed })
	hm0 := 2 * math.Sqrt2 * a
	withWidth := 0
	for _, r := range rec.Rows {
		if !math.IsNaN(r.Width) {
			withWidth++
		}
	}
	t.Logf("wavelength %.1f m: edge crests %v; median crest speed %.3f m/s over %d rows (linear %.3f); Hm0 %.3f m (linear %.3f); %d of %d rows with a width",
		2*math.Pi/truth.Components[0].K, rec.EdgeCrests, med, n, c, rec.SeaState.Hm0, hm0, withWidth, len(rec.Rows))
	if !rec.EdgeCrests {
		t.Error("crests at the grid's edge were not taken on a grid shorter than a wavelength")
	}
	if n < 50 || !(math.Abs(med/c-1) <= 0.03) {
		t.Errorf("median crest speed %.3f m/s over %d rows, linear %.3f m/s: want within 3 %%", med, n, c)
	}
	if !(math.Abs(rec.SeaState.Hm0/hm0-1) <= 0.03) {
		t.Errorf("Hm0 %.3f m, linear %.3f m: want within 3 %%", rec.SeaState.Hm0, hm0)
	}
}
