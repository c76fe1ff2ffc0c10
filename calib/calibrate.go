package calib

import (
	"context"
	"errors"
	"fmt"
	"image"
	"math"
	"runtime"
	"sort"
	"sync"
	"time"

	"gocv.io/x/gocv"
	"gonum.org/v1/gonum/stat"

	"crestspeed/internal/cvshim"
)

// Defaults of [Options].
const (
	// DefaultMinViews is the fewest good views a calibration accepts. It
	// is a floor, not a target: 10 to 20 views spread over the whole image
	// are common practice.
	DefaultMinViews = 8
	// DefaultDropFactor drops views whose reprojection error exceeds three
	// times the median (a choice of this tool; common practice is to
	// remove clear outliers and recalibrate).
	DefaultDropFactor = 3.0
	// maxDropRounds bounds the drop-and-recalibrate loop.
	maxDropRounds = 10
)

// Options configures [Calibrate] and [Solve]. The fields with yaml tags
// are the settings of the "calibrate" section of the configuration;
// DefaultOptions gives their defaults.
type Options struct {
	// Pattern is the chessboard: given by the caller for each calibration.
	Pattern Pattern `yaml:"-"`
	// Detector is DetectorClassic (the default when empty) or DetectorSB.
	Detector string `yaml:"detector"`
	// DropFactor k: views whose reprojection error exceeds k times the
	// median are dropped and the calibration repeated, until none is left
	// to drop. 0 keeps every view; otherwise k must exceed 1. Default
	// DefaultDropFactor.
	DropFactor float64 `yaml:"drop_factor"`
	// MinViews is the fewest good views accepted; 0 means DefaultMinViews.
	MinViews int `yaml:"min_views"`
	// FixK3 holds the r⁶ radial coefficient at zero, which steadies
	// calibrations from few views of lenses with mild distortion. Default
	// off.
	FixK3 bool `yaml:"fix_k3"`
	// Workers is the number of image pairs searched for corners at once;
	// 0 means one per CPU core.
	Workers int `yaml:"-"`
	// Progress, when set, is told how many of the image pairs have been
	// searched for corners. Calls are serialised.
	Progress func(done, total int) `yaml:"-"`
	// Created is the creation time the rig file records; zero means now.
	// Callers give the time of the newest image, so that the same images
	// give the same rig file whenever they are calibrated.
	Created time.Time `yaml:"-"`
}

// DefaultOptions returns the default settings (the chessboard is left for
// the caller to give).
func DefaultOptions() Options {
	return Options{Detector: DetectorClassic, DropFactor: DefaultDropFactor, MinViews: DefaultMinViews}
}

func (o Options) minViews() int {
	if o.MinViews > 0 {
		return o.MinViews
	}
	return DefaultMinViews
}

// Validate reports the first setting that cannot work.
func (o Options) Validate() error {
	if err := o.Pattern.Validate(); err != nil {
		return err
	}
	switch o.Detector {
	case "", DetectorClassic, DetectorSB:
	default:
		return fmt.Errorf("corner detector %q is unknown; use %q or %q", o.Detector, DetectorClassic, DetectorSB)
	}
	if o.DropFactor != 0 && !(o.DropFactor > 1) {
		return fmt.Errorf("drop factor %g must be 0 (keep every view) or above 1", o.DropFactor)
	}
	if o.MinViews < 0 {
		return fmt.Errorf("minimum number of views %d is negative", o.MinViews)
	}
	if o.minViews() < 3 {
		return fmt.Errorf("minimum number of views %d is below 3, too few to calibrate a camera", o.MinViews)
	}
	return nil
}

// View is one image pair in a calibration.
type View struct {
	Pair
	// Status is ViewUsed, ViewDropped or ViewSkipped; Reason says why a
	// view was dropped or skipped.
	Status, Reason string
	// Left and Right are the detected corners (pixels), in the order of
	// Pattern.ObjectPoints; nil when the view was skipped.
	Left, Right [][2]float32
	// RMSLeftPx and RMSRightPx are the view's RMS reprojection errors from
	// cv::stereoCalibrate: of the final calibration for used views, of the
	// round that dropped it for dropped views.
	RMSLeftPx, RMSRightPx float64
	// ResidualsLeft and ResidualsRight are projected minus detected corner
	// positions (pixels) under the final rig, with the board pose refitted
	// to this view.
	ResidualsLeft, ResidualsRight [][2]float64
	// EpipolarPx is |y_left − y_right| (pixels) of each corner after
	// rectification with the final rig.
	EpipolarPx []float64
}

// rms is the view's RMS reprojection error over both cameras.
func (v *View) rms() float64 {
	return math.Sqrt((v.RMSLeftPx*v.RMSLeftPx + v.RMSRightPx*v.RMSRightPx) / 2)
}

// Result is a finished calibration.
type Result struct {
	// Rig is the calibrated rig, its Quality filled in.
	Rig *Rig
	// Rectification is the rig's rectification with alpha = 0, the one the
	// epipolar errors refer to.
	Rectification *Rectification
	// Views lists every image pair in input order.
	Views []View
	// Pattern is the chessboard the views show.
	Pattern Pattern
	// Rounds is the number of stereo calibrations run (1 + drop rounds).
	Rounds int
	// LeftAloneRMSPx and RightAloneRMSPx are the RMS reprojection errors of
	// each camera calibrated alone, before the stereo calibration.
	LeftAloneRMSPx, RightAloneRMSPx float64
	// Stereo is the raw output of the final cv::stereoCalibrate.
	Stereo cvshim.StereoCalibration
}

// Calibrate calibrates a stereo rig from chessboard image pairs: corners
// are found in every pair (views without the whole board in both images
// are skipped, with the reason), then [Solve] runs on the good views.
func Calibrate(ctx context.Context, pairs []Pair, opt Options) (*Result, error) {
	if err := opt.Validate(); err != nil {
		return nil, err
	}
	views, size, err := DetectViews(ctx, pairs, opt)
	if err != nil {
		return nil, err
	}
	return Solve(views, size, opt)
}

// DetectViews reads every image pair as 8-bit grey and finds the
// pattern's corners. It fails on an unreadable image or on images of
// different sizes; pairs without the whole board are marked skipped.
func DetectViews(ctx context.Context, pairs []Pair, opt Options) ([]View, image.Point, error) {
	if err := opt.Validate(); err != nil {
		return nil, image.Point{}, err
	}
	if len(pairs) == 0 {
		return nil, image.Point{}, errors.New("no calibration image pairs given")
	}
	views := make([]View, len(pairs))
	sizes := make([][2]image.Point, len(pairs))
	errs := make([]error, len(pairs))
	workers := opt.Workers
	if workers <= 0 {
		workers = runtime.NumCPU()
	}
	var (
		mu   sync.Mutex
		done int
		wg   sync.WaitGroup
	)
	jobs := make(chan int)
	for w := 0; w < min(workers, len(pairs)); w++ {
		wg.Add(1)
		go func() {
			defer wg.Done()
			for i := range jobs {
				if ctx.Err() == nil {
					views[i], sizes[i], errs[i] = detectPair(pairs[i], opt)
				}
				mu.Lock()
				done++
				if opt.Progress != nil {
					opt.Progress(done, len(pairs))
				}
				mu.Unlock()
			}
		}()
	}
	for i := range pairs {
		jobs <- i
	}
	close(jobs)
	wg.Wait()
	if err := ctx.Err(); err != nil {
		return nil, image.Point{}, err
	}
	for _, err := range errs {
		if err != nil {
			return nil, image.Point{}, err
		}
	}
	ref := sizes[0][0]
	for i, s := range sizes {
		for side, path := range []string{pairs[i].Left, pairs[i].Right} {
			if s[side] != ref {
				return nil, image.Point{}, fmt.Errorf("image %s is %d×%d px but %s is %d×%d px; all calibration images must come from the same two cameras at one resolution",
					path, s[side].X, s[side].Y, pairs[0].Left, ref.X, ref.Y)
			}
		}
	}
	return views, ref, nil
}

func detectPair(p Pair, opt Options) (View, [2]image.Point, error) {
	v := View{Pair: p}
	var sizes [2]image.Point
	var found [2]bool
	var corners [2][][2]float32
	for side, path := range []string{p.Left, p.Right} {
		img := gocv.IMRead(path, gocv.IMReadGrayScale)
		if img.Empty() {
			img.Close()
			return v, sizes, fmt.Errorf("image %s cannot be read; check that it exists and is a PNG or JPEG image", path)
		}
		sizes[side] = image.Pt(img.Cols(), img.Rows())
		c, ok, err := DetectCorners(img, opt.Pattern, opt.Detector)
		img.Close()
		if err != nil {
			return v, sizes, fmt.Errorf("image %s: %v", path, err)
		}
		found[side], corners[side] = ok, c
	}
	switch {
	case !found[0] && !found[1]:
		v.Status, v.Reason = ViewSkipped, "chessboard not found in either image"
	case !found[0]:
		v.Status, v.Reason = ViewSkipped, "chessboard not found in the left image"
	case !found[1]:
		v.Status, v.Reason = ViewSkipped, "chessboard not found in the right image"
	default:
		v.Status = ViewUsed
		v.Left, v.Right = corners[0], corners[1]
		alignOrder(v.Left, v.Right)
	}
	return v, sizes, nil
}

// criteria for cv::calibrateCamera and cv::stereoCalibrate.
var solveCriteria = cvshim.Criteria{MaxIter: 100, Eps: 1e-9}

// SolveFlags returns the OpenCV flags Solve passes to cv::calibrateCamera
// (single) and cv::stereoCalibrate (stereo) for these options.
func (o Options) SolveFlags() (single, stereo int) {
	if o.FixK3 {
		single |= cvshim.CalibFixK3
	}
	return single, single | cvshim.CalibUseIntrinsicGuess
}

// SolveCriteria returns the termination criteria Solve uses.
func SolveCriteria() cvshim.Criteria { return solveCriteria }

// Solve calibrates the rig from views whose corners are known (Status
// ViewUsed on entry; other views are carried through as they are). Each
// camera is first calibrated alone (cv::calibrateCamera, Zhang's method),
// then both together with cv::stereoCalibrate refining the intrinsics. With
// a DropFactor, views whose RMS error exceeds DropFactor times the median
// are dropped and the stereo calibration repeated until none exceeds it.
// Finally the rig is rectified (cv::stereoRectify, alpha 0) and the
// per-view residuals and epipolar errors are measured.
func Solve(views []View, size image.Point, opt Options) (*Result, error) {
	if err := opt.Validate(); err != nil {
		return nil, err
	}
	views = append([]View(nil), views...)
	if err := checkUsedViews(views, opt); err != nil {
		return nil, err
	}
	if size.X <= 0 || size.Y <= 0 {
		return nil, fmt.Errorf("image size %d×%d px is not positive", size.X, size.Y)
	}
	objPts := opt.Pattern.ObjectPoints()
	singleFlags, stereoFlags := opt.SolveFlags()
	res := &Result{Views: views, Pattern: opt.Pattern}
	var st cvshim.StereoCalibration
	for round := 1; ; round++ {
		var idx []int
		var obj [][][3]float32
		var left, right [][][2]float32
		for i := range views {
			if views[i].Status == ViewUsed {
				idx = append(idx, i)
				obj = append(obj, objPts)
				left = append(left, views[i].Left)
				right = append(right, views[i].Right)
			}
		}
		var cal [2]cvshim.CameraCalibration
		for side, pts := range [][][][2]float32{left, right} {
			c, err := cvshim.CalibrateCamera(obj, pts, size, cvshim.Intrinsics{}, singleFlags, solveCriteria)
			if err != nil {
				return nil, fmt.Errorf("calibration of the %s camera alone failed (%v); check that the views show the board at varied angles", []string{"left", "right"}[side], err)
			}
			cal[side] = c
		}
		var err error
		st, err = cvshim.StereoCalibrate(obj, left, right, size, cal[0].Intrinsics, cal[1].Intrinsics, stereoFlags, solveCriteria)
		if err != nil {
			return nil, fmt.Errorf("stereo calibration failed (%v); check that left and right images were taken at the same instants", err)
		}
		res.Rounds = round
		res.LeftAloneRMSPx, res.RightAloneRMSPx = cal[0].RMS, cal[1].RMS
		errs := make([]float64, len(idx))
		for k, i := range idx {
			views[i].RMSLeftPx, views[i].RMSRightPx = st.PerViewRMS[k][0], st.PerViewRMS[k][1]
			errs[k] = views[i].rms()
		}
		if opt.DropFactor == 0 || round > maxDropRounds {
			break
		}
		med := median(errs)
		limit := opt.DropFactor * med
		var drop []int
		for k, i := range idx {
			if errs[k] > limit {
				drop = append(drop, i)
			}
		}
		if len(drop) == 0 {
			break
		}
		if len(idx)-len(drop) < opt.minViews() {
			return nil, fmt.Errorf("dropping the %d views whose reprojection error exceeds %g × the median (%.3g px) would leave %d, fewer than the %d needed; shoot more views, raise calibrate.drop_factor or lower calibrate.min_views",
				len(drop), opt.DropFactor, med, len(idx)-len(drop), opt.minViews())
		}
		for _, i := range drop {
			views[i].Status = ViewDropped
			views[i].Reason = fmt.Sprintf("reprojection error %.3g px exceeded %g × the median %.3g px in round %d", views[i].rms(), opt.DropFactor, med, round)
		}
	}
	res.Stereo = st
	rig := &Rig{Size: size, Left: cameraFrom(st.Cam1.K, st.Cam1.D), Right: cameraFrom(st.Cam2.K, st.Cam2.D), R: st.R, T: st.T}
	if err := rig.Validate(); err != nil {
		return nil, fmt.Errorf("stereo calibration gave an implausible rig (%v); check the views and the pattern size", err)
	}
	rc, err := rig.Rectify(0)
	if err != nil {
		return nil, err
	}
	res.Rig, res.Rectification = rig, rc
	rig.Quality = measureViews(views, rig, rc, objPts, st, opt)
	return res, nil
}

// checkUsedViews checks that every view marked used has one corner per
// pattern corner on both sides, and that enough views are used.
func checkUsedViews(views []View, opt Options) error {
	n := len(views)
	good := 0
	for i := range views {
		if views[i].Status == ViewUsed {
			if len(views[i].Left) != opt.Pattern.Cols*opt.Pattern.Rows || len(views[i].Right) != len(views[i].Left) {
				return fmt.Errorf("view %s has %d left and %d right corners but pattern %s has %d", views[i].Name,
					len(views[i].Left), len(views[i].Right), opt.Pattern, opt.Pattern.Cols*opt.Pattern.Rows)
			}
			good++
		}
	}
	switch {
	case good == 0:
		return fmt.Errorf("no %s chessboard was found in both images of any of the %d pairs; check --pattern (inner corners, columns x rows) and that the whole board is in both pictures", opt.Pattern, n)
	case good < opt.minViews():
		return fmt.Errorf("only %d of %d image pairs show the whole %s chessboard in both images, fewer than the %d needed; shoot more views or lower calibrate.min_views", good, n, opt.Pattern, opt.minViews())
	}
	return nil
}

// measureViews measures each view's residuals against the solved rig and
// its epipolar errors after rectification, and sums them up with the
// solve's settings into the rig's quality record.
func measureViews(views []View, rig *Rig, rc *Rectification, objPts [][3]float32, st cvshim.StereoCalibration, opt Options) *Quality {
	var epi []float64
	var sumL, sumR float64
	used := 0
	for i := range views {
		v := &views[i]
		if v.Status == ViewSkipped {
			continue
		}
		_, _, v.ResidualsLeft, v.ResidualsRight, _ = boardPose(rig, objPts, v.Left, v.Right)
		v.EpipolarPx = make([]float64, len(v.Left))
		for k := range v.Left {
			pl, okl := rc.RectifyLeft([2]float64{float64(v.Left[k][0]), float64(v.Left[k][1])})
			pr, okr := rc.RectifyRight([2]float64{float64(v.Right[k][0]), float64(v.Right[k][1])})
			if okl && okr {
				v.EpipolarPx[k] = math.Abs(pl[1] - pr[1])
			} else {
				v.EpipolarPx[k] = math.NaN()
			}
		}
		if v.Status == ViewUsed {
			used++
			sumL += v.RMSLeftPx * v.RMSLeftPx
			sumR += v.RMSRightPx * v.RMSRightPx
			for _, e := range v.EpipolarPx {
				if !math.IsNaN(e) {
					epi = append(epi, e)
				}
			}
		}
	}
	sort.Float64s(epi)
	q := &Quality{
		Pattern:    opt.Pattern.String(),
		SquareM:    opt.Pattern.SquareM,
		Detector:   detectorName(opt.Detector),
		DropFactor: opt.DropFactor,
		CreatedUTC: createdUTC(opt.Created),
		ViewsUsed:  used,
		RMSPx:      st.RMS,
		LeftRMSPx:  math.Sqrt(sumL / float64(used)),
		RightRMSPx: math.Sqrt(sumR / float64(used)),
	}
	if len(epi) > 0 {
		q.EpiMeanPx = stat.Mean(epi, nil)
		q.EpiP95Px = stat.Quantile(0.95, stat.Empirical, epi, nil)
	}
	for i := range views {
		v := &views[i]
		vq := ViewQuality{Name: v.Name, Left: v.Pair.Left, Right: v.Pair.Right, Status: v.Status, Reason: v.Reason,
			RMSLeftPx: v.RMSLeftPx, RMSRightPx: v.RMSRightPx}
		if m := meanFinite(v.EpipolarPx); !math.IsNaN(m) {
			vq.EpiMeanPx = m
		}
		q.Views = append(q.Views, vq)
	}
	return q
}

func detectorName(d string) string {
	if d == "" {
		return DetectorClassic
	}
	return d
}

func median(x []float64) float64 {
	s := append([]float64(nil), x...)
	sort.Float64s(s)
	n := len(s)
	if n%2 == 1 {
		return s[n/2]
	}
	return (s[n/2-1] + s[n/2]) / 2
}

func meanFinite(x []float64) float64 {
	s, n := 0.0, 0
	for _, v := range x {
		if !math.IsNaN(v) {
			s += v
			n++
		}
	}
	if n == 0 {
		return math.NaN()
	}
	return s / float64(n)
}

// WorstView returns the view with the largest RMS reprojection error among
// those used or dropped, or nil when there is none.
func (r *Result) WorstView() *View {
	var worst *View
	for i := range r.Views {
		v := &r.Views[i]
		if v.Status == ViewSkipped {
			continue
		}
		if worst == nil || v.rms() > worst.rms() {
			worst = v
		}
	}
	return worst
}

// createdUTC formats t (now when zero) as the rig file records it.
func createdUTC(t time.Time) string {
	if t.IsZero() {
		t = time.Now()
	}
	return t.UTC().Truncate(time.Second).Format(time.RFC3339)
}
