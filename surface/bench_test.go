package surface_test

import (
	"context"
	"fmt"
	"image"
	"math"
	"path/filepath"
	"testing"

	"gocv.io/x/gocv"

	"crestspeed/calib"
	"crestspeed/ingest"
	"crestspeed/internal/cvshim"
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
// remap, the bare SGBM call, matching as configured (SGBM with the
// left-right check and the conversion to pixels), reprojection to world
// points (the world transform is folded into Q, so it costs nothing
// there; "world-transform" times it as a separate pass for comparison),
// gridding, writing the map, and the whole pair.
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
	b.Run("reproject", func(b *testing.B) {
		for b.Loop() {
			if err := surface.ReprojectWorld(w); err != nil {
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
	b.Run("grid", func(b *testing.B) {
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

// BenchmarkFramesPerSecond runs the reconstruction pass over 8 pairs of
// 1280×1024 px with 1 and 2 workers (OpenCV gets cores/workers threads)
// and reports pairs per second.
func BenchmarkFramesPerSecond(b *testing.B) {
	dir, rig, g := benchDeployment(b, image.Pt(1280, 1024))
	open := func() (ingest.StereoSource, error) {
		return ingest.OpenPairs(ingest.PairSpec{Dir: filepath.Join(dir, samples.DeploymentFramesDir)})
	}
	for _, workers := range []int{1, 2} {
		b.Run(map[int]string{1: "workers=1", 2: "workers=2"}[workers], func(b *testing.B) {
			pairs := 0
			for b.Loop() {
				var d discard
				if _, err := surface.Run(context.Background(), rig, open, benchOptions(g, workers), &d); err != nil {
					b.Fatal(err)
				}
				pairs += d.n
			}
			b.ReportMetric(float64(pairs)/b.Elapsed().Seconds(), "pairs/s")
		})
	}
}
