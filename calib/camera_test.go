package calib

import (
	"image"
	"math"
	"math/rand/v2"
	"testing"
)

// Test cameras: a 1280×1024 camera with moderate barrel distortion and a
// 640×480 camera with the strong distortion of the opencv-doc sample
// pairs.
var testCameras = []Camera{
	{Fx: 1400, Fy: 1401.5, Cx: 641.3, Cy: 509.8, K1: -0.12, K2: 0.09, P1: 0.0004, P2: -0.0003, K3: -0.02},
	{Fx: 534, Fy: 533.9, Cx: 342.2, Cy: 234.9, K1: -0.283, K2: 0.0515, P1: 0.0012, P2: -0.0001, K3: 0.0939},
}

func testRig() *Rig {
	return &Rig{
		Size: image.Pt(1280, 1024), Left: testCameras[0], Right: testCameras[1],
		R: Rodrigues([3]float64{0.01, -0.07, 0.005}), T: [3]float64{-2.49, 0.03, -0.1},
	}
}

// Camera.Project and Rig.ProjectRight against cv2.projectPoints of
// Debian's python3-opencv (the reference implementation of the model).
func TestProjectMatchesOpenCV(t *testing.T) {
	rng := rand.New(rand.NewPCG(1, 2))
	var pts [][3]float64
	for i := 0; i < 200; i++ {
		z := 1 + 20*rng.Float64()
		pts = append(pts, [3]float64{(2*rng.Float64() - 1) * 0.45 * z, (2*rng.Float64() - 1) * 0.35 * z, z})
	}
	rig := testRig()
	var ref struct{ Left, Right, Rvec []float64 }
	python(t, `
import json, sys, numpy as np, cv2
d = json.load(open(sys.argv[1]))
P = np.array(d['pts'], np.float64).reshape(-1, 1, 3)
def proj(c, rvec, tvec):
    K = np.array([[c['Fx'], 0, c['Cx']], [0, c['Fy'], c['Cy']], [0, 0, 1]])
    D = np.array([c['K1'], c['K2'], c['P1'], c['P2'], c['K3']])
    out, _ = cv2.projectPoints(P, rvec, tvec, K, D)
    return out.ravel().tolist()
rvec, _ = cv2.Rodrigues(np.array(d['R']).reshape(3, 3))
print(json.dumps({'left': proj(d['left'], np.zeros(3), np.zeros(3)),
                  'right': proj(d['right'], rvec, np.array(d['T'])),
                  'rvec': rvec.ravel().tolist()}))
`, map[string]any{"pts": pts, "left": rig.Left, "right": rig.Right, "R": rig.R, "T": rig.T}, &ref)
	worst := 0.0
	for i, X := range pts {
		for side, p := range [][2]float64{rig.ProjectLeft(X), rig.ProjectRight(X)} {
			want := ref.Left
			if side == 1 {
				want = ref.Right
			}
			d := math.Hypot(p[0]-want[2*i], p[1]-want[2*i+1])
			worst = math.Max(worst, d)
			if d > 1e-8 {
				t.Fatalf("point %v camera %d: %v px, cv2.projectPoints %v", X, side, p, want[2*i:2*i+2])
			}
		}
	}
	t.Logf("largest difference from cv2.projectPoints: %.2g px", worst)
	// Rodrigues against cv2.Rodrigues (rotation vector of the same R).
	back := Rodrigues([3]float64{ref.Rvec[0], ref.Rvec[1], ref.Rvec[2]})
	for i := range back {
		if math.Abs(back[i]-rig.R[i]) > 1e-12 {
			t.Fatalf("Rodrigues(cv2.Rodrigues(R)) = %v, want %v", back, rig.R)
		}
	}
	if !math.IsNaN(rig.ProjectLeft([3]float64{1, 1, -2})[0]) {
		t.Error("a point behind the camera got an image")
	}
}

// Camera.Unproject against cv2.undistortPointsIter of Debian's
// python3-opencv, iterated to convergence.
func TestUnprojectMatchesOpenCV(t *testing.T) {
	for ci, cam := range testCameras {
		w, h := 1280.0, 1024.0
		if ci == 1 {
			w, h = 640, 480
		}
		var px [][2]float64
		for y := 0.0; y <= h-1; y += (h - 1) / 8 {
			for x := 0.0; x <= w-1; x += (w - 1) / 10 {
				px = append(px, [2]float64{x, y})
			}
		}
		var ref []float64
		python(t, `
import json, sys, numpy as np, cv2
d = json.load(open(sys.argv[1]))
c = d['cam']
K = np.array([[c['Fx'], 0, c['Cx']], [0, c['Fy'], c['Cy']], [0, 0, 1]])
D = np.array([c['K1'], c['K2'], c['P1'], c['P2'], c['K3']])
P = np.array(d['px'], np.float64).reshape(-1, 1, 2)
out = cv2.undistortPointsIter(P, K, D, None, None,
    (cv2.TERM_CRITERIA_COUNT + cv2.TERM_CRITERIA_EPS, 5000, 1e-13))
print(json.dumps(out.ravel().tolist()))
`, map[string]any{"cam": cam, "px": px}, &ref)
		worst := 0.0
		for i, p := range px {
			xy, ok := cam.Unproject(p)
			if !ok {
				t.Fatalf("camera %d: pixel %v not invertible", ci, p)
			}
			d := math.Hypot(xy[0]-ref[2*i], xy[1]-ref[2*i+1]) * cam.Fx
			worst = math.Max(worst, d)
			if d > 1e-6 {
				t.Errorf("camera %d pixel %v: %v, cv2.undistortPointsIter %v (%.3g px apart)", ci, p, xy, ref[2*i:2*i+2], d)
			}
		}
		t.Logf("camera %d: largest difference from cv2.undistortPointsIter %.2g px", ci, worst)
	}
}
