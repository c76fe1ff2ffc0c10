package calib

import "math"

// Camera is one camera of the rig: pinhole intrinsics in pixels and the
// five Brown–Conrady distortion coefficients (dimensionless), in OpenCV's
// conventions (see the package documentation).
type Camera struct {
	Fx, Fy float64 // focal lengths, pixels
	Cx, Cy float64 // principal point, pixels
	K1, K2 float64 // radial distortion, r² and r⁴ terms
	P1, P2 float64 // tangential (decentering) distortion
	K3     float64 // radial distortion, r⁶ term
}

// Matrix returns the camera matrix K, row-major.
func (c Camera) Matrix() [9]float64 {
	return [9]float64{c.Fx, 0, c.Cx, 0, c.Fy, c.Cy, 0, 0, 1}
}

// Distortion returns (k1, k2, p1, p2, k3) in OpenCV's order.
func (c Camera) Distortion() [5]float64 {
	return [5]float64{c.K1, c.K2, c.P1, c.P2, c.K3}
}

// cameraFrom builds a Camera from OpenCV's K and D.
func cameraFrom(K [9]float64, D [5]float64) Camera {
	return Camera{Fx: K[0], Fy: K[4], Cx: K[2], Cy: K[5], K1: D[0], K2: D[1], P1: D[2], P2: D[3], K3: D[4]}
}

// distort applies the Brown–Conrady model to normalised coordinates.
func (c Camera) distort(x, y float64) (xd, yd float64) {
	r2 := x*x + y*y
	radial := 1 + r2*(c.K1+r2*(c.K2+r2*c.K3))
	xd = x*radial + 2*c.P1*x*y + c.P2*(r2+2*x*x)
	yd = y*radial + c.P1*(r2+2*y*y) + 2*c.P2*x*y
	return xd, yd
}

// Project maps a point in this camera's frame (metres) to pixel
// coordinates with the model of the package documentation, as
// cv::projectPoints does. Points with Z ≤ 0 have no image and give NaN
// (OpenCV would mirror them).
func (c Camera) Project(X [3]float64) [2]float64 {
	if !(X[2] > 0) {
		return [2]float64{math.NaN(), math.NaN()}
	}
	xd, yd := c.distort(X[0]/X[2], X[1]/X[2])
	return [2]float64{c.Fx*xd + c.Cx, c.Fy*yd + c.Cy}
}

// Unproject inverts Project up to depth: it returns the normalised image
// coordinates (x, y) — the ray through the pixel is (x, y, 1) in the
// camera frame. ok is false when the distortion model cannot be inverted
// there (the pixel lies beyond the fold of a strong distortion).
//
// Method: Newton's method on the two equations of the distortion model with
// its analytic Jacobian, started from the undistorted guess (common
// practice; OpenCV's cv::undistortPoints uses a fixed-point iteration
// instead, which converges more slowly far from the centre).
func (c Camera) Unproject(px [2]float64) (xy [2]float64, ok bool) {
	ud := (px[0] - c.Cx) / c.Fx
	vd := (px[1] - c.Cy) / c.Fy
	x, y := ud, vd
	for it := 0; it < 50; it++ {
		r2 := x*x + y*y
		radial := 1 + r2*(c.K1+r2*(c.K2+r2*c.K3))
		dradial := c.K1 + r2*(2*c.K2+3*c.K3*r2) // d radial / d r²
		fx := x*radial + 2*c.P1*x*y + c.P2*(r2+2*x*x) - ud
		fy := y*radial + c.P1*(r2+2*y*y) + 2*c.P2*x*y - vd
		// Jacobian of (xd, yd) with respect to (x, y).
		j11 := radial + 2*x*x*dradial + 2*c.P1*y + 6*c.P2*x
		j12 := 2*x*y*dradial + 2*c.P1*x + 2*c.P2*y
		j21 := 2*x*y*dradial + 2*c.P1*x + 2*c.P2*y
		j22 := radial + 2*y*y*dradial + 6*c.P1*y + 2*c.P2*x
		det := j11*j22 - j12*j21
		if !(math.Abs(det) > 1e-12) {
			return [2]float64{math.NaN(), math.NaN()}, false
		}
		dx := (j22*fx - j12*fy) / det
		dy := (j11*fy - j21*fx) / det
		x -= dx
		y -= dy
		if math.Abs(dx) < 1e-15 && math.Abs(dy) < 1e-15 {
			break
		}
	}
	xd, yd := c.distort(x, y)
	if math.Hypot(xd-ud, yd-vd)*c.Fx > 1e-6 || math.IsNaN(x) || math.IsNaN(y) {
		return [2]float64{math.NaN(), math.NaN()}, false
	}
	return [2]float64{x, y}, true
}
