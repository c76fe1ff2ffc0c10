package surface

import (
	"context"
	"errors"
	"fmt"
	"image"
	"io"
	"math"
	"sort"
	"sync"
	"time"

	"gocv.io/x/gocv"

	"crestspeed/calib"
	"crestspeed/ingest"
	"crestspeed/internal/cvshim"
)

// Opener opens the stereo record from its start. [Settle] opens it once to
// sample it (and again per pass when the source is an [IndexSeeker]);
// [ReconstructRange] once.
type Opener func() (ingest.StereoSource, error)

// Reasons for pairs skipped by the surface stage, beside those of the
// source.
const (
	// SkipRigSize: a pair whose size differs from the rig's.
	SkipRigSize = "image size differs from the rig"
	// SkipLowCoverage: a pair whose map has fewer cells with an elevation
	// than MinFrameCoverage of the grid's supported cells.
	SkipLowCoverage = "too few grid cells with elevations"
	// SkipBySource: a pair the source did not deliver, for the reason
	// given when it can be told apart (see [Result.SkippedPairs]).
	SkipBySource = "not delivered by the source"
)

// Setup is what a reconstruction works with: the [Sink] gets it in Start,
// to describe the output.
type Setup struct {
	// Rig is the rig with the sea plane used.
	Rig *calib.Rig
	// PlaneFit is the fit when the plane was fitted, nil when it came
	// from the rig; PlanePairs the number of pairs fitted.
	PlaneFit   *PlaneFit
	PlanePairs int
	// SeaSigmaM is the sea state measured by the settle step.
	SeaSigmaM float64
	// Grid and how it was chosen; GridNote says so in a sentence.
	Grid       ingest.Grid
	GridAuto   bool
	GridNote   string
	GridChoice *GridChoice
	// SGBM are the matcher parameters, with the disparity range over all
	// strips; Strips the rows and range of each; BandHalfWidthM the band
	// of water heights the automatic range covers.
	SGBM           cvshim.SGBMParams
	Strips         []cvshim.Strip
	BandHalfWidthM float64
	AutoDisparity  bool
	// Prewarped: the right image is sheared by the sea plane's disparity
	// and SGBM's range is the residual disparity about it.
	Prewarped bool
	// Rectification of the rig.
	Rectification *calib.Rectification
	// Workers and OpenCV threads per OpenCV call.
	Workers, OpenCVThreads int
	Options                Options
	// Geometry is the settled geometry; First and Last the pairs [First,
	// Last) reconstructed.
	Geometry    *Geometry
	First, Last int
}

// Sink receives the output of a reconstruction: Start once, before the
// first map, then every map in time order. Write must not keep m beyond
// the call.
type Sink interface {
	Start(s *Setup) error
	Write(m *Map) error
}

// Result summarises a reconstruction.
type Result struct {
	Setup *Setup
	// Frames is the number of maps written; Skipped the pairs left out,
	// by reason; SkippedPairs names them, in index order.
	Frames       int
	Skipped      ingest.SkipCounts
	SkippedPairs []SkippedPair
	// FoamSkipped counts the written maps whose left image was not
	// analysed for foam, by reason ("saturated image", "black image");
	// their foam mask is all zeros.
	FoamSkipped ingest.SkipCounts
	// Times sums the stage times of the reconstruction pass over all
	// workers; Pass the wall time of each pass.
	Times StageTimes
	Pass  map[string]time.Duration
	// CoverageMean and CoverageMin are the mean and smallest fraction of
	// grid cells with an elevation over the maps written.
	CoverageMean, CoverageMin float64
}

// Run reconstructs a whole stereo record into elevation maps: [Settle],
// then [ReconstructRange] over every pair, with the record-level skips of
// the source (pairs without a partner, ...) added to the result. The
// output does not depend on the worker count.
func Run(ctx context.Context, rig *calib.Rig, open Opener, opt Options, sink Sink) (*Result, error) {
	if open == nil || sink == nil {
		return nil, fmt.Errorf("surface: Run needs a source opener and a sink")
	}
	geom, err := Settle(ctx, rig, open, opt)
	if err != nil {
		return nil, err
	}
	res, err := ReconstructRange(ctx, rig, open, geom, opt, 0, geom.RecordPairs, sink)
	if res != nil {
		for k, v := range geom.SourceSkipped {
			res.Skipped[k] += v
		}
		for k, v := range geom.Pass {
			res.Pass[k] = v
		}
	}
	if err != nil {
		return res, err
	}
	if res.Frames == 0 {
		return res, fmt.Errorf("surface: no elevation map could be made from the %d pairs (%s); check the images, the rig and min_frame_coverage", geom.RecordPairs, describeSkips(res.Skipped))
	}
	return res, nil
}

// ReconstructRange reconstructs the pairs of index first ≤ i < last of a
// record with a settled geometry (from [Settle] or [LoadGeometry]) and
// hands the maps to sink in time order. Each map depends only on its pair
// and the geometry, so the maps of consecutive ranges are, bit for bit,
// those of one run over their union, for any worker count. The source must
// be the record the geometry was settled on (the same number of pairs).
// Pairs in the range that cannot be used are skipped, counted and named
// in the result; a range with no usable pair is not an error (its Result
// has Frames 0).
func ReconstructRange(ctx context.Context, rig *calib.Rig, open Opener, geom *Geometry, opt Options, first, last int, sink Sink) (*Result, error) {
	if open == nil || sink == nil || geom == nil {
		return nil, fmt.Errorf("surface: ReconstructRange needs a source opener, a settled geometry and a sink")
	}
	rec, err := New(rig, opt)
	if err != nil {
		return nil, err
	}
	defer rec.Close()
	if err := rec.applyGeometry(geom); err != nil {
		return nil, err
	}
	workers := max(opt.Workers, 1)
	threads, restore, err := threadsFor(workers)
	defer restore()
	if err != nil {
		return nil, err
	}
	return rec.reconstructRange(ctx, open, geom, first, last, sink, workers, threads)
}

// applyGeometry sets the plane, the disparity strips and the grid of a
// settled geometry.
func (r *Reconstructor) applyGeometry(g *Geometry) error {
	if g.ImageSize != (image.Point{}) && g.ImageSize != r.rig.Size {
		return fmt.Errorf("surface: the geometry was settled for %d×%d px images but the rig is for %d×%d px; settle the record again with this rig", g.ImageSize.X, g.ImageSize.Y, r.rig.Size.X, r.rig.Size.Y)
	}
	if g.Band.Auto != r.autoRange || (r.autoRange && g.Band.Prewarp != r.opt.Prewarp) {
		return fmt.Errorf("surface: the geometry was settled with another disparity setting (automatic range %v, prewarp %v; now %v, %v); settle the record again with these settings",
			g.Band.Auto, g.Band.Prewarp, r.autoRange, r.autoRange && r.opt.Prewarp)
	}
	if err := r.setPlane(g.Plane, false); err != nil {
		return err
	}
	if err := r.setStrips(g.Band.Strips, g.Band.HalfWidthM); err != nil {
		return err
	}
	return r.SetGrid(g.Grid)
}

// setupOf describes the reconstruction of [first, last).
func (r *Reconstructor) setupOf(g *Geometry, first, last, workers, threads int) *Setup {
	rigOut := r.rig
	p := r.plane
	rigOut.SeaPlane = &p
	s := &Setup{
		Rig: &rigOut, PlaneFit: g.PlaneFit, SeaSigmaM: g.SeaSigmaM,
		Grid: r.grid, GridAuto: g.GridAuto, GridNote: g.GridNote, GridChoice: g.GridChoice,
		Strips: r.Strips(), BandHalfWidthM: r.BandHalfWidth(), AutoDisparity: r.autoRange, Prewarped: r.prewarp,
		Rectification: r.Rectification(), Workers: workers, OpenCVThreads: threads, Options: r.opt,
		Geometry: g, First: first, Last: last,
	}
	if g.PlaneFit != nil {
		s.PlanePairs = g.PlaneFit.Pairs
	}
	minD, numD := r.DisparityRange()
	s.SGBM = r.opt.Matcher.params(minD, numD)
	return s
}

// skipTracker names the pairs a source did not deliver: the holes in its
// indices, with the reason when the source's counts tell it.
type skipTracker struct {
	src   ingest.StereoSource
	times []float64
	names interface {
		PairNames(i int) (left, right string)
	}
	first, last int
	lastIndex   int
	prev        ingest.SkipCounts
	out         []SkippedPair
}

func newSkipTracker(src ingest.StereoSource, first, last int) *skipTracker {
	t := &skipTracker{src: src, first: first, last: last, lastIndex: first - 1, prev: src.Skipped()}
	if ts, ok := src.(interface{ Times() []float64 }); ok {
		t.times = ts.Times()
	}
	t.names, _ = src.(interface {
		PairNames(i int) (left, right string)
	})
	return t
}

// holes names the pairs [a, b) (clipped to the range) that the source
// skipped during its last call to Next.
func (t *skipTracker) holes(a, b int) {
	cur := t.src.Skipped()
	delta := ingest.SkipCounts{}
	total := 0
	for k, v := range cur {
		if d := v - t.prev[k]; d > 0 {
			delta[k] = d
			total += d
		}
	}
	t.prev = cur
	a, b = max(a, t.first), min(b, t.last)
	if b <= a {
		return
	}
	// The reasons are those of the pairs when the counts grew by exactly
	// their number; the pairs take them in index order and in the order of
	// the reasons' names (exact when there is one reason).
	var reasons []string
	if total == b-a {
		for _, k := range sortedKeys(delta) {
			for n := 0; n < delta[k]; n++ {
				reasons = append(reasons, k)
			}
		}
	}
	for i := a; i < b; i++ {
		sp := SkippedPair{Index: i, TimeS: math.NaN(), Reason: SkipBySource}
		if len(reasons) == b-a {
			sp.Reason = reasons[i-a]
		}
		if i < len(t.times) {
			sp.TimeS = t.times[i]
		}
		if t.names != nil {
			sp.Left, sp.Right = t.names.PairNames(i)
		}
		t.out = append(t.out, sp)
	}
}

// seen is told each delivered pair's index; it names the holes before it.
func (t *skipTracker) seen(i int) {
	t.holes(t.lastIndex+1, i)
	t.lastIndex = max(t.lastIndex, i)
}

// reconstructRange is ReconstructRange on a set-up reconstructor.
func (r *Reconstructor) reconstructRange(ctx context.Context, open Opener, g *Geometry, first, last int, sink Sink, workers, threads int) (*Result, error) {
	src, err := open()
	if err != nil {
		return nil, err
	}
	defer src.Close()
	if err := seekRange(src, g, first, last); err != nil {
		return nil, err
	}
	setup := r.setupOf(g, first, last, workers, threads)
	res := &Result{Setup: setup, Skipped: ingest.SkipCounts{}, FoamSkipped: ingest.SkipCounts{}, Pass: map[string]time.Duration{}, CoverageMin: math.NaN()}
	if err := sink.Start(setup); err != nil {
		return nil, err
	}
	minCells := r.minFrameCells(g)

	t0 := time.Now()
	slots := 2 * workers
	maps := make([]Map, slots)
	var sumCov float64
	track := newSkipTracker(src, first, last)
	var sizeSkips []SkippedPair // on the reading goroutine, read after the pass
	var ownSkips []SkippedPair  // on this goroutine
	ws, err := r.newWorkers(workers)
	if err != nil {
		return nil, err
	}
	defer closeWorkers(ws)
	sz := r.rig.Size
	err = runPass(ctx, src, ws, slots, passFuncs{
		accept: func(f *ingest.StereoFrame) (bool, bool) {
			if f.Index < first {
				track.holes(0, 0) // consume the counts of pairs before the range
				return false, false
			}
			if f.Index >= last {
				track.seen(last)
				return false, true
			}
			track.seen(f.Index)
			if f.Left.Cols() != sz.X || f.Left.Rows() != sz.Y {
				sizeSkips = append(sizeSkips, SkippedPair{Index: f.Index, TimeS: f.Time, Left: f.LeftPath, Right: f.RightPath,
					Reason: SkipRigSize})
				return false, false
			}
			return true, false
		},
		process: func(w *Worker, f *ingest.StereoFrame, slot int) error {
			m := &maps[slot]
			m.Index, m.Time, m.LeftPath, m.RightPath = f.Index, f.Time, f.LeftPath, f.RightPath
			return w.Reconstruct(f.Left, f.Right, m)
		},
		consume: func(f *ingest.StereoFrame, slot int, seq int) error {
			m := &maps[slot]
			if r.opt.Progress != nil {
				r.opt.Progress("reconstruct", f.Index+1-first, last-first)
			}
			if m.Stats.Cells < minCells {
				ownSkips = append(ownSkips, SkippedPair{Index: m.Index, TimeS: m.Time, Left: m.LeftPath, Right: m.RightPath,
					Reason: SkipLowCoverage})
				return nil
			}
			if err := sink.Write(m); err != nil {
				return err
			}
			if m.FoamSkip != "" {
				res.FoamSkipped[m.FoamSkip]++
			}
			c := m.Coverage()
			sumCov += c
			if res.Frames == 0 || c < res.CoverageMin {
				res.CoverageMin = c
			}
			res.Frames++
			return nil
		},
	})
	if err == nil && track.lastIndex < last-1 {
		// The source ended before the range did.
		track.seen(last)
	}
	for _, w := range ws {
		res.Times.Add(w.Times)
	}
	res.Pass["reconstruct"] = time.Since(t0)
	all := append(append(track.out, sizeSkips...), ownSkips...)
	sort.SliceStable(all, func(i, j int) bool { return all[i].Index < all[j].Index })
	res.SkippedPairs = all
	for _, sp := range all {
		res.Skipped[sp.Reason]++
	}
	if err != nil {
		return res, err
	}
	if res.Frames > 0 {
		res.CoverageMean = sumCov / float64(res.Frames)
	}
	return res, nil
}

// seekRange checks that the record matches the settled geometry and that
// the pair range first–last lies within it, and moves a seekable source to
// the first pair.
func seekRange(src ingest.StereoSource, g *Geometry, first, last int) error {
	n := src.Len()
	if n != g.RecordPairs {
		return fmt.Errorf("surface: the record has %d image pairs but the geometry was settled on %d; settle this record again", n, g.RecordPairs)
	}
	if first < 0 || last > n || first >= last {
		return fmt.Errorf("surface: the pair range %d–%d is not within the record's %d pairs (give 0 ≤ first < last ≤ %d)", first, last, n, n)
	}
	if sk, ok := src.(IndexSeeker); ok && first > 0 {
		if err := sk.SeekIndex(first); err != nil {
			return fmt.Errorf("surface: cannot move to pair %d of the record: %v", first, err)
		}
	}
	return nil
}

// minFrameCells is the fewest valid cells a map may have and still be kept:
// MinFrameCoverage of the cells the settled grid supports (at least one).
func (r *Reconstructor) minFrameCells(g *Geometry) int {
	supported := len(r.grid.X) * len(r.grid.Y)
	if g.GridChoice != nil && g.GridChoice.SupportedCells > 0 {
		supported = g.GridChoice.SupportedCells
	}
	return max(1, int(math.Ceil(r.opt.MinFrameCoverage*float64(supported)-1e-9)))
}

// describeSkips lists skip counts in a sentence fragment.
func describeSkips(c ingest.SkipCounts) string {
	if len(c) == 0 {
		return "none skipped"
	}
	s := "skipped:"
	first := true
	for _, k := range sortedKeys(c) {
		if !first {
			s += ","
		}
		first = false
		s += fmt.Sprintf(" %d %s", c[k], k)
	}
	return s
}

// SizeError reports that the first pairs sampled from a record do not have
// the rig's image size; [Settle] (and so [Run]) returns it before any
// reconstruction.
type SizeError struct {
	Path      string      // left image of the first such pair
	Got, Want image.Point // its size and the rig's
}

func (e *SizeError) Error() string {
	return fmt.Sprintf("surface: the first image pairs sampled from the record (%s, ...) are %d×%d px but the rig is calibrated for %d×%d px; use the rig file of the cameras that took these images",
		e.Path, e.Got.X, e.Got.Y, e.Want.X, e.Want.Y)
}

func releaseFrame(f *ingest.StereoFrame) {
	for _, m := range []*gocv.Mat{&f.Left, &f.Right} {
		if m.Ptr() != nil {
			m.Close()
			*m = gocv.Mat{}
		}
	}
}

func (r *Reconstructor) newWorkers(n int) ([]*Worker, error) {
	ws := make([]*Worker, 0, n)
	for i := 0; i < n; i++ {
		w, err := r.NewWorker()
		if err != nil {
			closeWorkers(ws)
			return nil, err
		}
		ws = append(ws, w)
	}
	return ws, nil
}

func closeWorkers(ws []*Worker) {
	for _, w := range ws {
		w.Close()
	}
}

// planePass fits the mean sea plane to the sampled pairs and returns it
// with the points of the final fit. Semi-global matching of the plain
// rectified pair biases the disparities of a surface slanted as steeply as
// the sea seen from a mast (its single-pass paths all run down the image
// and lag behind the growth of disparity with the row, putting the points
// too deep), so the fit is done on prewarped pairs (see
// [Reconstructor.SetSeaPlane]): a first plane, from a quarter of the pairs
// matched without prewarp (or the rig's plane on a refit), sets the
// prewarp, and the final plane is fitted to all the pairs matched with it.
// With a configured disparity range there is no prewarp and the first fit
// is the last.
func (r *Reconstructor) planePass(ctx context.Context, smp *sample, workers int) (PlaneFit, [][3]float32, error) {
	all := smp.all()
	switch {
	case r.roughPlane != nil:
		if err := r.SetSeaPlane(*r.roughPlane); err != nil {
			return PlaneFit{}, nil, err
		}
	case !r.autoRange || !r.opt.Prewarp:
		return r.fitPass(ctx, smp, all, workers)
	default:
		n := len(all)
		quarter := sampleTargets(min(n, max(3, (n+3)/4)), n-1)
		fit, _, err := r.fitPass(ctx, smp, quarter, workers)
		if err != nil {
			return PlaneFit{}, nil, err
		}
		if err := r.SetSeaPlane(fit.Plane); err != nil {
			return PlaneFit{}, nil, fmt.Errorf("%v (the first plane fitted is probably not the sea; check the images)", err)
		}
	}
	return r.fitPass(ctx, smp, all, workers)
}

// pointsPass returns the points, in the left camera's frame, of the
// sampled pairs at positions k, one pixel in Plane.Stride² each, matched
// with the current setup.
func (r *Reconstructor) pointsPass(ctx context.Context, smp *sample, k []int, workers int, pass string) ([][3]float32, error) {
	pts, _, _, err := r.pointsPassTimes(ctx, smp, k, workers, pass)
	return pts, err
}

func (r *Reconstructor) pointsPassTimes(ctx context.Context, smp *sample, k []int, workers int, pass string) (pts [][3]float32, pairs int, span float64, err error) {
	po := r.opt.Plane
	src, err := smp.source(k)
	if err != nil {
		return nil, 0, 0, err
	}
	defer src.Close()
	ws, err := r.newWorkers(workers)
	if err != nil {
		return nil, 0, 0, err
	}
	defer closeWorkers(ws)
	slots := 2 * workers
	bufs := make([][][3]float32, slots)
	t0, t1 := math.NaN(), math.NaN()
	err = runPass(ctx, src, ws, slots, passFuncs{
		accept: func(f *ingest.StereoFrame) (bool, bool) { return true, false },
		process: func(w *Worker, f *ingest.StereoFrame, slot int) error {
			var err error
			bufs[slot], err = w.CameraPoints(f.Left, f.Right, po.Stride, bufs[slot][:0])
			return err
		},
		consume: func(f *ingest.StereoFrame, slot int, seq int) error {
			pts = append(pts, bufs[slot]...)
			pairs++
			if pairs == 1 {
				t0 = f.Time
			}
			t1 = f.Time
			if r.opt.Progress != nil {
				r.opt.Progress(pass, pairs, len(k))
			}
			return nil
		},
	})
	if err != nil {
		return nil, 0, 0, err
	}
	return pts, pairs, t1 - t0, nil
}

// fitPass fits a plane to the points of the sampled pairs at positions k,
// matched with the current setup, and returns it with the points.
func (r *Reconstructor) fitPass(ctx context.Context, smp *sample, k []int, workers int) (PlaneFit, [][3]float32, error) {
	po := r.opt.Plane
	all, pairs, span, err := r.pointsPassTimes(ctx, smp, k, workers, "plane")
	if err != nil {
		return PlaneFit{}, nil, err
	}
	fit, err := FitPlane(all, po.Iterations, po.ThresholdM, po.Seed)
	if err != nil {
		return PlaneFit{}, nil, err
	}
	if fit.Inliers < len(all)/4 {
		return PlaneFit{}, nil, fmt.Errorf("surface: only %d of %d points lie within %g m of the fitted sea plane; the matches are not of a sea surface (check the images, the disparity range and plane.ransac_threshold_m)", fit.Inliers, len(all), po.ThresholdM)
	}
	fit.Pairs, fit.SpanS = pairs, span
	return fit, all, nil
}

// chooseGrid returns the configured grid, or the automatic one with the
// figures of its choice.
func (r *Reconstructor) chooseGrid(ctx context.Context, smp *sample, workers int) (ingest.Grid, bool, string, *GridChoice, error) {
	gs := r.opt.Grid
	if gs.X0 != nil {
		d := gs.D
		note := fmt.Sprintf("configured: x %g–%g m, y %g–%g m, spacing %g m", *gs.X0, *gs.X1, *gs.Y0, *gs.Y1, d)
		if d == 0 {
			x0, x1, y0, y1 := *gs.X0, *gs.X1, *gs.Y0, *gs.Y1
			fp, err := r.viewFootprint(4, func(x, y float64) bool { return x >= x0 && x <= x1 && y >= y0 && y <= y1 })
			if err != nil {
				return ingest.Grid{}, false, "", nil, err
			}
			d = niceSpacing(gs.GSDFactor * fp.maxPixelM)
			note = fmt.Sprintf("configured bounds x %g–%g m, y %g–%g m; spacing %g m = %g × the largest pixel footprint inside them (%.3f m at x = %.1f m), rounded up", x0, x1, y0, y1, d, gs.GSDFactor, fp.maxPixelM, fp.farX)
		}
		g, err := configuredGrid(gs, d)
		return g, false, note, nil, err
	}
	g, note, choice, err := r.autoGrid(ctx, smp, workers)
	return g, true, note, choice, err
}

// gridCandidates are the spacings, as fractions of the spacing the far
// edge of the whole view asks for, whose coverage the grid pass counts.
var gridCandidates = []float64{1, 0.8, 0.65, 0.5, 0.4, 0.33, 0.25}

// autoGrid chooses the automatic grid (see the package documentation).
// Coverage is counted in one pass on lattices of several spacings: the
// coarsest is GSDFactor times the largest pixel footprint of the whole
// view; a finer one is eligible when the far edge of its supported cells
// asks for no more than its spacing, so that the spacing suits the far
// edge of the grid rather than of the view. Of the eligible ones, the one
// of largest supported area wins, the finest of those within 10 % of it.
func (r *Reconstructor) autoGrid(ctx context.Context, smp *sample, workers int) (ingest.Grid, string, *GridChoice, error) {
	gs := r.opt.Grid
	extent := gs.Extent
	if extent == "" {
		extent = ExtentFootprint
	}
	fp, err := r.viewFootprint(4, nil)
	if err != nil {
		return ingest.Grid{}, "", nil, err
	}
	lats, err := r.candidateLattices(fp)
	if err != nil {
		return ingest.Grid{}, "", nil, err
	}
	covered, frames, err := r.countCoverage(ctx, smp, workers, lats)
	if err != nil {
		return ingest.Grid{}, "", nil, err
	}
	need := int32(math.Ceil(gs.Coverage*float64(frames) - 1e-9))
	choices, cands, err := r.gridChoices(lats, covered, need, extent)
	if err != nil {
		return ingest.Grid{}, "", nil, err
	}
	// The largest area wins; of areas within 10 % of it, the finest
	// spacing (choices run from coarse to fine).
	best := -1
	maxArea := 0.0
	for _, c := range choices {
		maxArea = math.Max(maxArea, c.area)
	}
	for i, c := range choices {
		if c.area >= 0.9*maxArea {
			best = i
		}
	}
	if best < 0 {
		return ingest.Grid{}, "", nil, fmt.Errorf("surface: no rectangle of at least 4 × 4 cells of %g m is covered in %.0f %% of the %d pairs examined; check the images and the sea plane, or configure the grid", lats[0].d, 100*gs.Coverage, frames)
	}
	c := choices[best]
	vx, vy := r.bothViews(4)
	gc := &GridChoice{Extent: extent, SpacingM: c.lat.d, ViewXM: vx, ViewYM: vy, SupportedCells: c.supported,
		SupportedFraction: float64(c.supported) / float64(len(c.keep)), Pairs: frames, Candidates: cands}
	gc.SupportedXM = [2]float64{math.Inf(1), math.Inf(-1)}
	gc.SupportedYM = gc.SupportedXM
	nx := len(c.g.X)
	for i, k := range c.keep {
		if k {
			x, y := c.g.X[i%nx], c.g.Y[i/nx]
			gc.SupportedXM = [2]float64{math.Min(gc.SupportedXM[0], x), math.Max(gc.SupportedXM[1], x)}
			gc.SupportedYM = [2]float64{math.Min(gc.SupportedYM[0], y), math.Max(gc.SupportedYM[1], y)}
		}
	}
	what := "the rectangle around the largest connected set of cells"
	if extent == ExtentInscribed {
		what = "the largest x-aligned rectangle of cells"
	}
	spacing := "configured spacing"
	if gs.D == 0 {
		spacing = fmt.Sprintf("spacing %g m ≥ %g × the largest pixel footprint on the sea among them (%.3f m, at x = %.1f m), rounded up", c.lat.d, gs.GSDFactor, c.farPixel, c.farX)
	}
	note := fmt.Sprintf("automatic (%s): %s whose %g m cells hold at least %d points in at least %.0f %% of %d sampled pairs (%s); %d of its %d cells supported, x %.1f–%.1f m of the %.1f–%.1f m both cameras see",
		extent, what, c.lat.d, r.opt.MinPoints, 100*gs.Coverage, frames, spacing, c.supported, len(c.keep),
		gc.SupportedXM[0], gc.SupportedXM[1], vx[0], vx[1])
	return c.g, note, gc, nil
}

// candidateLattices lists the lattices the automatic grid may use: the
// configured spacing alone, or spacings from the ground-pixel size times
// GSDFactor downward through gridCandidates, coarse to fine.
func (r *Reconstructor) candidateLattices(fp footprint) ([]lattice, error) {
	gs := r.opt.Grid
	var lats []lattice
	if gs.D != 0 {
		l, err := coverageLattice(fp, gs.D)
		if err != nil {
			return nil, err
		}
		lats = append(lats, l)
	} else {
		d0 := niceSpacing(gs.GSDFactor * fp.maxPixelM)
		for _, c := range gridCandidates {
			d := d0
			if c != 1 {
				d = niceSpacing(c * d0)
			}
			if len(lats) > 0 && d >= lats[len(lats)-1].d {
				continue
			}
			l, err := coverageLattice(fp, d)
			if err != nil {
				if len(lats) == 0 {
					return nil, err
				}
				break
			}
			lats = append(lats, l)
		}
	}
	return lats, nil
}

// countCoverage reconstructs the sampled pairs and counts, for each lattice
// cell, in how many pairs it holds at least MinPoints points; it returns the
// counts and the number of pairs read.
func (r *Reconstructor) countCoverage(ctx context.Context, smp *sample, workers int, lats []lattice) ([][]int32, int, error) {
	src, err := smp.source(smp.all())
	if err != nil {
		return nil, 0, err
	}
	defer src.Close()
	ws, err := r.newWorkers(workers)
	if err != nil {
		return nil, 0, err
	}
	defer closeWorkers(ws)
	slots := 2 * workers
	counts := make([][][]int32, slots)
	covered := make([][]int32, len(lats))
	for k, l := range lats {
		covered[k] = make([]int32, l.nx*l.ny)
	}
	minPts := int32(r.opt.MinPoints)
	frames := 0
	err = runPass(ctx, src, ws, slots, passFuncs{
		accept: func(f *ingest.StereoFrame) (bool, bool) { return true, false },
		process: func(w *Worker, f *ingest.StereoFrame, slot int) error {
			if err := w.worldPoints(f.Left, f.Right); err != nil {
				return err
			}
			if counts[slot] == nil {
				counts[slot] = make([][]int32, len(lats))
			}
			cs := counts[slot]
			for k, l := range lats {
				cs[k] = resize(cs[k], l.nx*l.ny)
				clear(cs[k])
			}
			_, err := w.forEachPoint(func(x, y, z float32) {
				for k := range lats {
					if c, ok := lats[k].cell(float64(x), float64(y)); ok {
						cs[k][c]++
					}
				}
			})
			return err
		},
		consume: func(f *ingest.StereoFrame, slot int, seq int) error {
			for k, c := range counts[slot] {
				for i, n := range c {
					if n >= minPts {
						covered[k][i]++
					}
				}
			}
			frames++
			if r.opt.Progress != nil {
				r.opt.Progress("grid", frames, len(smp.pairs))
			}
			return nil
		},
	})
	if err != nil {
		return nil, 0, err
	}
	if frames == 0 {
		return nil, 0, fmt.Errorf("surface: no sampled pair could be read to choose the grid")
	}
	return covered, frames, nil
}

// gridOption is one lattice's supported grid, a candidate for the automatic
// grid.
type gridOption struct {
	g         ingest.Grid
	area      float64
	keep      []bool // supported cells of the grid, row-major
	lat       lattice
	i0, j0    int
	asked     float64
	farPixel  float64
	farX      float64
	supported int
}

// gridChoices finds on each lattice the cells covered in at least need
// pairs and the rectangle they span, and keeps the lattices whose spacing
// the far edge of that rectangle allows; it returns those choices and the
// record of every candidate.
func (r *Reconstructor) gridChoices(lats []lattice, covered [][]int32, need int32, extent string) ([]gridOption, []GridCandidate, error) {
	gs := r.opt.Grid
	var choices []gridOption
	cands := make([]GridCandidate, len(lats))
	for k, l := range lats {
		cands[k].SpacingM = l.d
		mask := make([]bool, len(covered[k]))
		for i, n := range covered[k] {
			mask[i] = n >= need
		}
		var i0, i1, j0, j1 int
		var keep []bool
		if extent == ExtentInscribed {
			i0, i1, j0, j1 = largestRectangle(mask, l.nx, l.ny)
			keep = mask
		} else {
			keep, i0, i1, j0, j1 = largestComponent(mask, l.nx, l.ny)
		}
		if i1-i0 < 4 || j1-j0 < 4 {
			continue
		}
		sub := make([]bool, (i1-i0)*(j1-j0))
		cnt := 0
		for j := j0; j < j1; j++ {
			for i := i0; i < i1; i++ {
				if keep[j*l.nx+i] {
					sub[(j-j0)*(i1-i0)+i-i0] = true
					cnt++
				}
			}
		}
		xa, xb := l.x0+float64(i0)*l.d, l.x0+float64(i1-1)*l.d
		ya, yb := l.y0+float64(j0)*l.d, l.y0+float64(j1-1)*l.d
		g := ingest.Grid{X: axis(xa, xb, l.d), Y: axis(ya, yb, l.d)}
		if len(g.X) != i1-i0 || len(g.Y) != j1-j0 {
			return nil, nil, fmt.Errorf("surface: internal error: the automatic grid's axes do not match its lattice")
		}
		area := float64(cnt) * l.d * l.d
		cands[k].SupportedCells, cands[k].SupportedAreaM2 = cnt, area
		// The spacing the far edge of the supported cells asks for.
		inside := func(x, y float64) bool {
			c, ok := l.cell(x, y)
			if !ok {
				return false
			}
			i, j := c%l.nx, c/l.nx
			return i >= i0 && i < i1 && j >= j0 && j < j1 && keep[c]
		}
		rf, err := r.viewFootprint(4, inside)
		if err != nil {
			continue
		}
		req := niceSpacing(gs.GSDFactor * rf.maxPixelM)
		cands[k].SpacingAsked = req
		if gs.D == 0 && k > 0 && req > l.d+1e-12 {
			continue
		}
		cands[k].Eligible = true
		choices = append(choices, gridOption{g: g, area: area, keep: sub, lat: l, i0: i0, j0: j0, asked: req, farPixel: rf.maxPixelM, farX: rf.farX, supported: cnt})
		if gs.D != 0 {
			break
		}
	}
	return choices, cands, nil
}

// passFuncs are the three steps of a pass over a record. accept runs on the
// reading goroutine for every pair delivered by the source; process on a
// worker, writing into the output slot it is given; consume on the calling
// goroutine, in the order the pairs were read.
type passFuncs struct {
	accept  func(f *ingest.StereoFrame) (use, stop bool)
	process func(w *Worker, f *ingest.StereoFrame, slot int) error
	consume func(f *ingest.StereoFrame, slot, seq int) error
}

// passJob is one accepted frame handed to a worker, with its place in the
// record (seq) and the result slot it owns.
type passJob struct {
	seq, slot int
	f         ingest.StereoFrame
}

// passDone is a worker's finished job with the error it met, if any.
type passDone struct {
	passJob
	err error
}

// feedFrames reads the source, keeps the frames accept takes and sends each,
// once a result slot is free, to the workers as a job; it closes jobs when
// the source, accept or the context ends the pass, and returns the source's
// read error, if any.
func feedFrames(ctx context.Context, src ingest.StereoSource, accept func(*ingest.StereoFrame) (bool, bool), free <-chan int, jobs chan<- passJob) error {
	defer close(jobs)
	var f ingest.StereoFrame
	defer releaseFrame(&f)
	for seq := 0; ; seq++ {
		var slot int
		select {
		case <-ctx.Done():
			return nil
		case slot = <-free:
		}
		for {
			err := src.Next(&f)
			if errors.Is(err, io.EOF) {
				return nil
			}
			if err != nil {
				return err
			}
			use, stop := accept(&f)
			if stop {
				return nil
			}
			if use {
				break
			}
		}
		j := passJob{seq: seq, slot: slot, f: f}
		f.Left, f.Right = gocv.Mat{}, gocv.Mat{}
		select {
		case jobs <- j:
		case <-ctx.Done():
			releaseFrame(&j.f)
			return nil
		}
	}
}

// runPass reads src on one goroutine, processes accepted pairs on the
// workers and consumes the results in reading order. At most slots pairs
// are in flight. The first error stops the pass.
func runPass(ctx context.Context, src ingest.StereoSource, ws []*Worker, slots int, pf passFuncs) error {
	ctx, cancel := context.WithCancel(ctx)
	defer cancel()
	free := make(chan int, slots)
	for i := 0; i < slots; i++ {
		free <- i
	}
	jobs := make(chan passJob)
	results := make(chan passDone, slots)
	var wg sync.WaitGroup
	for _, w := range ws {
		wg.Add(1)
		go func() {
			defer wg.Done()
			for j := range jobs {
				var err error
				if ctx.Err() == nil {
					err = pf.process(w, &j.f, j.slot)
				} else {
					err = ctx.Err()
				}
				results <- passDone{passJob: j, err: err}
			}
		}()
	}
	readErr := make(chan error, 1)
	go func() { readErr <- feedFrames(ctx, src, pf.accept, free, jobs) }()
	go func() {
		wg.Wait()
		close(results)
	}()
	pending := map[int]passDone{}
	next := 0
	var firstErr error
	for d := range results {
		pending[d.seq] = d
		for {
			e, ok := pending[next]
			if !ok {
				break
			}
			delete(pending, next)
			if firstErr == nil {
				if e.err != nil {
					firstErr = e.err
				} else {
					firstErr = pf.consume(&e.f, e.slot, e.seq)
				}
				if firstErr != nil {
					cancel()
				}
			}
			releaseFrame(&e.f)
			free <- e.slot
			next++
		}
	}
	if err := <-readErr; err != nil && firstErr == nil {
		firstErr = err
	}
	if firstErr == nil && ctx.Err() != nil {
		// The parent context was cancelled.
		firstErr = ctx.Err()
	}
	return firstErr
}
