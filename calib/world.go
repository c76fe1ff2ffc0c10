package calib

import (
	"fmt"
	"math"
)

// The world frame.
//
// Elevation maps are gridded in a world frame tied to the mean sea plane
// and to the left camera:
//
//   - z is up, perpendicular to the mean sea plane, zero on it;
//   - x is horizontal, along the projection of the left camera's optical
//     axis onto the sea plane (so x grows with range from the rig);
//   - y = z × x completes a right-handed frame (y points to the left as
//     seen from the rig);
//   - the origin is the point of the sea plane directly below the left
//     camera's centre, which therefore sits at (0, 0, H), H the height of
//     the camera above the plane.
//
// Camera frames are OpenCV's: x right, y down, z along the optical axis.

// WorldFrame is the rigid transformation from the left camera's frame to
// the world frame: X_world = R·X_camera + T (R row-major, T metres).
type WorldFrame struct {
	R [9]float64
	T [3]float64
}

// PlaneFromPose returns the mean sea plane, in the left camera's frame, of
// a camera heightM metres above the water whose optical axis points
// depressionDeg below the horizon and which is rolled by rollDeg about its
// optical axis. Positive roll turns the camera's x axis toward its y axis
// (a right-handed turn about the optical axis: clockwise as seen from
// behind the camera), so the horizon appears turned counter-clockwise in
// the image.
//
// Derivation (rigid-body geometry): with roll and depression zero the
// camera looks along world +x with its x axis along world −y and its y axis
// along world −z. Tilting down by the depression δ and rolling by φ gives
// the world up direction, in camera coordinates,
//
//	n = (−sin φ cos δ, −cos φ cos δ, −sin δ),
//
// and the plane is {X : n·X + H = 0}.
func PlaneFromPose(heightM, depressionDeg, rollDeg float64) Plane {
	d := depressionDeg * math.Pi / 180
	r := rollDeg * math.Pi / 180
	sd, cd := math.Sincos(d)
	sr, cr := math.Sincos(r)
	return Plane{Normal: [3]float64{-sr * cd, -cr * cd, -sd}, OffsetM: heightM}
}

// World returns the world frame of the sea plane p (see the package notes
// on the world frame above). It fails when the plane's normal is not a
// finite unit vector or when the left camera looks straight down or up
// along the normal, where the x axis is undefined.
func (p Plane) World() (WorldFrame, error) {
	n := p.Normal
	ln := math.Sqrt(n[0]*n[0] + n[1]*n[1] + n[2]*n[2])
	if math.IsNaN(ln) || math.IsInf(ln, 0) || math.IsNaN(p.OffsetM) || math.IsInf(p.OffsetM, 0) {
		return WorldFrame{}, fmt.Errorf("sea plane has a non-finite normal or offset; fit or give the plane again")
	}
	if !(math.Abs(ln-1) <= 1e-6) {
		return WorldFrame{}, fmt.Errorf("sea plane normal has length %g, not 1; normalise it", ln)
	}
	// Optical axis (0, 0, 1) minus its component along n.
	ax := [3]float64{-n[2] * n[0], -n[2] * n[1], 1 - n[2]*n[2]}
	la := math.Sqrt(ax[0]*ax[0] + ax[1]*ax[1] + ax[2]*ax[2])
	if !(la > 1e-9) {
		return WorldFrame{}, fmt.Errorf("the left camera's optical axis is perpendicular to the sea plane, so the world x axis (its horizontal projection) is undefined; tilt the camera away from the vertical")
	}
	x := [3]float64{ax[0] / la, ax[1] / la, ax[2] / la}
	z := [3]float64{n[0] / ln, n[1] / ln, n[2] / ln}
	y := [3]float64{z[1]*x[2] - z[2]*x[1], z[2]*x[0] - z[0]*x[2], z[0]*x[1] - z[1]*x[0]}
	// Rows of R are the world axes in camera coordinates. The camera centre
	// (camera origin) must map to (0, 0, H): R·0 + T = (0, 0, H).
	return WorldFrame{
		R: [9]float64{x[0], x[1], x[2], y[0], y[1], y[2], z[0], z[1], z[2]},
		T: [3]float64{0, 0, p.OffsetM},
	}, nil
}

// ToWorld maps a point from the left camera's frame to the world frame.
func (w WorldFrame) ToWorld(Xc [3]float64) [3]float64 {
	return add3(mulMV(&w.R, Xc), w.T)
}

// ToCamera maps a point from the world frame to the left camera's frame.
func (w WorldFrame) ToCamera(Xw [3]float64) [3]float64 {
	rt := transpose3(&w.R)
	return mulMV(&rt, [3]float64{Xw[0] - w.T[0], Xw[1] - w.T[1], Xw[2] - w.T[2]})
}

// DirectionToWorld rotates a direction (a free vector, not a point) from
// the left camera's frame to the world frame.
func (w WorldFrame) DirectionToWorld(v [3]float64) [3]float64 { return mulMV(&w.R, v) }

// DirectionToCamera rotates a direction from the world frame to the left
// camera's frame.
func (w WorldFrame) DirectionToCamera(v [3]float64) [3]float64 {
	rt := transpose3(&w.R)
	return mulMV(&rt, v)
}
