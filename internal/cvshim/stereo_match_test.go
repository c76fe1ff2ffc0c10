package cvshim_test

import (
	"encoding/binary"
	"math"
	"os"
	"path/filepath"
	"slices"
	"testing"

	"gocv.io/x/gocv"

	"crestspeed/internal/cvshim"
)

// The Middlebury 2006 "Aloe" pair with its ground-truth disparity, as
// shipped by Debian's opencv-doc (Scharstein & Pal 2007, "Learning
// conditional random fields for stereo", CVPR; Hirschmüller & Scharstein
// 2007, "Evaluation of cost functions for stereo matching", CVPR).
//
// Encoding of aloeGT.png, determined here: the images are 1282×1110 px,
// the full size of the 2006 data sets (from memory: full-size views are
// 1240–1396 px wide and 1110 px high; the half- and third-size versions
// are 555 and 370 px high), and the ground truth is an 8-bit image of the
// same size with values 43–211 and 0. A value is the left-view disparity
// in pixels at this full size, 0 where unknown (occluded or not
// measured): the reference script below confirms the scale independently
// of any stereo matcher, by normalised cross-correlation of 15×15 patches
// along the rows (cv2.matchTemplate), whose shift over the ground-truth
// value has a median of 1.00 (TestAloeGroundTruthEncoding).
var (
	aloeLeft  = filepath.Join(opencvDocData, "aloeL.jpg")
	aloeRight = filepath.Join(opencvDocData, "aloeR.jpg")
	aloeGT    = filepath.Join(opencvDocData, "aloeGT.png")
)

// aloeParams are the matcher settings of the Aloe checks: the search
// range 32–223 px covers the ground truth's 43–211 px; the penalties are
// the 8·b² and 32·b² OpenCV's documentation suggests for grey images;
// the rest are OpenCV sample values (uniqueness 10 %, speckle window
// 100 px of range 2 px, prefilter cap 63).
var aloeParams = cvshim.SGBMParams{
	MinDisparity: 32, NumDisparities: 192, BlockSize: 5, P1: 8 * 25, P2: 32 * 25,
	Disp12MaxDiff: 1, PreFilterCap: 63, UniquenessRatio: 10,
	SpeckleWindowSize: 100, SpeckleRange: 2, Mode: cvshim.SGBMModeSGBM,
}

const aloeLRTolPx = 1.0

// disparityFigures are the quality figures of a disparity map against the
// ground truth, over the pixels with a known ground truth (GT > 0).
type disparityFigures struct {
	Known    int     `json:"known"`     // pixels with a ground truth
	Coverage float64 `json:"coverage"`  // fraction of them with a disparity
	Bad2     float64 `json:"bad2"`      // fraction of those with |error| > 2 px
	Bad2All  float64 `json:"bad2_all"`  // same, counting missing disparities as bad
	MedianPx float64 `json:"median_px"` // median |error| where there is a disparity
}

// figures computes disparityFigures of a raw (1/16 px) disparity map.
func figures(raw []int16, gt []uint8, minValid int16) disparityFigures {
	var f disparityFigures
	var errs []float64
	bad := 0
	for i, g := range gt {
		if g == 0 {
			continue
		}
		f.Known++
		if raw[i] < minValid {
			continue
		}
		e := math.Abs(float64(raw[i])/16 - float64(g))
		errs = append(errs, e)
		if e > 2 {
			bad++
		}
	}
	n := len(errs)
	f.Coverage = float64(n) / float64(f.Known)
	f.Bad2 = float64(bad) / float64(n)
	f.Bad2All = float64(bad+f.Known-n) / float64(f.Known)
	slices.Sort(errs)
	if n%2 == 1 {
		f.MedianPx = errs[n/2]
	} else {
		f.MedianPx = (errs[n/2-1] + errs[n/2]) / 2
	}
	return f
}

// aloeScript computes, with Debian's python3-opencv, the same disparities
// as the binding (cv2.StereoSGBM with the same parameters; the right view
// with cv2.ximgproc.createRightMatcher and the same left-right rule in
// numpy), cv2.reprojectImageTo3D of the raw disparity with a test Q and the
// figures of both disparity maps (numpy, np.median).
// Arrays go to files in the folder named by the input.
const aloeScript = `
import json, sys
import numpy as np, cv2
d = json.load(open(sys.argv[1]))
L = cv2.imread(d['left'], cv2.IMREAD_GRAYSCALE)
R = cv2.imread(d['right'], cv2.IMREAD_GRAYSCALE)
gt = cv2.imread(d['gt'], cv2.IMREAD_UNCHANGED)
p = d['params']
cv2.setNumThreads(1)
m = cv2.StereoSGBM_create(minDisparity=p['MinDisparity'], numDisparities=p['NumDisparities'],
    blockSize=p['BlockSize'], P1=p['P1'], P2=p['P2'], disp12MaxDiff=p['Disp12MaxDiff'],
    preFilterCap=p['PreFilterCap'], uniquenessRatio=p['UniquenessRatio'],
    speckleWindowSize=p['SpeckleWindowSize'], speckleRange=p['SpeckleRange'], mode=p['Mode'])
raw = m.compute(L, R)
rm = cv2.ximgproc.createRightMatcher(m)
dr = rm.compute(R, L).astype(np.int32)
dl = raw.astype(np.int32)
minD, num = p['MinDisparity'], p['NumDisparities']
validL = dl >= minD * 16
xr = np.arange(dl.shape[1])[None, :] - np.right_shift(dl + 8, 4)
inside = (xr >= 0) & (xr < dl.shape[1])
xr_c = np.clip(xr, 0, dl.shape[1] - 1)
drv = np.take_along_axis(dr, xr_c, axis=1)
ok = validL & inside & (drv >= (-(minD + num) + 1) * 16) & (np.abs(dl + drv) <= int(round(d['tol'] * 16)))
checked = np.where(ok, dl, (minD - 1) * 16).astype(np.int16)
raw.astype('<i2').tofile(d['dir'] + '/raw.bin')
checked.astype('<i2').tofile(d['dir'] + '/checked.bin')
Q = np.array(d['Q'], np.float64).reshape(4, 4)
xyz = cv2.reprojectImageTo3D(raw, Q, handleMissingValues=False, ddepth=cv2.CV_32F)
xyz.astype('<f4').tofile(d['dir'] + '/xyz.bin')
def fig(disp):
    known = gt > 0
    v = known & (disp >= minD * 16)
    e = np.abs(disp.astype(np.float64) / 16 - gt.astype(np.float64))[v]
    bad = int((e > 2).sum())
    return dict(known=int(known.sum()), coverage=float(v.sum() / known.sum()),
                bad2=float(bad / v.sum()), bad2_all=float((bad + known.sum() - v.sum()) / known.sum()),
                median_px=float(np.median(e)))
print(json.dumps(dict(raw=fig(raw), checked=fig(checked))))
`

// aloeScaleScript measures the scale of aloeGT.png without any stereo
// matcher: at random textured pixels with a known ground truth it finds the
// shift of a 15×15 patch along its row in the right image by normalised
// cross-correlation (cv2.matchTemplate, peak refined by a parabola) and
// prints the median of shift / GT value.
const aloeScaleScript = `
import json, sys
import numpy as np, cv2
d = json.load(open(sys.argv[1]))
L = cv2.imread(d['left'], cv2.IMREAD_GRAYSCALE)
R = cv2.imread(d['right'], cv2.IMREAD_GRAYSCALE)
gt = cv2.imread(d['gt'], cv2.IMREAD_UNCHANGED)
# Ground-truth scale: NCC template matching along the rows at random
# textured pixels with a known ground truth.
rng = np.random.default_rng(1)
Lf, Rf = L.astype(np.float32), R.astype(np.float32)
h, w = L.shape
r = 7
ratios = []
tries = 0
while len(ratios) < 300 and tries < 50000:
    tries += 1
    y = int(rng.integers(r, h - r)); x = int(rng.integers(260, w - r))
    g = float(gt[y, x])
    patch = Lf[y-r:y+r+1, x-r:x+r+1]
    if g == 0 or patch.std() < 20:
        continue
    x0 = max(r, x - 260)
    strip = Rf[y-r:y+r+1, x0-r:x+r+1]
    res = cv2.matchTemplate(strip, patch, cv2.TM_CCOEFF_NORMED)[0]
    k = int(np.argmax(res))
    if res[k] < 0.9 or k == 0 or k == len(res) - 1:
        continue
    a, b, c = res[k-1], res[k], res[k+1]
    ratios.append((x - (x0 + k + 0.5 * (a - c) / (a - 2 * b + c))) / g)
print(json.dumps(dict(scale_median=float(np.median(ratios)), scale_n=len(ratios),
    gt_min_known=int(gt[gt > 0].min()), gt_max=int(gt.max()))))
`

type aloeReference struct {
	Raw     disparityFigures `json:"raw"`
	Checked disparityFigures `json:"checked"`
}

// aloeQ is a disparity-to-depth matrix of the form cv::stereoRectify
// returns (f 1000 px, baseline 0.16 m), to check the reprojection binding.
var aloeQ = [16]float64{1, 0, 0, -641, 0, 1, 0, -555, 0, 0, 0, 1000, 0, 0, 1 / 0.16, 0}

func readInt16s(t *testing.T, path string, n int) []int16 {
	t.Helper()
	data, err := os.ReadFile(path)
	if err != nil {
		t.Fatal(err)
	}
	if len(data) != 2*n {
		t.Fatalf("%s holds %d bytes, want %d", path, len(data), 2*n)
	}
	out := make([]int16, n)
	for i := range out {
		out[i] = int16(binary.LittleEndian.Uint16(data[2*i:]))
	}
	return out
}

func readFloat32s(t *testing.T, path string, n int) []float32 {
	t.Helper()
	data, err := os.ReadFile(path)
	if err != nil {
		t.Fatal(err)
	}
	if len(data) != 4*n {
		t.Fatalf("%s holds %d bytes, want %d", path, len(data), 4*n)
	}
	out := make([]float32, n)
	for i := range out {
		out[i] = math.Float32frombits(binary.LittleEndian.Uint32(data[4*i:]))
	}
	return out
}

func loadAloe(t *testing.T) (l, r, gt gocv.Mat) {
	t.Helper()
	for _, p := range []string{aloeLeft, aloeRight, aloeGT} {
		if _, err := os.Stat(p); err != nil {
			t.Fatalf("%s is missing: Debian's opencv-doc package provides it (scripts/setup-deps installs it)", p)
		}
	}
	l = gocv.IMRead(aloeLeft, gocv.IMReadGrayScale)
	r = gocv.IMRead(aloeRight, gocv.IMReadGrayScale)
	gt = gocv.IMRead(aloeGT, gocv.IMReadUnchanged)
	if l.Empty() || r.Empty() || gt.Empty() {
		t.Fatal("the Aloe images cannot be decoded")
	}
	return l, r, gt
}

// TestAloeDisparity checks the disparity stage on the Middlebury Aloe pair:
// its bad-pixel rate and median error against the ground truth, and that
// the binding gives exactly what cv2 gives with the same parameters.
func TestAloeDisparity(t *testing.T) {
	l, r, gtMat := loadAloe(t)
	defer l.Close()
	defer r.Close()
	defer gtMat.Close()
	prev, err := cvshim.NumThreads()
	if err != nil {
		t.Fatal(err)
	}
	defer cvshim.SetNumThreads(max(prev, 1))
	if err := cvshim.SetNumThreads(1); err != nil {
		t.Fatal(err)
	}
	if n, _ := cvshim.NumThreads(); n != 1 {
		t.Errorf("NumThreads after SetNumThreads(1) = %d", n)
	}
	m, err := cvshim.NewStereoSGBM(aloeParams)
	if err != nil {
		t.Fatal(err)
	}
	defer m.Close()
	raw, checked, xyz := gocv.NewMat(), gocv.NewMat(), gocv.NewMat()
	defer raw.Close()
	defer checked.Close()
	defer xyz.Close()
	if err := m.Compute(l, r, &raw); err != nil {
		t.Fatal(err)
	}
	st, err := m.ComputeChecked(l, r, &checked, aloeLRTolPx)
	if err != nil {
		t.Fatal(err)
	}
	if err := cvshim.ReprojectImageTo3D(raw, aloeQ, &xyz); err != nil {
		t.Fatal(err)
	}
	n := l.Rows() * l.Cols()
	rawD, _ := raw.DataPtrInt16()
	chkD, _ := checked.DataPtrInt16()
	xyzD, _ := xyz.DataPtrFloat32()
	gt, _ := gtMat.DataPtrUint8()
	if len(rawD) != n || len(chkD) != n || len(gt) != n || len(xyzD) != 3*n {
		t.Fatalf("sizes: raw %d, checked %d, gt %d, xyz %d for %d pixels", len(rawD), len(chkD), len(gt), len(xyzD), n)
	}

	dir := t.TempDir()
	var ref aloeReference
	python(t, aloeScript, map[string]any{
		"left": aloeLeft, "right": aloeRight, "gt": aloeGT, "dir": dir,
		"params": aloeParams, "tol": aloeLRTolPx, "Q": aloeQ,
	}, &ref)

	// The binding against cv2 (Debian python3-opencv 4.6): identical
	// disparities, before and after the left-right check, and identical
	// reprojected points.
	pyRaw := readInt16s(t, filepath.Join(dir, "raw.bin"), n)
	pyChk := readInt16s(t, filepath.Join(dir, "checked.bin"), n)
	pyXYZ := readFloat32s(t, filepath.Join(dir, "xyz.bin"), 3*n)
	diff := func(a, b []int16) int {
		k := 0
		for i := range a {
			if a[i] != b[i] {
				k++
			}
		}
		return k
	}
	if k := diff(rawD, pyRaw); k != 0 {
		t.Errorf("raw disparity differs from cv2.StereoSGBM at %d of %d pixels", k, n)
	}
	if k := diff(chkD, pyChk); k != 0 {
		t.Errorf("left-right checked disparity differs from cv2 (createRightMatcher + the same rule in numpy) at %d of %d pixels", k, n)
	}
	worst := 0.0
	for i := range xyzD {
		a, b := float64(xyzD[i]), float64(pyXYZ[i])
		if math.IsInf(b, 0) || math.IsNaN(b) {
			if a != b && !(math.IsNaN(a) && math.IsNaN(b)) {
				worst = math.Inf(1)
			}
			continue
		}
		worst = math.Max(worst, math.Abs(a-b)/math.Max(1, math.Abs(b)))
	}
	if worst != 0 {
		t.Errorf("reprojected points differ from cv2.reprojectImageTo3D by %g (relative)", worst)
	}

	minValid := int16(aloeParams.MinDisparity * 16)
	ours := map[string]disparityFigures{"raw": figures(rawD, gt, minValid), "checked": figures(chkD, gt, minValid)}
	theirs := map[string]disparityFigures{"raw": ref.Raw, "checked": ref.Checked}
	for _, k := range []string{"raw", "checked"} {
		o, p := ours[k], theirs[k]
		t.Logf("Aloe %-7s binding: coverage %.4f, bad>2px %.4f (%.4f counting missing), median |error| %.4f px; cv2: coverage %.4f, bad>2px %.4f (%.4f), median %.4f px",
			k, o.Coverage, o.Bad2, o.Bad2All, o.MedianPx, p.Coverage, p.Bad2, p.Bad2All, p.MedianPx)
		// Same figures from numpy on cv2's maps (reference: numpy).
		if o.Known != p.Known || math.Abs(o.Coverage-p.Coverage) > 1e-12 || math.Abs(o.Bad2-p.Bad2) > 1e-12 ||
			math.Abs(o.Bad2All-p.Bad2All) > 1e-12 || math.Abs(o.MedianPx-p.MedianPx) > 1e-12 {
			t.Errorf("%s figures differ from cv2's: binding %+v, cv2 %+v", k, o, p)
		}
	}
	// Bounds on the disparity stage, regression bounds around the figures
	// measured with Debian's OpenCV 4.6 (raw: bad 3.4 %, median 0.25 px,
	// coverage 72 %; checked: bad 2.7 %, median 0.25 px, coverage 59 %):
	// with 1/16-px
	// output a median error above 0.5 px or more than 5 % bad pixels would
	// mean a broken matcher or binding. Coverage is limited by the leftmost
	// 224 columns SGBM cannot match and by occlusions.
	c := ours["checked"]
	rw := ours["raw"]
	if rw.Bad2 > 0.05 || rw.MedianPx > 0.5 || rw.Coverage < 0.65 {
		t.Errorf("raw SGBM on Aloe: bad>2px %.4f (bound 0.05), median %.3f px (bound 0.5), coverage %.3f (bound ≥ 0.65)", rw.Bad2, rw.MedianPx, rw.Coverage)
	}
	if c.Bad2 > 0.04 || c.MedianPx > 0.5 || c.Coverage < 0.55 {
		t.Errorf("checked SGBM on Aloe: bad>2px %.4f (bound 0.04), median %.3f px (bound 0.5), coverage %.3f (bound ≥ 0.55)", c.Bad2, c.MedianPx, c.Coverage)
	}
	// The left-right check must remove more bad pixels than good ones.
	if !(c.Bad2 < rw.Bad2) {
		t.Errorf("the left-right check did not lower the bad-pixel rate (%.4f → %.4f)", rw.Bad2, c.Bad2)
	}
	if st.ValidBefore <= st.ValidAfter || st.ValidAfter == 0 {
		t.Errorf("check statistics %+v: the check should keep some but not all pixels", st)
	}
}

// TestAloeGroundTruthEncoding documents the encoding of aloeGT.png (see the
// comment on aloeLeft): full-size 8-bit disparities in pixels, 0 unknown.
func TestAloeGroundTruthEncoding(t *testing.T) {
	l, r, gt := loadAloe(t)
	defer l.Close()
	defer r.Close()
	defer gt.Close()
	if gt.Type() != gocv.MatTypeCV8UC1 || gt.Cols() != l.Cols() || gt.Rows() != l.Rows() {
		t.Fatalf("aloeGT.png is type %v, %d×%d; the images are %d×%d", gt.Type(), gt.Cols(), gt.Rows(), l.Cols(), l.Rows())
	}
	// 1110 rows: the full size of the Middlebury 2006 sets (from memory).
	if l.Rows() != 1110 || l.Cols() != 1282 {
		t.Errorf("Aloe images are %d×%d px, expected the full size 1282×1110", l.Cols(), l.Rows())
	}
	var ref struct {
		ScaleMedian float64 `json:"scale_median"`
		ScaleN      int     `json:"scale_n"`
		GTMin       int     `json:"gt_min_known"`
		GTMax       int     `json:"gt_max"`
	}
	python(t, aloeScaleScript, map[string]any{"left": aloeLeft, "right": aloeRight, "gt": aloeGT}, &ref)
	t.Logf("aloeGT.png: known values %d–%d; template-matching shift / GT value: median %.4f over %d patches", ref.GTMin, ref.GTMax, ref.ScaleMedian, ref.ScaleN)
	// The shift measured by cv2.matchTemplate equals the GT value (scale 1)
	// to within 1 %; a third- or half-size encoding would give 1/3 or 1/2,
	// a scaled encoding (×2, ×4) 2 or 4.
	if ref.ScaleN < 100 || math.Abs(ref.ScaleMedian-1) > 0.01 {
		t.Errorf("ground-truth scale: median shift/GT %.4f over %d patches; expected 1 (disparity in pixels)", ref.ScaleMedian, ref.ScaleN)
	}
	if ref.GTMax > 255 || ref.GTMin < 1 {
		t.Errorf("ground-truth range %d–%d", ref.GTMin, ref.GTMax)
	}
}

// TestStereoBadInput: misuse is an error, never a crash.
func TestStereoBadInput(t *testing.T) {
	good := aloeParams
	for name, p := range map[string]cvshim.SGBMParams{
		"num not multiple of 16": func() cvshim.SGBMParams { q := good; q.NumDisparities = 100; return q }(),
		"even block":             func() cvshim.SGBMParams { q := good; q.BlockSize = 4; return q }(),
		"P2 below P1":            func() cvshim.SGBMParams { q := good; q.P1, q.P2 = 100, 50; return q }(),
		"mode":                   func() cvshim.SGBMParams { q := good; q.Mode = 7; return q }(),
	} {
		if _, err := cvshim.NewStereoSGBM(p); err == nil {
			t.Errorf("%s: NewStereoSGBM accepted %+v", name, p)
		}
	}
	m, err := cvshim.NewStereoSGBM(good)
	if err != nil {
		t.Fatal(err)
	}
	defer m.Close()
	a := gocv.NewMatWithSize(64, 96, gocv.MatTypeCV8UC1)
	b := gocv.NewMatWithSize(64, 80, gocv.MatTypeCV8UC1)
	c := gocv.NewMatWithSize(64, 96, gocv.MatTypeCV8UC3)
	d := gocv.NewMat()
	defer a.Close()
	defer b.Close()
	defer c.Close()
	defer d.Close()
	if err := m.Compute(a, b, &d); err == nil {
		t.Error("Compute accepted images of different sizes")
	}
	if err := m.Compute(a, c, &d); err == nil {
		t.Error("Compute accepted a colour image")
	}
	if _, err := m.ComputeChecked(a, a, &d, -1); err == nil {
		t.Error("ComputeChecked accepted a negative tolerance")
	}
	if err := cvshim.ReprojectImageTo3D(a, aloeQ, &d); err == nil {
		t.Error("ReprojectImageTo3D accepted an 8-bit disparity")
	}
	if err := cvshim.SetNumThreads(0); err == nil {
		t.Error("SetNumThreads accepted 0")
	}
	m.Close()
	if err := m.Compute(a, a, &d); err == nil {
		t.Error("Compute on a closed matcher did not fail")
	}
}
