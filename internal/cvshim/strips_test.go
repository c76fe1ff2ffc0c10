package cvshim_test

import (
	"math"
	"path/filepath"
	"testing"

	"gocv.io/x/gocv"

	"crestspeed/internal/cvshim"
)

// stripScript matches each strip of the input with Debian's python3-opencv
// on its own rows: cv2.StereoSGBM over the rows [top, row1) of both images
// with the strip's range, the right view with cv2.ximgproc's right matcher
// and the same left-right rule in numpy as aloeScript, and writes the raw
// (checked) disparities of the kept rows [row0, row1) of every strip, one
// after another.
const stripScript = `
import json, sys
import numpy as np, cv2
d = json.load(open(sys.argv[1]))
L = cv2.imread(d['left'], cv2.IMREAD_GRAYSCALE)
R = cv2.imread(d['right'], cv2.IMREAD_GRAYSCALE)
p = d['params']
cv2.setNumThreads(1)
out = []
for s in d['strips']:
    minD, num = s['MinDisparity'], s['NumDisparities']
    m = cv2.StereoSGBM_create(minDisparity=minD, numDisparities=num,
        blockSize=p['BlockSize'], P1=p['P1'], P2=p['P2'], disp12MaxDiff=p['Disp12MaxDiff'],
        preFilterCap=p['PreFilterCap'], uniquenessRatio=p['UniquenessRatio'],
        speckleWindowSize=p['SpeckleWindowSize'], speckleRange=p['SpeckleRange'], mode=p['Mode'])
    c0 = s['Col0']
    l, r = np.ascontiguousarray(L[s['Top']:s['Row1'], c0:]), np.ascontiguousarray(R[s['Top']:s['Row1'], c0:])
    dl = m.compute(l, r).astype(np.int32)
    if d['lr']:
        dr = cv2.ximgproc.createRightMatcher(m).compute(r, l).astype(np.int32)
        xr = np.arange(dl.shape[1])[None, :] - np.right_shift(dl + 8, 4)
        inside = (xr >= 0) & (xr < dl.shape[1])
        drv = np.take_along_axis(dr, np.clip(xr, 0, dl.shape[1] - 1), axis=1)
        ok = (dl >= minD * 16) & inside & (drv >= (-(minD + num) + 1) * 16) & (np.abs(dl + drv) <= int(round(d['tol'] * 16)))
        dl = np.where(ok, dl, (minD - 1) * 16)
    full = np.full((dl.shape[0], L.shape[1]), -32768, np.int32)
    full[:, c0:] = dl
    out.append(full[s['Row0'] - s['Top']:])
np.concatenate(out).astype('<i2').tofile(d['dir'] + '/strips.bin')
print('{}')
`

// TestStripMatcherAgainstCV2: strip matching of the Aloe pair gives, in
// each strip's kept rows, exactly what cv2.StereoSGBM gives on those rows
// alone (and the columns from the strip's first one, NaN left of it) with
// the strip's range (with and without the left-right check), converted to
// pixels with the end pixels of the range left out; rows of
// no strip are NaN; and one strip over the whole image is exactly
// ComputeChecked followed by DisparityToFloat.
func TestStripMatcherAgainstCV2(t *testing.T) {
	l, r, gt := loadAloe(t)
	defer l.Close()
	defer r.Close()
	gt.Close()
	rows, cols := l.Rows(), l.Cols()
	// Ranges that cover the ground truth's 43–211 px in every strip, of
	// different widths; a gap of unmatched rows between the second and
	// third strip; rows below the last strip unmatched.
	strips := []cvshim.Strip{
		{Row0: 0, Row1: 300, Top: 0, MinDisparity: 32, NumDisparities: 192},
		{Row0: 300, Row1: 620, Top: 284, Col0: 150, MinDisparity: 16, NumDisparities: 208},
		{Row0: 700, Row1: 1000, Top: 668, MinDisparity: 40, NumDisparities: 176},
	}
	for _, lr := range []bool{false, true} {
		m, err := cvshim.NewStripMatcher(aloeParams, strips, lr)
		if err != nil {
			t.Fatal(err)
		}
		disp := gocv.NewMat()
		st, err := m.Compute(l, r, &disp, aloeLRTolPx)
		m.Close()
		if err != nil {
			disp.Close()
			t.Fatal(err)
		}
		got, _ := disp.DataPtrFloat32()
		if len(got) != rows*cols {
			t.Fatalf("disparity of %d values for %d×%d px", len(got), cols, rows)
		}
		dir := t.TempDir()
		var none struct{}
		python(t, stripScript, map[string]any{"left": aloeLeft, "right": aloeRight, "dir": dir,
			"params": aloeParams, "strips": strips, "lr": lr, "tol": aloeLRTolPx}, &none)
		kept := 0
		for _, s := range strips {
			kept += s.Row1 - s.Row0
		}
		ref := readInt16s(t, filepath.Join(dir, "strips.bin"), kept*cols)
		bad, valid, k := 0, 0, 0
		for _, s := range strips {
			lo, hi := int16((s.MinDisparity+1)*16), int16((s.MinDisparity+s.NumDisparities-1)*16)
			for y := s.Row0; y < s.Row1; y++ {
				for x := 0; x < cols; x++ {
					raw := ref[k]
					k++
					g := got[y*cols+x]
					want := float32(math.NaN())
					if raw >= lo && raw < hi {
						want = float32(raw) / 16
						valid++
					}
					if !(g == want || (g != g && want != want)) {
						bad++
					}
				}
			}
		}
		for y := 620; y < 700; y++ {
			for x := 0; x < cols; x++ {
				if g := got[y*cols+x]; g == g {
					bad++
				}
			}
		}
		t.Logf("left-right check %v: %d of %d kept pixels with a disparity, %d differ from cv2; counts %+v", lr, valid, kept*cols, bad, st)
		if bad != 0 || valid < kept*cols/2 {
			t.Errorf("left-right check %v: %d pixels differ from cv2 on the strips' rows (%d valid)", lr, bad, valid)
		}
		disp.Close()
	}

	// One strip over the whole image against the whole-image calls.
	one := []cvshim.Strip{{Row0: 0, Row1: rows, Top: 0, MinDisparity: aloeParams.MinDisparity, NumDisparities: aloeParams.NumDisparities}}
	sm, err := cvshim.NewStripMatcher(aloeParams, one, true)
	if err != nil {
		t.Fatal(err)
	}
	defer sm.Close()
	a, raw, b := gocv.NewMat(), gocv.NewMat(), gocv.NewMat()
	defer a.Close()
	defer raw.Close()
	defer b.Close()
	stA, err := sm.Compute(l, r, &a, aloeLRTolPx)
	if err != nil {
		t.Fatal(err)
	}
	whole, err := cvshim.NewStereoSGBM(aloeParams)
	if err != nil {
		t.Fatal(err)
	}
	defer whole.Close()
	stB, err := whole.ComputeChecked(l, r, &raw, aloeLRTolPx)
	if err != nil {
		t.Fatal(err)
	}
	lo, hi := int16((aloeParams.MinDisparity+1)*16), int16((aloeParams.MinDisparity+aloeParams.NumDisparities-1)*16)
	if err := cvshim.DisparityToFloat(raw, lo, hi, &b); err != nil {
		t.Fatal(err)
	}
	da, _ := a.DataPtrFloat32()
	db, _ := b.DataPtrFloat32()
	diff := 0
	for i := range da {
		if !(da[i] == db[i] || (da[i] != da[i] && db[i] != db[i])) {
			diff++
		}
	}
	if diff != 0 || stA != stB {
		t.Errorf("one strip differs from the whole-image match at %d pixels; counts %+v and %+v", diff, stA, stB)
	}

	// Bad strips are errors, not crashes.
	for _, bad := range [][]cvshim.Strip{
		nil,
		{{Row0: 10, Row1: 5, Top: 0, MinDisparity: 0, NumDisparities: 16}},
		{{Row0: 0, Row1: 50, Top: 0, MinDisparity: 0, NumDisparities: 20}},
		{{Row0: 0, Row1: 50, Top: 0, MinDisparity: 0, NumDisparities: 16}, {Row0: 40, Row1: 60, Top: 30, MinDisparity: 0, NumDisparities: 16}},
	} {
		if m, err := cvshim.NewStripMatcher(aloeParams, bad, false); err == nil {
			m.Close()
			t.Errorf("strips %+v accepted", bad)
		}
	}
	tall, err := cvshim.NewStripMatcher(aloeParams, []cvshim.Strip{{Row0: 0, Row1: rows + 1, MinDisparity: 0, NumDisparities: 16}}, false)
	if err != nil {
		t.Fatal(err)
	}
	defer tall.Close()
	if _, err := tall.Compute(l, r, &a, 1); err == nil {
		t.Error("strips below the image accepted")
	}
}
