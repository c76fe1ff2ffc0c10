package surface_test

import (
	"context"
	"image"
	"math"
	"path/filepath"
	"runtime"
	"testing"

	"crestspeed/calib"
	"crestspeed/samples"
	"crestspeed/surface"
)

// rig12Spec is a deployment like the one a field user found the old
// automatic grid wanting on: the demo rig (at 640×512 px, the same field of
// view) 12 m above the water looking 35° down, which sees the sea from
// about 9 to 44 m, and a regular wave of 0.6 m and 5 s (39 m long) running
// toward it; 6 frames at 1 Hz. The rendered roughness (the texture the
// matcher locks onto) is made of waves 0.3–2 m long instead of the
// renderer's default 0.15–1.5 m: the renderer casts one ray per pixel, so
// texture shorter than about two pixel footprints aliases, differently in
// each view, and beyond 32 m from this rig a pixel covers about 0.6 m of
// sea along the range (measured here: with the default roughness the
// matcher makes patches of mismatches there, RMS errors of 0.12–0.22 m at
// 32–48 m, against 0.04–0.08 m with this one; a camera's lens and pixel
// integrate the texture instead).
func rig12Spec() samples.Deployment {
	d := samples.DemoDeployment()
	d.ImageSize = image.Pt(640, 512)
	d.HeightM = 12
	d.DepressionDeg = 35
	d.Sea = samples.Scenario{Site: d.Site, Kind: samples.KindRegular,
		Regular: samples.RegularWave{HeightM: 0.6, PeriodS: 5, DirectionDeg: 195}}
	d.FPS = 1
	d.Frames = 6
	d.CalibrationViews = 1
	d.Render.Roughness.MinWavelengthM = 0.3
	d.Render.Roughness.MaxWavelengthM = 2
	return d
}

// seenByBoth returns the x range of the points of the mean plane that both
// cameras see, by calib's camera model: world points every 0.1 m along x
// (and every 0.5 m along y) projected into both images (Brown–Conrady
// distortion) and rectified, kept when inside both rectified images (and
// within 40° of both optical axes, where the distortion model still maps
// rays one to one).
func seenByBoth(t *testing.T, rig *calib.Rig) (x0, x1 float64) {
	rc, err := rig.Rectify(0)
	if err != nil {
		t.Fatal(err)
	}
	w, err := rig.SeaPlane.World()
	if err != nil {
		t.Fatal(err)
	}
	W, H := float64(rig.Size.X-1), float64(rig.Size.Y-1)
	x0, x1 = math.Inf(1), math.Inf(-1)
	for x := 1.0; x <= 120; x += 0.1 {
		for y := -60.0; y <= 60; y += 0.5 {
			X := w.ToCamera([3]float64{x, y, 0})
			Xr := rig.RightFromLeft(X)
			if !(X[2] > 0 && math.Hypot(X[0], X[1]) < 0.84*X[2] && Xr[2] > 0 && math.Hypot(Xr[0], Xr[1]) < 0.84*Xr[2]) {
				continue
			}
			pl, okl := rc.RectifyLeft(rig.ProjectLeft(X))
			pr, okr := rc.RectifyRight(rig.ProjectRight(X))
			if okl && okr && pl[0] >= 0 && pl[0] <= W && pl[1] >= 0 && pl[1] <= H && pr[0] >= 0 && pr[0] <= W && pr[1] >= 0 && pr[1] <= H {
				x0, x1 = math.Min(x0, x), math.Max(x1, x)
			}
		}
	}
	return x0, x1
}

// TestGridCoversFootprint: on the 12 m rig the automatic grid (extent
// "footprint") reaches over the range of the sea both cameras see (by the
// camera model, not the reconstruction's own footprint code): its
// supported cells span at least 90 % of it, against the largest inscribed
// rectangle (the former grid, extent "inscribed") which leaves out its
// narrow near end and wide far end; and the elevations of its cells, near
// and far, are right: against the rendered sea evaluated at every cell
// (samples.FrameEvaluator, the generator's own linear superposition), the
// RMS error in each range band is within the depth-error law (as in
// TestReconstructDeployment) with the rendered roughness added.
func TestGridCoversFootprint(t *testing.T) {
	spec := rig12Spec()
	dir, tr := cachedDeployment(t, "rig12-v2", spec)
	rig, err := calib.LoadRig(filepath.Join(dir, samples.DeploymentRig))
	if err != nil {
		t.Fatal(err)
	}
	vx0, vx1 := seenByBoth(t, rig)
	open := pairsOpener(filepath.Join(dir, samples.DeploymentFramesDir))
	choices := map[string]*surface.GridChoice{}
	for _, extent := range []string{surface.ExtentInscribed, surface.ExtentFootprint} {
		opt := surface.DefaultOptions()
		opt.Workers = runtime.NumCPU()
		opt.Plane.Frames = 6
		opt.Grid.Extent = extent
		g, err := surface.Settle(context.Background(), rig, open, opt)
		if err != nil {
			t.Fatal(err)
		}
		c := g.GridChoice
		choices[extent] = c
		span := (c.SupportedXM[1] - c.SupportedXM[0]) / (vx1 - vx0)
		t.Logf("%s: grid x %.2f–%.2f m, y %.2f–%.2f m, %g m cells (%d × %d); supported x %.1f–%.1f m (%.0f %% of the %.1f–%.1f m both cameras see; the footprint code says %.1f–%.1f m), %d cells (%.0f %% of the grid)",
			extent, g.Grid.X[0], g.Grid.X[len(g.Grid.X)-1], g.Grid.Y[0], g.Grid.Y[len(g.Grid.Y)-1], c.SpacingM, g.Grid.Nx(), g.Grid.Ny(),
			c.SupportedXM[0], c.SupportedXM[1], 100*span, vx0, vx1, c.ViewXM[0], c.ViewXM[1], c.SupportedCells, 100*c.SupportedFraction)
		for _, cd := range c.Candidates {
			t.Logf("  candidate %g m: %d supported cells, %.0f m², far edge asks for %g m, eligible %v", cd.SpacingM, cd.SupportedCells, cd.SupportedAreaM2, cd.SpacingAsked, cd.Eligible)
		}
		if extent == surface.ExtentFootprint {
			if span < 0.9 {
				t.Errorf("the footprint grid's supported cells span x %.1f–%.1f m, %.0f %% of the %.1f–%.1f m both cameras see", c.SupportedXM[0], c.SupportedXM[1], 100*span, vx0, vx1)
			}
			if math.Abs(c.ViewXM[0]-vx0) > 0.5 || math.Abs(c.ViewXM[1]-vx1) > 1 {
				t.Errorf("the recorded view x %.1f–%.1f m differs from the camera model's %.1f–%.1f m", c.ViewXM[0], c.ViewXM[1], vx0, vx1)
			}
		}
	}
	if in, fp := choices[surface.ExtentInscribed], choices[surface.ExtentFootprint]; fp.SupportedCells <= in.SupportedCells ||
		fp.SupportedXM[1]-fp.SupportedXM[0] <= in.SupportedXM[1]-in.SupportedXM[0] {
		t.Errorf("the footprint grid (%d cells over x %v) does not cover more than the inscribed one (%d cells over x %v)", fp.SupportedCells, fp.SupportedXM, in.SupportedCells, in.SupportedXM)
	}

	// The maps of the footprint grid against the rendered sea.
	opt := surface.DefaultOptions()
	opt.Workers = runtime.NumCPU()
	opt.Plane.Frames = 6
	var s memSink
	res, err := surface.Run(context.Background(), rig, open, opt, &s)
	if err != nil {
		t.Fatal(err)
	}
	g := s.setup.Grid
	sea, err := spec.Sea.Sea()
	if err != nil {
		t.Fatal(err)
	}
	ev := samples.NewFrameEvaluator(sea, g.X, g.Y, runtime.NumCPU())
	truth := make([]float32, g.Nx()*g.Ny())
	w, err := rig.SeaPlane.World()
	if err != nil {
		t.Fatal(err)
	}
	rc, err := rig.Rectify(0)
	if err != nil {
		t.Fatal(err)
	}
	// The wave's RMS slope: a·k/√2 for amplitude a and wavenumber k
	// (linear theory), k from the deep-water dispersion ω² = g·k.
	k := math.Pow(2*math.Pi/5, 2) / 9.81
	slope := 0.3 * k / math.Sqrt2
	edges := []float64{8, 16, 24, 32, 40, 48}
	nb := len(edges) - 1
	sum2, law := make([]float64, nb), make([]float64, nb)
	cnt, lawN := make([]int, nb), make([]int, nb)
	big := make([]int, nb)
	for _, m := range s.maps {
		if err := ev.Frame(m.Time, truth); err != nil {
			t.Fatal(err)
		}
		for j, y := range g.Y {
			for i, x := range g.X {
				c := j*g.Nx() + i
				r := math.Hypot(x, y)
				b := -1
				for q := 0; q < nb; q++ {
					if r >= edges[q] && r < edges[q+1] {
						b = q
					}
				}
				if b < 0 || m.Eta[c] != m.Eta[c] {
					continue
				}
				e := float64(m.Eta[c] - truth[c])
				if math.Abs(e) > 0.3 {
					big[b]++
				}
				sum2[b] += e * e
				cnt[b]++
				law[b] += stereoElevationError(w, rc, x, y, 0.5, slope)
				lawN[b]++
			}
		}
	}
	t.Logf("%d maps, coverage %.2f of the grid (lowest %.2f), skipped %v", res.Frames, res.CoverageMean, res.CoverageMin, res.Skipped)
	for b := 0; b < nb; b++ {
		if cnt[b] == 0 {
			continue
		}
		rms := math.Sqrt(sum2[b] / float64(cnt[b]))
		bound := math.Hypot(law[b]/float64(lawN[b]), tr.RoughnessRMSM)
		t.Logf("range %2.0f–%2.0f m: %6d cells, RMS %.4f m, bound %.4f m; %d cells off by more than 0.3 m", edges[b], edges[b+1], cnt[b], rms, bound, big[b])
		if rms > bound {
			t.Errorf("range %g–%g m: RMS error %.4f m exceeds %.4f m", edges[b], edges[b+1], rms, bound)
		}
	}
}
