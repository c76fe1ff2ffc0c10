package samples

import (
	"context"
	"errors"
	"io"
	"math"
	"path/filepath"
	"testing"

	"crestspeed/ingest"
)

func axes(nx, ny int, d float64) (xs, ys []float64) {
	return GridSpec{Nx: nx, Ny: ny, DxM: d, DyM: d}.Axes()
}

// A patch along a grid axis with lengths of whole cells covers exactly
// (length/dx)·(front length/dy) cells at every time (area of the
// rectangle), and its most advanced cell centre lies less than one cell
// behind the analytic front d = c (t − t0) (definition of the painting).
// Before its start, after its end, it paints nothing; a saturated frame is
// all ones.
func TestFoamPainterRectangle(t *testing.T) {
	xs, ys := axes(200, 60, 0.5)
	p := FoamPatch{StartS: 1, FrontXM: 20.1, FrontYM: 15.25, SpeedMPS: 5.7, FrontLengthM: 8, LengthM: 3, DurationS: 2}
	fp, err := NewFoamPainter([]FoamPatch{p}, []int{7}, xs, ys)
	if err != nil {
		t.Fatal(err)
	}
	mask := make([]uint8, 200*60)
	for k := 0; k < 40; k++ {
		tt := float64(k) / 10
		n := fp.Paint(k, tt, mask)
		if k == 7 {
			if n != len(mask) {
				t.Errorf("saturated frame painted %d cells, want all %d", n, len(mask))
			}
			continue
		}
		if !p.Active(tt) {
			if n != 0 {
				t.Errorf("t = %.1f s: %d cells outside the patch's life", tt, n)
			}
			continue
		}
		if n != 16*6 {
			t.Errorf("t = %.1f s: %d cells, want 96 (8 m × 3 m of 0.25 m² cells)", tt, n)
		}
		xf, _ := p.FrontAt(tt)
		lead := math.Inf(-1)
		for i, v := range mask {
			if v != 0 {
				lead = math.Max(lead, xs[i%200])
			}
		}
		if d := xf - lead; d < 0 || d >= 0.5 {
			t.Errorf("t = %.1f s: most advanced foam cell at x = %.3f, front at %.3f", tt, lead, xf)
		}
	}
}

// An oblique patch paints about its area: front length × length within
// 5 % (sampling of the rectangle by cell centres).
func TestFoamPainterOblique(t *testing.T) {
	xs, ys := axes(200, 200, 0.5)
	p := FoamPatch{StartS: 0, FrontXM: 40, FrontYM: 40, DirectionDeg: 35, SpeedMPS: 6, FrontLengthM: 12, LengthM: 4, DurationS: 5}
	fp, _ := NewFoamPainter([]FoamPatch{p}, nil, xs, ys)
	mask := make([]uint8, 200*200)
	for _, tt := range []float64{0, 0.73, 2.2} {
		n := fp.Paint(0, tt, mask)
		area := float64(n) * 0.25
		if math.Abs(area-48) > 0.05*48 {
			t.Errorf("t = %g s: painted %.2f m², want 48 ± 5 %%", tt, area)
		}
	}
}

// Synthesize with foam writes the foam variable, whose frames read back
// equal the painted masks, and the truth names the patches and the
// saturated frames; without foam the file has no foam variable.
func TestSynthesizeWithFoam(t *testing.T) {
	sc := Scenario{Kind: KindRegular, Regular: RegularWave{HeightM: 0.4, PeriodS: 4, DirectionDeg: 0},
		Grid: GridSpec{Nx: 64, Ny: 32, DxM: 0.5, DyM: 0.5, FPS: 10, Duration: 2},
		Foam: FoamSpec{Enabled: true, SaturatedFrames: []int{4},
			Patches: []FoamPatch{{StartS: 0.3, FrontXM: 8.1, FrontYM: 8.25, SpeedMPS: 5, FrontLengthM: 4, LengthM: 2, DurationS: 1}}}}
	path := filepath.Join(t.TempDir(), "f.nc")
	truth, err := Synthesize(context.Background(), sc, path, 1, 1, nil)
	if err != nil {
		t.Fatal(err)
	}
	back, err := ReadTruth(TruthPath(path))
	if err != nil {
		t.Fatal(err)
	}
	if back.Whitecaps == nil || len(back.Whitecaps.Patches) != 1 || back.Whitecaps.Patches[0] != sc.Foam.Patches[0] ||
		len(back.Whitecaps.SaturatedFrames) != 1 || truth.Whitecaps.Auto != nil {
		t.Fatalf("truth whitecaps %+v", back.Whitecaps)
	}
	src, err := ingest.OpenElevation(path, ingest.ElevationOptions{})
	if err != nil {
		t.Fatal(err)
	}
	defer src.Close()
	if !src.Meta().HasFoam {
		t.Fatal("no foam variable written")
	}
	xs, ys := sc.Grid.Axes()
	fp, _ := NewFoamPainter(sc.Foam.Patches, sc.Foam.SaturatedFrames, xs, ys)
	want := make([]uint8, 64*32)
	var f ingest.Frame
	frames, foamCells := 0, 0
	for {
		err := src.Next(&f)
		if errors.Is(err, io.EOF) {
			break
		}
		if err != nil {
			t.Fatal(err)
		}
		fp.Paint(f.Index, f.Time, want)
		for i := range want {
			if (want[i] != 0) != (f.Foam[i] != 0) {
				t.Fatalf("frame %d cell %d: foam %d, painted %d", f.Index, i, f.Foam[i], want[i])
			}
			if f.Index != 4 && f.Foam[i] != 0 {
				foamCells++
			}
		}
		frames++
	}
	if frames != 20 || foamCells != 9*8*4 {
		t.Errorf("%d frames, %d foam cells outside the saturated frame; want 20 and 288 (9 frames × 8 × 4 cells)", frames, foamCells)
	}
	// without foam
	sc.Foam = FoamSpec{}
	path2 := filepath.Join(t.TempDir(), "g.nc")
	if _, err := Synthesize(context.Background(), sc, path2, 1, 1, nil); err != nil {
		t.Fatal(err)
	}
	src2, err := ingest.OpenElevation(path2, ingest.ElevationOptions{})
	if err != nil {
		t.Fatal(err)
	}
	defer src2.Close()
	if src2.Meta().HasFoam {
		t.Error("foam variable written without foam enabled")
	}
}

// Automatic foam on a one-component "packet" (a cosine focused at the
// focus): the crest steepness there is exactly a·k (geometry of the
// cosine, docs/methods.md "Crests"), the patch is painted only when a·k reaches the
// threshold, at the focus and time, with front speed 0.8·gT/(2π) (deep
// water linear phase speed; Dean & Dalrymple 1991).
func TestAutoFoamAtFocus(t *testing.T) {
	T, a := 4.0, 0.3
	pk := FocusingPacket{CentrePeriodS: T, Bandwidth: 0.1, FocusXM: 30, FocusYM: 10, FocusTimeS: 5, FocusEtaM: a, Components: 1}
	sea, err := pk.Sea()
	if err != nil {
		t.Fatal(err)
	}
	k := sea.Components[0].K
	c := 9.80665 * T / (2 * math.Pi)
	sc := Scenario{Kind: KindPacket, Packet: pk, Grid: GridSpec{Nx: 64, Ny: 32, DxM: 0.5, DyM: 0.5, FPS: 10, Duration: 2}}
	xs, ys := sc.Grid.Axes()
	for _, thr := range []float64{0.5 * a * k, 1.5 * a * k} {
		spec := FoamSpec{Enabled: true, Auto: AutoFoam{Enabled: true, MinSteepness: thr}}
		_, truth, err := spec.setupFoam(sc, sea, xs, ys)
		if err != nil {
			t.Fatal(err)
		}
		at := truth.Auto
		if math.Abs(at.FocusSteepness-a*k) > 1e-6*a*k {
			t.Errorf("focus steepness %.8f, want a·k = %.8f", at.FocusSteepness, a*k)
		}
		if at.Painted != (thr < a*k) || (at.Painted && len(truth.Patches) != 1) || (!at.Painted && len(truth.Patches) != 0) {
			t.Errorf("threshold %.4f: painted %v with %d patches", thr, at.Painted, len(truth.Patches))
			continue
		}
		if at.Painted {
			p := truth.Patches[0]
			if math.Abs(p.SpeedMPS-0.8*c) > 1e-6*c || p.FrontXM != 30 || p.FrontYM != 10 || p.StartS != 5 {
				t.Errorf("patch %+v; want front speed %.4f m/s from (30, 10) at 5 s", p, 0.8*c)
			}
		}
	}
	// automatic foam needs a packet
	sc.Kind = KindRegular
	sc.Regular = RegularWave{HeightM: 0.4, PeriodS: 4}
	if _, _, err := (FoamSpec{Enabled: true, Auto: AutoFoam{Enabled: true, MinSteepness: 0.1}}).setupFoam(sc, sea, xs, ys); err == nil {
		t.Error("automatic foam on a regular wave accepted")
	}
}

// Bad foam settings are refused with an error.
func TestFoamSpecValidate(t *testing.T) {
	bad := []FoamSpec{
		{Patches: []FoamPatch{{FrontLengthM: 1, LengthM: 1, DurationS: 1}}}, // not enabled
		{Enabled: true, Patches: []FoamPatch{{FrontLengthM: 0, LengthM: 1, DurationS: 1}}},
		{Enabled: true, Patches: []FoamPatch{{FrontLengthM: 1, LengthM: 1, DurationS: 1, SpeedMPS: math.NaN()}}},
		{Enabled: true, Auto: AutoFoam{Enabled: true}},
		{Enabled: true, SaturatedFrames: []int{-1}},
	}
	for i, s := range bad {
		if err := s.Validate(); err == nil {
			t.Errorf("case %d accepted", i)
		}
	}
	if err := (FoamSpec{Enabled: true}).Validate(); err != nil {
		t.Errorf("foam with no patches refused: %v", err)
	}
}
