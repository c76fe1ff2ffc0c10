package cvshim

/*
#include <stdlib.h>
#include "stereo_match.h"
*/
import "C"

import (
	"fmt"
	"math"
	"unsafe"

	"gocv.io/x/gocv"
)

// StereoSGBM modes (cv::StereoSGBM::MODE_*), with OpenCV's values.
const (
	SGBMModeSGBM     = 0 // five directions, one pass (OpenCV's default)
	SGBMModeHH       = 1 // eight directions, full two-pass dynamic programming
	SGBMMode3Way     = 2 // three directions, faster
	SGBMModeHH4      = 3 // four directions
	disparityShift   = 4 // StereoMatcher::DISP_SHIFT: disparities are stored ×16
	DisparityScale   = 1 << disparityShift
	maxNumDisparity  = 4096
	maxBlockSize     = 255
	maxSpeckleWindow = 1 << 20
)

// SGBMParams are the parameters of cv::StereoSGBM::create, in OpenCV's
// units: disparities in whole pixels, P1 and P2 in the matching-cost units
// of OpenCV (its documentation suggests 8·c·b² and 32·c·b² for c channels
// and block size b).
type SGBMParams struct {
	MinDisparity      int // smallest disparity searched, pixels
	NumDisparities    int // search width, a positive multiple of 16
	BlockSize         int // matched block side, odd, 1–255 (3–11 usual)
	P1, P2            int // smoothness penalties, 0 ≤ P1 < P2
	Disp12MaxDiff     int // OpenCV's internal left-right check, pixels; < 0 off
	PreFilterCap      int // clip of the x-derivative prefilter, 1–63 typical
	UniquenessRatio   int // margin (percent) by which the best cost must win, 0–100
	SpeckleWindowSize int // largest blob (pixels) taken as speckle and removed; 0 off
	SpeckleRange      int // disparity spread within a blob, pixels (×16 inside OpenCV)
	Mode              int // SGBMModeSGBM, SGBMModeHH, SGBMMode3Way or SGBMModeHH4
}

// Validate reports the first parameter OpenCV would reject or misuse.
func (p SGBMParams) Validate() error {
	switch {
	case p.NumDisparities <= 0 || p.NumDisparities%16 != 0 || p.NumDisparities > maxNumDisparity:
		return fmt.Errorf("number of disparities %d is not a positive multiple of 16 up to %d", p.NumDisparities, maxNumDisparity)
	case p.MinDisparity < -maxNumDisparity || p.MinDisparity > maxNumDisparity:
		return fmt.Errorf("minimum disparity %d is outside ±%d", p.MinDisparity, maxNumDisparity)
	case p.BlockSize < 1 || p.BlockSize%2 == 0 || p.BlockSize > maxBlockSize:
		return fmt.Errorf("block size %d is not an odd number in 1–%d", p.BlockSize, maxBlockSize)
	case p.P1 < 0 || p.P2 < 0 || (p.P2 > 0 && p.P2 <= p.P1):
		return fmt.Errorf("smoothness penalties P1 = %d, P2 = %d must satisfy 0 ≤ P1 < P2", p.P1, p.P2)
	case p.PreFilterCap < 0 || p.PreFilterCap > 255:
		return fmt.Errorf("prefilter cap %d is outside 0–255", p.PreFilterCap)
	case p.UniquenessRatio < 0 || p.UniquenessRatio > 100:
		return fmt.Errorf("uniqueness ratio %d %% is outside 0–100", p.UniquenessRatio)
	case p.SpeckleWindowSize < 0 || p.SpeckleWindowSize > maxSpeckleWindow:
		return fmt.Errorf("speckle window %d px is outside 0–%d", p.SpeckleWindowSize, maxSpeckleWindow)
	case p.SpeckleRange < 0 || p.SpeckleRange > 1000:
		return fmt.Errorf("speckle range %d px is outside 0–1000", p.SpeckleRange)
	case p.Mode < SGBMModeSGBM || p.Mode > SGBMModeHH4:
		return fmt.Errorf("SGBM mode %d is not one of OpenCV's modes 0–3", p.Mode)
	}
	return nil
}

// InvalidDisparity is the raw value (1/16 pixel) the matcher stores where
// it found no disparity: (MinDisparity − 1)·16.
func (p SGBMParams) InvalidDisparity() int16 {
	return int16((p.MinDisparity - 1) * DisparityScale)
}

// StereoSGBM is OpenCV's semi-global block matcher with its right-view
// twin for the left-right check. It keeps work buffers between calls:
// use one per goroutine. Close releases it.
//
// Method: Hirschmüller (2008), "Stereo processing by semiglobal matching
// and mutual information", IEEE TPAMI 30(2), in OpenCV's block-matching
// variant with the Birchfield–Tomasi pixel dissimilarity (Birchfield &
// Tomasi 1998, IEEE TPAMI 20(4)). The right-view matcher is
// cv::ximgproc::createRightMatcher: the same parameters over the mirrored
// range [−(min+num)+1, −min], run on the swapped pair.
type StereoSGBM struct {
	p      *C.cs_sgbm
	params SGBMParams
}

// NewStereoSGBM creates a matcher.
func NewStereoSGBM(p SGBMParams) (*StereoSGBM, error) {
	if err := p.Validate(); err != nil {
		return nil, err
	}
	cp := C.cs_sgbm_params{
		min_disparity: C.int(p.MinDisparity), num_disparities: C.int(p.NumDisparities),
		block_size: C.int(p.BlockSize), p1: C.int(p.P1), p2: C.int(p.P2),
		disp12_max_diff: C.int(p.Disp12MaxDiff), pre_filter_cap: C.int(p.PreFilterCap),
		uniqueness_ratio: C.int(p.UniquenessRatio), speckle_window_size: C.int(p.SpeckleWindowSize),
		speckle_range: C.int(p.SpeckleRange), mode: C.int(p.Mode),
	}
	var m *C.cs_sgbm
	if err := call(C.cs_sgbm_new(cp, &m)); err != nil {
		return nil, err
	}
	return &StereoSGBM{p: m, params: p}, nil
}

// Params returns the matcher's parameters.
func (s *StereoSGBM) Params() SGBMParams { return s.params }

// Close releases the matcher; it may be called more than once.
func (s *StereoSGBM) Close() error {
	if s == nil || s.p == nil {
		return nil
	}
	err := call(C.cs_sgbm_free(s.p))
	s.p = nil
	return err
}

func checkImages(left, right gocv.Mat, disp *gocv.Mat) error {
	switch {
	case left.Ptr() == nil || right.Ptr() == nil || left.Empty() || right.Empty():
		return fmt.Errorf("stereo matching needs two images, got an empty one")
	case left.Type() != gocv.MatTypeCV8UC1 || right.Type() != gocv.MatTypeCV8UC1:
		return fmt.Errorf("stereo matching needs 8-bit grey images")
	case left.Rows() != right.Rows() || left.Cols() != right.Cols():
		return fmt.Errorf("left image is %d×%d px but right image is %d×%d px", left.Cols(), left.Rows(), right.Cols(), right.Rows())
	case disp == nil || disp.Ptr() == nil:
		return fmt.Errorf("the disparity Mat must be made with gocv.NewMat before the call")
	}
	return nil
}

// Compute matches a rectified pair of 8-bit grey images. disp (a Go-owned
// Mat) receives the CV_16SC1 disparity of the left view in 1/16 pixel,
// [SGBMParams.InvalidDisparity] where there is none. This is the bare
// cv::StereoSGBM::compute call.
func (s *StereoSGBM) Compute(left, right gocv.Mat, disp *gocv.Mat) error {
	if s == nil || s.p == nil {
		return fmt.Errorf("stereo matcher is closed")
	}
	if err := checkImages(left, right, disp); err != nil {
		return err
	}
	return call(C.cs_sgbm_compute(s.p, unsafe.Pointer(left.Ptr()), unsafe.Pointer(right.Ptr()), unsafe.Pointer(disp.Ptr())))
}

// CheckStats counts the left-view pixels with a disparity before and after
// the left-right check.
type CheckStats struct {
	ValidBefore, ValidAfter int
}

// ComputeChecked matches the pair as [StereoSGBM.Compute] does, then
// matches the swapped pair with the right-view matcher and keeps a left
// disparity d only where the right view's disparity at column
// x − round(d) agrees with it within maxDiffPx (the left-right
// consistency check; maxDiffPx is rounded to 1/16 pixel). Pixels that fail
// become invalid.
//
// Method: left-right consistency check (Fua 1993, "A parallel stereo
// algorithm that produces dense depth maps and preserves image features",
// Machine Vision and Applications 6; Hirschmüller 2008, §3.4).
func (s *StereoSGBM) ComputeChecked(left, right gocv.Mat, disp *gocv.Mat, maxDiffPx float64) (CheckStats, error) {
	if s == nil || s.p == nil {
		return CheckStats{}, fmt.Errorf("stereo matcher is closed")
	}
	if !(maxDiffPx >= 0 && maxDiffPx <= 1000) {
		return CheckStats{}, fmt.Errorf("left-right tolerance %g px is outside 0–1000 px", maxDiffPx)
	}
	if err := checkImages(left, right, disp); err != nil {
		return CheckStats{}, err
	}
	var before, after C.int
	err := call(C.cs_sgbm_compute_checked(s.p, unsafe.Pointer(left.Ptr()), unsafe.Pointer(right.Ptr()),
		unsafe.Pointer(disp.Ptr()), C.int(math.Round(maxDiffPx*DisparityScale)), &before, &after))
	if err != nil {
		return CheckStats{}, err
	}
	return CheckStats{ValidBefore: int(before), ValidAfter: int(after)}, nil
}

// DisparityToFloat converts a raw CV_16SC1 disparity map (1/16 px) into a
// CV_32FC1 map in pixels (out, a Go-owned Mat), NaN where the raw value is
// outside [minRaw, maxRaw) — the form [ReprojectImageTo3D] turns into NaN
// points.
func DisparityToFloat(disp gocv.Mat, minRaw, maxRaw int16, out *gocv.Mat) error {
	if disp.Ptr() == nil || disp.Empty() || disp.Type() != gocv.MatTypeCV16SC1 {
		return fmt.Errorf("disparity conversion needs a CV_16SC1 disparity map")
	}
	if out == nil || out.Ptr() == nil {
		return fmt.Errorf("the output Mat must be made with gocv.NewMat before the call")
	}
	return call(C.cs_disparity_to_float(unsafe.Pointer(disp.Ptr()), unsafe.Pointer(out.Ptr()), C.int(minRaw), C.int(maxRaw)))
}

// ReprojectImageTo3D runs cv::reprojectImageTo3D: xyz (a Go-owned Mat)
// receives, per pixel (x, y) of disp, the point Q·(x, y, d, 1)ᵀ divided
// by its fourth coordinate, as CV_32FC3. d is the value stored in disp
// (CV_16SC1 or CV_32FC1): for raw SGBM output fold the factor 1/16 into Q.
// Q is row-major 4×4. No missing-value handling: the caller masks invalid
// disparities itself.
func ReprojectImageTo3D(disp gocv.Mat, Q [16]float64, xyz *gocv.Mat) error {
	if disp.Ptr() == nil || disp.Empty() {
		return fmt.Errorf("reprojection needs a disparity image, got an empty one")
	}
	if t := disp.Type(); t != gocv.MatTypeCV16SC1 && t != gocv.MatTypeCV32FC1 {
		return fmt.Errorf("reprojection needs a CV_16SC1 or CV_32FC1 disparity image")
	}
	if xyz == nil || xyz.Ptr() == nil {
		return fmt.Errorf("the 3-D image Mat must be made with gocv.NewMat before the call")
	}
	for _, v := range Q {
		if math.IsNaN(v) || math.IsInf(v, 0) {
			return fmt.Errorf("reprojection matrix Q has a non-finite entry")
		}
	}
	return call(C.cs_reproject(unsafe.Pointer(disp.Ptr()), dp(Q[:]), unsafe.Pointer(xyz.Ptr())))
}

// SetNumThreads sets the number of threads OpenCV's parallel regions use,
// process-wide (cv::setNumThreads); n ≥ 1. Callers that run n workers in
// parallel should give each OpenCV call cores/n threads so that the two
// levels of parallelism do not oversubscribe the cores.
func SetNumThreads(n int) error {
	if n < 1 || n > 4096 {
		return fmt.Errorf("OpenCV thread count %d is outside 1–4096", n)
	}
	return call(C.cs_set_num_threads(C.int(n)))
}

// NumThreads returns OpenCV's current thread count (cv::getNumThreads).
func NumThreads() (int, error) {
	var n C.int
	if err := call(C.cs_get_num_threads(&n)); err != nil {
		return 0, err
	}
	return int(n), nil
}

// Strip is one horizontal strip of a [StripMatcher]: its disparities are
// kept for the rows [Row0, Row1) and computed on the rows [Top, Row1)
// (Top ≤ Row0: the rows above Row0 let the matcher's top-down paths build
// up before the rows kept) and the columns from Col0 on (those left of it
// are not matched), over the disparities [MinDisparity,
// MinDisparity+NumDisparities) in whole pixels.
type Strip struct {
	Row0, Row1, Top, Col0        int
	MinDisparity, NumDisparities int
}

// StripMatcher is semi-global block matching ([StereoSGBM]) done in
// horizontal strips, each with its own disparity range: where the scene's
// depth varies down the image, as on the sea seen from a mast, each strip
// searches only the disparities its rows can have. The strips are matched
// in parallel on OpenCV's thread pool. It keeps work buffers between
// calls: use one per goroutine. Close releases it.
type StripMatcher struct {
	p       *C.cs_strips
	base    SGBMParams
	strips  []Strip
	lrCheck bool
}

// NewStripMatcher makes one matcher per strip with the parameters of base
// (whose range is not used) and the strip's range; with lrCheck, each
// strip also gets its right-view matcher for the left-right check. Strips
// are given top to bottom with disjoint kept rows.
func NewStripMatcher(base SGBMParams, strips []Strip, lrCheck bool) (*StripMatcher, error) {
	if len(strips) == 0 {
		return nil, fmt.Errorf("strip matching needs at least one strip")
	}
	cs := make([]C.cs_strip, len(strips))
	prev := 0
	for i, s := range strips {
		p := base
		p.MinDisparity, p.NumDisparities = s.MinDisparity, s.NumDisparities
		if err := p.Validate(); err != nil {
			return nil, fmt.Errorf("strip %d (rows %d–%d): %v", i, s.Row0, s.Row1, err)
		}
		if s.Top < 0 || s.Top > s.Row0 || s.Row0 >= s.Row1 || s.Row0 < prev || s.Col0 < 0 {
			return nil, fmt.Errorf("strip %d has rows %d–%d from row %d and columns from %d; strips must run top to bottom without overlapping kept rows", i, s.Row0, s.Row1, s.Top, s.Col0)
		}
		prev = s.Row1
		cs[i] = C.cs_strip{row0: C.int(s.Row0), row1: C.int(s.Row1), top: C.int(s.Top), col0: C.int(s.Col0),
			min_disparity: C.int(s.MinDisparity), num_disparities: C.int(s.NumDisparities)}
	}
	cp := C.cs_sgbm_params{
		block_size: C.int(base.BlockSize), p1: C.int(base.P1), p2: C.int(base.P2),
		disp12_max_diff: C.int(base.Disp12MaxDiff), pre_filter_cap: C.int(base.PreFilterCap),
		uniqueness_ratio: C.int(base.UniquenessRatio), speckle_window_size: C.int(base.SpeckleWindowSize),
		speckle_range: C.int(base.SpeckleRange), mode: C.int(base.Mode),
	}
	lr := C.int(0)
	if lrCheck {
		lr = 1
	}
	var m *C.cs_strips
	if err := call(C.cs_strips_new(cp, &cs[0], C.int(len(cs)), lr, &m)); err != nil {
		return nil, err
	}
	return &StripMatcher{p: m, base: base, strips: append([]Strip(nil), strips...), lrCheck: lrCheck}, nil
}

// Strips returns the matcher's strips.
func (s *StripMatcher) Strips() []Strip { return append([]Strip(nil), s.strips...) }

// Params returns the parameters of strip i's matcher.
func (s *StripMatcher) Params(i int) SGBMParams {
	p := s.base
	p.MinDisparity, p.NumDisparities = s.strips[i].MinDisparity, s.strips[i].NumDisparities
	return p
}

// Close releases the matchers; it may be called more than once.
func (s *StripMatcher) Close() error {
	if s == nil || s.p == nil {
		return nil
	}
	err := call(C.cs_strips_free(s.p))
	s.p = nil
	return err
}

// Compute matches a rectified pair strip by strip. disp (a Go-owned Mat)
// receives the CV_32FC1 disparity of the left view in pixels: a strip's raw
// disparity r (1/16 px) over its range [m, m+n) becomes r/16 where
// (m+1)·16 ≤ r < (m+n−1)·16 (the end pixels of the range, where the cost
// minimum sits on its edge, are not used) and, with the left-right check,
// the right view agrees within maxDiffPx as in [StereoSGBM.ComputeChecked];
// NaN elsewhere, and in rows of no strip. One strip over the whole image
// gives exactly ComputeChecked (or Compute) followed by
// [DisparityToFloat] with those bounds.
func (s *StripMatcher) Compute(left, right gocv.Mat, disp *gocv.Mat, maxDiffPx float64) (CheckStats, error) {
	if s == nil || s.p == nil {
		return CheckStats{}, fmt.Errorf("strip matcher is closed")
	}
	if !(maxDiffPx >= 0 && maxDiffPx <= 1000) {
		return CheckStats{}, fmt.Errorf("left-right tolerance %g px is outside 0–1000 px", maxDiffPx)
	}
	if err := checkImages(left, right, disp); err != nil {
		return CheckStats{}, err
	}
	if last := s.strips[len(s.strips)-1]; last.Row1 > left.Rows() {
		return CheckStats{}, fmt.Errorf("the strips reach row %d of a %d-row image", last.Row1, left.Rows())
	}
	for _, st := range s.strips {
		if st.Col0+st.NumDisparities+16 > left.Cols() {
			return CheckStats{}, fmt.Errorf("a strip matched from column %d over %d disparities does not fit a %d-column image", st.Col0, st.NumDisparities, left.Cols())
		}
	}
	var before, after C.int
	err := call(C.cs_strips_compute(s.p, unsafe.Pointer(left.Ptr()), unsafe.Pointer(right.Ptr()),
		unsafe.Pointer(disp.Ptr()), C.int(math.Round(maxDiffPx*DisparityScale)), &before, &after))
	if err != nil {
		return CheckStats{}, err
	}
	return CheckStats{ValidBefore: int(before), ValidAfter: int(after)}, nil
}
