// Package calib models a two-camera stereo rig and calibrates it from
// chessboard views.
//
// # Camera model
//
// Each camera is a pinhole with Brown–Conrady lens distortion exactly as
// OpenCV models it (OpenCV calib3d documentation, "Camera Calibration and 3D
// Reconstruction"; Brown, "Decentering distortion of lenses",
// Photogrammetric Engineering 32(3), 1966). A point X = (X, Y, Z) in the
// camera frame (x right, y down, z along the optical axis, metres) maps to
//
//	x' = X/Z, y' = Y/Z, r² = x'² + y'²
//	x" = x'(1 + k1 r² + k2 r⁴ + k3 r⁶) + 2 p1 x'y' + p2 (r² + 2x'²)
//	y" = y'(1 + k1 r² + k2 r⁴ + k3 r⁶) + p1 (r² + 2y'²) + 2 p2 x'y'
//	u  = fx x" + cx,  v = fy y" + cy
//
// with (u, v) in pixels, the centre of the top-left pixel at (0, 0).
//
// # Rig
//
// A [Rig] is two cameras of the same image size, the rotation R and
// translation T that take a point from the left camera's frame to the
// right's (X_right = R·X_left + T, T in metres), and, once the
// reconstruction stage has fitted it, the mean sea plane in the left
// camera's frame. Rigs are stored as YAML files of crestspeed's own schema
// (format "crestspeed-rig", version 1) with the unit in every key name;
// [LoadRig] and [Rig.Save] round-trip every number exactly.
//
// # Calibration
//
// [Calibrate] detects the inner corners of a chessboard in each left/right
// image pair (OpenCV's detector, refined to sub-pixel precision), calibrates
// each camera alone (Zhang's method), then both together
// (cv::stereoCalibrate, refining the intrinsics), drops views whose
// reprojection error exceeds k times the median and repeats, and finally
// rectifies the rig (cv::stereoRectify). The [Quality] it records says how
// far to trust the result: the RMS reprojection error overall and per view,
// the views skipped and dropped with their reasons, the rectified epipolar
// error (how far apart, in rows, the same corner lands in the two rectified
// images) and the baseline length.
//
// The OpenCV functions gocv does not wrap are reached through
// crestspeed/internal/cvshim.
package calib
