package surface

import (
	"fmt"
	"math"
	"strings"

	"crestspeed/internal/cvshim"
)

// Matcher configures the disparity stage. Zero values take the defaults
// given beside the fields (see [DefaultOptions]).
type Matcher struct {
	// MinDisparity and NumDisparities fix the disparity search range,
	// pixels of the rectified images. NumDisparities 0 means automatic
	// (see the package documentation); MinDisparity is then ignored.
	MinDisparity   int `yaml:"min_disparity"`
	NumDisparities int `yaml:"num_disparities"`
	// BlockSize is the matched block side, odd (default 5).
	BlockSize int `yaml:"block_size"`
	// P1 and P2 are the smoothness penalties; 0 gives 2·b² and 8·b² for
	// block size b, a quarter of the 8·b² and 32·b² OpenCV's documentation
	// suggests for grey images: on rendered seas the weaker smoothing keeps
	// the amplitude of waves whose disparity varies by a fraction of a pixel
	// (measured gain at the spectral peak 0.98 instead of 0.95) and lowers
	// the noise.
	P1 int `yaml:"p1"`
	P2 int `yaml:"p2"`
	// Disp12MaxDiff is OpenCV's internal left-right check in whole pixels;
	// negative turns it off (default 1).
	Disp12MaxDiff int `yaml:"disp12_max_diff"`
	// PreFilterCap clips the prefiltered image derivative (default 63).
	PreFilterCap int `yaml:"pre_filter_cap"`
	// UniquenessRatio (percent): the best matching cost must beat the
	// second best by this margin (default 10).
	UniquenessRatio int `yaml:"uniqueness_ratio"`
	// SpeckleWindowSize is the largest connected blob of disparities, in
	// pixels, removed as a speckle when its disparities vary by at most
	// SpeckleRange pixels (defaults 100 and 2); 0 turns the filter off.
	SpeckleWindowSize int `yaml:"speckle_window_px"`
	SpeckleRange      int `yaml:"speckle_range_px"`
	// Mode is "sgbm" (five directions, default), "hh" (eight directions,
	// two passes, much more memory), "3way" (three directions, faster) or
	// "hh4" (four directions).
	Mode string `yaml:"mode"`
	// LRCheck enables the explicit left-right consistency check, with
	// tolerance LRMaxDiffPx pixels (default on, 1 px).
	LRCheck     bool    `yaml:"lr_check"`
	LRMaxDiffPx float64 `yaml:"lr_max_diff_px"`
}

// PlaneOptions configure the pairs sampled by [Settle] and the
// mean-sea-plane fit.
type PlaneOptions struct {
	// Frames is the number of pairs sampled (default 20), spread evenly
	// over the whole record, or over its first SpanS seconds when SpanS is
	// positive (default 0). The plane, the sea state and the grid are all
	// measured on them.
	Frames int     `yaml:"frames"`
	SpanS  float64 `yaml:"span_s"`
	// Iterations of RANSAC (default 500) and the inlier distance ThresholdM
	// from the plane, metres (default 1).
	Iterations int     `yaml:"ransac_iterations"`
	ThresholdM float64 `yaml:"ransac_threshold_m"`
	// Stride subsamples the pixels whose points are fitted: one in
	// Stride×Stride (default 4).
	Stride int `yaml:"pixel_stride"`
	// Seed of the RANSAC sampler (the same seed, the same plane; default 1).
	Seed uint64 `yaml:"seed"`
	// Refit fits a plane even when the rig has one (default false).
	Refit bool `yaml:"refit"`
}

// Grid extents of the automatic grid (GridSpec.Extent).
const (
	// ExtentFootprint: the rectangle that covers the sea both cameras
	// see, as far as the sampled pairs support it; cells outside the
	// footprint are NaN.
	ExtentFootprint = "footprint"
	// ExtentInscribed: the largest rectangle all of whose cells are
	// supported.
	ExtentInscribed = "inscribed"
)

// GridSpec configures the output grid. Either all four bounds are given
// (cell centres from X0 to X1 and Y0 to Y1, metres, in the world frame) or
// none, for the automatic rectangle; D is the cell spacing, 0 for the
// automatic spacing.
type GridSpec struct {
	X0 *float64 `yaml:"x0_m"`
	X1 *float64 `yaml:"x1_m"`
	Y0 *float64 `yaml:"y0_m"`
	Y1 *float64 `yaml:"y1_m"`
	D  float64  `yaml:"dx_m"`
	// Coverage is the fraction of the sampled pairs in which a cell must
	// hold MinPoints points to be supported (default 0.8).
	Coverage float64 `yaml:"coverage"`
	// GSDFactor is the automatic spacing in units of the longer side of a
	// pixel's footprint at the far edge of the grid (default 2).
	GSDFactor float64 `yaml:"gsd_factor"`
	// Extent of the automatic grid: ExtentFootprint (default) or
	// ExtentInscribed (see the package documentation).
	Extent string `yaml:"extent"`
}

// BandOptions size the automatic disparity search from the sea state that
// [Settle] measures (see the package documentation).
type BandOptions struct {
	// Sigmas is the half-width of the band of water heights searched
	// about the mean plane, in standard deviations σ_η of the sea-surface
	// elevation (default 4); MarginM metres are added to it (default
	// 0.3 m) and ElevationMarginM caps it. Sigmas 0 searches
	// ±ElevationMarginM whatever the sea.
	Sigmas  float64 `yaml:"sigmas"`
	MarginM float64 `yaml:"margin_m"`
	// Strips lets the matcher work in horizontal strips of the rectified
	// image, each searching the disparities its rows can have (default
	// on); off, one range serves the whole image.
	Strips bool `yaml:"strips"`
}

// Options configure a reconstruction. Start from [DefaultOptions].
type Options struct {
	Matcher Matcher      `yaml:"sgbm"`
	Plane   PlaneOptions `yaml:"plane"`
	Grid    GridSpec     `yaml:"grid"`
	Band    BandOptions  `yaml:"band"`
	// RectifyAlpha is OpenCV's free scaling of the rectification, 0 (only
	// valid pixels, the default) to 1 (every source pixel).
	RectifyAlpha float64 `yaml:"rectify_alpha"`
	// ElevationMarginM is the widest band about the mean plane the
	// automatic disparity range covers, metres (default 4): the band of
	// the settle step's passes before the sea state is known, and the cap
	// of the band sized from it. It must exceed the highest crest and
	// deepest trough expected (about 1.3·Hs).
	ElevationMarginM float64 `yaml:"elevation_margin_m"`
	// Prewarp shears the right image by the mean plane's disparity before
	// matching, so that the matcher searches only the waves' residual
	// disparity (default on; used only with the automatic range).
	Prewarp bool `yaml:"plane_prewarp"`
	// MaxRangeM limits the horizontal distance from the left camera of
	// the points used, metres; 0 (the default) means no limit.
	MaxRangeM float64 `yaml:"max_range_m"`
	// MinPoints is the fewest points a cell needs for an elevation
	// (default 3).
	MinPoints int `yaml:"min_points"`
	// MaxAbsElevationM drops points farther than this from the mean plane
	// as mismatches, metres (default 10).
	MaxAbsElevationM float64 `yaml:"max_abs_elevation_m"`
	// OutlierRatio is the threshold of the normalised median test that
	// removes a cell whose elevation departs from its neighbours' (see
	// medianTest; its authors recommend 2), and OutlierNoiseM its noise
	// level ε, metres (default 0.02 m). Default 0: off, because on a grid
	// fine enough for the short waves the test also removes true crest
	// cells (measured on the test deployment at 0.25 m: it halves the
	// crest rows with a speed); use it on coarse grids with mismatches.
	OutlierRatio  float64 `yaml:"outlier_ratio"`
	OutlierNoiseM float64 `yaml:"outlier_noise_m"`
	// MinFrameCoverage skips a frame whose supported cells are fewer than
	// this fraction of the grid's supported cells (default 0.1).
	MinFrameCoverage float64 `yaml:"min_frame_coverage"`
	// Workers reconstruct pairs in parallel (≤ 0: one).
	Workers int `yaml:"-"`
	// Foam configures whitecap detection on the rectified left images
	// (foam.go); off unless Foam.Enabled.
	Foam FoamOptions `yaml:"foam"`
	// Progress, when set, is told how far each pass has got ("sample",
	// "plane", "sea state", "grid", "reconstruct"); total is -1 when
	// unknown.
	Progress func(pass string, done, total int) `json:"-" yaml:"-"`
}

// DefaultOptions returns the defaults: SGBM of 5×5 blocks with penalties
// 2·b² and 8·b², uniqueness 10 %, speckle filter 100 px / 2 px,
// left-right check at 1 px, automatic disparity range, 3 points per cell,
// automatic grid over the footprint, 20 pairs sampled over the whole
// record, disparity band ±(4 σ_η + 0.3 m) capped at ±4 m, matched in
// strips.
func DefaultOptions() Options {
	return Options{
		Matcher: Matcher{
			BlockSize: 5, Disp12MaxDiff: 1, PreFilterCap: 63, UniquenessRatio: 10,
			SpeckleWindowSize: 100, SpeckleRange: 2, Mode: "sgbm",
			LRCheck: true, LRMaxDiffPx: 1,
		},
		Plane:            PlaneOptions{Frames: 20, Iterations: 500, ThresholdM: 1, Stride: 4, Seed: 1},
		Grid:             GridSpec{Coverage: 0.8, GSDFactor: 2, Extent: ExtentFootprint},
		Band:             BandOptions{Sigmas: 4, MarginM: 0.3, Strips: true},
		ElevationMarginM: 4,
		Prewarp:          true,
		MinPoints:        3,
		MaxAbsElevationM: 10,
		OutlierRatio:     0,
		OutlierNoiseM:    0.02,
		MinFrameCoverage: 0.1,
		Workers:          1,
		Foam:             DefaultFoamOptions(),
	}
}

// sgbmModes maps Matcher.Mode to OpenCV's values.
var sgbmModes = map[string]int{
	"sgbm": cvshim.SGBMModeSGBM, "hh": cvshim.SGBMModeHH,
	"3way": cvshim.SGBMMode3Way, "hh4": cvshim.SGBMModeHH4,
}

// Validate reports the first setting that cannot work, as one sentence
// naming it.
func (o Options) Validate() error {
	m := o.Matcher
	finite := func(v float64) bool { return !math.IsNaN(v) && !math.IsInf(v, 0) }
	switch {
	case m.NumDisparities < 0 || m.NumDisparities%16 != 0 || m.NumDisparities > 4096:
		return fmt.Errorf("number of disparities %d is not 0 (automatic) or a positive multiple of 16 up to 4096", m.NumDisparities)
	case m.BlockSize < 1 || m.BlockSize%2 == 0 || m.BlockSize > 51:
		return fmt.Errorf("SGBM block size %d is not an odd number in 1–51 (3–11 usual)", m.BlockSize)
	case m.P1 < 0 || m.P2 < 0 || (m.P2 > 0 && m.P2 <= m.P1):
		return fmt.Errorf("SGBM penalties P1 = %d, P2 = %d must satisfy 0 ≤ P1 < P2 (0 for the defaults)", m.P1, m.P2)
	case m.PreFilterCap < 1 || m.PreFilterCap > 255:
		return fmt.Errorf("SGBM prefilter cap %d is outside 1–255 (63 usual)", m.PreFilterCap)
	case m.UniquenessRatio < 0 || m.UniquenessRatio > 100:
		return fmt.Errorf("SGBM uniqueness ratio %d %% is outside 0–100 (5–15 usual)", m.UniquenessRatio)
	case m.SpeckleWindowSize < 0 || m.SpeckleRange < 0 || m.SpeckleRange > 1000:
		return fmt.Errorf("SGBM speckle window %d px and range %d px must not be negative", m.SpeckleWindowSize, m.SpeckleRange)
	case m.LRCheck && !(m.LRMaxDiffPx >= 0 && m.LRMaxDiffPx <= 100):
		return fmt.Errorf("left-right check tolerance %g px is outside 0–100 px (1 usual)", m.LRMaxDiffPx)
	case !(o.RectifyAlpha >= 0 && o.RectifyAlpha <= 1):
		return fmt.Errorf("rectification alpha %g is outside 0–1", o.RectifyAlpha)
	case !(o.ElevationMarginM > 0 && o.ElevationMarginM <= 100):
		return fmt.Errorf("elevation margin %g m is outside (0, 100] m", o.ElevationMarginM)
	case !(o.MaxRangeM >= 0) || !finite(o.MaxRangeM):
		return fmt.Errorf("maximum range %g m is negative; use 0 for no limit", o.MaxRangeM)
	case o.MinPoints < 1 || o.MinPoints > 1<<20:
		return fmt.Errorf("minimum points per cell %d is below 1", o.MinPoints)
	case !(o.MaxAbsElevationM > 0) || !finite(o.MaxAbsElevationM):
		return fmt.Errorf("maximum elevation %g m is not positive", o.MaxAbsElevationM)
	case !(o.OutlierRatio >= 0 && o.OutlierRatio <= 100):
		return fmt.Errorf("outlier ratio %g is outside 0–100 (2 usual; 0 turns the median test off)", o.OutlierRatio)
	case !(o.OutlierNoiseM >= 0 && o.OutlierNoiseM <= 10):
		return fmt.Errorf("outlier noise level %g m is outside 0–10 m", o.OutlierNoiseM)
	case !(o.MinFrameCoverage >= 0 && o.MinFrameCoverage <= 1):
		return fmt.Errorf("minimum frame coverage %g is outside 0–1", o.MinFrameCoverage)
	case o.Plane.Frames < 1 || o.Plane.Frames > 10000:
		return fmt.Errorf("sea-plane frames %d is outside 1–10000", o.Plane.Frames)
	case !(o.Plane.SpanS >= 0) || !finite(o.Plane.SpanS):
		return fmt.Errorf("sea-plane span %g s is negative", o.Plane.SpanS)
	case o.Plane.Iterations < 1 || o.Plane.Iterations > 1e6:
		return fmt.Errorf("RANSAC iterations %d is outside 1–1000000", o.Plane.Iterations)
	case !(o.Plane.ThresholdM > 0) || !finite(o.Plane.ThresholdM):
		return fmt.Errorf("RANSAC threshold %g m is not positive", o.Plane.ThresholdM)
	case o.Plane.Stride < 1 || o.Plane.Stride > 64:
		return fmt.Errorf("sea-plane pixel stride %d is outside 1–64", o.Plane.Stride)
	case !(o.Grid.D >= 0) || !finite(o.Grid.D) || o.Grid.D > 1000:
		return fmt.Errorf("grid spacing %g m is negative; use 0 for the automatic spacing", o.Grid.D)
	case !(o.Grid.Coverage > 0 && o.Grid.Coverage <= 1):
		return fmt.Errorf("grid coverage %g is outside (0, 1]", o.Grid.Coverage)
	case !(o.Grid.GSDFactor >= 0.5 && o.Grid.GSDFactor <= 100):
		return fmt.Errorf("grid GSD factor %g is outside 0.5–100", o.Grid.GSDFactor)
	case o.Grid.Extent != ExtentFootprint && o.Grid.Extent != ExtentInscribed && o.Grid.Extent != "":
		return fmt.Errorf("grid extent %q is not %q or %q", o.Grid.Extent, ExtentFootprint, ExtentInscribed)
	case !(o.Band.Sigmas >= 0 && o.Band.Sigmas <= 20):
		return fmt.Errorf("disparity band of %g standard deviations of the sea is outside 0–20 (4 usual; 0 searches ±elevation_margin_m)", o.Band.Sigmas)
	case !(o.Band.MarginM >= 0 && o.Band.MarginM <= 100):
		return fmt.Errorf("disparity band margin %g m is outside 0–100 m", o.Band.MarginM)
	}
	if _, ok := sgbmModes[strings.ToLower(m.Mode)]; !ok {
		return fmt.Errorf("SGBM mode %q is not one of sgbm, hh, 3way, hh4", m.Mode)
	}
	g := o.Grid
	n := 0
	for _, p := range []*float64{g.X0, g.X1, g.Y0, g.Y1} {
		if p != nil {
			n++
			if !finite(*p) {
				return fmt.Errorf("grid bound %g is not a finite number of metres", *p)
			}
		}
	}
	switch {
	case n != 0 && n != 4:
		return fmt.Errorf("grid bounds need all four of x0, x1, y0, y1 (or none, for the automatic rectangle); %d are given", n)
	case n == 4 && !(*g.X1 > *g.X0 && *g.Y1 > *g.Y0):
		return fmt.Errorf("grid bounds x %g–%g m, y %g–%g m are not increasing", *g.X0, *g.X1, *g.Y0, *g.Y1)
	}
	if o.Foam.Enabled {
		if err := o.Foam.Validate(); err != nil {
			return err
		}
	}
	return nil
}

// params resolves the SGBM parameters for a disparity range.
func (m Matcher) params(minD, numD int) cvshim.SGBMParams {
	b := m.BlockSize
	p1, p2 := m.P1, m.P2
	if p1 == 0 {
		p1 = 2 * b * b
	}
	if p2 == 0 {
		p2 = 8 * b * b
	}
	if p2 <= p1 {
		p2 = p1 + 1
	}
	return cvshim.SGBMParams{
		MinDisparity: minD, NumDisparities: numD, BlockSize: b, P1: p1, P2: p2,
		Disp12MaxDiff: m.Disp12MaxDiff, PreFilterCap: m.PreFilterCap,
		UniquenessRatio: m.UniquenessRatio, SpeckleWindowSize: m.SpeckleWindowSize,
		SpeckleRange: m.SpeckleRange, Mode: sgbmModes[strings.ToLower(m.Mode)],
	}
}
