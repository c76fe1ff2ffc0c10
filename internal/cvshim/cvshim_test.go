package cvshim_test

import (
	"image"
	"math"
	"strings"
	"testing"

	"gocv.io/x/gocv"

	"crestspeed/internal/cvshim"

	"crestspeed/internal/pyref"
)

// python runs a reference script: see pyref.JSON.
func python(t *testing.T, script string, in, out any) {
	t.Helper()
	pyref.JSON(t, script, in, out)
}

// The flag constants must be OpenCV's own values; reference: the cv2
// module of Debian's python3-opencv 4.6.
func TestFlagsMatchOpenCV(t *testing.T) {
	names := map[string]int{
		"CALIB_USE_INTRINSIC_GUESS": cvshim.CalibUseIntrinsicGuess,
		"CALIB_FIX_ASPECT_RATIO":    cvshim.CalibFixAspectRatio,
		"CALIB_FIX_PRINCIPAL_POINT": cvshim.CalibFixPrincipalPoint,
		"CALIB_ZERO_TANGENT_DIST":   cvshim.CalibZeroTangentDist,
		"CALIB_FIX_FOCAL_LENGTH":    cvshim.CalibFixFocalLength,
		"CALIB_FIX_K1":              cvshim.CalibFixK1,
		"CALIB_FIX_K2":              cvshim.CalibFixK2,
		"CALIB_FIX_K3":              cvshim.CalibFixK3,
		"CALIB_FIX_INTRINSIC":       cvshim.CalibFixIntrinsic,
		"CALIB_SAME_FOCAL_LENGTH":   cvshim.CalibSameFocalLength,
		"CALIB_ZERO_DISPARITY":      cvshim.CalibZeroDisparity,
		"CALIB_USE_EXTRINSIC_GUESS": cvshim.CalibUseExtrinsicGuess,
	}
	var keys []string
	for k := range names {
		keys = append(keys, k)
	}
	var got map[string]int
	python(t, `
import json, sys, cv2
names = json.load(open(sys.argv[1]))
print(json.dumps({n: int(getattr(cv2, n)) for n in names}))
`, keys, &got)
	for k, v := range names {
		if got[k] != v {
			t.Errorf("%s = %#x here but cv2.%s = %#x", k, v, k, got[k])
		}
	}
}

// planarViews makes exact projections of a planar grid seen by an ideal
// camera from a few poses (enough for calibrateCamera to run).
func planarViews() (obj [][][3]float32, img [][][2]float32) {
	poses := [][2]float64{{0.3, 0.1}, {-0.3, 0.2}, {0.1, -0.35}, {-0.2, -0.2}}
	for _, p := range poses {
		var o [][3]float32
		var m [][2]float32
		for j := 0; j < 5; j++ {
			for i := 0; i < 7; i++ {
				X, Y := float64(i)*0.1-0.3, float64(j)*0.1-0.2
				// Rotate about x by p[0] and y by p[1], then 2 m away.
				y1 := Y * math.Cos(p[0])
				z1 := Y * math.Sin(p[0])
				x2 := X*math.Cos(p[1]) + z1*math.Sin(p[1])
				z2 := -X*math.Sin(p[1]) + z1*math.Cos(p[1]) + 2
				o = append(o, [3]float32{float32(float64(i) * 0.1), float32(float64(j) * 0.1), 0})
				m = append(m, [2]float32{float32(800*x2/z2 + 320), float32(800*y1/z2 + 240)})
			}
		}
		obj = append(obj, o)
		img = append(img, m)
	}
	return obj, img
}

// A C++ exception inside OpenCV comes back as a Go error instead of
// aborting the process. OpenCV documents that non-planar targets need an
// initial camera matrix (cv::calibrateCamera reference); asking without
// one makes it throw.
func TestExceptionBecomesError(t *testing.T) {
	obj, img := planarViews()
	for v := range obj {
		for k := range obj[v] {
			obj[v][k][2] = float32(k%3) * 0.05 // no longer planar
		}
	}
	_, err := cvshim.CalibrateCamera(obj, img, image.Pt(640, 480), cvshim.Intrinsics{}, 0, cvshim.Criteria{MaxIter: 30, Eps: 1e-9})
	if err == nil || !strings.Contains(err.Error(), "cv::calibrateCamera") {
		t.Fatalf("non-planar target without a guess: got error %v, want OpenCV's complaint", err)
	}
	t.Log(err)
	// The same views made planar again calibrate (the shim still works
	// after an exception).
	obj, img = planarViews()
	c, err := cvshim.CalibrateCamera(obj, img, image.Pt(640, 480), cvshim.Intrinsics{}, cvshim.CalibFixK3, cvshim.Criteria{MaxIter: 100, Eps: 1e-12})
	if err != nil {
		t.Fatal(err)
	}
	// Exact synthetic projections of an 800 px camera: OpenCV must
	// recover it (reference: the projection above).
	if math.Abs(c.K[0]-800) > 1e-2 || c.RMS > 1e-3 {
		t.Errorf("fx = %g px, RMS = %g px; want 800 px and ~0 for exact data", c.K[0], c.RMS)
	}
}

func TestBadArgumentsAreErrors(t *testing.T) {
	obj, img := planarViews()
	crit := cvshim.Criteria{MaxIter: 30, Eps: 1e-9}
	if _, err := cvshim.CalibrateCamera(obj, img[:2], image.Pt(640, 480), cvshim.Intrinsics{}, 0, crit); err == nil {
		t.Error("view count mismatch accepted")
	}
	if _, err := cvshim.CalibrateCamera(obj, img, image.Pt(0, 480), cvshim.Intrinsics{}, 0, crit); err == nil {
		t.Error("zero image width accepted")
	}
	if _, err := cvshim.CalibrateCamera(obj, img, image.Pt(640, 480), cvshim.Intrinsics{}, 0x04000, crit); err == nil {
		t.Error("rational model accepted")
	}
	if _, err := cvshim.StereoCalibrate(obj, img, img[:3], image.Pt(640, 480), cvshim.Intrinsics{}, cvshim.Intrinsics{}, 0, crit); err == nil {
		t.Error("right view count mismatch accepted")
	}
	var m gocv.Mat
	if err := cvshim.InitRectifyMap(cvshim.Intrinsics{}, [9]float64{}, [12]float64{}, image.Pt(4, 4), &m, &m); err == nil {
		t.Error("unallocated maps accepted")
	}
}
