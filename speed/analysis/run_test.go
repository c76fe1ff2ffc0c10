package analysis_test

import (
	"context"
	"math"
	"path/filepath"
	"sort"
	"strings"
	"testing"

	"crestspeed/ingest"
	"crestspeed/samples"
	"crestspeed/speed"
	"crestspeed/speed/analysis"
)

// analyse synthesizes a scenario and runs the crest analysis on it.
func analyse(t *testing.T, sc samples.Scenario, opt analysis.Options) (*analysis.Record, samples.Truth) {
	t.Helper()
	path := filepath.Join(t.TempDir(), "rec.nc")
	truth, err := samples.Synthesize(context.Background(), sc, path, 1, 2, nil)
	if err != nil {
		t.Fatal(err)
	}
	src, err := ingest.OpenElevation(path, ingest.ElevationOptions{})
	if err != nil {
		t.Fatal(err)
	}
	defer src.Close()
	if opt.MinCrestFraction == 0 {
		opt.MinCrestFraction = 0.1
	}
	if opt.MinCrestLengthM == 0 {
		opt.MinCrestLengthM = 2
	}
	if opt.MaxGapFrames == 0 {
		opt.MaxGapFrames = 2
	}
	opt.Workers = 2
	rec, err := analysis.Run(context.Background(), src, opt)
	if err != nil {
		t.Fatal(err)
	}
	return rec, truth
}

func medianOf(rows []speed.CrestRow, f func(speed.CrestRow) float64) (float64, int) {
	var v []float64
	for _, r := range rows {
		if x := f(r); !math.IsNaN(x) {
			v = append(v, x)
		}
	}
	sort.Float64s(v)
	if len(v) == 0 {
		return math.NaN(), 0
	}
	return v[len(v)/2], len(v)
}

func grid(nx, ny int, dx, fps, dur float64) samples.GridSpec {
	return samples.GridSpec{Nx: nx, Ny: ny, DxM: dx, DyM: dx, FPS: fps, Duration: dur}
}

// A regular wave in finite depth travelling obliquely to the grid: crests
// must move at the linear phase speed (ω² = g k tanh kh; Dean & Dalrymple
// 1991), so both ratios have median 1 within 0.02; the estimated direction
// is within 2° and Hm0 = 4·(H/2)/√2 (linear theory, m0 = a²/2) within 3 %.
func TestRegularWaveRatios(t *testing.T) {
	sc := samples.Scenario{Kind: samples.KindRegular,
		Regular: samples.RegularWave{HeightM: 0.6, PeriodS: 5, DirectionDeg: 30, DepthM: 12},
		Grid:    grid(128, 96, 1, 10, 80)}
	rec, _ := analyse(t, sc, analysis.Options{})
	if d := math.Abs(rec.Refs.Theta*180/math.Pi - 30); d > 2 {
		t.Errorf("direction %.2f°, want 30 ± 2", rec.Refs.Theta*180/math.Pi)
	}
	wantHm0 := 4 * 0.3 / math.Sqrt2
	if rel := math.Abs(rec.SeaState.Hm0-wantHm0) / wantHm0; rel > 0.03 {
		t.Errorf("Hm0 %.4f m, want %.4f ± 3 %%", rec.SeaState.Hm0, wantHm0)
	}
	if rec.Refs.DepthM != 12 {
		t.Errorf("depth %g, want the file's 12 m", rec.Refs.DepthM)
	}
	mp, n := medianOf(rec.Rows, func(r speed.CrestRow) float64 { return r.RatioPeak })
	ml, nl := medianOf(rec.Rows, func(r speed.CrestRow) float64 { return r.RatioLocal })
	t.Logf("median ratio_peak %.4f (n %d), ratio_local %.4f (n %d), Tp %.3f s", mp, n, ml, nl, rec.SeaState.Tp)
	if n < 100 || math.Abs(mp-1) > 0.02 {
		t.Errorf("median c_cr/c_p = %.4f (n %d), want 1 ± 0.02", mp, n)
	}
	if nl < 100 || math.Abs(ml-1) > 0.02 {
		t.Errorf("median c_cr/c_loc = %.4f (n %d), want 1 ± 0.02", ml, nl)
	}
}

// A uniform current Doppler-shifts the waves: ω = σ(k) + k·U. Given the
// current, the reference includes it and the ratio is 1 within 0.02. Without
// it, the reference is the still-water speed at the observed frequency, and
// the ratio is the observed speed over that speed, ω/k_true ÷ ω/k_0 = k_0/k_true
// (linear theory with a uniform current).
func TestCurrentDoppler(t *testing.T) {
	cur := speed.Current{U: 1.2 * math.Cos(0.2), V: 1.2 * math.Sin(0.2)}
	sc := samples.Scenario{Kind: samples.KindRegular,
		Regular: samples.RegularWave{HeightM: 0.5, PeriodS: 5, DirectionDeg: 10, DepthM: 0, Current: cur},
		Grid:    grid(128, 64, 1, 10, 60)}
	rec, truth := analyse(t, sc, analysis.Options{CurrentSpeedMPS: 1.2, CurrentDirectionDeg: 0.2 * 180 / math.Pi})
	mp, _ := medianOf(rec.Rows, func(r speed.CrestRow) float64 { return r.RatioPeak })
	if math.Abs(mp-1) > 0.02 {
		t.Errorf("with the current: median c_cr/c_p = %.4f, want 1 ± 0.02", mp)
	}
	rec0, _ := analyse(t, sc, analysis.Options{})
	mp0, _ := medianOf(rec0.Rows, func(r speed.CrestRow) float64 { return r.RatioPeak })
	// expected: observed speed over the still-water speed at the observed
	// (absolute) peak frequency of the record
	omega := 2 * math.Pi / rec0.SeaState.Tp
	k0, err := speed.WaveNumber(omega, 0)
	if err != nil {
		t.Fatal(err)
	}
	kTrue := truth.Components[0].K
	want := k0 / kTrue
	t.Logf("with current %.4f; without %.4f, Doppler expectation %.4f", mp, mp0, want)
	if math.Abs(mp0-want) > 0.02 {
		t.Errorf("without the current: median ratio %.4f, want k0/k = %.4f ± 0.02", mp0, want)
	}
	if math.Abs(want-1) < 0.05 {
		t.Fatalf("test is not sensitive: Doppler ratio %.3f too close to 1", want)
	}
}

// A dispersive focusing packet: the crest through the focus slows down
// there. Its exact linear speed at the focus is −η_xt/η_xx = Σa k ω / Σa k²
// (all components in phase: derivatives of Σ a cos(k(x−x_f) − ω(t−t_f))).
// The measured c_cr/c_p at the focus must agree with that exact speed over
// the same c_p within 0.04, and the exact value is near 0.8 of the peak
// phase speed for a relative bandwidth of 0.25 (common practice: crest
// slowdown in modulating groups is a linear bandwidth effect of about 20 %;
// Banner et al. 2014, Phys. Rev. Lett. 112, 114502).
func TestFocusingPacketSlowdown(t *testing.T) {
	p := samples.FocusingPacket{CentrePeriodS: 4, Bandwidth: 0.25, FocusXM: 50, FocusYM: 8,
		FocusTimeS: 16, FocusEtaM: 0.5, DirectionDeg: 0, DepthM: 0, Components: 64}
	sc := samples.Scenario{Kind: samples.KindPacket, Packet: p, Grid: grid(192, 32, 0.5, 20, 32)}
	dir := 0.0
	rec, truth := analyse(t, sc, analysis.Options{DirectionDeg: &dir, MinCrestFraction: 0.5})
	var num, den float64
	for _, c := range truth.Components {
		num += c.Amp * c.K * c.Omega
		den += c.Amp * c.K * c.K
	}
	exact := num / den
	cpCentre := speed.PhaseSpeed(mustK(t, 2*math.Pi/p.CentrePeriodS), 0)
	t.Logf("exact crest speed at focus %.3f m/s = %.3f of the centre phase speed", exact, exact/cpCentre)
	if r := exact / cpCentre; math.Abs(r-0.8) > 0.05 {
		t.Errorf("exact crest-speed ratio at the focus %.3f, not near 0.8", r)
	}
	// the row nearest the focus in space and time
	best := -1
	for i, r := range rec.Rows {
		if math.Abs(r.Time-p.FocusTimeS) < 1e-6 && (best < 0 || math.Abs(r.X-p.FocusXM) < math.Abs(rec.Rows[best].X-p.FocusXM)) {
			best = i
		}
	}
	if best < 0 {
		t.Fatal("no crest at the focus time")
	}
	r := rec.Rows[best]
	if math.Abs(r.X-p.FocusXM) > 1 || math.Abs(r.Elevation-p.FocusEtaM) > 0.02 {
		t.Fatalf("crest at the focus found at x = %.2f m with a_c = %.3f m", r.X, r.Elevation)
	}
	want := exact / r.PhaseSpeedPeak
	t.Logf("measured c_cr/c_p %.4f, exact/c_p %.4f (c_p %.3f m/s)", r.RatioPeak, want, r.PhaseSpeedPeak)
	if math.IsNaN(r.RatioPeak) || math.Abs(r.RatioPeak-want) > 0.04 {
		t.Errorf("c_cr/c_p at the focus %.4f, exact %.4f ± 0.04", r.RatioPeak, want)
	}
}

func mustK(t *testing.T, omega float64) float64 {
	k, err := speed.WaveNumber(omega, 0)
	if err != nil {
		t.Fatal(err)
	}
	return k
}

// A JONSWAP sea with about 10 % of the cells masked in blocks and two
// dropped frames: the analysis runs, reports the dropped frames with their
// reason and the masked fraction, bridges the gaps in tracks, and measures
// Hm0 within 5 % of 4√(Σa²/2) of the generated components (common practice:
// Hm0 = 4√m0).
func TestJONSWAPMaskedWithDroppedFrames(t *testing.T) {
	sc := samples.Scenario{Kind: samples.KindJONSWAP,
		JONSWAP: samples.JONSWAPSea{HsM: 1, TpS: 4, Gamma: 3.3, Spreading: 20, DirectionDeg: -40, Seed: 11, Components: 200, FMaxRatio: 2.5},
		Grid:    grid(128, 96, 1, 10, 240),
		Defects: samples.Defects{DropFrames: []int{500, 501, 1300}, MaskBlocks: 6, MaskBlockCells: 14, MaskSeed: 5},
	}
	rec, truth := analyse(t, sc, analysis.Options{})
	if got := rec.Skipped[ingest.SkipTimeGap]; got != 3 {
		t.Errorf("skipped for time gaps: %d, want 3 (frames %v)", got, sc.Defects.DropFrames)
	}
	if math.Abs(rec.MaskedFraction-truth.MaskedFraction) > 1e-9 || truth.MaskedFraction < 0.07 {
		t.Errorf("masked fraction %.4f, truth %.4f", rec.MaskedFraction, truth.MaskedFraction)
	}
	if rec.Link.GapsBridged == 0 {
		t.Errorf("no track bridged a gap: %+v", rec.Link)
	}
	rel := math.Abs(rec.SeaState.Hm0-truth.Hm0M) / truth.Hm0M
	t.Logf("Hm0 %.3f m vs %.3f m (%.1f %%), masked %.3f, tracks %d, gaps bridged %d", rec.SeaState.Hm0, truth.Hm0M, 100*rel, rec.MaskedFraction, rec.TrackCount, rec.Link.GapsBridged)
	if rel > 0.05 {
		t.Errorf("Hm0 %.3f m, truth %.3f m: off by %.1f %%", rec.SeaState.Hm0, truth.Hm0M, 100*rel)
	}
	for _, r := range rec.Rows {
		if r.X > 0 && math.IsNaN(r.Elevation) {
			t.Fatal("NaN crest elevation")
		}
	}
}

// Breaking-inception index of a linear regular wave: at the crest the
// surface orbital speed is u_s = aσ coth(kh) and the crest moves at c = σ/k,
// so B_x = a·k·coth(kh) (linear wave theory, Dean & Dalrymple 1991). The
// median B_x over all crests must match within 2 %.
func TestBreakingIndexRegularWave(t *testing.T) {
	a, T, h := 0.3, 4.0, 12.0
	sc := samples.Scenario{Kind: samples.KindRegular,
		Regular: samples.RegularWave{HeightM: 2 * a, PeriodS: T, DirectionDeg: 25, DepthM: h},
		Grid:    grid(128, 112, 1, 10, 60)}
	rec, truth := analyse(t, sc, analysis.Options{BreakingIndex: true})
	k := truth.Components[0].K
	want := a * k / math.Tanh(k*h)
	mb, n := medianOf(rec.Rows, func(r speed.CrestRow) float64 { return r.BreakingIndex })
	t.Logf("median B_x %.4f over %d rows (window %d frames), a·k·coth(kh) = %.4f", mb, n, rec.VelocityWindowFrames, want)
	if n < 50 {
		t.Fatalf("only %d rows with B_x", n)
	}
	if math.Abs(mb-want)/want > 0.02 {
		t.Errorf("median B_x %.4f, linear theory %.4f (off by %.1f %%)", mb, want, 100*math.Abs(mb-want)/want)
	}
}

// A time axis that jumps by 10⁶ s after 30 frames (two records in one
// file, or a corrupt time stamp) is refused in one sentence; it used to be
// taken as ten million dropped frames and filled with NaN samples until
// memory ran out.
func TestTimeJumpRefused(t *testing.T) {
	path := filepath.Join(t.TempDir(), "jump.nc")
	nx, ny := 16, 12
	xs, ys := make([]float64, nx), make([]float64, ny)
	for i := range xs {
		xs[i] = float64(i)
	}
	for i := range ys {
		ys[i] = float64(i)
	}
	w, err := ingest.CreateElevation(path, ingest.Grid{X: xs, Y: ys}, ingest.WriteOptions{})
	if err != nil {
		t.Fatal(err)
	}
	eta := make([]float32, nx*ny)
	for k := 0; k < 60; k++ {
		tt := 0.1 * float64(k)
		if k >= 30 {
			tt += 1e6
		}
		for i := range eta {
			eta[i] = float32(0.3 * math.Cos(0.5*float64(i%nx)-2*tt))
		}
		if err := w.WriteFrame(tt, eta, nil); err != nil {
			t.Fatal(err)
		}
	}
	if err := w.Commit(); err != nil {
		t.Fatal(err)
	}
	src, err := ingest.OpenElevation(path, ingest.ElevationOptions{})
	if err != nil {
		t.Logf("refused on open: %v", err)
		return
	}
	defer src.Close()
	_, err = analysis.Run(context.Background(), src, analysis.DefaultOptions())
	if err == nil || !strings.Contains(err.Error(), "time axis jumps") {
		t.Fatalf("got %v, want the jump of the time axis refused", err)
	}
	t.Log(err)
}
