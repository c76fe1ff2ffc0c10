package surface_test

import (
	"context"
	"encoding/binary"
	"fmt"
	"math"
	"os"
	"path/filepath"
	"testing"

	"gocv.io/x/gocv"

	"crestspeed/calib"
	"crestspeed/ingest"
	"crestspeed/internal/pyref"
	"crestspeed/samples"
	"crestspeed/surface"
)

// plainSGBMScript runs, with Debian's python3-opencv, a bare
// cv2.StereoSGBM call on each rectified pair of the input folder (the
// plain pipeline: one range from 0 to the footprint's largest disparity,
// no prewarp, no explicit left-right check) and writes the raw
// disparities.
const plainSGBMScript = `
import json, sys
import numpy as np, cv2
d = json.load(open(sys.argv[1]))
p = d['params']
m = cv2.StereoSGBM_create(minDisparity=p['MinDisparity'], numDisparities=p['NumDisparities'],
    blockSize=p['BlockSize'], P1=p['P1'], P2=p['P2'], disp12MaxDiff=p['Disp12MaxDiff'],
    preFilterCap=p['PreFilterCap'], uniquenessRatio=p['UniquenessRatio'],
    speckleWindowSize=p['SpeckleWindowSize'], speckleRange=p['SpeckleRange'], mode=p['Mode'])
for k in range(d['n']):
    L = cv2.imread('%s/l%03d.png' % (d['dir'], k), cv2.IMREAD_GRAYSCALE)
    R = cv2.imread('%s/r%03d.png' % (d['dir'], k), cv2.IMREAD_GRAYSCALE)
    m.compute(L, R).astype('<i2').tofile('%s/d%03d.bin' % (d['dir'], k))
print('{}')
`

// rangeErrors accumulates elevation errors against the truth by range.
type rangeErrors struct {
	edges            []float64
	sum, sum2        []float64
	n                []int
	common2, commonN []float64
}

func newRangeErrors(edges []float64) *rangeErrors {
	k := len(edges) - 1
	return &rangeErrors{edges: edges, sum: make([]float64, k), sum2: make([]float64, k), n: make([]int, k),
		common2: make([]float64, k), commonN: make([]float64, k)}
}

func (e *rangeErrors) bin(x, y float64) int {
	r := math.Hypot(x, y)
	for b := 0; b+1 < len(e.edges); b++ {
		if r >= e.edges[b] && r < e.edges[b+1] {
			return b
		}
	}
	return -1
}

func (e *rangeErrors) rms(b int) float64       { return math.Sqrt(e.sum2[b] / float64(e.n[b])) }
func (e *rangeErrors) commonRMS(b int) float64 { return math.Sqrt(e.common2[b] / e.commonN[b]) }

// TestNarrowBandAgainstPlainSGBM: the elevation error of the default
// pipeline (disparity band sized by the sea state, prewarp, strips,
// left-right check) against the rendered truth is no larger, range by
// range, than that of the plain pipeline a user would write: a bare
// cv2.StereoSGBM call (Debian's python3-opencv, the same matcher
// parameters) on the plainly rectified pair over 0 to the footprint's
// largest disparity, its disparities reprojected and gridded the same way.
// Both use the rig's own sea plane and the truth's grid, on 30 pairs of the
// test deployment spread over its 120 s; the RMS is compared over each
// pipeline's own cells and over the cells both have.
func TestNarrowBandAgainstPlainSGBM(t *testing.T) {
	if testing.Short() {
		t.Skip("uses the rendered test deployment")
	}
	dir, _ := cachedDeployment(t, "main-v3", testDeploymentSpec())
	truthPath := filepath.Join(dir, samples.DeploymentTruthElevation)
	rig, err := calib.LoadRig(filepath.Join(dir, samples.DeploymentRig))
	if err != nil {
		t.Fatal(err)
	}
	ts, err := ingest.OpenElevation(truthPath, ingest.ElevationOptions{})
	if err != nil {
		t.Fatal(err)
	}
	tg := ts.Meta().Grid
	var truth [][]float32
	var times []float64
	var f ingest.Frame
	for k := 0; ts.Next(&f) == nil; k++ {
		if k%24 == 0 {
			truth = append(truth, append([]float32(nil), f.Eta...))
			times = append(times, f.Time)
		}
	}
	ts.Close()
	n := len(times)
	pairPaths := func(k int) (string, string) {
		name := fmt.Sprintf("%09d.png", int64(math.Round(times[k]*1000)))
		return filepath.Join(dir, samples.DeploymentFramesDir, "left_"+name), filepath.Join(dir, samples.DeploymentFramesDir, "right_"+name)
	}

	// The default pipeline, settled on the record with the rig's plane.
	opt := surface.DefaultOptions()
	x0, x1, y0, y1 := tg.X[0], tg.X[len(tg.X)-1], tg.Y[0], tg.Y[len(tg.Y)-1]
	opt.Grid.X0, opt.Grid.X1, opt.Grid.Y0, opt.Grid.Y1, opt.Grid.D = &x0, &x1, &y0, &y1, tg.Dx()
	open := func() (ingest.StereoSource, error) {
		return ingest.OpenPairs(ingest.PairSpec{Dir: filepath.Join(dir, samples.DeploymentFramesDir)})
	}
	geom, err := surface.Settle(context.Background(), rig, open, opt)
	if err != nil {
		t.Fatal(err)
	}
	ours, err := surface.New(rig, opt)
	if err != nil {
		t.Fatal(err)
	}
	defer ours.Close()
	if err := surface.ApplyGeometry(ours, geom); err != nil {
		t.Fatal(err)
	}
	wo, err := ours.NewWorker()
	if err != nil {
		t.Fatal(err)
	}
	defer wo.Close()

	// The plain pipeline: rectified without prewarp, one range.
	po := surface.DefaultOptions()
	po.Prewarp = false
	plain, err := surface.New(rig, po)
	if err != nil {
		t.Fatal(err)
	}
	defer plain.Close()
	if err := plain.SetGrid(tg); err != nil {
		t.Fatal(err)
	}
	maxD := 0.0
	for v := 0; v < rig.Size.Y; v += 2 {
		for u := 0; u < rig.Size.X; u += 2 {
			maxD = math.Max(maxD, plain.PlaneDisparity(float64(u), float64(v)))
		}
	}
	params := surface.MatcherParams(po, 0, 16*int(math.Ceil(maxD/16)))
	wp, err := plain.NewWorker()
	if err != nil {
		t.Fatal(err)
	}
	defer wp.Close()
	tmp := t.TempDir()
	for k := 0; k < n; k++ {
		lp, rp := pairPaths(k)
		l, r := gocv.IMRead(lp, gocv.IMReadGrayScale), gocv.IMRead(rp, gocv.IMReadGrayScale)
		if err := wp.Rectify(l, r); err != nil {
			t.Fatal(err)
		}
		l.Close()
		r.Close()
		rl, rr := wp.Rectified()
		gocv.IMWrite(filepath.Join(tmp, fmt.Sprintf("l%03d.png", k)), rl)
		gocv.IMWrite(filepath.Join(tmp, fmt.Sprintf("r%03d.png", k)), rr)
	}
	var none struct{}
	pyref.JSON(t, plainSGBMScript, map[string]any{"dir": tmp, "n": n, "params": params}, &none)

	edges := []float64{8, 12, 16, 20, 24, 28}
	eo, ep := newRangeErrors(edges), newRangeErrors(edges)
	W, H := rig.Size.X, rig.Size.Y
	var mo, mp surface.Map
	df := make([]float32, W*H)
	for k := 0; k < n; k++ {
		lp, rp := pairPaths(k)
		l, r := gocv.IMRead(lp, gocv.IMReadGrayScale), gocv.IMRead(rp, gocv.IMReadGrayScale)
		if err := wo.Reconstruct(l, r, &mo); err != nil {
			t.Fatal(err)
		}
		l.Close()
		r.Close()
		data, err := os.ReadFile(filepath.Join(tmp, fmt.Sprintf("d%03d.bin", k)))
		if err != nil || len(data) != 2*W*H {
			t.Fatalf("cv2 disparity %d: %v (%d bytes)", k, err, len(data))
		}
		for i := range df {
			raw := int16(binary.LittleEndian.Uint16(data[2*i:]))
			df[i] = float32(math.NaN())
			if raw > int16(params.MinDisparity*16) {
				df[i] = float32(raw) / 16
			}
		}
		if err := surface.SetDisparityPx(wp, df); err != nil {
			t.Fatal(err)
		}
		if err := surface.Bin(wp, &mp); err != nil {
			t.Fatal(err)
		}
		for j, y := range tg.Y {
			for i, x := range tg.X {
				b := eo.bin(x, y)
				if b < 0 {
					continue
				}
				c := j*len(tg.X) + i
				tv := float64(truth[k][c])
				a, p := float64(mo.Eta[c]), float64(mp.Eta[c])
				for _, s := range []struct {
					e *rangeErrors
					v float64
				}{{eo, a}, {ep, p}} {
					if s.v == s.v {
						s.e.sum[b] += s.v - tv
						s.e.sum2[b] += (s.v - tv) * (s.v - tv)
						s.e.n[b]++
					}
				}
				if a == a && p == p {
					eo.common2[b] += (a - tv) * (a - tv)
					ep.common2[b] += (p - tv) * (p - tv)
					eo.commonN[b]++
					ep.commonN[b]++
				}
			}
		}
	}
	t.Logf("ours: σ_η %.4f m, band ±%.3f m, strips %v; plain: %d–%d px", geom.SeaSigmaM, geom.Band.HalfWidthM, geom.Band.Strips, params.MinDisparity, params.MinDisparity+params.NumDisparities-1)
	for b := 0; b+1 < len(edges); b++ {
		t.Logf("range %2.0f–%2.0f m: ours %6d cells, RMS %.4f m (bias %+.4f); plain cv2 %6d cells, RMS %.4f m (bias %+.4f); on the %.0f common cells %.4f against %.4f m",
			edges[b], edges[b+1], eo.n[b], eo.rms(b), eo.sum[b]/float64(eo.n[b]), ep.n[b], ep.rms(b), ep.sum[b]/float64(ep.n[b]), eo.commonN[b], eo.commonRMS(b), ep.commonRMS(b))
		if eo.rms(b) > ep.rms(b) || eo.commonRMS(b) > ep.commonRMS(b) {
			t.Errorf("range %g–%g m: RMS error %.4f m (common cells %.4f m) above the plain pipeline's %.4f m (%.4f m)", edges[b], edges[b+1], eo.rms(b), eo.commonRMS(b), ep.rms(b), ep.commonRMS(b))
		}
		if eo.n[b] < ep.n[b]*9/10 {
			t.Errorf("range %g–%g m: %d cells with elevations against the plain pipeline's %d", edges[b], edges[b+1], eo.n[b], ep.n[b])
		}
	}
}
