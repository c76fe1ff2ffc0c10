package calib

import (
	"fmt"
	"image"
	"image/color"

	"gocv.io/x/gocv"

	"crestspeed/internal/cvshim"
)

// Rectification describes the rectified rig: both cameras turned about
// their centres so that their image rows lie along the baseline, with
// distortion removed. A scene point then appears on the same row in both
// rectified images, at a column difference (disparity) d = f·B/Z.
type Rectification struct {
	// Size is the rectified image size, the same as the rig's.
	Size image.Point
	// R1 and R2 (row-major) rotate the left and right camera frames into
	// the rectified frames.
	R1, R2 [9]float64
	// P1 and P2 (3×4, row-major) project points of the rectified left
	// frame to rectified pixels; P2[3] = −f·B.
	P1, P2 [12]float64
	// Q (4×4, row-major) maps (u, v, disparity, 1) of the rectified left
	// image to homogeneous points of the rectified left frame, metres.
	Q [16]float64
	// ValidLeft and ValidRight are the rectified-image rectangles in which
	// every pixel comes from inside the source image.
	ValidLeft, ValidRight image.Rectangle
	// Alpha is the free scaling used: 0 keeps only valid pixels, 1 keeps
	// every source pixel.
	Alpha float64

	left, right Camera
}

// FocalPx returns the focal length of the rectified cameras, pixels.
func (rc *Rectification) FocalPx() float64 { return rc.P1[0] }

// BaselineM returns the baseline the rectified pair encodes, metres.
func (rc *Rectification) BaselineM() float64 { return -rc.P2[3] / rc.P2[0] }

// Rectify computes the rectification of the rig with cv::stereoRectify
// (CALIB_ZERO_DISPARITY: the principal points of the rectified cameras
// coincide, so that zero disparity means infinite depth). alpha is
// OpenCV's free scaling parameter in [0, 1]: 0 crops to valid pixels only,
// 1 keeps every source pixel.
func (r *Rig) Rectify(alpha float64) (*Rectification, error) {
	if err := r.Validate(); err != nil {
		return nil, fmt.Errorf("rig cannot be rectified: %v", err)
	}
	if !(alpha >= 0 && alpha <= 1) {
		return nil, fmt.Errorf("rectification alpha %g is outside [0, 1]", alpha)
	}
	out, err := cvshim.StereoRectify(intrinsics(r.Left), intrinsics(r.Right), r.Size, r.R, r.T,
		cvshim.CalibZeroDisparity, alpha, image.Point{})
	if err != nil {
		return nil, fmt.Errorf("rig cannot be rectified: %v", err)
	}
	return &Rectification{
		Size: r.Size, R1: out.R1, R2: out.R2, P1: out.P1, P2: out.P2, Q: out.Q,
		ValidLeft: out.ROI1, ValidRight: out.ROI2, Alpha: alpha,
		left: r.Left, right: r.Right,
	}, nil
}

func intrinsics(c Camera) cvshim.Intrinsics {
	return cvshim.Intrinsics{K: c.Matrix(), D: c.Distortion()}
}

// rectifyPoint maps a source pixel of cam to rectified pixel coordinates
// through the rectifying rotation R and projection P, as
// cv::undistortPoints(src, K, D, R, P) does.
func rectifyPoint(cam Camera, R *[9]float64, P *[12]float64, px [2]float64) ([2]float64, bool) {
	xy, ok := cam.Unproject(px)
	if !ok {
		return xy, false
	}
	X := mulMV(R, [3]float64{xy[0], xy[1], 1})
	u := P[0]*X[0] + P[1]*X[1] + P[2]*X[2]
	v := P[4]*X[0] + P[5]*X[1] + P[6]*X[2]
	w := P[8]*X[0] + P[9]*X[1] + P[10]*X[2]
	return [2]float64{u / w, v / w}, true
}

// RectifyLeft maps a left-image pixel to rectified left-image coordinates;
// ok is false where the distortion model cannot be inverted.
func (rc *Rectification) RectifyLeft(px [2]float64) ([2]float64, bool) {
	return rectifyPoint(rc.left, &rc.R1, &rc.P1, px)
}

// RectifyRight maps a right-image pixel to rectified right-image
// coordinates; ok is false where the distortion model cannot be inverted.
func (rc *Rectification) RectifyRight(px [2]float64) ([2]float64, bool) {
	return rectifyPoint(rc.right, &rc.R2, &rc.P2, px)
}

// RectifyMaps holds the look-up maps that resample source images into
// rectified ones: for each rectified pixel (column x, row y), LeftX/LeftY
// (and RightX/RightY) hold the source pixel coordinates, as CV_32FC1 Mats
// of Size.Y rows and Size.X columns — the form gocv.Remap takes. The Mats
// belong to the caller, who must Close them.
type RectifyMaps struct {
	*Rectification
	LeftX, LeftY, RightX, RightY gocv.Mat
}

// Maps builds the rectification maps with cv::initUndistortRectifyMap.
func (rc *Rectification) Maps() (*RectifyMaps, error) {
	m := &RectifyMaps{Rectification: rc,
		LeftX: gocv.NewMat(), LeftY: gocv.NewMat(), RightX: gocv.NewMat(), RightY: gocv.NewMat()}
	err := cvshim.InitRectifyMap(intrinsics(rc.left), rc.R1, rc.P1, rc.Size, &m.LeftX, &m.LeftY)
	if err == nil {
		err = cvshim.InitRectifyMap(intrinsics(rc.right), rc.R2, rc.P2, rc.Size, &m.RightX, &m.RightY)
	}
	if err != nil {
		m.Close()
		return nil, fmt.Errorf("rectification maps cannot be built: %v", err)
	}
	return m, nil
}

// RectifyMaps rectifies the rig with free scaling alpha (see [Rig.Rectify])
// and builds its maps. The caller must Close the result.
func (r *Rig) RectifyMaps(alpha float64) (*RectifyMaps, error) {
	rc, err := r.Rectify(alpha)
	if err != nil {
		return nil, err
	}
	return rc.Maps()
}

// Remap resamples a left and a right source image (bilinear, black
// outside) into rectified images.
func (m *RectifyMaps) Remap(left, right gocv.Mat, dstLeft, dstRight *gocv.Mat) {
	gocv.Remap(left, dstLeft, &m.LeftX, &m.LeftY, gocv.InterpolationLinear, gocv.BorderConstant, color.RGBA{})
	gocv.Remap(right, dstRight, &m.RightX, &m.RightY, gocv.InterpolationLinear, gocv.BorderConstant, color.RGBA{})
}

// Close releases the maps.
func (m *RectifyMaps) Close() error {
	for _, mat := range []*gocv.Mat{&m.LeftX, &m.LeftY, &m.RightX, &m.RightY} {
		if mat.Ptr() != nil {
			mat.Close()
		}
	}
	return nil
}
