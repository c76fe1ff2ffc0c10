package surface_test

import (
	"context"
	"errors"
	"image"
	"math"
	"os"
	"path/filepath"
	"runtime"
	"slices"
	"testing"

	"gocv.io/x/gocv"

	"crestspeed/calib"
	"crestspeed/ingest"
	"crestspeed/samples"
	"crestspeed/speed"
	"crestspeed/speed/analysis"
	"crestspeed/surface"
)

// memSink keeps copies of the maps of a run.
type memSink struct {
	setup *surface.Setup
	maps  []surface.Map
}

func (s *memSink) Start(st *surface.Setup) error {
	s.setup = st
	return nil
}

func (s *memSink) Write(m *surface.Map) error {
	c := *m
	c.Eta = slices.Clone(m.Eta)
	c.Points = slices.Clone(m.Points)
	s.maps = append(s.maps, c)
	return nil
}

func pairsOpener(dir string) surface.Opener {
	return func() (ingest.StereoSource, error) { return ingest.OpenPairs(ingest.PairSpec{Dir: dir}) }
}

// tinySpec is a short record for the quick checks: the demo rig at
// 640×512 px looking 45° down at a wind sea (Hs 0.6 m, Tp 2.8 s), 4 frames
// at 2 Hz.
func tinySpec() samples.Deployment {
	d := samples.DemoDeployment()
	d.ImageSize = image.Pt(640, 512)
	d.DepressionDeg = 45
	d.Sea.JONSWAP.HsM = 0.6
	d.Sea.JONSWAP.TpS = 2.8
	d.FPS = 2
	d.Frames = 4
	d.CalibrationViews = 1
	return d
}

// The maps do not depend on the number of workers (DESIGN: results are
// deterministic whatever the worker count), plane and grid included.
func TestDeterministicAcrossWorkers(t *testing.T) {
	dir, _ := cachedDeployment(t, "tiny-v1", tinySpec())
	rig, err := calib.LoadRig(filepath.Join(dir, samples.DeploymentRig))
	if err != nil {
		t.Fatal(err)
	}
	rig.SeaPlane = nil
	var runs []*memSink
	for _, workers := range []int{1, 2, 3} {
		opt := surface.DefaultOptions()
		opt.Workers = workers
		opt.Plane.Frames = 4
		var s memSink
		if _, err := surface.Run(context.Background(), rig, pairsOpener(filepath.Join(dir, samples.DeploymentFramesDir)), opt, &s); err != nil {
			t.Fatal(err)
		}
		runs = append(runs, &s)
	}
	a := runs[0]
	if len(a.maps) != 4 {
		t.Fatalf("%d maps from 4 pairs", len(a.maps))
	}
	for k, b := range runs[1:] {
		if *a.setup.Rig.SeaPlane != *b.setup.Rig.SeaPlane || !slices.Equal(a.setup.Grid.X, b.setup.Grid.X) || !slices.Equal(a.setup.Grid.Y, b.setup.Grid.Y) {
			t.Fatalf("run %d: plane or grid differ: %v %v", k+1, *a.setup.Rig.SeaPlane, *b.setup.Rig.SeaPlane)
		}
		for i := range a.maps {
			if a.maps[i].Time != b.maps[i].Time || !slices.Equal(a.maps[i].Points, b.maps[i].Points) ||
				!slices.EqualFunc(a.maps[i].Eta, b.maps[i].Eta, func(x, y float32) bool { return x == y || (x != x && y != y) }) {
				t.Fatalf("run with %d workers: map %d differs", k+2, i)
			}
		}
	}
}

// A rig of another image size than the frames is a clear error before any
// work: the sink is never started.
func TestRigSizeMismatchIsAnErrorBeforeWork(t *testing.T) {
	dir, _ := cachedDeployment(t, "tiny-v1", tinySpec())
	rig, err := calib.LoadRig(filepath.Join(dir, samples.DeploymentRig))
	if err != nil {
		t.Fatal(err)
	}
	big := samples.ScaleRig(rig, image.Pt(1280, 1024))
	var s memSink
	_, err = surface.Run(context.Background(), big, pairsOpener(filepath.Join(dir, samples.DeploymentFramesDir)), surface.DefaultOptions(), &s)
	var se *surface.SizeError
	if !errors.As(err, &se) || se.Got != image.Pt(640, 512) || se.Want != image.Pt(1280, 1024) {
		t.Fatalf("error %v; want a SizeError 640×512 vs 1280×1024", err)
	}
	if s.setup != nil {
		t.Error("the sink was started before the size check")
	}
}

// A pair of another size later in the record is skipped and counted; the
// others are reconstructed.
func TestLaterPairOfOtherSizeIsSkipped(t *testing.T) {
	dir, _ := cachedDeployment(t, "tiny-v1", tinySpec())
	rig, err := calib.LoadRig(filepath.Join(dir, samples.DeploymentRig))
	if err != nil {
		t.Fatal(err)
	}
	rec := t.TempDir()
	frames := filepath.Join(dir, samples.DeploymentFramesDir)
	for i := 0; i < 4; i++ {
		tt := float64(i) / 2
		for _, side := range []samples.Side{samples.LeftSide, samples.RightSide} {
			name := samples.FrameName(side, tt)
			if i != 2 {
				if err := os.Symlink(filepath.Join(frames, name), filepath.Join(rec, name)); err != nil {
					t.Fatal(err)
				}
				continue
			}
			m := gocv.IMRead(filepath.Join(frames, name), gocv.IMReadGrayScale)
			small := gocv.NewMat()
			gocv.Resize(m, &small, image.Pt(320, 256), 0, 0, gocv.InterpolationArea)
			gocv.IMWrite(filepath.Join(rec, name), small)
			m.Close()
			small.Close()
		}
	}
	opt := surface.DefaultOptions()
	opt.Plane.Frames = 3
	opt.Workers = 2
	var s memSink
	res, err := surface.Run(context.Background(), rig, pairsOpener(rec), opt, &s)
	if err != nil {
		t.Fatal(err)
	}
	if len(s.maps) != 3 || res.Skipped[surface.SkipRigSize] != 1 {
		t.Errorf("%d maps, skipped %v; want 3 maps and 1 pair skipped for its size", len(s.maps), res.Skipped)
	}
}

// Depth error of a stereo point along its line of sight (common practice):
// σ_Z ≈ Z²·σ_d/(f·B) for a disparity error σ_d, Z the depth, f the
// rectified focal length and B the baseline; along the ray σ_R = σ_Z·R/Z.
// A point displaced by δR along a ray that meets the sea at grazing angle
// γ errs by δR·sin γ in height and δR·cos γ horizontally, the latter
// becoming a height error through the sea's slope s: the elevation error
// of one point is σ_R·√(sin²γ + s²cos²γ).
func stereoElevationError(w calib.WorldFrame, rc *calib.Rectification, x, y, sigmaD, slope float64) float64 {
	Xc := w.ToCamera([3]float64{x, y, 0})
	var Z float64
	for j := 0; j < 3; j++ {
		Z += rc.R1[6+j] * Xc[j]
	}
	R := math.Sqrt(Xc[0]*Xc[0] + Xc[1]*Xc[1] + Xc[2]*Xc[2])
	sigmaZ := Z * Z * sigmaD / (rc.FocalPx() * rc.BaselineM())
	h := w.T[2]
	g := math.Atan2(h, math.Hypot(x, y))
	return sigmaZ * R / Z * math.Sqrt(math.Sin(g)*math.Sin(g)+slope*slope*math.Cos(g)*math.Cos(g))
}

// rmsSlope returns the RMS magnitude of the gradient of the truth maps
// (centred differences).
func rmsSlope(t *testing.T, path string) float64 {
	src, err := ingest.OpenElevation(path, ingest.ElevationOptions{})
	if err != nil {
		t.Fatal(err)
	}
	defer src.Close()
	g := src.Meta().Grid
	nx, ny, dx, dy := g.Nx(), g.Ny(), g.Dx(), g.Dy()
	var f ingest.Frame
	var s2 float64
	n := 0
	for src.Next(&f) == nil {
		for j := 1; j < ny-1; j++ {
			for i := 1; i < nx-1; i++ {
				c := j*nx + i
				gx := float64(f.Eta[c+1]-f.Eta[c-1]) / (2 * dx)
				gy := float64(f.Eta[c+nx]-f.Eta[c-nx]) / (2 * dy)
				s2 += gx*gx + gy*gy
				n++
			}
		}
	}
	return math.Sqrt(s2 / float64(n))
}

func medianRatioPeak(rows []speed.CrestRow) (float64, int) {
	var v []float64
	for _, r := range rows {
		if !math.IsNaN(r.RatioPeak) && !math.IsInf(r.RatioPeak, 0) {
			v = append(v, r.RatioPeak)
		}
	}
	if len(v) == 0 {
		return math.NaN(), 0
	}
	slices.Sort(v)
	if len(v)%2 == 1 {
		return v[len(v)/2], len(v)
	}
	return (v[len(v)/2-1] + v[len(v)/2]) / 2, len(v)
}

// analyseFile runs the crest analysis with the settings of "crestspeed
// track" but the smallest crest kept, minCrest times Hm0.
func analyseFile(t *testing.T, path string, minCrest float64, band ...float64) *analysis.Record {
	src, err := ingest.OpenElevation(path, ingest.ElevationOptions{})
	if err != nil {
		t.Fatal(err)
	}
	defer src.Close()
	opt := analysis.DefaultOptions()
	opt.MinCrestFraction, opt.Workers, opt.BreakingIndex, opt.DominantBandFp = minCrest, runtime.NumCPU(), false, band
	rec, err := analysis.Run(context.Background(), src, opt)
	if err != nil {
		t.Fatal(err)
	}
	return rec
}

// TestReconstructDeployment reconstructs the rendered test deployment (see
// testDeploymentSpec) from its images and a rig without a sea plane, on
// the truth's own grid, and compares with the true elevation: the fitted
// plane, the error against range, Hm0 and Tp, and the median crest-speed
// ratio of the tracked crests.
func TestReconstructDeployment(t *testing.T) {
	if testing.Short() {
		t.Skip("the rendered deployment takes minutes the first time")
	}
	dir, tr := cachedDeployment(t, "main-v3", testDeploymentSpec())
	rig, err := calib.LoadRig(filepath.Join(dir, samples.DeploymentRig))
	if err != nil {
		t.Fatal(err)
	}
	truePlane := *rig.SeaPlane
	rig.SeaPlane = nil
	truthPath := filepath.Join(dir, samples.DeploymentTruthElevation)
	ts, err := ingest.OpenElevation(truthPath, ingest.ElevationOptions{})
	if err != nil {
		t.Fatal(err)
	}
	tg := ts.Meta().Grid
	ts.Close()

	opt := surface.DefaultOptions()
	opt.Workers = runtime.NumCPU()
	x0, x1, y0, y1 := tg.X[0], tg.X[len(tg.X)-1], tg.Y[0], tg.Y[len(tg.Y)-1]
	opt.Grid.X0, opt.Grid.X1, opt.Grid.Y0, opt.Grid.Y1, opt.Grid.D = &x0, &x1, &y0, &y1, tg.Dx()
	out := filepath.Join(t.TempDir(), "maps.nc")
	sink := &surface.FileSink{Path: out, PointsPath: filepath.Join(t.TempDir(), "points.nc"),
		Options: ingest.WriteOptions{TimeUnits: ts.Meta().TimeUnits}}
	res, err := surface.Run(context.Background(), rig, pairsOpener(filepath.Join(dir, samples.DeploymentFramesDir)), opt, sink)
	if err != nil {
		sink.Abort()
		t.Fatal(err)
	}
	if err := sink.Commit(); err != nil {
		t.Fatal(err)
	}
	s := res.Setup
	t.Logf("%d maps, coverage %.3f (lowest %.3f), skipped %v, passes %v", res.Frames, res.CoverageMean, res.CoverageMin, res.Skipped, res.Pass)
	t.Logf("sea σ_η %.4f m (truth Hm0/4 %.4f m); band ±%.3f m; %d strips: %v", s.SeaSigmaM, tr.Hm0M/4, s.BandHalfWidthM, len(s.Strips), s.Strips)
	if res.Frames != tr.Frames || !slices.Equal(s.Grid.X, tg.X) || !slices.Equal(s.Grid.Y, tg.Y) {
		t.Fatalf("%d maps of %d frames; grid %d×%d, truth %d×%d", res.Frames, tr.Frames, s.Grid.Nx(), s.Grid.Ny(), tg.Nx(), tg.Ny())
	}

	// Fitted plane against the pose the record was rendered with. Its error
	// is the mean of the sea over the snapshots fitted: with σ_η = Hs/4 and
	// N = 20 snapshots a period or more apart, the standard error of the
	// mean level is σ_η/√N (common practice), 0.034 m; bounds at three of
	// them for the height, and for the tilt that height over half the
	// patch's length (9 m).
	p := s.Rig.SeaPlane
	dot := 0.0
	for i := 0; i < 3; i++ {
		dot += p.Normal[i] * truePlane.Normal[i]
	}
	tilt := math.Acos(math.Min(1, dot))
	sigmaMean := tr.Hm0M / 4 / math.Sqrt(float64(s.PlanePairs))
	t.Logf("plane: %d pairs, %d inliers, RMS %.3f m; tilt %.4f°, offset error %+.4f m (bounds %.3f°, %.3f m)",
		s.PlanePairs, s.PlaneFit.Inliers, s.PlaneFit.RMSM, tilt*180/math.Pi, p.OffsetM-truePlane.OffsetM,
		math.Atan(3*sigmaMean/9)*180/math.Pi, 3*sigmaMean)
	if tilt > math.Atan(3*sigmaMean/9) || math.Abs(p.OffsetM-truePlane.OffsetM) > 3*sigmaMean {
		t.Errorf("fitted sea plane tilted %.4f° and offset by %.4f m from the true one", tilt*180/math.Pi, p.OffsetM-truePlane.OffsetM)
	}

	// Error against range, cell by cell over all frames.
	tw, err := truePlane.World()
	if err != nil {
		t.Fatal(err)
	}
	rc, err := rig.Rectify(opt.RectifyAlpha)
	if err != nil {
		t.Fatal(err)
	}
	slope := rmsSlope(t, truthPath)
	const sigmaD = 0.5
	edges := []float64{8, 12, 16, 20, 24, 28}
	nb := len(edges) - 1
	sum, sum2, law := make([]float64, nb), make([]float64, nb), make([]float64, nb)
	cnt := make([]int, nb)
	bin := make([]int, len(tg.X)*len(tg.Y))
	for j, y := range tg.Y {
		for i, x := range tg.X {
			r := math.Hypot(x, y)
			b := -1
			for k := 0; k < nb; k++ {
				if r >= edges[k] && r < edges[k+1] {
					b = k
				}
			}
			bin[j*len(tg.X)+i] = b
			if b >= 0 {
				law[b] += stereoElevationError(tw, rc, x, y, sigmaD, slope)
			}
		}
	}
	cellsPerBin := make([]int, nb)
	for _, b := range bin {
		if b >= 0 {
			cellsPerBin[b]++
		}
	}
	rs, err := ingest.OpenElevation(out, ingest.ElevationOptions{})
	if err != nil {
		t.Fatal(err)
	}
	ts, err = ingest.OpenElevation(truthPath, ingest.ElevationOptions{})
	if err != nil {
		t.Fatal(err)
	}
	var fr, ft ingest.Frame
	for rs.Next(&fr) == nil {
		if err := ts.Next(&ft); err != nil || math.Abs(ft.Time-fr.Time) > 1e-3 {
			t.Fatalf("truth frame at %g s missing", fr.Time)
		}
		for c, b := range bin {
			if b < 0 || !fr.Valid[c] {
				continue
			}
			e := float64(fr.Eta[c] - ft.Eta[c])
			sum[b] += e
			sum2[b] += e * e
			cnt[b]++
		}
	}
	rs.Close()
	ts.Close()
	rough := tr.RoughnessRMSM
	for b := 0; b < nb; b++ {
		if cnt[b] == 0 {
			continue
		}
		bias := sum[b] / float64(cnt[b])
		rms := math.Sqrt(sum2[b] / float64(cnt[b]))
		point := law[b] / float64(cellsPerBin[b])
		bound := math.Hypot(point, rough)
		t.Logf("range %2.0f–%2.0f m: %7d cells, bias %+.4f m, RMS %.4f m; stereo law with σ_d = %.1f px %.4f m (σ_d implied %.2f px), bound %.4f m",
			edges[b], edges[b+1], cnt[b], bias, rms, sigmaD, point, sigmaD*rms/point, bound)
		// RMS: the error of one point by the depth-error law with σ_d =
		// 0.5 px (a few tenths of a pixel is common practice for
		// semi-global matching with sub-pixel interpolation), the
		// roughness the images show and the truth leaves out added in
		// quadrature; averaging several points per cell only lowers it.
		if rms > bound {
			t.Errorf("range %g–%g m: RMS error %.4f m exceeds %.4f m", edges[b], edges[b+1], rms, bound)
		}
		// Bias: the plane's standard error (above) plus a tenth of the
		// random error of a point.
		if math.Abs(bias) > sigmaMean+0.1*point {
			t.Errorf("range %g–%g m: bias %.4f m exceeds %.4f m", edges[b], edges[b+1], bias, sigmaMean+0.1*point)
		}
	}

	// Sea state and crest speeds, truth against reconstruction (speed's
	// SeaStateEstimator through AnalyseRecord; the same settings for both).
	//
	// Crests of at least 0.2 Hm0 are compared (the default of "crestspeed
	// track" is 0.1): the reconstruction's amplitude gain, measured against
	// this truth by cross-spectra at the cells (scipy.signal.csd, once, not
	// in this test), is 0.99 at the peak fp, 0.92 at 1.75 fp, 0.86 at
	// 2.1 fp and 0.60 at 2.8 fp (waves 1.6 m long, whose centimetre crests
	// shift the disparity by a tenth of a pixel, below what semi-global
	// matching of view-dependent sea texture resolves). The smallest crests, mostly of
	// those short waves, are then fewer, which raises the median ratio by
	// about 0.04 at 0.1 Hm0 (logged below); at 0.2 Hm0 the compared crests
	// are those of the waves the reconstruction resolves.
	const minCrest = 0.2
	recT := analyseFile(t, truthPath, minCrest)
	recR := analyseFile(t, out, minCrest)
	ssT, ssR := recT.SeaState, recR.SeaState
	df := ssT.Freqs[1] - ssT.Freqs[0]
	mT, nT := medianRatioPeak(recT.Rows)
	mR, nR := medianRatioPeak(recR.Rows)
	t.Logf("truth: Hm0 %.4f m, Tp %.3f s, %d tracks, median c/c_p %.4f over %d rows (crests ≥ %.1f Hm0)", ssT.Hm0, ssT.Tp, recT.TrackCount, mT, nT, minCrest)
	t.Logf("reconstructed: Hm0 %.4f m (%+.2f %%), Tp %.3f s (Δf %.4f Hz, bin %.4f Hz), %d tracks, median c/c_p %.4f over %d rows (%+.4f)",
		ssR.Hm0, 100*(ssR.Hm0/ssT.Hm0-1), ssR.Tp, ssR.Fp-ssT.Fp, df, recR.TrackCount, mR, nR, mR-mT)
	{
		a, na := medianRatioPeak(analyseFile(t, truthPath, 0.1).Rows)
		b, nb := medianRatioPeak(analyseFile(t, out, 0.1).Rows)
		t.Logf("crests ≥ 0.1 Hm0: median c/c_p truth %.4f (%d rows), reconstructed %.4f (%d rows), %+.4f", a, na, b, nb, b-a)
	}
	// In the band the reconstruction resolves (below 2 f_p, where its gain
	// is 0.86 or more), both maps low-passed alike (the dominant-wave
	// analysis, track.dominant_band_fp [0, 2]), the median c_cr/c_p of the
	// reconstructed maps must be that of the true maps within 0.02
	// (measured: 0.7278 against 0.7239, +0.004).
	bT := analyseFile(t, truthPath, minCrest, 0, 2)
	bR := analyseFile(t, out, minCrest, 0, 2)
	mbT, nbT := medianRatioPeak(bT.Rows)
	mbR, nbR := medianRatioPeak(bR.Rows)
	t.Logf("below 2 f_p: median c/c_p truth %.4f (%d rows), reconstructed %.4f (%d rows), %+.4f", mbT, nbT, mbR, nbR, mbR-mbT)
	if nbT < 100 || nbR < 100 || math.Abs(mbR-mbT) > 0.02 {
		t.Errorf("below 2 f_p: median crest-speed ratio %.4f (%d rows) against the truth's %.4f (%d rows): not within 0.02", mbR, nbR, mbT, nbT)
	}
	// After the noise-floor correction the reconstruction's Hm0 must be that
	// of the true maps within 2 % (measured: −1.3 %; before the correction
	// the 3–4 cm reconstruction noise raised it by about 6 %).
	if math.Abs(ssR.Hm0/ssT.Hm0-1) > 0.02 {
		t.Errorf("Hm0 %.4f m is not within 2 %% of the truth's %.4f m", ssR.Hm0, ssT.Hm0)
	}
	if math.Abs(ssR.Fp-ssT.Fp) > df {
		t.Errorf("peak frequency %.4f Hz is more than one bin (%.4f Hz) from the truth's %.4f Hz", ssR.Fp, df, ssT.Fp)
	}
	// Over every wave the maps hold the two differ by design: the
	// reconstruction smooths the short waves (its gain is 0.60 at 2.8 f_p,
	// see above) and its maps, which carry a noise floor, are low-passed
	// for crest detection (track.noise_lowpass), while the true maps keep
	// every short wave riding on the crests, which sets the crests'
	// curvature and slows their tips (speed/analysis
	// TestDominantBandCrestSpeedExact: 0.60 over every wave, 0.77 below
	// 2 f_p). Measured: 0.6527 against 0.5539 (+0.099). The bound, 0.13,
	// keeps that from growing; the agreement is checked in the band both
	// resolve, above.
	if nT < 100 || nR < 100 || math.Abs(mR-mT) > 0.13 {
		t.Errorf("median crest-speed ratio %.4f (%d rows) against the truth's %.4f (%d rows): not within 0.13", mR, nR, mT, nT)
	}
}
