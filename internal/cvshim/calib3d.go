package cvshim

/*
#include "cvshim.h"
*/
import "C"

import (
	"fmt"
	"image"
	"unsafe"

	"gocv.io/x/gocv"
)

// OpenCV calibration flags (cv::CALIB_*), with OpenCV's values.
const (
	CalibUseIntrinsicGuess = 0x00001
	CalibFixAspectRatio    = 0x00002
	CalibFixPrincipalPoint = 0x00004
	CalibZeroTangentDist   = 0x00008
	CalibFixFocalLength    = 0x00010
	CalibFixK1             = 0x00020
	CalibFixK2             = 0x00040
	CalibFixK3             = 0x00080
	CalibFixIntrinsic      = 0x00100
	CalibSameFocalLength   = 0x00200
	CalibZeroDisparity     = 0x00400
	CalibUseExtrinsicGuess = 1 << 22

	// Flags that switch OpenCV to distortion models with more than the five
	// Brown–Conrady coefficients; the shim refuses them.
	calibRationalModel  = 0x04000
	calibThinPrismModel = 0x08000
	calibTiltedModel    = 0x40000
)

// Criteria is cv::TermCriteria(COUNT+EPS, MaxIter, Eps).
type Criteria struct {
	MaxIter int
	Eps     float64
}

// Intrinsics is one camera as OpenCV models it: the camera matrix K
// (row-major 3×3: fx 0 cx; 0 fy cy; 0 0 1, pixels) and the Brown–Conrady
// distortion coefficients D = (k1, k2, p1, p2, k3).
type Intrinsics struct {
	K [9]float64
	D [5]float64
}

// CameraCalibration is the result of [CalibrateCamera].
type CameraCalibration struct {
	Intrinsics
	RMS        float64   // RMS reprojection error over all points, pixels
	PerViewRMS []float64 // RMS reprojection error of each view, pixels
}

// StereoCalibration is the result of [StereoCalibrate]. R and T take a point
// from camera 1's frame to camera 2's: X2 = R·X1 + T (R row-major).
type StereoCalibration struct {
	Cam1, Cam2 Intrinsics
	R          [9]float64
	T          [3]float64
	E, F       [9]float64
	RMS        float64      // RMS reprojection error over both cameras, pixels
	PerViewRMS [][2]float64 // RMS of each view in camera 1 and camera 2, pixels
}

// Rectification is the result of [StereoRectify] (all row-major).
type Rectification struct {
	R1, R2     [9]float64  // rotations from each camera's frame to its rectified frame
	P1, P2     [12]float64 // 3×4 projection matrices of the rectified cameras
	Q          [16]float64 // 4×4 disparity-to-depth matrix
	ROI1, ROI2 image.Rectangle
}

// flatPoints packs per-view point lists into one contiguous slice and the
// per-view counts, checking that both cameras' lists match the board's.
func flatPoints(object [][][3]float32, images ...[][][2]float32) (obj []float32, img [][]float32, counts []C.int, err error) {
	n := len(object)
	if n == 0 {
		return nil, nil, nil, fmt.Errorf("no views given")
	}
	for c, im := range images {
		if len(im) != n {
			return nil, nil, nil, fmt.Errorf("camera %d has %d views of image points but there are %d views of object points", c+1, len(im), n)
		}
	}
	counts = make([]C.int, n)
	img = make([][]float32, len(images))
	for v, o := range object {
		if len(o) < 4 {
			return nil, nil, nil, fmt.Errorf("view %d has %d object points; at least 4 are needed", v, len(o))
		}
		counts[v] = C.int(len(o))
		for _, p := range o {
			obj = append(obj, p[0], p[1], p[2])
		}
		for c, im := range images {
			if len(im[v]) != len(o) {
				return nil, nil, nil, fmt.Errorf("view %d has %d image points in camera %d but %d object points", v, len(im[v]), c+1, len(o))
			}
			for _, p := range im[v] {
				img[c] = append(img[c], p[0], p[1])
			}
		}
	}
	return obj, img, counts, nil
}

func checkCall(flags int, size image.Point, crit Criteria) error {
	if flags&(calibRationalModel|calibThinPrismModel|calibTiltedModel) != 0 {
		return fmt.Errorf("flags %#x ask for a distortion model beyond the five Brown–Conrady coefficients", flags)
	}
	if size.X <= 0 || size.Y <= 0 {
		return fmt.Errorf("image size %d×%d is not positive", size.X, size.Y)
	}
	if crit.MaxIter <= 0 || !(crit.Eps > 0) {
		return fmt.Errorf("termination criteria need a positive iteration count and tolerance, got %d and %g", crit.MaxIter, crit.Eps)
	}
	return nil
}

func fp(s []float32) *C.float  { return (*C.float)(unsafe.Pointer(&s[0])) }
func dp(s []float64) *C.double { return (*C.double)(unsafe.Pointer(&s[0])) }
func crit(c Criteria) C.cs_criteria {
	return C.cs_criteria{max_iter: C.int(c.MaxIter), eps: C.double(c.Eps)}
}

// CalibrateCamera runs cv::calibrateCamera on the views of a planar or 3-D
// target: object points in the target frame (metres) and their detected
// image points (pixels). guess is read when flags include
// CalibUseIntrinsicGuess (or fix some parameters).
//
// Method: Zhang (2000), "A flexible new technique for camera calibration",
// IEEE TPAMI 22(11), with the Brown–Conrady distortion model, as implemented
// by OpenCV.
func CalibrateCamera(object [][][3]float32, img [][][2]float32, size image.Point, guess Intrinsics, flags int, c Criteria) (CameraCalibration, error) {
	var out CameraCalibration
	if err := checkCall(flags, size, c); err != nil {
		return out, err
	}
	obj, im, counts, err := flatPoints(object, img)
	if err != nil {
		return out, err
	}
	out.Intrinsics = guess
	per := make([]float64, len(object))
	var rms C.double
	err = call(C.cs_calibrate_camera(fp(obj), fp(im[0]), &counts[0], C.int(len(counts)),
		C.int(size.X), C.int(size.Y), C.int(flags), crit(c),
		dp(out.K[:]), dp(out.D[:]), &rms, dp(per)))
	if err != nil {
		return CameraCalibration{}, err
	}
	out.RMS = float64(rms)
	out.PerViewRMS = per
	return out, nil
}

// StereoCalibrate runs cv::stereoCalibrate on views of the same target seen
// by two cameras at once. cam1 and cam2 are the initial intrinsics (refined
// or kept according to flags); the result holds the refined intrinsics and
// the pose of camera 2 relative to camera 1.
//
// Method: joint Levenberg–Marquardt minimisation of the reprojection error
// in both cameras (Bouguet's stereo calibration as implemented by OpenCV;
// Hartley & Zisserman, "Multiple View Geometry", 2nd ed., 2004, for E and F).
func StereoCalibrate(object [][][3]float32, img1, img2 [][][2]float32, size image.Point, cam1, cam2 Intrinsics, flags int, c Criteria) (StereoCalibration, error) {
	var out StereoCalibration
	if flags&CalibUseExtrinsicGuess != 0 {
		return out, fmt.Errorf("CalibUseExtrinsicGuess is not supported by this binding")
	}
	if err := checkCall(flags, size, c); err != nil {
		return out, err
	}
	obj, im, counts, err := flatPoints(object, img1, img2)
	if err != nil {
		return out, err
	}
	out.Cam1, out.Cam2 = cam1, cam2
	per := make([]float64, 2*len(object))
	var rms C.double
	err = call(C.cs_stereo_calibrate(fp(obj), fp(im[0]), fp(im[1]), &counts[0], C.int(len(counts)),
		C.int(size.X), C.int(size.Y), C.int(flags), crit(c),
		dp(out.Cam1.K[:]), dp(out.Cam1.D[:]), dp(out.Cam2.K[:]), dp(out.Cam2.D[:]),
		dp(out.R[:]), dp(out.T[:]), dp(out.E[:]), dp(out.F[:]), &rms, dp(per)))
	if err != nil {
		return StereoCalibration{}, err
	}
	out.RMS = float64(rms)
	out.PerViewRMS = make([][2]float64, len(object))
	for v := range out.PerViewRMS {
		out.PerViewRMS[v] = [2]float64{per[2*v], per[2*v+1]}
	}
	return out, nil
}

// StereoRectify runs cv::stereoRectify: rotations that make both image
// planes coplanar with rows along the baseline, the projection matrices of
// the rectified cameras and the disparity-to-depth matrix Q. alpha is
// OpenCV's free scaling parameter (0: only valid pixels, 1: all source
// pixels, -1: OpenCV's default); newSize zero means size.
//
// Method: Bouguet's rectification as implemented by OpenCV (Bradski &
// Kaehler, "Learning OpenCV", O'Reilly 2008, ch. 12).
func StereoRectify(cam1, cam2 Intrinsics, size image.Point, R [9]float64, T [3]float64, flags int, alpha float64, newSize image.Point) (Rectification, error) {
	var out Rectification
	if size.X <= 0 || size.Y <= 0 {
		return out, fmt.Errorf("image size %d×%d is not positive", size.X, size.Y)
	}
	if newSize.X < 0 || newSize.Y < 0 {
		return out, fmt.Errorf("new image size %d×%d is negative", newSize.X, newSize.Y)
	}
	var roi1, roi2 [4]C.int
	err := call(C.cs_stereo_rectify(dp(cam1.K[:]), dp(cam1.D[:]), dp(cam2.K[:]), dp(cam2.D[:]),
		C.int(size.X), C.int(size.Y), dp(R[:]), dp(T[:]), C.int(flags), C.double(alpha),
		C.int(newSize.X), C.int(newSize.Y),
		dp(out.R1[:]), dp(out.R2[:]), dp(out.P1[:]), dp(out.P2[:]), dp(out.Q[:]), &roi1[0], &roi2[0]))
	if err != nil {
		return Rectification{}, err
	}
	rect := func(r [4]C.int) image.Rectangle {
		return image.Rect(int(r[0]), int(r[1]), int(r[0]+r[2]), int(r[1]+r[3]))
	}
	out.ROI1, out.ROI2 = rect(roi1), rect(roi2)
	return out, nil
}

// InitRectifyMap runs cv::initUndistortRectifyMap with float maps: mapX and
// mapY (Go-owned gocv Mats, typically from gocv.NewMat) receive size.Y rows
// of size.X CV_32FC1 source coordinates, ready for gocv.Remap. R is the
// rectifying rotation and P the 3×4 projection matrix of the rectified
// camera.
func InitRectifyMap(cam Intrinsics, R [9]float64, P [12]float64, size image.Point, mapX, mapY *gocv.Mat) error {
	if size.X <= 0 || size.Y <= 0 {
		return fmt.Errorf("map size %d×%d is not positive", size.X, size.Y)
	}
	if mapX == nil || mapY == nil || mapX.Ptr() == nil || mapY.Ptr() == nil {
		return fmt.Errorf("map Mats must be made with gocv.NewMat before the call")
	}
	return call(C.cs_init_rectify_map(dp(cam.K[:]), dp(cam.D[:]), dp(R[:]), dp(P[:]),
		C.int(size.X), C.int(size.Y), unsafe.Pointer(mapX.Ptr()), unsafe.Pointer(mapY.Ptr())))
}
