package speed_test

import (
	"context"
	"errors"
	"fmt"
	"io"
	"math"
	"os/exec"
	"path/filepath"
	"sort"
	"strings"
	"testing"

	"crestspeed/ingest"
	"crestspeed/samples"
	"crestspeed/speed"
	"crestspeed/tracking"
)

// wcRun paints the patches on a grid frame by frame (saturated frames all
// ones, cells in masked unknown) and feeds them to a WhitecapAnalyser
// without crests. It returns the result and the painted foam cells per
// frame.
func wcRun(t *testing.T, g tracking.Geometry, patches []samples.FoamPatch, saturated []int, masked []int,
	frames int, fps float64, ref speed.References, opt speed.BreakingOptions) (*speed.WhitecapResult, []int) {
	t.Helper()
	xs := make([]float64, g.Nx)
	ys := make([]float64, g.Ny)
	for i := range xs {
		xs[i] = g.X0 + float64(i)*g.Dx
	}
	for i := range ys {
		ys[i] = g.Y0 + float64(i)*g.Dy
	}
	painter, err := samples.NewFoamPainter(patches, saturated, xs, ys)
	if err != nil {
		t.Fatal(err)
	}
	a, err := speed.NewWhitecapAnalyser(g, ref, opt)
	if err != nil {
		t.Fatal(err)
	}
	foam := make([]uint8, g.Nx*g.Ny)
	valid := make([]bool, g.Nx*g.Ny)
	for i := range valid {
		valid[i] = true
	}
	for _, m := range masked {
		valid[m] = false
	}
	painted := make([]int, frames)
	for k := 0; k < frames; k++ {
		tt := float64(k) / fps
		painted[k] = painter.Paint(k, tt, foam)
		if err := a.Add(k, tt, foam, valid, nil); err != nil {
			t.Fatal(err)
		}
	}
	res, err := a.Finish(nil)
	if err != nil {
		t.Fatal(err)
	}
	return res, painted
}

// Whitecaps painted with a known front speed, along θ0 = 0 and along an
// oblique θ0 = 30°: the measured front speed c_br of every frame with a
// centred fit window, and the median over each whitecap, are within 5 % of
// the painted speed (source: the painted truth).
func TestWhitecapFrontSpeedPainted(t *testing.T) {
	for _, dirDeg := range []float64{0, 30} {
		th := dirDeg * math.Pi / 180
		g := tracking.Geometry{Nx: 220, Ny: 140, Dx: 0.5, Dy: 0.5, Theta: th}
		c, s := math.Cos(th), math.Sin(th)
		at := func(u, v float64) (float64, float64) { return 10 + u*c - v*s, 25 + u*s + v*c }
		x1, y1 := at(5, -12)
		x2, y2 := at(3, 10)
		patches := []samples.FoamPatch{
			{StartS: 0.2, FrontXM: x1, FrontYM: y1, DirectionDeg: dirDeg, SpeedMPS: 5.3, FrontLengthM: 9, LengthM: 3, DurationS: 4.5},
			{StartS: 0.5, FrontXM: x2, FrontYM: y2, DirectionDeg: dirDeg, SpeedMPS: 7.1, FrontLengthM: 12, LengthM: 4, DurationS: 4},
		}
		ref := speed.References{Theta: th, PeakPhaseSpeed: 8}
		res, _ := wcRun(t, g, patches, nil, nil, 52, 10, ref, speed.BreakingOptions{SpeedWindowS: 2, MaxGapFrames: 1})
		if len(res.Whitecaps) != 2 {
			t.Fatalf("θ0 = %g°: %d whitecaps, want 2", dirDeg, len(res.Whitecaps))
		}
		for _, w := range res.Whitecaps {
			// identify the painted patch by the first frame
			want := patches[0].SpeedMPS
			if w.FirstFrame >= 5 {
				want = patches[1].SpeedMPS
			}
			t.Logf("θ0 = %g°: whitecap %d frames %d–%d, median c_br %.3f m/s, track line %.3f m/s (painted %.2f), c_br/c_p %.3f",
				dirDeg, w.TrackID, w.FirstFrame, w.LastFrame, w.MedianSpeed, w.TrackSpeed, want, w.MedianRatioPeak)
			if math.Abs(w.TrackSpeed-want) > 0.05*want {
				t.Errorf("θ0 = %g°: track-line c_br %.3f m/s, want %.2f ± 5 %%", dirDeg, w.TrackSpeed, want)
			}
			if math.Abs(w.MedianSpeed-want) > 0.05*want {
				t.Errorf("θ0 = %g°: median c_br %.3f m/s, want %.2f ± 5 %%", dirDeg, w.MedianSpeed, want)
			}
			if math.Abs(w.MedianRatioPeak-want/8) > 0.05*want/8 {
				t.Errorf("θ0 = %g°: c_br/c_p %.3f, want %.3f", dirDeg, w.MedianRatioPeak, want/8)
			}
			if !w.OnsetSeen {
				t.Errorf("θ0 = %g°: onset of a whitecap painted inside the record not seen", dirDeg)
			}
		}
		first := map[int]int{}
		for _, w := range res.Whitecaps {
			first[w.TrackID] = w.FirstFrame
		}
		worst, worstEdge := 0.0, 0.0
		for _, r := range res.Rows {
			want := patches[0].SpeedMPS
			if first[r.TrackID] >= 5 {
				want = patches[1].SpeedMPS
			}
			e := math.Abs(r.FrontSpeed-want) / want
			switch r.Fit {
			case speed.FitCentred:
				worst = math.Max(worst, e)
			case speed.FitEdge:
				worstEdge = math.Max(worstEdge, e)
			}
		}
		t.Logf("θ0 = %g°: worst centred-fit error %.2f %%, worst end-of-track error %.2f %% (grid quantisation, see FrontSpeeds)", dirDeg, 100*worst, 100*worstEdge)
		if worst > 0.05 {
			t.Errorf("θ0 = %g°: a centred front speed is off by %.1f %%, want ≤ 5 %%", dirDeg, 100*worst)
		}
	}
}

// Λ(c) integrated over c, times the sea-surface area, is the mean total
// front length per frame (definition of Λ, Phillips 1985, J. Fluid Mech.
// 156): checked within 1 % against the painted fronts (their length across
// the direction of travel, summed over the patches active in each frame).
func TestLambdaIntegralIsMeanFrontLength(t *testing.T) {
	g := tracking.Geometry{Nx: 240, Ny: 100, Dx: 0.5, Dy: 0.5}
	// Fronts across x, edges between cell centres so that the painted
	// lengths are whole numbers of cells.
	patches := []samples.FoamPatch{
		{StartS: 0.0, FrontXM: 20.1, FrontYM: 10.25, SpeedMPS: 4.2, FrontLengthM: 8, LengthM: 3, DurationS: 3},
		{StartS: 0.7, FrontXM: 15.2, FrontYM: 30.25, SpeedMPS: 6.6, FrontLengthM: 12, LengthM: 5, DurationS: 2},
		{StartS: 1.5, FrontXM: 30.3, FrontYM: 42.25, SpeedMPS: 2.9, FrontLengthM: 5, LengthM: 2, DurationS: 1.5},
	}
	fps, frames := 10.0, 40
	ref := speed.References{PeakPhaseSpeed: 7}
	res, _ := wcRun(t, g, patches, nil, nil, frames, fps, ref, speed.BreakingOptions{SpeedWindowS: 0.8, MaxGapFrames: 1})
	var truth float64
	for k := 0; k < frames; k++ {
		for _, p := range patches {
			if p.Active(float64(k) / fps) {
				truth += p.FrontLengthM
			}
		}
	}
	truth /= float64(frames)
	area := float64(g.Nx*g.Ny) * g.Dx * g.Dy
	integral := speed.LambdaMoment(res.Breaking.Bins, 0) * area
	t.Logf("∫Λ dc · A = %.4f m, painted mean front length %.4f m per frame; %d whitecaps, no-speed length %.3f m, out of range %.3f m",
		integral, truth, len(res.Whitecaps), res.LengthWithoutSpeed, res.Breaking.LengthOutOfRange)
	if math.Abs(integral-truth) > 0.01*truth {
		t.Errorf("∫Λ dc · A = %.4f m, want the mean front length %.4f m ± 1 %%", integral, truth)
	}
	if len(res.Whitecaps) != 3 {
		t.Errorf("%d whitecaps, want 3", len(res.Whitecaps))
	}
}

// A single front of length L moving at c in every one of N frames on an
// area A: Λ = L/(A Δc) in the bin of c, R = ∫ c Λ dc = c L/A and
// ε = b ρ_w g⁻¹ ∫ c⁵ Λ dc = b ρ_w c⁵ L/(g A) (closed forms of Phillips's
// 1985 definitions for Λ a single spike). With c at a bin centre the
// midpoint sums over the bins agree exactly as well.
func TestBreakingMomentsSingleFront(t *testing.T) {
	c, L, A, N := 5.125, 10.0, 2000.0, 4
	b, rho := 7e-5, 1025.0
	fronts := make([]speed.FrontSample, N)
	for i := range fronts {
		fronts[i] = speed.FrontSample{Speed: c, Length: L, Area: A}
	}
	st, err := speed.Breaking(fronts, N, 0.25, 12, b, rho)
	if err != nil {
		t.Fatal(err)
	}
	wantR := c * L / A
	wantE := b * rho * math.Pow(c, 5) * L / (speed.G * A)
	close := func(a, b float64) bool { return math.Abs(a-b) <= 1e-12*math.Abs(b) }
	if !close(st.PassageRate, wantR) || !close(st.PassageRateBinned, wantR) {
		t.Errorf("R = %g (binned %g) 1/s, want c L/A = %g", st.PassageRate, st.PassageRateBinned, wantR)
	}
	if !close(st.Dissipation, wantE) || !close(st.DissipationBinned, wantE) {
		t.Errorf("ε = %g (binned %g) W/m², want b ρ c⁵ L/(g A) = %g", st.Dissipation, st.DissipationBinned, wantE)
	}
	j := int(c / 0.25)
	if !close(st.Bins[j].Lambda, L/(A*0.25)) || st.Bins[j].Fronts != N {
		t.Errorf("Λ in bin %d = %g m⁻² s (%d fronts), want L/(A Δc) = %g", j, st.Bins[j].Lambda, st.Bins[j].Fronts, L/(A*0.25))
	}
	if len(st.Bins) != 48 {
		t.Errorf("%d bins of 0.25 m/s up to 12 m/s, want 48", len(st.Bins))
	}
	// a front off the top bin is left out and counted
	st, _ = speed.Breaking([]speed.FrontSample{{Speed: 13, Length: 4, Area: A}}, 2, 0.25, 12, b, rho)
	if st.PassageRate != 0 || st.LengthOutOfRange != 2 {
		t.Errorf("front above the top speed: R = %g, out-of-range length %g m per frame; want 0 and 2", st.PassageRate, st.LengthOutOfRange)
	}
}

// The midpoint sums over fine bins of Λ(c) = K c⁻⁶ (the form of Phillips's
// 1985 equilibrium range) match the closed forms ∫ c Λ dc = K (c1⁻⁴ − c2⁻⁴)/4
// and ∫ c⁵ Λ dc = K ln(c2/c1) within 10⁻⁴ (calculus).
func TestLambdaMomentPowerLaw(t *testing.T) {
	K, c1, c2, dc := 3e-3, 1.0, 10.0, 0.005
	var bins []speed.LambdaBin
	for c := c1; c < c2-1e-9; c += dc {
		m := c + dc/2
		bins = append(bins, speed.LambdaBin{CLow: c, CHigh: c + dc, Lambda: K * math.Pow(m, -6)})
	}
	r := speed.LambdaMoment(bins, 1)
	wantR := K * (math.Pow(c1, -4) - math.Pow(c2, -4)) / 4
	e := speed.LambdaMoment(bins, 5)
	wantE := K * math.Log(c2/c1)
	if math.Abs(r-wantR) > 1e-4*wantR || math.Abs(e-wantE) > 1e-4*wantE {
		t.Errorf("moments %g, %g; closed forms %g, %g", r, e, wantR, wantE)
	}
}

// W(t) is the painted foam area over the known area: for an axis-aligned
// rectangle of whole cells, front length × length / (known cells × cell
// area) exactly (area of the rectangle), with a block of unknown cells
// away from the foam reducing the known area.
func TestCoverageIsPaintedFraction(t *testing.T) {
	g := tracking.Geometry{Nx: 120, Ny: 60, Dx: 0.5, Dy: 0.5}
	p := samples.FoamPatch{StartS: 0, FrontXM: 12.1, FrontYM: 10.25, SpeedMPS: 3, FrontLengthM: 6, LengthM: 2.5, DurationS: 10}
	var masked []int
	for iy := 40; iy < 50; iy++ {
		for ix := 100; ix < 110; ix++ {
			masked = append(masked, iy*g.Nx+ix)
		}
	}
	res, painted := wcRun(t, g, []samples.FoamPatch{p}, nil, masked, 20, 10, speed.References{PeakPhaseSpeed: 6},
		speed.BreakingOptions{SpeedWindowS: 0.8})
	knownArea := float64(g.Nx*g.Ny-len(masked)) * g.Dx * g.Dy
	want := p.FrontLengthM * p.LengthM / knownArea
	for i, row := range res.Coverage {
		if math.Abs(row.Coverage-want) > 1e-12 || row.FoamCells != painted[i] {
			t.Errorf("frame %d: W = %.6f (%d cells), want %.6f (%d painted)", row.Frame, row.Coverage, row.FoamCells, want, painted[i])
		}
	}
	if math.Abs(res.MeanCoverage-want) > 1e-12 {
		t.Errorf("mean W %.6f, want %.6f", res.MeanCoverage, want)
	}
	t.Logf("W = %.5f in each of %d frames", res.MeanCoverage, len(res.Coverage))
}

// Frames whose foam mask is all ones (a saturated detector) are skipped and
// counted, not taken for whitecaps: the painted whitecap is still one track
// across them, no row falls on them, and the mean coverage is that of the
// other frames (bad-input handling required by the design).
func TestSaturatedFoamFramesSkipped(t *testing.T) {
	g := tracking.Geometry{Nx: 160, Ny: 60, Dx: 0.5, Dy: 0.5}
	p := samples.FoamPatch{StartS: 0, FrontXM: 12.1, FrontYM: 15.25, SpeedMPS: 4, FrontLengthM: 8, LengthM: 3, DurationS: 10}
	sat := []int{6, 13}
	res, painted := wcRun(t, g, []samples.FoamPatch{p}, sat, nil, 24, 10, speed.References{PeakPhaseSpeed: 6},
		speed.BreakingOptions{SpeedWindowS: 0.8, MaxGapFrames: 2})
	if res.Skipped[speed.SkipFoamSaturated] != 2 || res.FramesAnalysed != 22 {
		t.Fatalf("skipped %v, analysed %d; want 2 saturated, 22 analysed", res.Skipped, res.FramesAnalysed)
	}
	if len(res.Whitecaps) != 1 || res.Whitecaps[0].Rows != 22 {
		t.Fatalf("%d whitecaps (first with %d rows); want one of 22", len(res.Whitecaps), res.Whitecaps[0].Rows)
	}
	for _, r := range res.Rows {
		if r.Frame == 6 || r.Frame == 13 {
			t.Errorf("whitecap row on saturated frame %d", r.Frame)
		}
	}
	want := float64(painted[0]) / float64(g.Nx*g.Ny)
	if math.Abs(res.MeanCoverage-want) > 1e-12 {
		t.Errorf("mean W %.5f, want %.5f of the unsaturated frames", res.MeanCoverage, want)
	}
	if res.Whitecaps[0].OnsetSeen {
		t.Error("a whitecap present from the record's first frame is reported with its onset seen")
	}
	if math.Abs(res.Whitecaps[0].MedianSpeed-4) > 0.2 {
		t.Errorf("median speed %.3f across the skipped frames, want 4 ± 5 %%", res.Whitecaps[0].MedianSpeed)
	}
}

// FrontSpeeds agrees with scipy.signal.savgol_filter(x, 7, 2, deriv=1,
// delta=dt, mode='interp') (Debian python3-scipy) at every sample: full
// centred windows inside the track, the first and last full window near its
// ends.
func TestFrontSpeedsMatchSavgol(t *testing.T) {
	py := "/usr/bin/python3"
	if _, err := exec.LookPath(py); err != nil {
		t.Skip("no /usr/bin/python3")
	}
	n, dt := 25, 0.1
	ts := make([]float64, n)
	xs := make([]float64, n)
	var sb strings.Builder
	for i := range ts {
		ts[i] = float64(i) * dt
		xs[i] = 3 + 5.7*ts[i] - 0.8*ts[i]*ts[i] + 0.3*math.Sin(7*ts[i]) + 0.05*math.Cos(31*ts[i])
		fmt.Fprintf(&sb, "%.17g ", xs[i])
	}
	v, kind := speed.FrontSpeeds(ts, xs, 3*dt, 5, nil, nil)
	cmd := exec.Command(py, "-c", `import sys, numpy as np
from scipy.signal import savgol_filter
x = np.array(sys.stdin.read().split(), dtype=float)
print(" ".join(repr(float(v)) for v in savgol_filter(x, 7, 2, deriv=1, delta=0.1, mode='interp')))`)
	cmd.Stdin = strings.NewReader(sb.String())
	out, err := cmd.Output()
	if err != nil {
		t.Fatalf("scipy: %v", err)
	}
	f := strings.Fields(string(out))
	if len(f) != n {
		t.Fatalf("scipy gave %d values", len(f))
	}
	checked := 0
	for i := 0; i < n; i++ {
		var want float64
		fmt.Sscan(f[i], &want)
		if math.Abs(v[i]-want) > 1e-9*math.Max(1, math.Abs(want)) {
			t.Errorf("sample %d (%v): %.12f, scipy %.12f", i, kind[i], v[i], want)
		}
		checked++
	}
	if kind[0] != speed.FitEdge || kind[n-1] != speed.FitEdge || kind[2] != speed.FitEdge || kind[3] != speed.FitCentred {
		t.Errorf("fit kinds %v, %v, %v, %v; want edge, edge, edge, centred", kind[0], kind[n-1], kind[2], kind[3])
	}
	if checked != n {
		t.Fatalf("checked %d samples", checked)
	}
}

// End to end through a NetCDF record: a regular wave with two whitecaps
// painted riding on one crest (fronts moving at 0.8 c and 0.9 c) and two
// saturated foam frames. The measured c_br is within 5 % of the painted
// speeds (painted truth); the parent crest is found, with S_c = a·k within
// 2 % and a crest-speed ratio of 1 within 2 % (linear theory for a regular
// wave: the crest travels at the phase speed; S_c is exactly a·k for a
// sinusoid); c_br/c_loc is the painted ratio within 5 %; W(t) equals the
// painted fraction; the saturated frames are skipped and counted.
func TestWhitecapsOnSynthesizedRecord(t *testing.T) {
	T, H := 5.0, 0.6
	sc := samples.Scenario{Kind: samples.KindRegular,
		Regular: samples.RegularWave{HeightM: H, PeriodS: T, DirectionDeg: 0, DepthM: 0},
		Grid:    samples.GridSpec{Nx: 200, Ny: 48, DxM: 0.5, DyM: 0.5, FPS: 10, Duration: 8}}
	sea, err := sc.Sea()
	if err != nil {
		t.Fatal(err)
	}
	k := sea.Components[0].K
	c := sea.Components[0].Omega / k
	lambda := 2 * math.Pi / k
	// η = a cos(k x − ω t): a crest at x = c t + m λ; at t0 = 1.5 s take the
	// one near x = 40 m and start the fronts 2 m ahead of it.
	t0 := 1.5
	xc := c*t0 + math.Round((40-c*t0)/lambda)*lambda
	sc.Foam = samples.FoamSpec{Enabled: true, SaturatedFrames: []int{30, 47},
		Patches: []samples.FoamPatch{
			{StartS: t0, FrontXM: xc + 2.1, FrontYM: 6.25, SpeedMPS: 0.8 * c, FrontLengthM: 8, LengthM: 3, DurationS: 2.5},
			{StartS: t0 + 0.3, FrontXM: xc + 2.1 + 0.3*c, FrontYM: 17.25, SpeedMPS: 0.9 * c, FrontLengthM: 6, LengthM: 2, DurationS: 2},
		}}
	path := filepath.Join(t.TempDir(), "foam.nc")
	truth, err := samples.Synthesize(context.Background(), sc, path, 1, 2, nil)
	if err != nil {
		t.Fatal(err)
	}
	if truth.Whitecaps == nil || len(truth.Whitecaps.Patches) != 2 {
		t.Fatalf("truth has no whitecaps: %+v", truth.Whitecaps)
	}
	src, err := ingest.OpenElevation(path, ingest.ElevationOptions{})
	if err != nil {
		t.Fatal(err)
	}
	defer src.Close()
	meta := src.Meta()
	if !meta.HasFoam {
		t.Fatal("the record has no foam variable")
	}
	g := tracking.Geometry{Nx: meta.Grid.Nx(), Ny: meta.Grid.Ny(), X0: meta.Grid.X[0], Y0: meta.Grid.Y[0],
		Dx: meta.Grid.Dx(), Dy: meta.Grid.Dy(), Theta: 0}
	ref := speed.References{Theta: 0, PeakPhaseSpeed: truth.PeakPhaseSpeed}
	det := tracking.NewDetector(g, tracking.DetectOptions{MinElevation: 0.05, MinLength: 2})
	dsc := det.NewScratch()
	linker := tracking.NewLinker(tracking.LinkOptions{MaxGapFrames: 2, GateS: 0.1 * lambda, GateN: 2 * det.Step(), Speed: ref.Predict})
	window := T / 4
	a, err := speed.NewWhitecapAnalyser(g, ref, speed.BreakingOptions{SpeedWindowS: window, MaxGapFrames: 2})
	if err != nil {
		t.Fatal(err)
	}
	xs, ys := sc.Grid.Axes()
	painter, _ := samples.NewFoamPainter(truth.Whitecaps.Patches, nil, xs, ys)
	want := make([]uint8, g.Nx*g.Ny)
	var f ingest.Frame
	for {
		err := src.Next(&f)
		if errors.Is(err, io.EOF) {
			break
		}
		if err != nil {
			t.Fatal(err)
		}
		crests := det.Detect(f.Eta, nil, f.Index, f.Time, dsc)
		linker.Push(f.Index, f.Time, crests)
		if err := a.Add(f.Index, f.Time, f.Foam, f.Valid, crests); err != nil {
			t.Fatal(err)
		}
		if f.Index == 30 || f.Index == 47 {
			continue
		}
		n := painter.Paint(f.Index, f.Time, want)
		for i := range want {
			if want[i] != f.Foam[i] {
				t.Fatalf("frame %d: foam mask read back differs from the painted one at cell %d", f.Index, i)
			}
		}
		_ = n
	}
	tracks, _ := linker.Finish()
	var rows []speed.CrestRow
	for _, tr := range tracks {
		rows = speed.TrackRows(tr, ref, window/2, rows)
	}
	res, err := a.Finish(rows)
	if err != nil {
		t.Fatal(err)
	}
	if res.Skipped[speed.SkipFoamSaturated] != 2 {
		t.Errorf("skipped %v, want 2 saturated frames", res.Skipped)
	}
	if len(res.Whitecaps) != 2 {
		t.Fatalf("%d whitecaps, want 2", len(res.Whitecaps))
	}
	sort.Slice(res.Whitecaps, func(i, j int) bool { return res.Whitecaps[i].FirstFrame < res.Whitecaps[j].FirstFrame })
	ak := H / 2 * k
	for i, w := range res.Whitecaps {
		p := truth.Whitecaps.Patches[i]
		t.Logf("whitecap %d: frames %d–%d, c_br %.3f m/s (painted %.3f), c_br/c_p %.3f, c_br/c_loc %.3f; parent track %d after %.2f s, S_c %.4f (a·k %.4f), c_cr/c_p %.4f",
			w.TrackID, w.FirstFrame, w.LastFrame, w.MedianSpeed, p.SpeedMPS, w.MedianRatioPeak, w.MedianRatioLocal,
			w.ParentTrackID, w.ParentDelayS, w.ParentSteepness, ak, w.ParentRatioPeak)
		if math.Abs(w.MedianSpeed-p.SpeedMPS) > 0.05*p.SpeedMPS {
			t.Errorf("whitecap %d: c_br %.3f m/s, painted %.3f ± 5 %%", i, w.MedianSpeed, p.SpeedMPS)
		}
		wantRatio := p.SpeedMPS / c
		if math.Abs(w.MedianRatioLocal-wantRatio) > 0.05*wantRatio {
			t.Errorf("whitecap %d: c_br/c_loc %.3f, want %.3f ± 5 %%", i, w.MedianRatioLocal, wantRatio)
		}
		if w.ParentTrackID == 0 || w.ParentDelayS != 0 {
			t.Errorf("whitecap %d: parent track %d found after %.2f s; want a crest track from the first frame", i, w.ParentTrackID, w.ParentDelayS)
		}
		if math.Abs(w.ParentSteepness-ak) > 0.02*ak {
			t.Errorf("whitecap %d: parent S_c %.4f, want a·k = %.4f ± 2 %%", i, w.ParentSteepness, ak)
		}
		if math.Abs(w.ParentRatioPeak-1) > 0.02 {
			t.Errorf("whitecap %d: parent c_cr/c_p %.4f, want 1 ± 0.02", i, w.ParentRatioPeak)
		}
	}
	if res.Whitecaps[0].ParentTrackID != res.Whitecaps[1].ParentTrackID {
		t.Errorf("the two whitecaps ride on crest tracks %d and %d, painted on the same crest", res.Whitecaps[0].ParentTrackID, res.Whitecaps[1].ParentTrackID)
	}
	for _, row := range res.Coverage {
		n := painter.Paint(row.Frame, row.Time, want)
		if row.FoamCells != n || math.Abs(row.Coverage-float64(n)/float64(g.Nx*g.Ny)) > 1e-12 {
			t.Errorf("frame %d: W = %.5f, painted %.5f", row.Frame, row.Coverage, float64(n)/float64(g.Nx*g.Ny))
		}
	}
	t.Logf("R = %.4g 1/s, ε = %.4g W/m² (b = %g), mean W = %.5f", res.Breaking.PassageRate, res.Breaking.Dissipation,
		res.Options.BreakingParameter, res.MeanCoverage)
}

// Bad settings and inputs give errors, not panics.
func TestWhitecapBadInput(t *testing.T) {
	g := tracking.Geometry{Nx: 20, Ny: 20, Dx: 1, Dy: 1}
	ref := speed.References{PeakPhaseSpeed: 5}
	if _, err := speed.NewWhitecapAnalyser(g, ref, speed.BreakingOptions{}); err == nil {
		t.Error("missing speed window accepted")
	}
	if _, err := speed.NewWhitecapAnalyser(g, speed.References{}, speed.BreakingOptions{SpeedWindowS: 1}); err == nil {
		t.Error("missing c_p accepted")
	}
	if _, err := speed.NewWhitecapAnalyser(g, ref, speed.BreakingOptions{SpeedWindowS: 1, MaxFoamFraction: 2}); err == nil {
		t.Error("foam fraction 2 accepted")
	}
	a, err := speed.NewWhitecapAnalyser(g, ref, speed.BreakingOptions{SpeedWindowS: 1})
	if err != nil {
		t.Fatal(err)
	}
	if err := a.Add(0, 0, nil, nil, nil); err == nil {
		t.Error("frame without foam accepted")
	}
	if err := a.Add(0, 0, make([]uint8, 5), nil, nil); err == nil {
		t.Error("foam mask of the wrong size accepted")
	}
	ones := make([]uint8, 400)
	for i := range ones {
		ones[i] = 1
	}
	if err := a.Add(0, 0, ones, nil, nil); err != nil {
		t.Fatal(err)
	}
	if err := a.Add(0, 0.1, ones, nil, nil); err == nil {
		t.Error("repeated frame number accepted")
	}
	if _, err := a.Finish(nil); err == nil || !strings.Contains(err.Error(), "saturated") {
		t.Errorf("a record of only saturated frames: error %v, want one naming the saturated frames", err)
	}
}
