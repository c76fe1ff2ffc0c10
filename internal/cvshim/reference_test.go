package cvshim_test

import (
	"context"
	"image"
	"math"
	"testing"

	"crestspeed/calib"
	"crestspeed/internal/cvshim"
)

// opencvDocData is Debian's opencv-doc sample folder: chessboard stereo
// pairs left01..14.jpg / right01..14.jpg (9×6 inner corners; pair 10 is
// not shipped).
const opencvDocData = "/usr/share/doc/opencv-doc/examples/data/"

// relDiff is max|a−b| over max|b|: the difference relative to the
// largest element of the reference matrix.
func relDiff(a, b []float64) float64 {
	d, m := 0.0, 0.0
	for i := range b {
		d = math.Max(d, math.Abs(a[i]-b[i]))
		m = math.Max(m, math.Abs(b[i]))
	}
	if m == 0 {
		return d
	}
	return d / m
}

const referenceScript = `
import json, sys
import numpy as np, cv2
d = json.load(open(sys.argv[1]))
obj = [np.array(d['obj'], np.float32).reshape(-1, 1, 3) for _ in d['left']]
L = [np.array(v, np.float32).reshape(-1, 1, 2) for v in d['left']]
R = [np.array(v, np.float32).reshape(-1, 1, 2) for v in d['right']]
size = tuple(d['size'])
crit = (cv2.TERM_CRITERIA_COUNT + cv2.TERM_CRITERIA_EPS, d['max_iter'], d['eps'])
out = {}
cams = []
for name, pts in (('left', L), ('right', R)):
    rms, K, D, _, _, _, _, pve = cv2.calibrateCameraExtended(
        obj, pts, size, None, None, flags=d['single_flags'], criteria=crit)
    out[name] = dict(rms=rms, K=K.ravel().tolist(), D=D.ravel().tolist(), per_view=pve.ravel().tolist())
    cams += [K, D]
rms, K1, D1, K2, D2, Rm, T, E, F, pve = cv2.stereoCalibrateExtended(
    obj, L, R, cams[0], cams[1], cams[2], cams[3], size, np.eye(3), np.zeros((3, 1)),
    flags=d['stereo_flags'], criteria=crit)
out['stereo'] = dict(rms=rms, K1=K1.ravel().tolist(), D1=D1.ravel().tolist(),
                     K2=K2.ravel().tolist(), D2=D2.ravel().tolist(),
                     R=Rm.ravel().tolist(), T=T.ravel().tolist(),
                     E=E.ravel().tolist(), F=F.ravel().tolist(), per_view=pve.ravel().tolist())
# Rectify the binding's own stereo result, so this part checks the
# stereoRectify binding alone.
g = d['go_stereo']
R1, R2, P1, P2, Q, roi1, roi2 = cv2.stereoRectify(
    np.array(g['K1']).reshape(3, 3), np.array(g['D1']), np.array(g['K2']).reshape(3, 3), np.array(g['D2']),
    size, np.array(g['R']).reshape(3, 3), np.array(g['T']), flags=cv2.CALIB_ZERO_DISPARITY, alpha=d['alpha'])
out['rectify'] = dict(R1=R1.ravel().tolist(), R2=R2.ravel().tolist(), P1=P1.ravel().tolist(),
                      P2=P2.ravel().tolist(), Q=Q.ravel().tolist(), roi1=list(roi1), roi2=list(roi2))
print(json.dumps(out))
`

// The binding against Debian's python3-opencv on the same detected
// corners: cv2.calibrateCamera, cv2.stereoCalibrate and cv2.stereoRectify
// with the same flags and criteria must give the same K, D, R, T, R1, R2,
// P1, P2 and Q to 1e-6 relative (same library, so this checks the binding:
// argument order, layouts, flags and copies).
func TestBindingMatchesPythonOpenCV(t *testing.T) {
	pairs, err := calib.PairGlobs(opencvDocData+"left[0-9][0-9].jpg", opencvDocData+"right[0-9][0-9].jpg")
	if err != nil {
		t.Fatal(err)
	}
	opt := calib.Options{Pattern: calib.Pattern{Cols: 9, Rows: 6, SquareM: 0.025}}
	views, size, err := calib.DetectViews(context.Background(), pairs, opt)
	if err != nil {
		t.Fatal(err)
	}
	objPts := opt.Pattern.ObjectPoints()
	var obj [][][3]float32
	var left, right [][][2]float32
	for _, v := range views {
		if v.Status == calib.ViewUsed {
			obj = append(obj, objPts)
			left = append(left, v.Left)
			right = append(right, v.Right)
		}
	}
	if len(obj) < 10 {
		t.Fatalf("only %d usable views in the opencv-doc pairs", len(obj))
	}
	single, stereo := opt.SolveFlags()
	crit := calib.SolveCriteria()
	var cams [2]cvshim.CameraCalibration
	for i, pts := range [][][][2]float32{left, right} {
		cams[i], err = cvshim.CalibrateCamera(obj, pts, size, cvshim.Intrinsics{}, single, crit)
		if err != nil {
			t.Fatal(err)
		}
	}
	st, err := cvshim.StereoCalibrate(obj, left, right, size, cams[0].Intrinsics, cams[1].Intrinsics, stereo, crit)
	if err != nil {
		t.Fatal(err)
	}
	const alpha = 0.0
	rc, err := cvshim.StereoRectify(st.Cam1, st.Cam2, size, st.R, st.T, cvshim.CalibZeroDisparity, alpha, image.Point{})
	if err != nil {
		t.Fatal(err)
	}
	in := map[string]any{
		"obj": objPts, "left": left, "right": right, "size": []int{size.X, size.Y},
		"max_iter": crit.MaxIter, "eps": crit.Eps, "single_flags": single, "stereo_flags": stereo, "alpha": alpha,
		"go_stereo": map[string]any{"K1": st.Cam1.K, "D1": st.Cam1.D, "K2": st.Cam2.K, "D2": st.Cam2.D, "R": st.R, "T": st.T},
	}
	type camOut struct {
		RMS     float64 `json:"rms"`
		K, D    []float64
		PerView []float64 `json:"per_view"`
	}
	var ref struct {
		Left, Right camOut
		Stereo      struct {
			RMS                        float64 `json:"rms"`
			K1, D1, K2, D2, R, T, E, F []float64
			PerView                    []float64 `json:"per_view"`
		}
		Rectify struct {
			R1, R2, P1, P2, Q []float64
			ROI1              []int `json:"roi1"`
			ROI2              []int `json:"roi2"`
		}
	}
	python(t, referenceScript, in, &ref)
	worst := 0.0
	check := func(name string, got, want []float64) {
		t.Helper()
		if len(got) != len(want) {
			t.Errorf("%s: %d values here, %d from cv2", name, len(got), len(want))
			return
		}
		d := relDiff(got, want)
		worst = math.Max(worst, d)
		if d > 1e-6 {
			t.Errorf("%s differs from cv2 by %.3g relative (got %v, cv2 %v)", name, d, got, want)
		}
	}
	check("left K", cams[0].K[:], ref.Left.K)
	check("left D", cams[0].D[:], ref.Left.D)
	check("left RMS", []float64{cams[0].RMS}, []float64{ref.Left.RMS})
	check("left per-view RMS", cams[0].PerViewRMS, ref.Left.PerView)
	check("right K", cams[1].K[:], ref.Right.K)
	check("right D", cams[1].D[:], ref.Right.D)
	check("right per-view RMS", cams[1].PerViewRMS, ref.Right.PerView)
	check("stereo K1", st.Cam1.K[:], ref.Stereo.K1)
	check("stereo D1", st.Cam1.D[:], ref.Stereo.D1)
	check("stereo K2", st.Cam2.K[:], ref.Stereo.K2)
	check("stereo D2", st.Cam2.D[:], ref.Stereo.D2)
	check("stereo R", st.R[:], ref.Stereo.R)
	check("stereo T", st.T[:], ref.Stereo.T)
	check("stereo E", st.E[:], ref.Stereo.E)
	check("stereo F", st.F[:], ref.Stereo.F)
	check("stereo RMS", []float64{st.RMS}, []float64{ref.Stereo.RMS})
	var pv []float64
	for _, p := range st.PerViewRMS {
		pv = append(pv, p[0], p[1])
	}
	check("stereo per-view RMS", pv, ref.Stereo.PerView)
	check("R1", rc.R1[:], ref.Rectify.R1)
	check("R2", rc.R2[:], ref.Rectify.R2)
	check("P1", rc.P1[:], ref.Rectify.P1)
	check("P2", rc.P2[:], ref.Rectify.P2)
	check("Q", rc.Q[:], ref.Rectify.Q)
	roi := func(r []int) [4]int { return [4]int{r[0], r[1], r[2], r[3]} }
	if got := [4]int{rc.ROI1.Min.X, rc.ROI1.Min.Y, rc.ROI1.Dx(), rc.ROI1.Dy()}; len(ref.Rectify.ROI1) != 4 || got != roi(ref.Rectify.ROI1) {
		t.Errorf("ROI1 %v, cv2 %v", got, ref.Rectify.ROI1)
	}
	if got := [4]int{rc.ROI2.Min.X, rc.ROI2.Min.Y, rc.ROI2.Dx(), rc.ROI2.Dy()}; len(ref.Rectify.ROI2) != 4 || got != roi(ref.Rectify.ROI2) {
		t.Errorf("ROI2 %v, cv2 %v", got, ref.Rectify.ROI2)
	}
	t.Logf("%d views; largest relative difference from cv2: %.3g", len(obj), worst)
}
