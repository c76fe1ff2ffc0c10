package surface_test

import (
	"context"
	"fmt"
	"image"
	"math"
	"os"
	"path/filepath"
	"runtime"
	"strconv"
	"strings"
	"syscall"
	"testing"
	"time"

	"gocv.io/x/gocv"

	"crestspeed/calib"
	"crestspeed/ingest"
	"crestspeed/internal/cvshim"
	"crestspeed/internal/pyref"
	"crestspeed/samples"
	"crestspeed/surface"
)

// benchDeployment is the demo deployment at the given image size (the
// rig scaled to it), 8 frames, rendered once and cached.
func benchDeployment(b *testing.B, size image.Point) (string, *calib.Rig, ingest.Grid) {
	d := samples.DemoDeployment()
	d.Frames = 8
	d.CalibrationViews = 1
	d.ImageSize = size
	dir, _ := cachedDeployment(b, fmt.Sprintf("bench-%d-v1", size.X), d)
	rig, err := calib.LoadRig(filepath.Join(dir, samples.DeploymentRig))
	if err != nil {
		b.Fatal(err)
	}
	src, err := ingest.OpenElevation(filepath.Join(dir, samples.DeploymentTruthElevation), ingest.ElevationOptions{})
	if err != nil {
		b.Fatal(err)
	}
	g := src.Meta().Grid
	src.Close()
	return dir, rig, g
}

// benchOptions reconstructs on the truth grid at 0.25 m with the rig's own
// sea plane, so that only the reconstruction pass runs.
func benchOptions(g ingest.Grid, workers int) surface.Options {
	opt := surface.DefaultOptions()
	x0, x1, y0, y1 := g.X[0], g.X[len(g.X)-1], g.Y[0], g.Y[len(g.Y)-1]
	opt.Grid.X0, opt.Grid.X1, opt.Grid.Y0, opt.Grid.Y1 = &x0, &x1, &y0, &y1
	opt.Grid.D = g.Dx()
	opt.Workers = workers
	return opt
}

// BenchmarkStages times each stage of one pair on one core, at 1280×1024
// and 2448×2048 px:
// remap, a bare SGBM call over the strips' union range on the whole image,
// matching as configured (SGBM in strips with the left-right check and the
// conversion to pixels), reprojection of each point to the world frame
// with gridding (the world transform is folded into Q; "world-transform"
// times it as a separate pass for comparison), writing the map, and the
// whole pair.
func BenchmarkStages(b *testing.B) {
	for _, size := range []image.Point{{1280, 1024}, {2448, 2048}} {
		b.Run(fmt.Sprintf("%dx%d", size.X, size.Y), func(b *testing.B) { benchStages(b, size) })
	}
}

func benchStages(b *testing.B, size image.Point) {
	dir, rig, g := benchDeployment(b, size)
	if err := cvshim.SetNumThreads(1); err != nil {
		b.Fatal(err)
	}
	rec, err := surface.New(rig, benchOptions(g, 1))
	if err != nil {
		b.Fatal(err)
	}
	defer rec.Close()
	grid := g
	if err := rec.SetGrid(grid); err != nil {
		b.Fatal(err)
	}
	w, err := rec.NewWorker()
	if err != nil {
		b.Fatal(err)
	}
	defer w.Close()
	l := gocv.IMRead(filepath.Join(dir, "frames", samples.FrameName(samples.LeftSide, 0)), gocv.IMReadGrayScale)
	r := gocv.IMRead(filepath.Join(dir, "frames", samples.FrameName(samples.RightSide, 0)), gocv.IMReadGrayScale)
	defer l.Close()
	defer r.Close()
	var m surface.Map
	if err := w.Reconstruct(l, r, &m); err != nil {
		b.Fatal(err)
	}
	b.Logf("%d×%d pair: disparity range %v, %d of %d cells", size.X, size.Y, w.SGBMParams(), m.Stats.Cells, len(m.Eta))
	b.Run("remap", func(b *testing.B) {
		for b.Loop() {
			if err := w.Rectify(l, r); err != nil {
				b.Fatal(err)
			}
		}
	})
	rl, rr := w.Rectified()
	b.Run("sgbm-bare", func(b *testing.B) {
		s, err := cvshim.NewStereoSGBM(w.SGBMParams())
		if err != nil {
			b.Fatal(err)
		}
		defer s.Close()
		d := gocv.NewMat()
		defer d.Close()
		for b.Loop() {
			if err := s.Compute(rl, rr, &d); err != nil {
				b.Fatal(err)
			}
		}
	})
	b.Run("match", func(b *testing.B) {
		for b.Loop() {
			if _, err := w.Match(); err != nil {
				b.Fatal(err)
			}
		}
	})
	b.Run("world-transform", func(b *testing.B) {
		// A separate rotation + translation of every point, as it would
		// cost if it were not folded into Q.
		wf := rec.World()
		pts := make([]float32, 3*rig.Size.X*rig.Size.Y)
		for i := range pts {
			pts[i] = float32(i%97) * 0.1
		}
		R, T := wf.R, wf.T
		for b.Loop() {
			for i := 0; i+2 < len(pts); i += 3 {
				x, y, z := float64(pts[i]), float64(pts[i+1]), float64(pts[i+2])
				pts[i] = float32(R[0]*x + R[1]*y + R[2]*z + T[0])
				pts[i+1] = float32(R[3]*x + R[4]*y + R[5]*z + T[1])
				pts[i+2] = float32(R[6]*x + R[7]*y + R[8]*z + T[2])
			}
		}
	})
	b.Run("reproject+grid", func(b *testing.B) {
		for b.Loop() {
			if err := surface.Bin(w, &m); err != nil {
				b.Fatal(err)
			}
		}
	})
	b.Run("write", func(b *testing.B) {
		sink := &surface.FileSink{Path: filepath.Join(b.TempDir(), "maps.nc"), PointsPath: filepath.Join(b.TempDir(), "points.nc")}
		setup := &surface.Setup{Rig: rig, Grid: grid, Options: rec.Options()}
		if err := sink.Start(setup); err != nil {
			b.Fatal(err)
		}
		defer sink.Abort()
		t := 0.0
		for b.Loop() {
			m.Time = t
			t += 0.1
			if err := sink.Write(&m); err != nil {
				b.Fatal(err)
			}
		}
	})
	b.Run("pair", func(b *testing.B) {
		for b.Loop() {
			if err := w.Reconstruct(l, r, &m); err != nil {
				b.Fatal(err)
			}
		}
	})
}

// discard is a Sink that keeps nothing.
type discard struct{ n int }

func (d *discard) Start(*surface.Setup) error { return nil }
func (d *discard) Write(m *surface.Map) error {
	if math.IsNaN(float64(m.Time)) {
		return nil
	}
	d.n++
	return nil
}

// BenchmarkFramesPerSecond runs the reconstruction of the 8 pairs of the
// 1280×1024 and 2448×2048 px bench deployments with 1 and 2 workers
// (OpenCV gets cores/workers threads), the geometry settled once
// beforehand (its time is reported apart), and reports pairs per second,
// image decoding included.
func BenchmarkFramesPerSecond(b *testing.B) {
	for _, size := range []image.Point{{1280, 1024}, {2448, 2048}} {
		dir, rig, _ := benchDeployment(b, size)
		open := func() (ingest.StereoSource, error) {
			return ingest.OpenPairs(ingest.PairSpec{Dir: filepath.Join(dir, samples.DeploymentFramesDir)})
		}
		opt := surface.DefaultOptions()
		opt.Plane.Frames = 8
		opt.Workers = runtime.NumCPU()
		t0 := time.Now()
		geom, err := surface.Settle(context.Background(), rig, open, opt)
		if err != nil {
			b.Fatal(err)
		}
		settle := time.Since(t0)
		for _, workers := range []int{1, 2} {
			b.Run(fmt.Sprintf("%dx%d/workers=%d", size.X, size.Y, workers), func(b *testing.B) {
				pairs := 0
				o := opt
				o.Workers = workers
				resetPeakRSS()
				for b.Loop() {
					var d discard
					if _, err := surface.ReconstructRange(context.Background(), rig, open, geom, o, 0, geom.RecordPairs, &d); err != nil {
						b.Fatal(err)
					}
					pairs += d.n
				}
				b.ReportMetric(float64(pairs)/b.Elapsed().Seconds(), "pairs/s")
				b.ReportMetric(settle.Seconds(), "settle-s")
				b.ReportMetric(peakRSSMB(), "peak-RSS-MB")
			})
		}
	}
}

// plainTimingScript times, with Debian's python3-opencv, a bare
// cv2.StereoSGBM call on each plainly rectified pair of the folder: the
// best of reps calls per pair, wall and CPU seconds, with OpenCV's default
// thread count and with one thread.
const plainTimingScript = `
import json, sys, time, os
import cv2
d = json.load(open(sys.argv[1]))
p = d['params']
out = {}
pairs = [(cv2.imread('%s/l%03d.png' % (d['dir'], k), cv2.IMREAD_GRAYSCALE),
          cv2.imread('%s/r%03d.png' % (d['dir'], k), cv2.IMREAD_GRAYSCALE)) for k in range(d['n'])]
for name, threads in (('default', d['threads']), ('one', 1)):
    cv2.setNumThreads(threads)
    m = cv2.StereoSGBM_create(minDisparity=p['MinDisparity'], numDisparities=p['NumDisparities'],
        blockSize=p['BlockSize'], P1=p['P1'], P2=p['P2'], disp12MaxDiff=p['Disp12MaxDiff'],
        preFilterCap=p['PreFilterCap'], uniquenessRatio=p['UniquenessRatio'],
        speckleWindowSize=p['SpeckleWindowSize'], speckleRange=p['SpeckleRange'], mode=p['Mode'])
    wall, cpu = 0.0, 0.0
    for L, R in pairs:
        bw, bc = 1e30, 1e30
        for _ in range(d['reps']):
            t0, c0 = time.perf_counter(), time.process_time()
            m.compute(L, R)
            bw, bc = min(bw, time.perf_counter() - t0), min(bc, time.process_time() - c0)
        wall += bw
        cpu += bc
    out[name] = dict(wall=wall / len(pairs), cpu=cpu / len(pairs))
print(json.dumps(out))
`

type plainTiming struct {
	Default struct{ Wall, CPU float64 } `json:"default"`
	One     struct{ Wall, CPU float64 } `json:"one"`
}

// resetPeakRSS resets the process's peak resident set (Linux: writing 5 to
// /proc/self/clear_refs), so that peakRSSMB measures from here.
func resetPeakRSS() { os.WriteFile("/proc/self/clear_refs", []byte("5"), 0o644) }

// peakRSSMB is the process's peak resident set since the last reset, MB
// (VmHWM of /proc/self/status; NaN where it cannot be read).
func peakRSSMB() float64 {
	b, err := os.ReadFile("/proc/self/status")
	if err != nil {
		return math.NaN()
	}
	for _, line := range strings.Split(string(b), "\n") {
		if f := strings.Fields(line); len(f) >= 2 && f[0] == "VmHWM:" {
			kb, err := strconv.ParseFloat(f[1], 64)
			if err == nil {
				return kb / 1024
			}
		}
	}
	return math.NaN()
}

// cpuSeconds returns the process's user and system CPU time.
func cpuSeconds() float64 {
	var ru syscall.Rusage
	if err := syscall.Getrusage(syscall.RUSAGE_SELF, &ru); err != nil {
		return math.NaN()
	}
	return float64(ru.Utime.Sec+ru.Stime.Sec) + float64(ru.Utime.Usec+ru.Stime.Usec)/1e6
}

// BenchmarkVersusPlainSGBM compares, side by side in one run, the
// reconstruction of a pair (rectification with the prewarp, matching in
// strips over the band the sea state asks for with the left-right check,
// reprojection, gridding, outlier test: Worker.Reconstruct, one worker,
// OpenCV on all cores) with a bare cv2.StereoSGBM call (Debian's
// python3-opencv, the same matcher parameters) on the plainly rectified
// pair over the range a plain pipeline needs, 0 to the footprint's largest
// disparity; at 1280×1024 and 2448×2048 px on the demo sea (Hs 1.3 m,
// 13.5 m up). cv2 is timed before and after ours and the better of the two
// taken. Metrics: seconds per pair (wall) of ours and of cv2 with its
// default threads and with one, their ratio, and the CPU seconds of each.
func BenchmarkVersusPlainSGBM(b *testing.B) {
	for _, size := range []image.Point{{1280, 1024}, {2448, 2048}} {
		b.Run(fmt.Sprintf("%dx%d", size.X, size.Y), func(b *testing.B) { benchVersus(b, size) })
	}
}

func benchVersus(b *testing.B, size image.Point) {
	dir, rig, _ := benchDeployment(b, size)
	open := func() (ingest.StereoSource, error) {
		return ingest.OpenPairs(ingest.PairSpec{Dir: filepath.Join(dir, samples.DeploymentFramesDir)})
	}
	opt := surface.DefaultOptions()
	opt.Plane.Frames = 8
	opt.Workers = runtime.NumCPU()
	geom, err := surface.Settle(context.Background(), rig, open, opt)
	if err != nil {
		b.Fatal(err)
	}
	if err := cvshim.SetNumThreads(runtime.NumCPU()); err != nil {
		b.Fatal(err)
	}
	n := 3
	if size.X > 2000 {
		n = 2
	}
	left, right, _ := deploymentPairs(b, dir, n, samples.DemoDeployment().FPS)
	ls, rs := make([]gocv.Mat, n), make([]gocv.Mat, n)
	for k := range ls {
		ls[k] = gocv.IMRead(left[k], gocv.IMReadGrayScale)
		rs[k] = gocv.IMRead(right[k], gocv.IMReadGrayScale)
		defer ls[k].Close()
		defer rs[k].Close()
	}
	// The plain pipeline's rectified pairs and range.
	po := surface.DefaultOptions()
	po.Prewarp = false
	plain, err := surface.New(rig, po)
	if err != nil {
		b.Fatal(err)
	}
	defer plain.Close()
	maxD := 0.0
	for v := 0; v < rig.Size.Y; v += 2 {
		for u := 0; u < rig.Size.X; u += 2 {
			maxD = math.Max(maxD, plain.PlaneDisparity(float64(u), float64(v)))
		}
	}
	params := surface.MatcherParams(po, 0, 16*int(math.Ceil(maxD/16)))
	wp, err := plain.NewWorker()
	if err != nil {
		b.Fatal(err)
	}
	defer wp.Close()
	tmp := b.TempDir()
	for k := range ls {
		if err := wp.Rectify(ls[k], rs[k]); err != nil {
			b.Fatal(err)
		}
		rl, rr := wp.Rectified()
		gocv.IMWrite(filepath.Join(tmp, fmt.Sprintf("l%03d.png", k)), rl)
		gocv.IMWrite(filepath.Join(tmp, fmt.Sprintf("r%03d.png", k)), rr)
	}
	rec, err := surface.New(rig, opt)
	if err != nil {
		b.Fatal(err)
	}
	defer rec.Close()
	if err := surface.ApplyGeometry(rec, geom); err != nil {
		b.Fatal(err)
	}
	w, err := rec.NewWorker()
	if err != nil {
		b.Fatal(err)
	}
	defer w.Close()
	minD, numD := rec.DisparityRange()
	b.Logf("%v: σ_η %.3f m, band ±%.2f m, %d strips %v (union %d+%d px, work %.2f of one range); plain range 0–%d px; grid %d × %d of %g m",
		size, geom.SeaSigmaM, geom.Band.HalfWidthM, len(geom.Band.Strips), geom.Band.Strips, minD, numD,
		surface.StripWork(geom.Band.Strips, rig.Size.X, rig.Size.Y), params.NumDisparities-1, geom.Grid.Nx(), geom.Grid.Ny(), geom.Grid.Dx())
	cv2 := func() plainTiming {
		var pt plainTiming
		pyref.JSON(b, plainTimingScript, map[string]any{"dir": tmp, "n": n, "params": params, "reps": 2, "threads": runtime.NumCPU()}, &pt)
		return pt
	}
	var ours, oursCPU, cvWall, cvCPU, cvOne, cvOneCPU float64
	var m surface.Map
	for b.Loop() {
		a := cv2()
		var wall, cpu float64
		for k := range ls {
			bw, bc := math.Inf(1), math.Inf(1)
			for rep := 0; rep < 2; rep++ {
				t0, c0 := time.Now(), cpuSeconds()
				if err := w.Reconstruct(ls[k], rs[k], &m); err != nil {
					b.Fatal(err)
				}
				bw, bc = math.Min(bw, time.Since(t0).Seconds()), math.Min(bc, cpuSeconds()-c0)
			}
			wall += bw
			cpu += bc
		}
		c := cv2()
		ours, oursCPU = wall/float64(n), cpu/float64(n)
		cvWall, cvCPU = math.Min(a.Default.Wall, c.Default.Wall), math.Min(a.Default.CPU, c.Default.CPU)
		cvOne, cvOneCPU = math.Min(a.One.Wall, c.One.Wall), math.Min(a.One.CPU, c.One.CPU)
	}
	b.ReportMetric(ours, "ours-s/pair")
	b.ReportMetric(cvWall, "cv2-s/pair")
	b.ReportMetric(cvOne, "cv2-1thread-s/pair")
	b.ReportMetric(ours/cvWall, "ratio")
	b.ReportMetric(oursCPU, "ours-cpu-s/pair")
	b.ReportMetric(cvCPU, "cv2-cpu-s/pair")
	b.ReportMetric(cvOneCPU, "cv2-1thread-cpu-s/pair")
	b.ReportMetric(float64(numD), "union-disparities")
	b.ReportMetric(float64(params.NumDisparities), "cv2-disparities")
}
