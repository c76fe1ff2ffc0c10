package calib

import (
	"fmt"
	"image"
	"math"
)

// Rig is a calibrated two-camera stereo rig.
type Rig struct {
	// Size is the image width and height in pixels, the same for both
	// cameras.
	Size image.Point
	// Left and Right are the two cameras.
	Left, Right Camera
	// R (row-major) and T (metres) take a point from the left camera's
	// frame to the right's: X_right = R·X_left + T.
	R [9]float64
	T [3]float64
	// SeaPlane is the mean sea plane in the left camera's frame, nil until
	// the reconstruction stage has fitted one.
	SeaPlane *Plane
	// Quality records how the rig was calibrated and how well; nil for a
	// rig described by hand.
	Quality *Quality
}

// Plane is a plane in the left camera's frame: a point X lies
// Normal·X + OffsetM metres above it, so OffsetM is the height of the left
// camera's centre above the plane and Normal (a unit vector) points from
// the water toward the cameras.
type Plane struct {
	Normal  [3]float64
	OffsetM float64
}

// Height returns the signed distance of X above the plane, metres.
func (p Plane) Height(X [3]float64) float64 {
	return p.Normal[0]*X[0] + p.Normal[1]*X[1] + p.Normal[2]*X[2] + p.OffsetM
}

// Quality records a calibration and its quality figures.
type Quality struct {
	Pattern    string  `yaml:"pattern"`          // inner corners, columns x rows
	SquareM    float64 `yaml:"square_m"`         // side of one square, metres
	Detector   string  `yaml:"detector"`         // corner detector used
	DropFactor float64 `yaml:"drop_factor"`      // views above this times the median error were dropped; 0 = none
	CreatedUTC string  `yaml:"created_utc"`      // RFC 3339
	ViewsUsed  int     `yaml:"views_used"`       // views in the final calibration
	RMSPx      float64 `yaml:"rms_px"`           // stereo RMS reprojection error, both cameras
	LeftRMSPx  float64 `yaml:"left_rms_px"`      // RMS reprojection error in the left camera
	RightRMSPx float64 `yaml:"right_rms_px"`     // RMS reprojection error in the right camera
	EpiMeanPx  float64 `yaml:"epipolar_mean_px"` // mean |y_left − y_right| of rectified corners
	EpiP95Px   float64 `yaml:"epipolar_p95_px"`  // its 95th percentile
	// Views lists every image pair given, in input order.
	Views []ViewQuality `yaml:"views"`
}

// View statuses.
const (
	ViewUsed    = "used"
	ViewDropped = "dropped"
	ViewSkipped = "skipped"
)

// ViewQuality is the record of one image pair.
type ViewQuality struct {
	Name       string  `yaml:"name"`
	Left       string  `yaml:"left"`
	Right      string  `yaml:"right"`
	Status     string  `yaml:"status"`           // used, dropped or skipped
	Reason     string  `yaml:"reason,omitempty"` // why it was dropped or skipped
	RMSLeftPx  float64 `yaml:"rms_left_px,omitempty"`
	RMSRightPx float64 `yaml:"rms_right_px,omitempty"`
	EpiMeanPx  float64 `yaml:"epipolar_mean_px,omitempty"`
}

// Baseline returns the distance between the two camera centres, metres.
func (r *Rig) Baseline() float64 {
	return math.Sqrt(r.T[0]*r.T[0] + r.T[1]*r.T[1] + r.T[2]*r.T[2])
}

// RightFromLeft takes a point from the left camera's frame to the right's.
func (r *Rig) RightFromLeft(X [3]float64) [3]float64 {
	return add3(mulMV(&r.R, X), r.T)
}

// ProjectLeft maps a point in the left camera's frame (metres) to left
// pixel coordinates (see [Camera.Project]).
func (r *Rig) ProjectLeft(X [3]float64) [2]float64 { return r.Left.Project(X) }

// ProjectRight maps a point in the left camera's frame (metres) to right
// pixel coordinates (see [Camera.Project]).
func (r *Rig) ProjectRight(X [3]float64) [2]float64 { return r.Right.Project(r.RightFromLeft(X)) }

// Validate reports the first setting of the rig that cannot be right.
func (r *Rig) Validate() error {
	if r.Size.X <= 0 || r.Size.Y <= 0 || r.Size.X > 1<<16 || r.Size.Y > 1<<16 {
		return fmt.Errorf("image size %d×%d px is outside 1–65536 per side", r.Size.X, r.Size.Y)
	}
	for _, c := range []struct {
		name string
		cam  Camera
	}{{"left camera", r.Left}, {"right camera", r.Right}} {
		cam := c.cam
		for _, v := range []float64{cam.Fx, cam.Fy, cam.Cx, cam.Cy, cam.K1, cam.K2, cam.P1, cam.P2, cam.K3} {
			if math.IsNaN(v) || math.IsInf(v, 0) {
				return fmt.Errorf("%s has a non-finite parameter", c.name)
			}
		}
		if !(cam.Fx > 0) || !(cam.Fy > 0) {
			return fmt.Errorf("%s focal length (%g, %g) px is not positive", c.name, cam.Fx, cam.Fy)
		}
	}
	for _, v := range append(r.R[:], r.T[:]...) {
		if math.IsNaN(v) || math.IsInf(v, 0) {
			return fmt.Errorf("rotation or translation of the right camera has a non-finite value")
		}
	}
	if e := orthoError(&r.R); e > 1e-6 {
		return fmt.Errorf("rotation of the right camera is not a rotation matrix (RᵀR differs from I by %.3g, det %.6g)", e, det3(&r.R))
	}
	if !(r.Baseline() > 0) {
		return fmt.Errorf("baseline is zero: the two cameras are at the same place")
	}
	if p := r.SeaPlane; p != nil {
		n := math.Sqrt(p.Normal[0]*p.Normal[0] + p.Normal[1]*p.Normal[1] + p.Normal[2]*p.Normal[2])
		if !(math.Abs(n-1) <= 1e-6) {
			return fmt.Errorf("sea plane normal has length %g, not 1", n)
		}
		if math.IsNaN(p.OffsetM) || math.IsInf(p.OffsetM, 0) {
			return fmt.Errorf("sea plane offset is not a finite number")
		}
	}
	return nil
}

// RotationAngle returns the angle (radians) of the rotation R, from
// trace(R) = 1 + 2 cos θ (Rodrigues' rotation formula).
func RotationAngle(R [9]float64) float64 {
	c := (R[0] + R[4] + R[8] - 1) / 2
	return math.Acos(math.Max(-1, math.Min(1, c)))
}

// RelativeRotation returns Aᵀ·B, the rotation that takes B's frame to A's.
func RelativeRotation(A, B [9]float64) [9]float64 {
	at := transpose3(&A)
	return mulMM(&at, &B)
}

// Rodrigues returns the rotation matrix of the rotation vector w (axis
// times angle, radians): R = I + sin θ K + (1 − cos θ) K², K the
// cross-product matrix of the unit axis (Rodrigues' rotation formula).
func Rodrigues(w [3]float64) [9]float64 {
	th := math.Sqrt(w[0]*w[0] + w[1]*w[1] + w[2]*w[2])
	if th < 1e-300 {
		return [9]float64{1, 0, 0, 0, 1, 0, 0, 0, 1}
	}
	kx, ky, kz := w[0]/th, w[1]/th, w[2]/th
	s, c := math.Sincos(th)
	v := 1 - c
	return [9]float64{
		c + kx*kx*v, kx*ky*v - kz*s, kx*kz*v + ky*s,
		ky*kx*v + kz*s, c + ky*ky*v, ky*kz*v - kx*s,
		kz*kx*v - ky*s, kz*ky*v + kx*s, c + kz*kz*v,
	}
}

func mulMV(m *[9]float64, v [3]float64) [3]float64 {
	return [3]float64{
		m[0]*v[0] + m[1]*v[1] + m[2]*v[2],
		m[3]*v[0] + m[4]*v[1] + m[5]*v[2],
		m[6]*v[0] + m[7]*v[1] + m[8]*v[2],
	}
}

func mulMM(a, b *[9]float64) [9]float64 {
	var c [9]float64
	for i := 0; i < 3; i++ {
		for j := 0; j < 3; j++ {
			c[3*i+j] = a[3*i]*b[j] + a[3*i+1]*b[3+j] + a[3*i+2]*b[6+j]
		}
	}
	return c
}

func transpose3(a *[9]float64) [9]float64 {
	return [9]float64{a[0], a[3], a[6], a[1], a[4], a[7], a[2], a[5], a[8]}
}

func add3(a, b [3]float64) [3]float64 { return [3]float64{a[0] + b[0], a[1] + b[1], a[2] + b[2]} }

func det3(a *[9]float64) float64 {
	return a[0]*(a[4]*a[8]-a[5]*a[7]) - a[1]*(a[3]*a[8]-a[5]*a[6]) + a[2]*(a[3]*a[7]-a[4]*a[6])
}

// orthoError is max |RᵀR − I| plus |det R − 1|.
func orthoError(r *[9]float64) float64 {
	rt := transpose3(r)
	p := mulMM(&rt, r)
	e := 0.0
	for i := 0; i < 9; i++ {
		id := 0.0
		if i%4 == 0 {
			id = 1
		}
		e = math.Max(e, math.Abs(p[i]-id))
	}
	return e + math.Abs(det3(r)-1)
}
