package ingest

import (
	"fmt"
	"io"
	"os"
	"os/exec"
	"path/filepath"
	"strconv"
	"sync"
	"testing"
	"time"

	"crestspeed/internal/netcdf"
)

// Benchmark record: 512 x 512 cells, CRESTSPEED_BENCH_FRAMES frames (default
// 300), in three layouts, made once into a cache folder under os.TempDir
// and reused by later runs:
//
//   - "netcdf4-python": what netCDF4-python (and xarray) write by default
//     for a (time, y, x) float32 array with zlib: chunks of 100 frames x
//     171 x 171, shuffle, deflate level 4;
//   - "classic": the same data as a NetCDF-3 classic file (contiguous
//     records, big-endian);
//   - "crestspeed": the project's own layout (CreateElevation: one frame
//     per chunk, shuffle and deflate 4).
//
// The sea is a sum of random cosines plus 1 mm of noise, so that the
// compressor sees realistic data.
const benchNx, benchNy = 512, 512

func benchFrames() int {
	if v, err := strconv.Atoi(os.Getenv("CRESTSPEED_BENCH_FRAMES")); err == nil && v >= 2 {
		return v
	}
	return 300
}

var (
	benchOnce  sync.Once
	benchPaths map[string]string
	benchErr   error
)

// benchLayouts are the layouts in the order they are reported.
var benchLayouts = []string{"netcdf4-python", "classic", "crestspeed"}

const benchScript = `
import sys, numpy as np, netCDF4
d, nt, ny, nx = sys.argv[1], int(sys.argv[2]), int(sys.argv[3]), int(sys.argv[4])
rng = np.random.default_rng(1)
x = 0.5 * np.arange(nx); y = 0.5 * np.arange(ny)
comps = []
for i in range(6):
    k = 0.3 + 1.2 * rng.random(); th = 0.8 * (rng.random() - 0.5)
    comps.append((0.1 + 0.25 * rng.random(), k * np.cos(th), k * np.sin(th), np.sqrt(9.81 * k), 2 * np.pi * rng.random()))
for fmt, name in [('NETCDF4', 'netcdf4-python'), ('NETCDF3_CLASSIC', 'classic')]:
    path = '%s/%s-%dx%dx%d.nc' % (d, name, ny, nx, nt)
    with netCDF4.Dataset(path + '.part', 'w', format=fmt) as ds:
        ds.createDimension('time', nt); ds.createDimension('y', ny); ds.createDimension('x', nx)
        t = ds.createVariable('time', 'f8', ('time',)); t.units = 'seconds since 2026-06-14T09:00:00Z'; t.axis = 'T'
        yv = ds.createVariable('y', 'f8', ('y',)); yv.units = 'm'; yv[:] = y
        xv = ds.createVariable('x', 'f8', ('x',)); xv.units = 'm'; xv[:] = x
        kw = {'zlib': True} if fmt == 'NETCDF4' else {}
        e = ds.createVariable('eta', 'f4', ('time', 'y', 'x'), **kw); e.units = 'm'
        for k0 in range(0, nt, 50):
            k1 = min(nt, k0 + 50)
            tt = 0.1 * np.arange(k0, k1)
            block = 0.001 * rng.standard_normal((k1 - k0, ny, nx))
            for a, kx, ky, om, ph in comps:
                block += a * np.cos(kx * x[None, None, :] + ky * y[None, :, None] - om * tt[:, None, None] + ph)
            e[k0:k1] = block.astype('f4')
            t[k0:k1] = tt
    import os; os.rename(path + '.part', path)
`

// benchFiles returns the paths of the cached benchmark records by layout,
// making those that are missing.
func benchFiles(b *testing.B) map[string]string {
	b.Helper()
	benchOnce.Do(func() {
		nt := benchFrames()
		dir := filepath.Join(os.TempDir(), "crestspeed-bench")
		if benchErr = os.MkdirAll(dir, 0o755); benchErr != nil {
			return
		}
		benchPaths = map[string]string{}
		for _, l := range benchLayouts {
			benchPaths[l] = filepath.Join(dir, fmt.Sprintf("%s-%dx%dx%d.nc", l, benchNy, benchNx, nt))
		}
		_, e1 := os.Stat(benchPaths["netcdf4-python"])
		_, e2 := os.Stat(benchPaths["classic"])
		if e1 != nil || e2 != nil {
			cmd := exec.Command(python, "-c", benchScript, dir, strconv.Itoa(nt), strconv.Itoa(benchNy), strconv.Itoa(benchNx))
			if out, err := cmd.CombinedOutput(); err != nil {
				benchErr = fmt.Errorf("making the benchmark records with netCDF4-python: %v\n%s", err, out)
				return
			}
		}
		if _, err := os.Stat(benchPaths["crestspeed"]); err != nil {
			benchErr = copyOwnLayout(benchPaths["classic"], benchPaths["crestspeed"])
		}
	})
	if benchErr != nil {
		b.Fatal(benchErr)
	}
	return benchPaths
}

// copyOwnLayout rewrites a record with the package writer.
func copyOwnLayout(src, dst string) error {
	s, err := OpenElevation(src, ElevationOptions{SpikeFactor: -1, MaxAbsElevationM: -1})
	if err != nil {
		return err
	}
	defer s.Close()
	m := s.Meta()
	w, err := CreateElevation(dst, m.Grid, WriteOptions{TimeUnits: m.TimeUnits, Title: "crestspeed benchmark record"})
	if err != nil {
		return err
	}
	defer w.Abort()
	var f Frame
	for {
		err := s.Next(&f)
		if err == io.EOF {
			break
		}
		if err != nil {
			return err
		}
		if err := w.WriteFrame(f.Time, f.Eta, nil); err != nil {
			return err
		}
	}
	return w.Commit()
}

// bareSlabs is the reference: the record read through the C library in
// chunk-aligned slabs (one chunk row along time per call; for contiguous
// files, as many frames per call as the source reads) into one buffer,
// with nothing else done.
type bareSlabs struct {
	f      *netcdf.File
	nt, nb int
	buf    []float32
}

func openBare(b *testing.B, path string, sourceBlock int) *bareSlabs {
	f, err := netcdf.Open(path)
	if err != nil {
		b.Fatal(err)
	}
	st, err := f.VarStorage("eta")
	if err != nil {
		b.Fatal(err)
	}
	nt, _ := f.Dim("time")
	nb := sourceBlock
	if st.Chunks != nil {
		nb = st.Chunks[0]
	}
	return &bareSlabs{f: f, nt: nt, nb: nb, buf: make([]float32, nb*benchNy*benchNx)}
}

func (r *bareSlabs) pass(b *testing.B) {
	for k := 0; k < r.nt; k += r.nb {
		n := min(r.nb, r.nt-k)
		if err := r.f.ReadFloat32Slab("eta", []int{k, 0, 0}, []int{n, benchNy, benchNx}, r.buf[:n*benchNy*benchNx]); err != nil {
			b.Fatal(err)
		}
	}
}

// BenchmarkReadLayouts reads each benchmark layout, in every iteration one
// whole pass through ElevationSource.Next (default settings: masking, the
// plausibility tests, read-ahead) and one whole bare pass (see bareSlabs),
// one after the other so that both see the same load. It reports frames/s
// and MB/s of each (MB of float32 elevations delivered) and the ratio of
// the source's throughput to the bare one; the target is at least 0.9.
//
//	go test ./ingest -run '^$' -bench ReadLayouts -benchtime 3x
func BenchmarkReadLayouts(b *testing.B) {
	paths := benchFiles(b)
	for _, l := range benchLayouts {
		b.Run(l, func(b *testing.B) {
			s, err := OpenElevation(paths[l], ElevationOptions{})
			if err != nil {
				b.Fatal(err)
			}
			defer s.Close()
			bare := openBare(b, paths[l], s.BlockFrames())
			defer bare.f.Close()
			var f Frame
			var tSrc, tBare time.Duration
			frames := 0
			srcPass := func() {
				s.Rewind()
				for {
					err := s.Next(&f)
					if err == io.EOF {
						break
					}
					if err != nil {
						b.Fatal(err)
					}
					frames++
				}
			}
			// Short passes are repeated, alternating source and bare, so
			// that each measurement spans about two seconds of load.
			t0 := time.Now()
			bare.pass(b)
			reps := max(1, int(time.Second/max(time.Since(t0), time.Millisecond)))
			for b.Loop() {
				for range reps {
					t0 := time.Now()
					srcPass()
					t1 := time.Now()
					bare.pass(b)
					tBare += time.Since(t1)
					tSrc += t1.Sub(t0)
				}
			}
			if frames == 0 || tSrc <= 0 || tBare <= 0 {
				return
			}
			n := float64(frames)
			mb := n * benchNx * benchNy * 4 / 1e6
			b.ReportMetric(n/tSrc.Seconds(), "src-frames/s")
			b.ReportMetric(mb/tSrc.Seconds(), "src-MB/s")
			b.ReportMetric(n/tBare.Seconds(), "bare-frames/s")
			b.ReportMetric(mb/tBare.Seconds(), "bare-MB/s")
			b.ReportMetric(tBare.Seconds()/tSrc.Seconds(), "ratio")
			b.ReportMetric(float64(s.BlockFrames()), "frames/call")
		})
	}
}

// BenchmarkStreamIngest reads frames of the project's own layout through
// ElevationSource.Next, rewinding at the end of the record. One op is one
// frame.
func BenchmarkStreamIngest(b *testing.B) {
	path := benchFiles(b)["crestspeed"]
	s, err := OpenElevation(path, ElevationOptions{})
	if err != nil {
		b.Fatal(err)
	}
	defer s.Close()
	var f Frame
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
	}
}
