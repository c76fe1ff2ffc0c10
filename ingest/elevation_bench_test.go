package ingest

import (
	"fmt"
	"io"
	"math"
	"math/rand/v2"
	"os"
	"path/filepath"
	"strconv"
	"sync"
	"testing"

	"crestspeed/internal/netcdf"
)

// Benchmark record: 512 x 512 cells, CRESTSPEED_BENCH_FRAMES frames (default
// 64), written once with the package writer (default deflate) into a cache
// directory under os.TempDir and reused by later runs.
const benchNx, benchNy = 512, 512

func benchFrames() int {
	if v, err := strconv.Atoi(os.Getenv("CRESTSPEED_BENCH_FRAMES")); err == nil && v >= 2 {
		return v
	}
	return 64
}

var (
	benchOnce sync.Once
	benchPath string
	benchErr  error
)

// benchFile returns the path of the cached benchmark record, making it if
// it is missing or has the wrong shape.
func benchFile(b *testing.B) string {
	b.Helper()
	benchOnce.Do(func() {
		nt := benchFrames()
		dir := filepath.Join(os.TempDir(), "crestspeed-bench")
		benchPath = filepath.Join(dir, fmt.Sprintf("elevation-%dx%dx%d.nc", benchNy, benchNx, nt))
		if s, err := OpenElevation(benchPath, ElevationOptions{}); err == nil {
			ok := len(s.Meta().Times) == nt
			s.Close()
			if ok {
				return
			}
		}
		if err := os.MkdirAll(dir, 0o755); err != nil {
			benchErr = err
			return
		}
		benchErr = makeBenchFile(benchPath, nt)
	})
	if benchErr != nil {
		b.Fatal(benchErr)
	}
	return benchPath
}

// makeBenchFile writes a sea of a few random cosine components plus 1 mm of
// noise, so that compression sees realistic data.
func makeBenchFile(path string, nt int) error {
	g := Grid{X: make([]float64, benchNx), Y: make([]float64, benchNy)}
	for i := range g.X {
		g.X[i] = 0.1 * float64(i)
	}
	for i := range g.Y {
		g.Y[i] = 0.1 * float64(i)
	}
	w, err := CreateElevation(path, g, WriteOptions{Title: "crestspeed benchmark record"})
	if err != nil {
		return err
	}
	defer w.Abort()
	rng := rand.New(rand.NewPCG(1, 2))
	type comp struct{ a, kx, ky, om, ph float64 }
	comps := make([]comp, 4)
	for i := range comps {
		k := 0.5 + 2*rng.Float64()
		th := 0.6 * (rng.Float64() - 0.5)
		comps[i] = comp{a: 0.1 + 0.2*rng.Float64(), kx: k * math.Cos(th), ky: k * math.Sin(th), om: math.Sqrt(9.81 * k), ph: 2 * math.Pi * rng.Float64()}
	}
	eta := make([]float32, benchNx*benchNy)
	for k := range nt {
		tk := 0.1 * float64(k)
		for iy, y := range g.Y {
			for ix, x := range g.X {
				v := 0.001 * rng.NormFloat64()
				for _, c := range comps {
					v += c.a * math.Cos(c.kx*x+c.ky*y-c.om*tk+c.ph)
				}
				eta[iy*benchNx+ix] = float32(v)
			}
		}
		if err := w.WriteFrame(tk, eta, nil); err != nil {
			return err
		}
	}
	return w.Commit()
}

func reportStream(b *testing.B, frames int) {
	sec := b.Elapsed().Seconds()
	if sec <= 0 || frames == 0 {
		return
	}
	b.ReportMetric(float64(frames)/sec, "frames/s")
	b.ReportMetric(float64(frames)*benchNx*benchNy*4/1e6/sec, "MB/s")
}

// BenchmarkStreamIngest reads frames through ElevationSource.Next (hyperslab
// read, fill/NaN masking, validity mask), rewinding at the end of the record.
// One op is one frame.
func BenchmarkStreamIngest(b *testing.B) {
	path := benchFile(b)
	s, err := OpenElevation(path, ElevationOptions{})
	if err != nil {
		b.Fatal(err)
	}
	defer s.Close()
	var f Frame
	frames := 0
	b.ReportAllocs()
	for b.Loop() {
		err := s.Next(&f)
		if err == io.EOF {
			s.Rewind()
			err = s.Next(&f)
		}
		if err != nil {
			b.Fatal(err)
		}
		frames++
	}
	reportStream(b, frames)
}

// BenchmarkStreamBareNetCDF reads the same frames with nothing but
// nc_get_vara_float through netcdf.File.ReadFloat32Slab: the floor that
// BenchmarkStreamIngest is measured against. One op is one frame.
func BenchmarkStreamBareNetCDF(b *testing.B) {
	path := benchFile(b)
	f, err := netcdf.Open(path)
	if err != nil {
		b.Fatal(err)
	}
	defer f.Close()
	nt, err := f.Dim("time")
	if err != nil {
		b.Fatal(err)
	}
	buf := make([]float32, benchNx*benchNy)
	start, count := []int{0, 0, 0}, []int{1, benchNy, benchNx}
	frames := 0
	b.ReportAllocs()
	for b.Loop() {
		start[0] = frames % nt
		if err := f.ReadFloat32Slab("eta", start, count, buf); err != nil {
			b.Fatal(err)
		}
		frames++
	}
	reportStream(b, frames)
}
