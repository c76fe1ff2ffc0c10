package calib

import (
	"encoding/json"
	"math"
	"math/rand/v2"
	"os/exec"
	"strings"
	"testing"
)

func TestWorldRoundTripAndAxes(t *testing.T) {
	rng := rand.New(rand.NewPCG(1, 2))
	for _, pose := range [][3]float64{{13, 30, 0}, {12, 25, 3}, {15, 35, -4}, {2, 80, 10}, {40, 5, 0}} {
		H, dep, roll := pose[0], pose[1], pose[2]
		p := PlaneFromPose(H, dep, roll)
		w, err := p.World()
		if err != nil {
			t.Fatalf("pose %v: %v", pose, err)
		}
		// Round trips camera → world → camera and world → camera → world.
		for k := 0; k < 20; k++ {
			X := [3]float64{rng.NormFloat64() * 10, rng.NormFloat64() * 10, 5 + 50*rng.Float64()}
			back := w.ToCamera(w.ToWorld(X))
			Y := w.ToWorld(w.ToCamera(X))
			for i := 0; i < 3; i++ {
				if math.Abs(back[i]-X[i]) > 1e-12*(1+math.Abs(X[i])) || math.Abs(Y[i]-X[i]) > 1e-12*(1+math.Abs(X[i])) {
					t.Fatalf("pose %v: round trip of %v gives %v and %v", pose, X, back, Y)
				}
			}
		}
		// The camera centre sits H above the origin (definition of the frame).
		c := w.ToWorld([3]float64{})
		if math.Abs(c[0]) > 1e-12 || math.Abs(c[1]) > 1e-12 || math.Abs(c[2]-H) > 1e-12 {
			t.Errorf("pose %v: camera centre maps to %v, want (0, 0, %g)", pose, c, H)
		}
		// Points of the plane n·X + H = 0 have world z = 0. Build them as
		// −H n plus any combination of two vectors perpendicular to n.
		n := p.Normal
		u := cross([3]float64{1, 0, 0}, n)
		v := cross(n, u)
		for k := 0; k < 20; k++ {
			a, b := rng.NormFloat64()*30, rng.NormFloat64()*30
			X := [3]float64{-H*n[0] + a*u[0] + b*v[0], -H*n[1] + a*u[1] + b*v[1], -H*n[2] + a*u[2] + b*v[2]}
			if h := p.Height(X); math.Abs(h) > 1e-9 {
				t.Fatalf("test point is %g m off the plane", h)
			}
			if z := w.ToWorld(X)[2]; math.Abs(z) > 1e-9 {
				t.Errorf("pose %v: a point on the sea plane has world z = %g", pose, z)
			}
		}
		// The optical axis projects onto +x: its world direction has no y
		// component and a positive x component; it points down by the
		// depression angle.
		a := w.DirectionToWorld([3]float64{0, 0, 1})
		if math.Abs(a[1]) > 1e-12 || !(a[0] > 0) {
			t.Errorf("pose %v: optical axis in the world is %v, want it in the x–z half-plane x > 0", pose, a)
		}
		if got := math.Atan2(-a[2], a[0]) * 180 / math.Pi; math.Abs(got-dep) > 1e-9 {
			t.Errorf("pose %v: optical axis %g° below the horizon, want %g°", pose, got, dep)
		}
		// R is a rotation.
		if e := orthoError(&w.R); e > 1e-12 {
			t.Errorf("pose %v: world rotation is off orthonormal by %g", pose, e)
		}
	}
}

func cross(a, b [3]float64) [3]float64 {
	return [3]float64{a[1]*b[2] - a[2]*b[1], a[2]*b[0] - a[0]*b[2], a[0]*b[1] - a[1]*b[0]}
}

// TestWorldRotationFromPose checks PlaneFromPose(H, δ, 0).World() against
// the rotation written down from rigid-body geometry: a camera looking
// along world +x, tilted down by δ, has its x axis along world −y, its y
// axis along (−sin δ, 0, −cos δ) and its optical axis along
// (cos δ, 0, −sin δ); R (camera → world) has these as columns.
func TestWorldRotationFromPose(t *testing.T) {
	for _, dep := range []float64{10, 25, 30, 35, 60} {
		d := dep * math.Pi / 180
		s, c := math.Sin(d), math.Cos(d)
		want := [9]float64{
			0, -s, c,
			-1, 0, 0,
			0, -c, -s,
		}
		w, err := PlaneFromPose(14, dep, 0).World()
		if err != nil {
			t.Fatal(err)
		}
		for i := range want {
			if math.Abs(w.R[i]-want[i]) > 1e-14 {
				t.Fatalf("depression %g°: R = %v, want %v (rigid-body geometry)", dep, w.R, want)
			}
		}
	}
}

// TestWorldRotationScipy compares the camera → world rotation with the
// composition of elementary rotations computed by scipy's
// scipy.spatial.transform.Rotation (Debian python3-scipy): the level
// camera (x → −y, y → −z, z → +x), tilted down by δ about world y, rolled
// by φ about its own optical axis.
func TestWorldRotationScipy(t *testing.T) {
	const script = `
import json, sys
import numpy as np
from scipy.spatial.transform import Rotation as R
out = []
for dep, roll in json.loads(sys.argv[1]):
    m0 = np.array([[0, 0, 1], [-1, 0, 0], [0, -1, 0]], dtype=float)  # columns: camera axes in the world
    m = R.from_euler('y', dep, degrees=True).as_matrix() @ m0 @ R.from_euler('z', roll, degrees=True).as_matrix()
    out.append(m.flatten().tolist())
print(json.dumps(out))
`
	poses := [][2]float64{{30, 0}, {25, 5}, {35, -7}, {12, 20}}
	arg, _ := json.Marshal(poses)
	out, err := exec.Command("/usr/bin/python3", "-c", script, string(arg)).Output()
	if err != nil {
		t.Skipf("Debian python3 with scipy is not available: %v", err)
	}
	var want [][9]float64
	if err := json.Unmarshal([]byte(strings.TrimSpace(string(out))), &want); err != nil {
		t.Fatalf("cannot read scipy output %q: %v", out, err)
	}
	for k, pose := range poses {
		w, err := PlaneFromPose(13, pose[0], pose[1]).World()
		if err != nil {
			t.Fatal(err)
		}
		// The world frame's x axis follows the optical axis, which roll does
		// not move; so R is the scipy camera → world matrix itself.
		for i := 0; i < 9; i++ {
			if math.Abs(w.R[i]-want[k][i]) > 1e-12 {
				t.Fatalf("pose %v: R = %v, scipy gives %v", pose, w.R, want[k])
			}
		}
	}
}

func TestWorldErrors(t *testing.T) {
	if _, err := PlaneFromPose(13, 90, 0).World(); err == nil {
		t.Error("a camera looking straight down has no world x axis, but World gave no error")
	}
	if _, err := (Plane{Normal: [3]float64{0, -2, 0}, OffsetM: 10}).World(); err == nil {
		t.Error("a plane with a normal of length 2 was accepted")
	}
	if _, err := (Plane{Normal: [3]float64{0, math.NaN(), 0}, OffsetM: 10}).World(); err == nil {
		t.Error("a plane with a NaN normal was accepted")
	}
}
