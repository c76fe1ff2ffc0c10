package surface

import (
	"context"
	"errors"
	"fmt"
	"image"
	"io"
	"math"
	"runtime"
	"sync"
	"time"

	"gocv.io/x/gocv"

	"crestspeed/calib"
	"crestspeed/ingest"
	"crestspeed/internal/cvshim"
)

// Opener opens the stereo record from its start. [Run] opens it up to three
// times: for the sea-plane pass, the grid pass and the reconstruction.
type Opener func() (ingest.StereoSource, error)

// Reasons for frames skipped by [Run], beside those of the source.
const (
	// SkipRigSize: a pair whose size differs from the rig's (after the
	// first pair, which must match).
	SkipRigSize = "image size differs from the rig"
	// SkipLowCoverage: a pair whose map has fewer supported cells than
	// MinFrameCoverage of the grid.
	SkipLowCoverage = "too few grid cells with elevations"
)

// Setup is what [Run] settled on before the first map: the [Sink] gets it
// in Start, to describe the output.
type Setup struct {
	// Rig is the rig with the sea plane used.
	Rig *calib.Rig
	// PlaneFit is the fit when the plane was fitted, nil when it came
	// from the rig; PlanePairs the number of pairs fitted.
	PlaneFit   *PlaneFit
	PlanePairs int
	// Grid and how it was chosen; GridNote says so in a sentence.
	Grid     ingest.Grid
	GridAuto bool
	GridNote string
	// SGBM are the matcher parameters of the reconstruction pass.
	SGBM          cvshim.SGBMParams
	AutoDisparity bool
	// Prewarped: the right image is sheared by the sea plane's disparity
	// and SGBM's range is the residual disparity about it.
	Prewarped bool
	// Rectification of the rig.
	Rectification *calib.Rectification
	// Workers and OpenCV threads per OpenCV call.
	Workers, OpenCVThreads int
	Options                Options
}

// Sink receives the output of [Run]: Start once, before the first map,
// then every map in time order. Write must not keep m beyond the call.
type Sink interface {
	Start(s *Setup) error
	Write(m *Map) error
}

// Result summarises a run.
type Result struct {
	Setup *Setup
	// Frames is the number of maps written; Skipped the frames left out
	// by the source or by Run, by reason.
	Frames  int
	Skipped ingest.SkipCounts
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

// Run reconstructs a stereo record into elevation maps: it checks the first
// pair against the rig, fits the mean sea plane when the rig has none (or
// a refit is asked for), chooses the grid when none is configured, then
// reconstructs every pair on opt.Workers goroutines and hands the maps to
// sink in time order. The output does not depend on the worker count.
func Run(ctx context.Context, rig *calib.Rig, open Opener, opt Options, sink Sink) (*Result, error) {
	if open == nil || sink == nil {
		return nil, fmt.Errorf("surface: Run needs a source opener and a sink")
	}
	rec, err := New(rig, opt)
	if err != nil {
		return nil, err
	}
	defer rec.Close()
	workers := max(opt.Workers, 1)
	threads := max(1, runtime.NumCPU()/workers)
	if prev, err := cvshim.NumThreads(); err == nil {
		defer cvshim.SetNumThreads(max(prev, 1))
	}
	if err := cvshim.SetNumThreads(threads); err != nil {
		return nil, fmt.Errorf("surface: %v", err)
	}
	res := &Result{Skipped: ingest.SkipCounts{}, FoamSkipped: ingest.SkipCounts{}, Pass: map[string]time.Duration{}, CoverageMin: math.NaN()}
	if err := probe(rec, open); err != nil {
		return nil, err
	}
	setup := &Setup{Rectification: rec.Rectification(), Workers: workers, OpenCVThreads: threads, Options: opt}

	// Sea plane.
	if !rec.havePlane {
		t0 := time.Now()
		fit, err := rec.planePass(ctx, open, workers)
		if err != nil {
			return nil, err
		}
		if err := rec.SetSeaPlane(fit.Plane); err != nil {
			return nil, fmt.Errorf("%v (the fitted plane is probably not the sea; check the images)", err)
		}
		setup.PlaneFit, setup.PlanePairs = &fit, fit.Pairs
		res.Pass["plane"] = time.Since(t0)
	}
	rigOut := rec.rig
	p := rec.plane
	rigOut.SeaPlane = &p
	setup.Rig = &rigOut

	// Grid.
	t0 := time.Now()
	g, auto, note, err := rec.chooseGrid(ctx, open, workers)
	if err != nil {
		return nil, err
	}
	if err := rec.SetGrid(g); err != nil {
		return nil, err
	}
	if auto {
		res.Pass["grid"] = time.Since(t0)
	}
	setup.Grid, setup.GridAuto, setup.GridNote = rec.grid, auto, note
	setup.SGBM = rec.opt.Matcher.params(rec.minD, rec.numD)
	setup.AutoDisparity = rec.autoRange
	setup.Prewarped = rec.prewarp
	res.Setup = setup
	if err := sink.Start(setup); err != nil {
		return nil, err
	}

	// Reconstruction.
	t0 = time.Now()
	src, err := open()
	if err != nil {
		return nil, err
	}
	defer src.Close()
	slots := 2 * workers
	maps := make([]Map, slots)
	total := src.Len()
	var sumCov float64
	sizeSkips := 0 // counted on the reading goroutine, read after the pass
	ws, err := rec.newWorkers(workers)
	if err != nil {
		return nil, err
	}
	defer closeWorkers(ws)
	err = runPass(ctx, src, ws, slots, passFuncs{
		accept: func(f *ingest.StereoFrame) (bool, bool) {
			if f.Left.Cols() != rec.rig.Size.X || f.Left.Rows() != rec.rig.Size.Y {
				sizeSkips++
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
			if opt.Progress != nil {
				opt.Progress("reconstruct", f.Index+1, total)
			}
			if c := m.Coverage(); c < opt.MinFrameCoverage || m.Stats.Cells == 0 {
				res.Skipped[SkipLowCoverage]++
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
	if sizeSkips > 0 {
		res.Skipped[SkipRigSize] += sizeSkips
	}
	for _, w := range ws {
		res.Times.Add(w.Times)
	}
	for k, v := range src.Skipped() {
		res.Skipped[k] += v
	}
	res.Pass["reconstruct"] = time.Since(t0)
	if err != nil {
		return res, err
	}
	if res.Frames == 0 {
		return res, fmt.Errorf("surface: no elevation map could be made from the %d pairs (%s); check the images, the rig and min_frame_coverage", total, describeSkips(res.Skipped))
	}
	res.CoverageMean = sumCov / float64(res.Frames)
	return res, nil
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

// probe reads the first pair and checks its size against the rig, so that
// a wrong rig is reported before any work.
func probe(rec *Reconstructor, open Opener) error {
	src, err := open()
	if err != nil {
		return err
	}
	defer src.Close()
	var f ingest.StereoFrame
	defer releaseFrame(&f)
	if err := src.Next(&f); err != nil {
		if errors.Is(err, io.EOF) {
			return fmt.Errorf("surface: no image pair of the record could be read (%s); check the images", describeSkips(src.Skipped()))
		}
		return err
	}
	sz := rec.rig.Size
	if f.Left.Cols() != sz.X || f.Left.Rows() != sz.Y {
		return &SizeError{Path: f.LeftPath, Got: image.Pt(f.Left.Cols(), f.Left.Rows()), Want: sz}
	}
	return nil
}

// SizeError reports that the first pair of a record does not have the
// rig's image size; [Run] returns it before any work.
type SizeError struct {
	Path      string      // left image of the first pair
	Got, Want image.Point // its size and the rig's
}

func (e *SizeError) Error() string {
	return fmt.Sprintf("surface: the first image pair (%s) is %d×%d px but the rig is calibrated for %d×%d px; use the rig file of the cameras that took these images",
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

// selector picks n pairs spread evenly over the first span seconds of a
// record (the whole record when span is 0 or longer than it): by time when
// the source lists its times, by index otherwise. A target whose pair is
// skipped by the source moves to the next pair delivered.
type selector struct {
	targets []float64
	byTime  bool
	next    int
}

func newSelector(src ingest.StereoSource, n int, span float64) *selector {
	s := &selector{}
	var a, b float64
	if ts, ok := src.(interface{ Times() []float64 }); ok && len(ts.Times()) > 0 {
		t := ts.Times()
		s.byTime = true
		a, b = t[0], t[len(t)-1]
		if span > 0 {
			b = math.Min(b, a+span)
		}
	} else {
		// Without times, spread the pairs over the whole record by index.
		b = float64(max(src.Len()-1, 0))
	}
	if n == 1 || b <= a {
		s.targets = []float64{a}
		return s
	}
	for k := 0; k < n; k++ {
		s.targets = append(s.targets, a+(b-a)*float64(k)/float64(n-1))
	}
	return s
}

// accept says whether to use frame f and whether the selection is complete.
func (s *selector) accept(f *ingest.StereoFrame) (use, stop bool) {
	if s.next >= len(s.targets) {
		return false, true
	}
	key := float64(f.Index)
	if s.byTime {
		key = f.Time
	}
	if key < s.targets[s.next]-1e-9 {
		return false, false
	}
	for s.next < len(s.targets) && s.targets[s.next] <= key+1e-9 {
		s.next++
	}
	return true, false
}

// planePass fits the mean sea plane. Semi-global matching of the plain
// rectified pair biases the disparities of a surface slanted as steeply as
// the sea seen from a mast (its single-pass paths all run down the image
// and lag behind the growth of disparity with the row, putting the points
// too deep), so the fit is done on prewarped pairs (see
// [Reconstructor.SetSeaPlane]): a first plane, from a quarter of the pairs
// matched without prewarp (or the rig's plane on a refit), sets the
// prewarp, and the final plane is fitted to all the pairs matched with it.
// With a configured disparity range there is no prewarp and the first fit
// is the last.
func (r *Reconstructor) planePass(ctx context.Context, open Opener, workers int) (PlaneFit, error) {
	po := r.opt.Plane
	switch {
	case r.roughPlane != nil:
		if err := r.SetSeaPlane(*r.roughPlane); err != nil {
			return PlaneFit{}, err
		}
	case !r.autoRange || !r.opt.Prewarp:
		return r.fitPass(ctx, open, workers, po.Frames)
	default:
		fit, err := r.fitPass(ctx, open, workers, min(po.Frames, max(3, (po.Frames+3)/4)))
		if err != nil {
			return PlaneFit{}, err
		}
		if err := r.SetSeaPlane(fit.Plane); err != nil {
			return PlaneFit{}, fmt.Errorf("%v (the first plane fitted is probably not the sea; check the images)", err)
		}
	}
	return r.fitPass(ctx, open, workers, po.Frames)
}

// fitPass fits a plane to the points of n pairs spread over the first
// Plane.SpanS seconds, matched with the current setup.
func (r *Reconstructor) fitPass(ctx context.Context, open Opener, workers, n int) (PlaneFit, error) {
	po := r.opt.Plane
	src, err := open()
	if err != nil {
		return PlaneFit{}, err
	}
	defer src.Close()
	sel := newSelector(src, n, po.SpanS)
	ws, err := r.newWorkers(workers)
	if err != nil {
		return PlaneFit{}, err
	}
	defer closeWorkers(ws)
	slots := 2 * workers
	bufs := make([][][3]float32, slots)
	var all [][3]float32
	pairs := 0
	t0, t1 := math.NaN(), math.NaN()
	err = runPass(ctx, src, ws, slots, passFuncs{
		accept: func(f *ingest.StereoFrame) (bool, bool) {
			if f.Left.Cols() != r.rig.Size.X || f.Left.Rows() != r.rig.Size.Y {
				return false, false
			}
			return sel.accept(f)
		},
		process: func(w *Worker, f *ingest.StereoFrame, slot int) error {
			var err error
			bufs[slot], err = w.CameraPoints(f.Left, f.Right, po.Stride, bufs[slot][:0])
			return err
		},
		consume: func(f *ingest.StereoFrame, slot int, seq int) error {
			all = append(all, bufs[slot]...)
			pairs++
			if pairs == 1 {
				t0 = f.Time
			}
			t1 = f.Time
			if r.opt.Progress != nil {
				r.opt.Progress("plane", pairs, len(sel.targets))
			}
			return nil
		},
	})
	if err != nil {
		return PlaneFit{}, err
	}
	if pairs == 0 {
		return PlaneFit{}, fmt.Errorf("surface: no pair could be read for the sea-plane fit (%s)", describeSkips(src.Skipped()))
	}
	fit, err := FitPlane(all, po.Iterations, po.ThresholdM, po.Seed)
	if err != nil {
		return PlaneFit{}, err
	}
	if fit.Inliers < len(all)/4 {
		return PlaneFit{}, fmt.Errorf("surface: only %d of %d points lie within %g m of the fitted sea plane; the matches are not of a sea surface (check the images, the disparity range and plane.threshold_m)", fit.Inliers, len(all), po.ThresholdM)
	}
	fit.Pairs, fit.SpanS = pairs, t1-t0
	return fit, nil
}

// chooseGrid returns the configured grid, or the automatic one.
func (r *Reconstructor) chooseGrid(ctx context.Context, open Opener, workers int) (ingest.Grid, bool, string, error) {
	gs := r.opt.Grid
	if gs.X0 != nil {
		d := gs.D
		note := fmt.Sprintf("configured: x %g–%g m, y %g–%g m, spacing %g m", *gs.X0, *gs.X1, *gs.Y0, *gs.Y1, d)
		if d == 0 {
			x0, x1, y0, y1 := *gs.X0, *gs.X1, *gs.Y0, *gs.Y1
			fp, err := r.viewFootprint(4, func(x, y float64) bool { return x >= x0 && x <= x1 && y >= y0 && y <= y1 })
			if err != nil {
				return ingest.Grid{}, false, "", err
			}
			d = niceSpacing(gs.GSDFactor * fp.maxPixelM)
			note = fmt.Sprintf("configured bounds x %g–%g m, y %g–%g m; spacing %g m = %g × the largest pixel footprint inside them (%.3f m at x = %.1f m), rounded up", x0, x1, y0, y1, d, gs.GSDFactor, fp.maxPixelM, fp.farX)
		}
		g, err := configuredGrid(gs, d)
		return g, false, note, err
	}
	g, note, err := r.autoGrid(ctx, open, workers)
	return g, true, note, err
}

// gridCandidates are the spacings, as fractions of the spacing the far
// edge of the whole view asks for, whose coverage the grid pass counts.
var gridCandidates = []float64{1, 0.8, 0.65, 0.5, 0.4, 0.33, 0.25}

// autoGrid chooses the largest well-covered rectangle (see the package
// documentation). Coverage is counted in one pass on lattices of several
// spacings: the coarsest is GSDFactor times the largest pixel footprint of
// the whole view; a finer one qualifies when its own rectangle's far edge
// asks for no more than its spacing, so that the spacing suits the far edge
// of the grid rather than of the view. The qualifying rectangle of largest
// area wins, the finest of those within 10 % of it.
func (r *Reconstructor) autoGrid(ctx context.Context, open Opener, workers int) (ingest.Grid, string, error) {
	gs := r.opt.Grid
	fp, err := r.viewFootprint(4, nil)
	if err != nil {
		return ingest.Grid{}, "", err
	}
	var lats []lattice
	if gs.D != 0 {
		l, err := coverageLattice(fp, gs.D)
		if err != nil {
			return ingest.Grid{}, "", err
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
					return ingest.Grid{}, "", err
				}
				break
			}
			lats = append(lats, l)
		}
	}
	src, err := open()
	if err != nil {
		return ingest.Grid{}, "", err
	}
	defer src.Close()
	sel := newSelector(src, r.opt.Plane.Frames, r.opt.Plane.SpanS)
	ws, err := r.newWorkers(workers)
	if err != nil {
		return ingest.Grid{}, "", err
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
		accept: func(f *ingest.StereoFrame) (bool, bool) {
			if f.Left.Cols() != r.rig.Size.X || f.Left.Rows() != r.rig.Size.Y {
				return false, false
			}
			return sel.accept(f)
		},
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
				r.opt.Progress("grid", frames, len(sel.targets))
			}
			return nil
		},
	})
	if err != nil {
		return ingest.Grid{}, "", err
	}
	if frames == 0 {
		return ingest.Grid{}, "", fmt.Errorf("surface: no pair could be read to choose the grid (%s)", describeSkips(src.Skipped()))
	}
	need := int32(math.Ceil(gs.Coverage*float64(frames) - 1e-9))
	type choice struct {
		g    ingest.Grid
		area float64
		note string
	}
	var choices []choice
	for k, l := range lats {
		mask := make([]bool, len(covered[k]))
		for i, n := range covered[k] {
			mask[i] = n >= need
		}
		i0, i1, j0, j1 := largestRectangle(mask, l.nx, l.ny)
		if i1-i0 < 4 || j1-j0 < 4 {
			continue
		}
		xa, xb := l.x0+float64(i0)*l.d, l.x0+float64(i1-1)*l.d
		ya, yb := l.y0+float64(j0)*l.d, l.y0+float64(j1-1)*l.d
		g := ingest.Grid{X: axis(xa, xb, l.d), Y: axis(ya, yb, l.d)}
		area := (xb - xa + l.d) * (yb - ya + l.d)
		if gs.D != 0 {
			choices = append(choices, choice{g, area, fmt.Sprintf("automatic: largest x-aligned rectangle whose %g m cells (configured spacing) hold at least %d points in at least %.0f %% of %d pairs",
				l.d, r.opt.MinPoints, 100*gs.Coverage, frames)})
			break
		}
		// The spacing this rectangle's far edge asks for.
		h := l.d / 2
		rf, err := r.viewFootprint(4, func(x, y float64) bool { return x >= xa-h && x <= xb+h && y >= ya-h && y <= yb+h })
		if err != nil {
			continue
		}
		req := niceSpacing(gs.GSDFactor * rf.maxPixelM)
		if k > 0 && req > l.d+1e-12 {
			continue
		}
		choices = append(choices, choice{g, area, fmt.Sprintf("automatic: largest x-aligned rectangle whose %g m cells hold at least %d points in at least %.0f %% of %d pairs; spacing %g m ≥ %g × the largest pixel footprint on the sea inside it (%.3f m, at x = %.1f m), rounded up",
			l.d, r.opt.MinPoints, 100*gs.Coverage, frames, l.d, gs.GSDFactor, rf.maxPixelM, rf.farX)})
	}
	// The largest area wins; of areas within 10 % of it, the finest
	// spacing (choices run from coarse to fine).
	var best ingest.Grid
	var bestNote string
	maxArea := 0.0
	for _, c := range choices {
		maxArea = math.Max(maxArea, c.area)
	}
	for _, c := range choices {
		if c.area >= 0.9*maxArea {
			best, bestNote = c.g, c.note
		}
	}
	if best.X == nil {
		return ingest.Grid{}, "", fmt.Errorf("surface: no rectangle of at least 4 × 4 cells of %g m is covered in %.0f %% of the %d pairs examined; check the images and the sea plane, or configure the grid", lats[0].d, 100*gs.Coverage, frames)
	}
	return best, bestNote, nil
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

// runPass reads src on one goroutine, processes accepted pairs on the
// workers and consumes the results in reading order. At most slots pairs
// are in flight. The first error stops the pass.
func runPass(ctx context.Context, src ingest.StereoSource, ws []*Worker, slots int, pf passFuncs) error {
	ctx, cancel := context.WithCancel(ctx)
	defer cancel()
	type job struct {
		seq, slot int
		f         ingest.StereoFrame
	}
	type done struct {
		job
		err error
	}
	free := make(chan int, slots)
	for i := 0; i < slots; i++ {
		free <- i
	}
	jobs := make(chan job)
	results := make(chan done, slots)
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
				results <- done{job: j, err: err}
			}
		}()
	}
	readErr := make(chan error, 1)
	go func() {
		defer close(jobs)
		var f ingest.StereoFrame
		defer releaseFrame(&f)
		for seq := 0; ; seq++ {
			var slot int
			select {
			case <-ctx.Done():
				readErr <- nil
				return
			case slot = <-free:
			}
			for {
				err := src.Next(&f)
				if errors.Is(err, io.EOF) {
					readErr <- nil
					return
				}
				if err != nil {
					readErr <- err
					return
				}
				use, stop := pf.accept(&f)
				if stop {
					readErr <- nil
					return
				}
				if use {
					break
				}
			}
			j := job{seq: seq, slot: slot, f: f}
			f.Left, f.Right = gocv.Mat{}, gocv.Mat{}
			select {
			case jobs <- j:
			case <-ctx.Done():
				releaseFrame(&j.f)
				readErr <- nil
				return
			}
		}
	}()
	go func() {
		wg.Wait()
		close(results)
	}()
	pending := map[int]done{}
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
