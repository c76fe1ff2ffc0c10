package surface_test

import (
	"context"
	"errors"
	"image"
	"math"
	"math/rand/v2"
	"path/filepath"
	"testing"

	"gocv.io/x/gocv"

	"crestspeed/calib"
	"crestspeed/ingest"
	"crestspeed/samples"
	"crestspeed/surface"
)

// flatImage is a w×h image of grey level g with Gaussian noise of σ
// grey levels.
func flatImage(w, h int, g, sigma float64, seed uint64) []uint8 {
	rng := rand.New(rand.NewPCG(seed, 1))
	pix := make([]uint8, w*h)
	for i := range pix {
		pix[i] = uint8(max(0, min(255, math.Round(g+sigma*rng.NormFloat64()))))
	}
	return pix
}

func newDetector(t *testing.T) *surface.FoamDetector {
	t.Helper()
	det, err := surface.NewFoamDetector(surface.DefaultFoamOptions())
	if err != nil {
		t.Fatal(err)
	}
	return det
}

// A flat, noisy sea image holds no foam (the definition: foam is brighter
// than the local background by the threshold ratio; σ = 2 grey levels of
// noise on a background of 80 never reaches 1.8 × 80).
func TestFoamFlatImageHasNone(t *testing.T) {
	det := newDetector(t)
	const w, h = 320, 256
	mask := make([]uint8, w*h)
	n, err := det.Detect(flatImage(w, h, 80, 2, 1), w, h, mask)
	if err != nil || n != 0 {
		t.Fatalf("flat image: %d foam pixels, error %v; want none and no error", n, err)
	}
}

// A bright disc of radius 20 px on a dark sea is found with the area of
// a disc, πr² (geometry), within 5 %: the digitised disc differs from πr²
// by about its perimeter times half a pixel, 2πr·0.5/(πr²) = 1/r = 5 %.
func TestFoamDiscArea(t *testing.T) {
	det := newDetector(t)
	const w, h, r = 320, 256, 20.0
	pix := flatImage(w, h, 80, 2, 2)
	for y := 0; y < h; y++ {
		for x := 0; x < w; x++ {
			if math.Hypot(float64(x)+0.5-150, float64(y)+0.5-120) < r {
				pix[y*w+x] = 210
			}
		}
	}
	mask := make([]uint8, w*h)
	n, err := det.Detect(pix, w, h, mask)
	if err != nil {
		t.Fatal(err)
	}
	want := math.Pi * r * r
	if math.Abs(float64(n)-want) > 0.05*want {
		t.Errorf("disc of radius %g px: %d foam pixels, want πr² = %.0f within 5 %%", r, n, want)
	}
	if mask[120*w+150] != 1 || mask[10*w+10] != 0 {
		t.Error("the disc's centre is not foam or the far corner is")
	}
}

// Saturated and black images are skipped and counted, never foam (issue
// check "bad input"; the thresholds are the documented defaults: ≥ 250 on
// at least half the image, mean below 5).
func TestFoamSaturatedAndBlackAreSkipped(t *testing.T) {
	det := newDetector(t)
	const w, h = 320, 256
	mask := make([]uint8, w*h)
	n, err := det.Detect(flatImage(w, h, 254, 1, 3), w, h, mask)
	if !errors.Is(err, surface.ErrSaturatedImage) || n != 0 {
		t.Errorf("saturated image: %d foam pixels, error %v; want none and %v", n, err, surface.ErrSaturatedImage)
	}
	n, err = det.Detect(flatImage(w, h, 1, 1, 4), w, h, mask)
	if !errors.Is(err, surface.ErrBlackImage) || n != 0 {
		t.Errorf("black image: %d foam pixels, error %v; want none and %v", n, err, surface.ErrBlackImage)
	}
	for _, v := range mask {
		if v != 0 {
			t.Fatal("a skipped image left foam in the mask")
		}
	}
	if det.Skipped["saturated image"] != 1 || det.Skipped["black image"] != 1 {
		t.Errorf("skip counts %v; want one saturated and one black image", det.Skipped)
	}
}

// foamSpec is a short rendered record at 640×512 px (the chessboard
// view is not found at smaller sizes) with two painted
// whitecaps inside the analysis grid, moving toward the rig at 2 and
// 1.5 m/s, the first appearing after frame 0.
func foamSpec() samples.Deployment {
	d := samples.DemoDeployment()
	d.ImageSize = image.Pt(640, 512)
	d.DepressionDeg = 45
	d.Sea.JONSWAP.HsM = 0.6
	d.Sea.JONSWAP.TpS = 2.8
	d.FPS = 2
	d.Frames = 4
	d.CalibrationViews = 1
	d.Foam = samples.FoamSpec{Enabled: true, Patches: []samples.FoamPatch{
		{StartS: 0.4, FrontXM: 16, FrontYM: 1, DirectionDeg: 180, SpeedMPS: 2, FrontLengthM: 3, LengthM: 1.5, DurationS: 10},
		{StartS: 0.9, FrontXM: 20, FrontYM: -2, DirectionDeg: 170, SpeedMPS: 1.5, FrontLengthM: 2, LengthM: 1, DurationS: 10},
	}}
	return d
}

// On a rendered deployment with painted whitecaps, the foam grid found
// from the images against the painted truth (truth_elevation.nc, foam):
// over the frames, precision and recall of the foam cells, with bounds
// measured on this record (the painted truth is the source).
func TestFoamAgainstPaintedTruth(t *testing.T) {
	dir, _ := cachedDeployment(t, "foam-v1", foamSpec())
	rig, err := calib.LoadRig(filepath.Join(dir, samples.DeploymentRig))
	if err != nil {
		t.Fatal(err)
	}
	src, err := ingest.OpenElevation(filepath.Join(dir, samples.DeploymentTruthElevation), ingest.ElevationOptions{})
	if err != nil {
		t.Fatal(err)
	}
	defer src.Close()
	meta := src.Meta()
	if !meta.HasFoam {
		t.Fatal("the truth file has no foam variable")
	}
	rec, err := surface.New(rig, surface.DefaultOptions())
	if err != nil {
		t.Fatal(err)
	}
	defer rec.Close()
	if err := rec.SetGrid(meta.Grid); err != nil {
		t.Fatal(err)
	}
	w, err := rec.NewWorker()
	if err != nil {
		t.Fatal(err)
	}
	defer w.Close()
	det := newDetector(t)
	var m surface.Map
	var fr ingest.Frame
	var grid []uint8
	var tp, fp, fn, truthFrame0 int
	for i := 0; ; i++ {
		if err := src.Next(&fr); err != nil {
			break
		}
		left := gocv.IMRead(filepath.Join(dir, samples.DeploymentFramesDir, samples.FrameName(samples.LeftSide, fr.Time)), gocv.IMReadGrayScale)
		right := gocv.IMRead(filepath.Join(dir, samples.DeploymentFramesDir, samples.FrameName(samples.RightSide, fr.Time)), gocv.IMReadGrayScale)
		err := w.Reconstruct(left, right, &m)
		if err == nil {
			var st surface.FoamStats
			grid, st, err = w.Foam(det, grid)
			t.Logf("frame %d: %+v", i, st)
		}
		left.Close()
		right.Close()
		if err != nil {
			t.Fatal(err)
		}
		for c, g := range grid {
			truth := fr.Foam[c] != 0
			if i == 0 && truth {
				truthFrame0++
			}
			switch {
			case g != 0 && truth:
				tp++
			case g != 0:
				fp++
			case truth:
				fn++
			}
		}
	}
	if truthFrame0 != 0 {
		t.Fatalf("frame 0 should have no painted foam, has %d cells", truthFrame0)
	}
	if tp+fn == 0 {
		t.Fatal("no painted foam cell falls on the grid; move the patches")
	}
	prec := float64(tp) / float64(max(tp+fp, 1))
	rec2 := float64(tp) / float64(tp+fn)
	t.Logf("foam cells: %d true positives, %d false positives, %d missed: precision %.3f, recall %.3f", tp, fp, fn, prec, rec2)
	// Measured on this record with the default options (2026-12-02):
	// 254 true positives, 75 false positives (sky glitter on steep wave
	// faces, and cells at patch edges), 25 missed (patch edges): precision
	// 0.772, recall 0.910. The bounds sit a little below.
	if prec < 0.70 || rec2 < 0.85 {
		t.Errorf("precision %.3f and recall %.3f against the painted truth; measured 0.772 and 0.910, bounds 0.70 and 0.85", prec, rec2)
	}
}

// A flat (featureless) image pair through the whole chain gives no foam
// cells: no disparity anywhere, every pixel is placed on the sea plane,
// and none is brighter than the background.
func TestFoamFlatPairGivesNoCells(t *testing.T) {
	dir, _ := cachedDeployment(t, "foam-v1", foamSpec())
	rig, err := calib.LoadRig(filepath.Join(dir, samples.DeploymentRig))
	if err != nil {
		t.Fatal(err)
	}
	rec, err := surface.New(rig, surface.DefaultOptions())
	if err != nil {
		t.Fatal(err)
	}
	defer rec.Close()
	if err := rec.SetGrid(ingest.Grid{X: []float64{10, 11, 12, 13, 14, 15, 16, 17, 18, 19, 20}, Y: []float64{-3, -2, -1, 0, 1, 2, 3}}); err != nil {
		t.Fatal(err)
	}
	w, err := rec.NewWorker()
	if err != nil {
		t.Fatal(err)
	}
	defer w.Close()
	sz := rig.Size
	pix := flatImage(sz.X, sz.Y, 90, 1.5, 5)
	left, err := gocv.NewMatFromBytes(sz.Y, sz.X, gocv.MatTypeCV8UC1, pix)
	if err != nil {
		t.Fatal(err)
	}
	defer left.Close()
	right := left.Clone()
	defer right.Close()
	var m surface.Map
	if err := w.Reconstruct(left, right, &m); err != nil {
		t.Fatal(err)
	}
	det := newDetector(t)
	grid, st, err := w.Foam(det, nil)
	if err != nil {
		t.Fatal(err)
	}
	if st.Cells != 0 || st.FoamPixels != 0 {
		t.Errorf("flat pair: %+v; want no foam pixels and no foam cells", st)
	}
	for _, g := range grid {
		if g != 0 {
			t.Fatal("flat pair: a foam cell in the grid")
		}
	}
	// The same pair saturated is skipped, and the grid stays empty.
	sat := gocv.NewMatWithSizeFromScalar(gocv.NewScalar(255, 0, 0, 0), sz.Y, sz.X, gocv.MatTypeCV8UC1)
	defer sat.Close()
	if err := w.Reconstruct(sat, sat, &m); err != nil {
		t.Fatal(err)
	}
	grid, _, err = w.Foam(det, grid)
	if !errors.Is(err, surface.ErrSaturatedImage) || det.Skipped["saturated image"] != 1 {
		t.Errorf("saturated pair: error %v, skips %v; want %v counted once", err, det.Skipped, surface.ErrSaturatedImage)
	}
	for _, g := range grid {
		if g != 0 {
			t.Fatal("saturated pair: a foam cell in the grid")
		}
	}
}

// BenchmarkFoamDetect1280 times foam detection (without the grid mapping)
// on a 1280×1024 sea image with a few bright patches.
func BenchmarkFoamDetect1280(b *testing.B) {
	const w, h = 1280, 1024
	pix := flatImage(w, h, 60, 3, 6)
	for k := 0; k < 8; k++ {
		cx, cy := 100+150*k, 200+80*k
		for y := cy; y < cy+40; y++ {
			for x := cx; x < cx+90; x++ {
				pix[y*w+x] = 220
			}
		}
	}
	det, err := surface.NewFoamDetector(surface.DefaultFoamOptions())
	if err != nil {
		b.Fatal(err)
	}
	mask := make([]uint8, w*h)
	b.ReportAllocs()
	b.ResetTimer()
	for b.Loop() {
		if _, err := det.Detect(pix, w, h, mask); err != nil {
			b.Fatal(err)
		}
	}
}

// Run with foam detection on writes the foam variable beside eta, and
// the painted whitecaps (painted truth: two patches of 3 m × 1.5 m and
// 2 m × 1 m, about 100 cells of 0.25 m, present in the last frame) are found
// on the automatic grid.
func TestRunWritesFoam(t *testing.T) {
	dir, _ := cachedDeployment(t, "foam-v1", foamSpec())
	rig, err := calib.LoadRig(filepath.Join(dir, samples.DeploymentRig))
	if err != nil {
		t.Fatal(err)
	}
	opt := surface.DefaultOptions()
	opt.Workers = 2
	opt.Foam.Enabled = true
	out := filepath.Join(t.TempDir(), "eta.nc")
	sink := &surface.FileSink{Path: out}
	res, err := surface.Run(context.Background(), rig, pairsOpener(filepath.Join(dir, samples.DeploymentFramesDir)), opt, sink)
	if err != nil {
		t.Fatal(err)
	}
	if err := sink.Commit(); err != nil {
		t.Fatal(err)
	}
	if len(res.FoamSkipped) != 0 {
		t.Errorf("foam skips %v on a well-exposed record", res.FoamSkipped)
	}
	src, err := ingest.OpenElevation(out, ingest.ElevationOptions{})
	if err != nil {
		t.Fatal(err)
	}
	defer src.Close()
	if !src.Meta().HasFoam {
		t.Fatal("the output has no foam variable")
	}
	var fr ingest.Frame
	var counts []int
	for src.Next(&fr) == nil {
		n := 0
		for _, v := range fr.Foam {
			if v != 0 {
				n++
			}
		}
		counts = append(counts, n)
	}
	t.Logf("foam cells per frame: %v (foam detection %v over %d pairs)", counts, res.Times.Foam, res.Times.Pairs)
	if len(counts) != 4 || counts[3] < 50 {
		t.Errorf("foam cells per frame %v; want 4 frames, the last with at least 50 foam cells of the about 100 painted", counts)
	}
}
