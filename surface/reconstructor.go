package surface

import (
	"errors"
	"fmt"
	"image"
	"image/color"
	"math"
	"time"

	"gocv.io/x/gocv"

	"crestspeed/calib"
	"crestspeed/ingest"
	"crestspeed/internal/cvshim"
)

// Reconstructor holds what a run shares between its workers: the rig, its
// rectification maps, the mean sea plane and world frame, the disparity
// range and the grid. Make it with [New]; set the plane and the grid (or
// let [Run] do it), then give each goroutine its own [Worker]. After the
// setup it is read-only and safe for concurrent use by workers.
type Reconstructor struct {
	rig  calib.Rig
	maps *calib.RectifyMaps
	opt  Options

	havePlane bool
	plane     calib.Plane
	world     calib.WorldFrame
	qCam      [16]float64 // (u, v, disparity px, 1) → left camera frame
	qWorld    [16]float64 // (u, v, disparity px, 1) → world frame
	// The matcher's strips and disparity ranges (residual about the
	// plane's disparity when prewarped); bandM the half-width of the band
	// of water heights they cover when the range is automatic.
	strips    []cvshim.Strip
	bandM     float64
	autoRange bool
	// Prewarp: the right image is sheared by the plane's disparity
	// d_p = pa·u + pb·v + pc (see shearRightMap).
	prewarp        bool
	pa, pb, pc     float64
	shearX, shearY gocv.Mat

	// roughPlane is the rig's plane when a refit is asked for: it sets the
	// prewarp of the refit.
	roughPlane *calib.Plane

	haveGrid bool
	grid     ingest.Grid
	gx0, gy0 float64
	gd       float64
}

// New prepares a reconstruction with rig: it rectifies the rig and builds
// the rectification maps. When the rig has a sea plane and
// opt.Plane.Refit is false, that plane is used (see [Reconstructor.SetSeaPlane]).
// The caller must Close the result.
func New(rig *calib.Rig, opt Options) (*Reconstructor, error) {
	if rig == nil {
		return nil, fmt.Errorf("surface: no rig given; load one with calib.LoadRig")
	}
	if err := opt.Validate(); err != nil {
		return nil, fmt.Errorf("surface: %v", err)
	}
	if err := rig.Validate(); err != nil {
		return nil, fmt.Errorf("surface: the rig cannot be used: %v; recalibrate or correct the rig file", err)
	}
	maps, err := rig.RectifyMaps(opt.RectifyAlpha)
	if err != nil {
		return nil, fmt.Errorf("surface: %v", err)
	}
	r := &Reconstructor{rig: *rig, maps: maps, opt: opt}
	r.rig.SeaPlane = nil
	whole := func(minD, numD int) []cvshim.Strip {
		return []cvshim.Strip{{Row0: 0, Row1: rig.Size.Y, MinDisparity: minD, NumDisparities: numD}}
	}
	if m := opt.Matcher; m.NumDisparities > 0 {
		r.strips = whole(m.MinDisparity, m.NumDisparities)
	} else {
		// Until a plane is known: the sea at least about 4·f/W baselines
		// away.
		r.autoRange = true
		r.strips = whole(0, roundUp16(float64(rig.Size.X)/4))
		r.bandM = opt.ElevationMarginM
	}
	if err := r.checkRange(); err != nil {
		maps.Close()
		return nil, err
	}
	r.setQ()
	if rig.SeaPlane != nil {
		if opt.Plane.Refit {
			p := *rig.SeaPlane
			r.roughPlane = &p
		} else if err := r.SetSeaPlane(*rig.SeaPlane); err != nil {
			maps.Close()
			return nil, err
		}
	}
	return r, nil
}

// Close releases the rectification maps.
func (r *Reconstructor) Close() error {
	if r.maps != nil {
		r.maps.Close()
		r.maps = nil
	}
	for _, m := range []*gocv.Mat{&r.shearX, &r.shearY} {
		if m.Ptr() != nil {
			m.Close()
			*m = gocv.Mat{}
		}
	}
	return nil
}

// Rectification returns the rectified geometry of the rig.
func (r *Reconstructor) Rectification() *calib.Rectification { return r.maps.Rectification }

// Size returns the image size the rig was calibrated for.
func (r *Reconstructor) Size() image.Point { return r.rig.Size }

// SeaPlane returns the mean sea plane in the left camera's frame and
// whether one is set.
func (r *Reconstructor) SeaPlane() (calib.Plane, bool) { return r.plane, r.havePlane }

// World returns the world frame of the sea plane (valid once a plane is set).
func (r *Reconstructor) World() calib.WorldFrame { return r.world }

// DisparityRange returns the disparity search range in pixels over all
// strips: the smallest disparity and the number searched (of the residual
// disparity about the plane's when prewarped; see
// [Reconstructor.Prewarped]).
func (r *Reconstructor) DisparityRange() (minD, numD int) { return unionRange(r.strips) }

// Strips returns the matcher's strips: the rows and disparity range of
// each (see [cvshim.Strip]).
func (r *Reconstructor) Strips() []cvshim.Strip { return append([]cvshim.Strip(nil), r.strips...) }

// BandHalfWidth returns the half-width, metres, of the band of water
// heights about the mean plane that the automatic disparity range covers
// (0 for a configured range).
func (r *Reconstructor) BandHalfWidth() float64 {
	if !r.autoRange {
		return 0
	}
	return r.bandM
}

// Prewarped reports whether the right image is sheared by the sea plane's
// disparity before matching.
func (r *Reconstructor) Prewarped() bool { return r.prewarp }

// Grid returns the output grid and whether one is set.
func (r *Reconstructor) Grid() (ingest.Grid, bool) { return r.grid, r.haveGrid }

// Options returns the options of the run.
func (r *Reconstructor) Options() Options { return r.opt }

// SetSeaPlane sets the mean sea plane (in the left camera's frame) and
// the world frame that follows from it. With the automatic disparity range
// it also sets the range the sea can produce and, when Options.Prewarp is
// on, shears the right image's rectification map by the plane's disparity
// (see [Reconstructor.PlaneDisparity]) so that the matcher searches only
// the residual disparity of the waves about the plane.
func (r *Reconstructor) SetSeaPlane(p calib.Plane) error { return r.setPlane(p, true) }

// setPlane sets the plane; with band, it also plans the automatic
// disparity range for it.
func (r *Reconstructor) setPlane(p calib.Plane, band bool) error {
	w, err := p.World()
	if err != nil {
		return fmt.Errorf("surface: %v", err)
	}
	if !(p.OffsetM > 0) {
		return fmt.Errorf("surface: the sea plane lies %g m above the left camera, not below it; check the sign of the plane's normal", -p.OffsetM)
	}
	r.plane, r.world, r.havePlane = p, w, true
	r.prewarp = r.autoRange && r.opt.Prewarp
	r.pa, r.pb, r.pc = r.planeDisparity()
	if r.autoRange && band {
		if err := r.setBand(r.bandM, nil); err != nil {
			return err
		}
	}
	if r.prewarp {
		if err := r.shearRightMap(); err != nil {
			return err
		}
	}
	r.setQ()
	return nil
}

// setQ sets the matrices that take (u, v, matcher disparity in px, 1) to
// the left camera frame and to the world frame.
func (r *Reconstructor) setQ() {
	rc := r.maps.Rectification
	// A: the matcher's disparity in pixels (residual when prewarped) to
	// the disparity d of the plain rectified pair.
	A := [16]float64{1, 0, 0, 0, 0, 1, 0, 0, 0, 0, 1, 0, 0, 0, 0, 1}
	if r.prewarp {
		A[8], A[9], A[10], A[11] = r.pa, r.pb, 1-r.pa, r.pc
	}
	q := mul4(&rc.Q, &A)
	// Back from the rectified frame to the left camera frame: R1ᵀ.
	var back [16]float64
	for i := 0; i < 3; i++ {
		for j := 0; j < 3; j++ {
			back[4*i+j] = rc.R1[3*j+i]
		}
	}
	back[15] = 1
	r.qCam = mul4(&back, &q)
	if !r.havePlane {
		return
	}
	var m [16]float64
	for i := 0; i < 3; i++ {
		for j := 0; j < 3; j++ {
			m[4*i+j] = r.world.R[3*i+j]
		}
		m[4*i+3] = r.world.T[i]
	}
	m[15] = 1
	r.qWorld = mul4(&m, &r.qCam)
}

// planeDisparity returns the disparity of the mean plane in the rectified
// pair as d = a·u + b·v + c. For a plane n·X + h = 0 (rectified left
// frame) the depth of pixel (u, v) is Z = −h·f / (n·(u − cx, v − cy, f)),
// and Q gives d = (f/Z − Q₃₃)/Q₃₂: affine in (u, v).
func (r *Reconstructor) planeDisparity() (a, b, c float64) {
	rc := r.maps.Rectification
	Q := &rc.Q
	cx, cy, f := -Q[3], -Q[7], Q[11]
	q32, q33 := Q[14], Q[15]
	var n [3]float64
	for i := 0; i < 3; i++ {
		n[i] = rc.R1[3*i]*r.plane.Normal[0] + rc.R1[3*i+1]*r.plane.Normal[1] + rc.R1[3*i+2]*r.plane.Normal[2]
	}
	h := r.plane.OffsetM
	// f/Z = −(n0 (u − cx) + n1 (v − cy) + n2 f)/h
	a = -n[0] / h / q32
	b = -n[1] / h / q32
	c = (-(n[2]*f-n[0]*cx-n[1]*cy)/h - q33) / q32
	return a, b, c
}

// PlaneDisparity returns the disparity, pixels, that the mean sea plane
// has at rectified left pixel (u, v) (valid once a plane is set).
func (r *Reconstructor) PlaneDisparity(u, v float64) float64 {
	return r.pa*u + r.pb*v + r.pc
}

// shearRightMap builds the right image's map of the prewarped pair:
// rectified right pixel (x, v) is taken from the rectified right image at
// column x − d_p(x, v), d_p the plane's disparity, so that the sea plane
// has zero disparity. A left pixel u matched at residual disparity e then
// has the disparity d = d_p(u, v) + (1 − a)·e of the plain rectified pair
// (a = ∂d_p/∂u), which setQ folds into the reprojection.
func (r *Reconstructor) shearRightMap() error {
	mx, err := r.maps.RightX.DataPtrFloat32()
	if err != nil {
		return fmt.Errorf("surface: rectification map is not readable: %v", err)
	}
	my, err := r.maps.RightY.DataPtrFloat32()
	if err != nil {
		return fmt.Errorf("surface: rectification map is not readable: %v", err)
	}
	W, H := r.rig.Size.X, r.rig.Size.Y
	if len(mx) != W*H || len(my) != W*H {
		return fmt.Errorf("surface: rectification maps are %d values for %d×%d px", len(mx), W, H)
	}
	if r.shearX.Ptr() == nil {
		r.shearX = gocv.NewMatWithSize(H, W, gocv.MatTypeCV32FC1)
		r.shearY = gocv.NewMatWithSize(H, W, gocv.MatTypeCV32FC1)
	}
	sx, err := r.shearX.DataPtrFloat32()
	if err != nil {
		return fmt.Errorf("surface: %v", err)
	}
	sy, err := r.shearY.DataPtrFloat32()
	if err != nil {
		return fmt.Errorf("surface: %v", err)
	}
	for v := 0; v < H; v++ {
		row := v * W
		for u := 0; u < W; u++ {
			xs := float64(u) - r.PlaneDisparity(float64(u), float64(v))
			i := int(math.Floor(xs))
			if i < 0 || i+1 >= W {
				// Outside the rectified right image: black.
				sx[row+u], sy[row+u] = -10, -10
				continue
			}
			t := float32(xs - float64(i))
			k := row + i
			sx[row+u] = mx[k] + t*(mx[k+1]-mx[k])
			sy[row+u] = my[k] + t*(my[k+1]-my[k])
		}
	}
	return nil
}

func (r *Reconstructor) checkRange() error {
	for _, st := range r.strips {
		if st.NumDisparities >= r.rig.Size.X {
			return fmt.Errorf("surface: the disparity search range %d–%d px (rows %d–%d) is as wide as the %d px image; set max_range_m or a narrower range", st.MinDisparity, st.MinDisparity+st.NumDisparities, st.Row0, st.Row1, r.rig.Size.X)
		}
	}
	return nil
}

// setBand sets the automatic disparity range for water within ±halfM of
// the mean plane, over the pixels whose ground points ground accepts (all
// that see the sea when nil).
func (r *Reconstructor) setBand(halfM float64, ground func(x, y float64) bool) error {
	st, err := r.planStrips(halfM, ground)
	if err != nil {
		return err
	}
	r.strips, r.bandM = st, halfM
	return r.checkRange()
}

// setStrips sets the matcher's strips as given (from a settled geometry).
func (r *Reconstructor) setStrips(st []cvshim.Strip, halfM float64) error {
	if len(st) == 0 {
		return fmt.Errorf("surface: the settled geometry has no disparity strips; settle the record again")
	}
	prev := 0
	for _, s := range st {
		if s.Top < 0 || s.Top > s.Row0 || s.Row0 >= s.Row1 || s.Row0 < prev || s.Row1 > r.rig.Size.Y || s.NumDisparities < 16 || s.NumDisparities%16 != 0 ||
			s.Col0 < 0 || s.Col0+s.NumDisparities+16 > r.rig.Size.X {
			return fmt.Errorf("surface: the settled geometry's disparity strip rows %d–%d (from %d), range %d+%d px, does not fit the rig's %d×%d px images; settle the record again",
				s.Row0, s.Row1, s.Top, s.MinDisparity, s.NumDisparities, r.rig.Size.X, r.rig.Size.Y)
		}
		prev = s.Row1
	}
	r.strips, r.bandM = append([]cvshim.Strip(nil), st...), halfM
	return r.checkRange()
}

// roundUp16 rounds a positive width up to a multiple of 16 (at least 16).
func roundUp16(v float64) int {
	n := int(math.Ceil(v/16)) * 16
	return max(n, 16)
}

// rectRay returns the direction, in the world frame, of the ray through
// rectified left pixel (u, v), scaled so that its depth in the rectified
// frame is 1.
func (r *Reconstructor) rectRay(u, v float64) [3]float64 {
	rc := r.maps.Rectification
	P := &rc.P1
	ray := [3]float64{(u - P[2]) / P[0], (v - P[6]) / P[5], 1}
	var cam [3]float64
	for i := 0; i < 3; i++ {
		cam[i] = rc.R1[i]*ray[0] + rc.R1[3+i]*ray[1] + rc.R1[6+i]*ray[2]
	}
	return r.world.DirectionToWorld(cam)
}

// SetGrid sets the output grid: regular, increasing axes of at least two
// cells with the same spacing along x and y.
func (r *Reconstructor) SetGrid(g ingest.Grid) error {
	if len(g.X) < 2 || len(g.Y) < 2 {
		return fmt.Errorf("surface: the grid needs at least 2 cells along x and y, has %d × %d", len(g.X), len(g.Y))
	}
	d := g.Dx()
	if !(d > 0) || math.Abs(g.Dy()-d) > 1e-6*d {
		return fmt.Errorf("surface: the grid spacing must be positive and the same along x (%g m) and y (%g m)", g.Dx(), g.Dy())
	}
	if int64(len(g.X))*int64(len(g.Y)) > 64<<20 {
		return fmt.Errorf("surface: the grid of %d × %d cells is too large; use a coarser spacing or a smaller area", len(g.X), len(g.Y))
	}
	r.grid = ingest.Grid{X: append([]float64(nil), g.X...), Y: append([]float64(nil), g.Y...)}
	r.gx0, r.gy0, r.gd = g.X[0], g.Y[0], d
	r.haveGrid = true
	return nil
}

// StageTimes accumulates the wall time of each stage of a worker.
// Reproject is the reprojection of the points of the plane fit (the
// reprojection of the maps is done point by point while gridding, and
// counted in Grid).
type StageTimes struct {
	Remap, Match, Reproject, Grid time.Duration
	Foam                          time.Duration // foam detection and mapping
	Pairs                         int
}

// Add adds o to t.
func (t *StageTimes) Add(o StageTimes) {
	t.Remap += o.Remap
	t.Match += o.Match
	t.Reproject += o.Reproject
	t.Grid += o.Grid
	t.Foam += o.Foam
	t.Pairs += o.Pairs
}

// FrameStats counts what happened to the pixels of one pair.
type FrameStats struct {
	Matched    int // left pixels with a disparity before the left-right check
	Consistent int // left pixels with a disparity after it
	Dropped    int // points dropped: beyond MaxAbsElevationM from the plane or beyond MaxRangeM
	Gridded    int // points binned into grid cells
	Cells      int // cells with an elevation: at least MinPoints points, not an outlier
	Outliers   int // cells with MinPoints points whose elevation failed the median test
}

// Map is the elevation map of one pair.
type Map struct {
	Index               int     // the pair's index in the source
	Time                float64 // seconds
	LeftPath, RightPath string
	// Eta holds the mean elevation per cell (row-major, y rows of x
	// cells), NaN where fewer than MinPoints points fell; Points the
	// number of points per cell.
	Eta    []float32
	Points []int32
	Stats  FrameStats
	// Foam is the foam mask per cell (1 whitecap, 0 not) when foam
	// detection is on; FoamStats what it found; FoamSkip the reason the
	// left image was not analysed for foam ("saturated image", "black
	// image"; its mask is then all zeros), empty otherwise.
	Foam      []uint8
	FoamStats FoamStats
	FoamSkip  string
}

// Coverage returns the fraction of cells with an elevation.
func (m *Map) Coverage() float64 {
	if len(m.Eta) == 0 {
		return 0
	}
	return float64(m.Stats.Cells) / float64(len(m.Eta))
}

// Worker reconstructs pairs with the shared setup of a Reconstructor. It
// owns a matcher and image buffers and is not safe for concurrent use:
// make one per goroutine, and Close it.
type Worker struct {
	r     *Reconstructor
	sm    *cvshim.StripMatcher
	rectL gocv.Mat
	rectR gocv.Mat
	dispF gocv.Mat // disparity in pixels, CV_32FC1, NaN where none
	sum   []float64
	flags []bool
	foam  *FoamDetector // nil when foam detection is off
	// Times accumulates the wall time of the worker's stages.
	Times StageTimes
}

// NewWorker makes a worker for the current disparity strips.
func (r *Reconstructor) NewWorker() (*Worker, error) {
	s, err := cvshim.NewStripMatcher(r.opt.Matcher.params(0, 16), r.strips, r.opt.Matcher.LRCheck)
	if err != nil {
		return nil, fmt.Errorf("surface: %v", err)
	}
	var det *FoamDetector
	if r.opt.Foam.Enabled {
		if det, err = NewFoamDetector(r.opt.Foam); err != nil {
			s.Close()
			return nil, err
		}
	}
	return &Worker{
		r: r, sm: s, foam: det,
		rectL: gocv.NewMat(), rectR: gocv.NewMat(), dispF: gocv.NewMat(),
	}, nil
}

// Close releases the worker's matcher and buffers.
func (w *Worker) Close() error {
	if w.sm != nil {
		w.sm.Close()
		w.sm = nil
	}
	for _, m := range []*gocv.Mat{&w.rectL, &w.rectR, &w.dispF} {
		if m.Ptr() != nil {
			m.Close()
			*m = gocv.Mat{}
		}
	}
	return nil
}

// SGBMParams returns the matcher parameters the worker uses, with the
// disparity range over all its strips.
func (w *Worker) SGBMParams() cvshim.SGBMParams {
	minD, numD := unionRange(w.r.strips)
	return w.r.opt.Matcher.params(minD, numD)
}

// checkPair checks a source pair against the rig.
func (w *Worker) checkPair(left, right gocv.Mat) error {
	sz := w.r.rig.Size
	switch {
	case left.Empty() || right.Empty():
		return fmt.Errorf("surface: an image of the pair is empty")
	case left.Type() != gocv.MatTypeCV8UC1 || right.Type() != gocv.MatTypeCV8UC1:
		return fmt.Errorf("surface: images must be 8-bit grey")
	case left.Cols() != sz.X || left.Rows() != sz.Y || right.Cols() != sz.X || right.Rows() != sz.Y:
		return fmt.Errorf("surface: the images are %d×%d and %d×%d px but the rig was calibrated for %d×%d px", left.Cols(), left.Rows(), right.Cols(), right.Rows(), sz.X, sz.Y)
	}
	return nil
}

// Rectify resamples a source pair into the worker's rectified images.
func (w *Worker) Rectify(left, right gocv.Mat) error {
	if err := w.checkPair(left, right); err != nil {
		return err
	}
	t0 := time.Now()
	r := w.r
	if r.prewarp {
		gocv.Remap(left, &w.rectL, &r.maps.LeftX, &r.maps.LeftY, gocv.InterpolationLinear, gocv.BorderConstant, color.RGBA{})
		gocv.Remap(right, &w.rectR, &r.shearX, &r.shearY, gocv.InterpolationLinear, gocv.BorderConstant, color.RGBA{})
	} else {
		r.maps.Remap(left, right, &w.rectL, &w.rectR)
	}
	w.Times.Remap += time.Since(t0)
	return nil
}

// Rectified returns the worker's last rectified pair (owned by the worker).
func (w *Worker) Rectified() (left, right gocv.Mat) { return w.rectL, w.rectR }

// Match computes the disparity of the last rectified pair, strip by strip,
// with the left-right check when configured (see
// [cvshim.StripMatcher.Compute]).
func (w *Worker) Match() (cvshim.CheckStats, error) {
	t0 := time.Now()
	tol := 0.0
	if m := w.r.opt.Matcher; m.LRCheck {
		tol = m.LRMaxDiffPx
	}
	st, err := w.sm.Compute(w.rectL, w.rectR, &w.dispF, tol)
	w.Times.Match += time.Since(t0)
	if err != nil {
		return st, fmt.Errorf("surface: %v", err)
	}
	return st, nil
}

// DisparityPx returns the worker's last disparity map in pixels (CV_32FC1,
// NaN where there is none, where it is not used and in rows outside the
// strips), owned by the worker. When prewarped it is the residual
// disparity about the plane's.
func (w *Worker) DisparityPx() gocv.Mat { return w.dispF }

// disparities returns the last disparity map as a Go slice over the Mat's
// memory (no copy), with its size.
func (w *Worker) disparities() (d []float32, cols, rows int, err error) {
	d, err = w.dispF.DataPtrFloat32()
	if err != nil {
		return nil, 0, 0, fmt.Errorf("surface: the disparity map is not readable: %v", err)
	}
	cols, rows = w.dispF.Cols(), w.dispF.Rows()
	if len(d) != cols*rows {
		return nil, 0, 0, fmt.Errorf("surface: the disparity map has %d values for %d×%d px", len(d), cols, rows)
	}
	return d, cols, rows, nil
}

// rowProjector reprojects the pixels of one row: q·(u, v, d, 1),
// dehomogenised, as cv::reprojectImageTo3D does, with the terms that do
// not change along the row computed once.
type rowProjector struct {
	q *[16]float64
	c [4]float64 // q[i][1]·v + q[i][3]
}

func (p *rowProjector) setRow(q *[16]float64, v int) {
	p.q = q
	for i := 0; i < 4; i++ {
		p.c[i] = q[4*i+1]*float64(v) + q[4*i+3]
	}
}

// at returns the point of pixel u of the row at disparity d; ok is false
// when it is at infinity.
func (p *rowProjector) at(u int, d float32) (x, y, z float32, ok bool) {
	q := p.q
	fu, fd := float64(u), float64(d)
	W := q[12]*fu + q[14]*fd + p.c[3]
	if W == 0 {
		return 0, 0, 0, false
	}
	inv := 1 / W
	return float32((q[0]*fu + q[2]*fd + p.c[0]) * inv), float32((q[4]*fu + q[6]*fd + p.c[1]) * inv),
		float32((q[8]*fu + q[10]*fd + p.c[2]) * inv), true
}

// CameraPoints reconstructs a pair and appends to dst the points, in the
// left camera's frame (metres), of one pixel in stride×stride with a
// disparity. Points farther than MaxRangeM (when set) are left out.
func (w *Worker) CameraPoints(left, right gocv.Mat, stride int, dst [][3]float32) ([][3]float32, error) {
	if stride < 1 {
		return dst, fmt.Errorf("surface: pixel stride %d is below 1", stride)
	}
	if err := w.Rectify(left, right); err != nil {
		return dst, err
	}
	if _, err := w.Match(); err != nil {
		return dst, err
	}
	t0 := time.Now()
	defer func() { w.Times.Reproject += time.Since(t0) }()
	disp, cols, rows, err := w.disparities()
	if err != nil {
		return dst, err
	}
	maxR2 := w.r.opt.MaxRangeM * w.r.opt.MaxRangeM
	var rp rowProjector
	for v := stride / 2; v < rows; v += stride {
		rp.setRow(&w.r.qCam, v)
		row := disp[v*cols : (v+1)*cols]
		for u := stride / 2; u < cols; u += stride {
			d := row[u]
			if d != d {
				continue
			}
			X, Y, Z, ok := rp.at(u, d)
			if !ok || !(Z > 0) || math.IsInf(float64(Z), 0) || math.IsNaN(float64(X+Y)) {
				continue
			}
			if maxR2 > 0 && float64(X*X+Y*Y+Z*Z) > maxR2 {
				continue
			}
			dst = append(dst, [3]float32{X, Y, Z})
		}
	}
	return dst, nil
}

// worldPoints rectifies and matches a pair, for forEachPoint.
func (w *Worker) worldPoints(left, right gocv.Mat) error {
	if !w.r.havePlane {
		return fmt.Errorf("surface: no sea plane is set, so points cannot be put in the world frame")
	}
	if err := w.Rectify(left, right); err != nil {
		return err
	}
	_, err := w.Match()
	return err
}

// forEachPoint calls fn, pixel by pixel in row order, with the world point
// of every pixel of the last disparity map that has one within the
// elevation and range limits; it returns the number dropped by them.
func (w *Worker) forEachPoint(fn func(x, y, z float32)) (dropped int, err error) {
	disp, cols, rows, err := w.disparities()
	if err != nil {
		return 0, err
	}
	zmax := float32(w.r.pointLimit())
	maxR2 := float32(w.r.opt.MaxRangeM * w.r.opt.MaxRangeM)
	var rp rowProjector
	for v := 0; v < rows; v++ {
		rp.setRow(&w.r.qWorld, v)
		row := disp[v*cols : (v+1)*cols]
		for u, d := range row {
			if d != d {
				continue // no disparity
			}
			x, y, z, ok := rp.at(u, d)
			if !ok || !(z <= zmax && z >= -zmax) || (maxR2 > 0 && !(x*x+y*y <= maxR2)) {
				dropped++
				continue
			}
			fn(x, y, z)
		}
	}
	return dropped, nil
}

// Reconstruct turns a source pair into an elevation map on the grid: it
// fills m.Eta, m.Points and m.Stats (reusing their memory when large
// enough). The sea plane and the grid must be set.
func (w *Worker) Reconstruct(left, right gocv.Mat, m *Map) error {
	r := w.r
	if !r.havePlane || !r.haveGrid {
		return fmt.Errorf("surface: set the sea plane and the grid before reconstructing")
	}
	if err := w.Rectify(left, right); err != nil {
		return err
	}
	st, err := w.Match()
	if err != nil {
		return err
	}
	t0 := time.Now()
	err = w.bin(m)
	w.Times.Grid += time.Since(t0)
	w.Times.Pairs++
	m.Stats.Matched, m.Stats.Consistent = st.ValidBefore, st.ValidAfter
	if err != nil || w.foam == nil {
		m.Foam, m.FoamStats, m.FoamSkip = m.Foam[:0], FoamStats{}, ""
		return err
	}
	t0 = time.Now()
	m.FoamSkip = ""
	m.Foam, m.FoamStats, err = w.Foam(w.foam, m.Foam)
	w.Times.Foam += time.Since(t0)
	if errors.Is(err, ErrSaturatedImage) || errors.Is(err, ErrBlackImage) {
		m.FoamSkip, err = err.Error(), nil
	}
	return err
}

// bin grids the world points of the last pair into m.
func (w *Worker) bin(m *Map) error {
	r := w.r
	nx, ny := len(r.grid.X), len(r.grid.Y)
	n := nx * ny
	m.Eta = resize(m.Eta, n)
	m.Points = resize(m.Points, n)
	w.sum = resize(w.sum, n)
	sum, cnt := w.sum, m.Points
	clear(sum)
	clear(cnt)
	x0, y0, inv := r.gx0, r.gy0, 1/r.gd
	gridded := 0
	dropped, err := w.forEachPoint(func(x, y, z float32) {
		fi := (float64(x)-x0)*inv + 0.5
		fj := (float64(y)-y0)*inv + 0.5
		if !(fi >= 0 && fj >= 0) {
			return
		}
		i, j := int(fi), int(fj)
		if i >= nx || j >= ny {
			return
		}
		c := j*nx + i
		sum[c] += float64(z)
		cnt[c]++
		gridded++
	})
	if err != nil {
		return err
	}
	minPts := int32(r.opt.MinPoints)
	cells := 0
	nan := float32(math.NaN())
	for c := range m.Eta {
		if cnt[c] >= minPts {
			m.Eta[c] = float32(sum[c] / float64(cnt[c]))
			cells++
		} else {
			m.Eta[c] = nan
		}
	}
	m.Stats.Dropped, m.Stats.Gridded, m.Stats.Cells = dropped, gridded, cells
	m.Stats.Outliers = 0
	if r.opt.OutlierRatio > 0 {
		w.flags = resize(w.flags, n)
		k := medianTest(m.Eta, nx, ny, r.opt.OutlierRatio, r.opt.OutlierNoiseM, w.flags)
		for c, f := range w.flags {
			if f {
				m.Eta[c], m.Points[c] = nan, 0
			}
		}
		m.Stats.Outliers = k
		m.Stats.Cells -= k
	}
	return nil
}

// pointLimit is the distance from the mean plane beyond which a point is
// a mismatch: MaxAbsElevationM, or the half-width of the automatic band
// when smaller (the matcher finds water only within it, so points beyond
// it are matches pressed against the end of its range).
func (r *Reconstructor) pointLimit() float64 {
	if r.autoRange && r.havePlane && r.bandM > 0 {
		return math.Min(r.opt.MaxAbsElevationM, r.bandM)
	}
	return r.opt.MaxAbsElevationM
}

// medianTest flags (in flags, row-major ny×nx) the cells of eta whose
// elevation departs from those of their neighbours by more than ratio
// times the neighbours' own spread, and returns their number. Cells with
// fewer than 3 neighbours with an elevation are not tested.
//
// Method: the normalised median test (Westerweel & Scarano 2005,
// "Universal outlier detection for PIV data", Exp. Fluids 39): for a cell
// of value u₀ with neighbours u_i (its 8-neighbourhood), u_m the median of
// the u_i and r_m the median of |u_i − u_m|, the cell is an outlier when
// |u₀ − u_m| / (r_m + ε) > ratio, ε the measurement noise (noiseM).
func medianTest(eta []float32, nx, ny int, ratio, noiseM float64, flags []bool) int {
	var nb, dev [8]float32
	k := 0
	for j := 0; j < ny; j++ {
		for i := 0; i < nx; i++ {
			c := j*nx + i
			flags[c] = false
			u0 := eta[c]
			if u0 != u0 {
				continue
			}
			n := 0
			for dj := -1; dj <= 1; dj++ {
				jj := j + dj
				if jj < 0 || jj >= ny {
					continue
				}
				for di := -1; di <= 1; di++ {
					ii := i + di
					if (di == 0 && dj == 0) || ii < 0 || ii >= nx {
						continue
					}
					if v := eta[jj*nx+ii]; v == v {
						nb[n] = v
						n++
					}
				}
			}
			if n < 3 {
				continue
			}
			um := median8(nb[:n])
			for q := 0; q < n; q++ {
				dev[q] = float32(math.Abs(float64(nb[q] - um)))
			}
			rm := median8(dev[:n])
			if math.Abs(float64(u0-um)) > ratio*(float64(rm)+noiseM) {
				flags[c] = true
				k++
			}
		}
	}
	return k
}

// median8 returns the median of up to 8 values, reordering them
// (insertion sort).
func median8(a []float32) float32 {
	for i := 1; i < len(a); i++ {
		for j := i; j > 0 && a[j] < a[j-1]; j-- {
			a[j], a[j-1] = a[j-1], a[j]
		}
	}
	n := len(a)
	if n%2 == 1 {
		return a[n/2]
	}
	return (a[n/2-1] + a[n/2]) / 2
}

func resize[T any](s []T, n int) []T {
	if cap(s) >= n {
		return s[:n]
	}
	return make([]T, n)
}

// mul4 multiplies row-major 4×4 matrices.
func mul4(a, b *[16]float64) [16]float64 {
	var c [16]float64
	for i := 0; i < 4; i++ {
		for j := 0; j < 4; j++ {
			var s float64
			for k := 0; k < 4; k++ {
				s += a[4*i+k] * b[4*k+j]
			}
			c[4*i+j] = s
		}
	}
	return c
}
