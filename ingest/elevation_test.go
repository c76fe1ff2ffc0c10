package ingest

import (
	"encoding/binary"
	"io"
	"math"
	"os"
	"os/exec"
	"path/filepath"
	"slices"
	"strings"
	"testing"

	"crestspeed/internal/netcdf"
)

const python = "/usr/bin/python3"

// runPython runs a Python snippet with Debian's python3 (numpy, netCDF4).
// The test is skipped when /usr/bin/python3 is absent; a missing module is a
// setup error and fails the test.
func runPython(t *testing.T, script string, args ...string) []byte {
	t.Helper()
	if _, err := os.Stat(python); err != nil {
		t.Skip("/usr/bin/python3 is absent; run scripts/setup-deps")
	}
	cmd := exec.Command(python, append([]string{"-c", script}, args...)...)
	var stderr strings.Builder
	cmd.Stderr = &stderr
	out, err := cmd.Output()
	if err != nil {
		t.Fatalf("python failed (are python3-numpy and python3-netcdf4 installed? run scripts/setup-deps): %v\n%s", err, stderr.String())
	}
	return out
}

// readF32 and readF64 read little-endian binary arrays written by numpy.
func readF32(t *testing.T, path string) []float32 {
	t.Helper()
	b, err := os.ReadFile(path)
	if err != nil {
		t.Fatal(err)
	}
	v := make([]float32, len(b)/4)
	for i := range v {
		v[i] = math.Float32frombits(binary.LittleEndian.Uint32(b[4*i:]))
	}
	return v
}

func readF64(t *testing.T, path string) []float64 {
	t.Helper()
	b, err := os.ReadFile(path)
	if err != nil {
		t.Fatal(err)
	}
	v := make([]float64, len(b)/8)
	for i := range v {
		v[i] = math.Float64frombits(binary.LittleEndian.Uint64(b[8*i:]))
	}
	return v
}

// sameF32 reports whether a and b hold the same float32 values, NaN equal
// to NaN.
func sameF32(a, b float32) bool {
	return a == b || (a != a && b != b)
}

// testField is a deterministic test surface: a travelling cosine plus a
// slope, with a few unknown cells.
func testField(k, iy, ix int) float32 {
	if (k+iy+ix)%7 == 3 {
		return float32(math.NaN())
	}
	return float32(0.4*math.Cos(0.9*float64(ix)-1.3*float64(k)) + 0.05*float64(iy) - 0.01*float64(k))
}

// writeTestFile writes nt frames of testField on an nx by ny grid with the
// package writer and returns the path and the data written.
func writeTestFile(t *testing.T, dir string, nt, ny, nx int, opt WriteOptions) (string, Grid, []float64, []float32, []uint8) {
	t.Helper()
	g := Grid{X: make([]float64, nx), Y: make([]float64, ny)}
	for i := range g.X {
		g.X[i] = -2 + 0.25*float64(i)
	}
	for i := range g.Y {
		g.Y[i] = 10 + 0.5*float64(i)
	}
	path := filepath.Join(dir, "elev.nc")
	w, err := CreateElevation(path, g, opt)
	if err != nil {
		t.Fatal(err)
	}
	defer w.Abort()
	times := make([]float64, nt)
	eta := make([]float32, nt*ny*nx)
	var foam []uint8
	if opt.WithFoam {
		foam = make([]uint8, nt*ny*nx)
	}
	for k := range nt {
		times[k] = 1000 + 0.125*float64(k)
		fr := eta[k*ny*nx : (k+1)*ny*nx]
		for iy := range ny {
			for ix := range nx {
				fr[iy*nx+ix] = testField(k, iy, ix)
			}
		}
		var fm []uint8
		if foam != nil {
			fm = foam[k*ny*nx : (k+1)*ny*nx]
			for i := range fm {
				if fr[i] > 0.3 {
					fm[i] = 1
				}
			}
		}
		if err := w.WriteFrame(times[k], fr, fm); err != nil {
			t.Fatal(err)
		}
	}
	if err := w.Commit(); err != nil {
		t.Fatal(err)
	}
	return path, g, times, eta, foam
}

// TestRoundTrip writes frames with CreateElevation and reads them back with
// OpenElevation (identity of a round trip).
func TestRoundTrip(t *testing.T) {
	const nt, ny, nx = 5, 4, 6
	opt := WriteOptions{DepthM: 7.5, Title: "round trip", WithFoam: true, TimeUnits: "seconds since 2026-06-01T00:00:00Z",
		Attrs: map[string]string{"institution": "test bench", "history": "earlier step"}}
	path, _, times, eta, foam := writeTestFile(t, t.TempDir(), nt, ny, nx, opt)
	s, err := OpenElevation(path, ElevationOptions{})
	if err != nil {
		t.Fatal(err)
	}
	defer s.Close()
	m := s.Meta()
	if m.Grid.Nx() != nx || m.Grid.Ny() != ny || m.Grid.Dx() != 0.25 || m.Grid.Dy() != 0.5 {
		t.Errorf("grid %+v", m.Grid)
	}
	if m.DepthM != 7.5 || !m.HasFoam || m.Title != "round trip" || m.TimeUnits != opt.TimeUnits {
		t.Errorf("meta depth %v foam %v title %q units %q", m.DepthM, m.HasFoam, m.Title, m.TimeUnits)
	}
	if m.Attrs["institution"] != "test bench" || m.Attrs["Conventions"] != "CF-1.8, ACDD-1.3" || !strings.HasPrefix(m.Attrs["history"], "earlier step\n") {
		t.Errorf("attrs %v", m.Attrs)
	}
	if math.Abs(s.FrameInterval()-0.125) > 1e-12 || len(s.Gaps()) != 0 || len(s.Skipped()) != 0 {
		t.Errorf("interval %v gaps %v skipped %v", s.FrameInterval(), s.Gaps(), s.Skipped())
	}
	for pass := range 2 {
		var f Frame
		for k := range nt {
			if err := s.Next(&f); err != nil {
				t.Fatalf("pass %d frame %d: %v", pass, k, err)
			}
			if f.Index != k || f.Time != times[k] {
				t.Errorf("frame %d: index %d time %v", k, f.Index, f.Time)
			}
			for i := range f.Eta {
				w := eta[k*ny*nx+i]
				if !sameF32(f.Eta[i], w) || f.Valid[i] != !math.IsNaN(float64(w)) || f.Foam[i] != foam[k*ny*nx+i] {
					t.Fatalf("frame %d cell %d: eta %v valid %v foam %d; want %v, %d", k, i, f.Eta[i], f.Valid[i], f.Foam[i], w, foam[k*ny*nx+i])
				}
			}
		}
		if err := s.Next(&f); err != io.EOF {
			t.Errorf("after the last frame: %v, want io.EOF", err)
		}
		s.Rewind()
	}
}

// TestCheckedByNcdumpAndPython checks the written file with Debian's ncdump
// (header) and netCDF4-python (values), both independent of this package.
func TestCheckedByNcdumpAndPython(t *testing.T) {
	const nt, ny, nx = 3, 4, 5
	dir := t.TempDir()
	path, g, times, eta, foam := writeTestFile(t, dir, nt, ny, nx, WriteOptions{DepthM: 20, WithFoam: true})

	ncdump, err := exec.LookPath("ncdump")
	if err != nil {
		t.Skip("ncdump is absent; run scripts/setup-deps")
	}
	out, err := exec.Command(ncdump, "-h", path).CombinedOutput()
	if err != nil {
		t.Fatalf("ncdump -h: %v\n%s", err, out)
	}
	hdr := string(out)
	for _, want := range []string{
		"time = UNLIMITED ; // (3 currently)",
		"y = 4 ;",
		"x = 5 ;",
		"float eta(time, y, x) ;",
		"ubyte foam(time, y, x) ;",
		`x:units = "m" ;`,
		`y:units = "m" ;`,
		`time:units = "seconds since 1970-01-01T00:00:00Z" ;`,
		`eta:units = "m" ;`,
		`eta:_FillValue = NaNf ;`,
		`eta:long_name = "sea-surface elevation above the mean water level of the record, positive up" ;`,
		`:Conventions = "CF-1.8, ACDD-1.3" ;`,
		`:grid_spacing_m = 0.25 ;`,
		`:time_coverage_start = "1970-01-01T00:16:40Z" ;`,
		`:water_depth_m = 20. ;`,
	} {
		if !strings.Contains(hdr, want) {
			t.Errorf("ncdump -h lacks %q:\n%s", want, hdr)
		}
	}

	runPython(t, `
import sys, numpy as np, netCDF4
ds = netCDF4.Dataset(sys.argv[1])
d = sys.argv[2]
eta = ds['eta'][:]          # masked where _FillValue (NaN)
np.ma.filled(eta.astype('f4'), np.nan).astype('<f4').tofile(d + '/eta.bin')
np.ma.filled(ds['foam'][:], 255).astype('<f4').tofile(d + '/foam.bin')
np.ma.getdata(ds['time'][:]).astype('<f8').tofile(d + '/time.bin')
np.concatenate([np.ma.getdata(ds['y'][:]), np.ma.getdata(ds['x'][:]), [ds.water_depth_m]]).astype('<f8').tofile(d + '/coords.bin')
assert ds['eta'].dtype == np.float32 and ds['eta'].chunking() == [1, 4, 5]
assert ds['eta'].filters()['zlib'] and ds['eta'].filters()['complevel'] == 4
`, path, dir)
	pyEta, pyFoam := readF32(t, filepath.Join(dir, "eta.bin")), readF32(t, filepath.Join(dir, "foam.bin"))
	pyTime, pyCoords := readF64(t, filepath.Join(dir, "time.bin")), readF64(t, filepath.Join(dir, "coords.bin"))
	if len(pyEta) != len(eta) || len(pyTime) != nt || len(pyCoords) != ny+nx+1 {
		t.Fatalf("python read %d eta, %d times, %d coords", len(pyEta), len(pyTime), len(pyCoords))
	}
	for i := range eta {
		if !sameF32(pyEta[i], eta[i]) || pyFoam[i] != float32(foam[i]) {
			t.Fatalf("cell %d: python reads eta %v foam %v; written %v %d", i, pyEta[i], pyFoam[i], eta[i], foam[i])
		}
	}
	for k := range nt {
		if pyTime[k] != times[k] {
			t.Errorf("time %d: python %v, written %v", k, pyTime[k], times[k])
		}
	}
	for i, v := range append(append(append([]float64{}, g.Y...), g.X...), 20) {
		if pyCoords[i] != v {
			t.Errorf("coordinate/depth %d: python %v, written %v", i, pyCoords[i], v)
		}
	}
}

// TestReadsPythonFile reads a file made by netCDF4-python, with a
// _FillValue of -9999, masked cells, a signed-byte foam variable, time in
// milliseconds and a water_depth_m attribute. The expected values are
// numpy's, written next to the file.
func TestReadsPythonFile(t *testing.T) {
	dir := t.TempDir()
	path := filepath.Join(dir, "py.nc")
	runPython(t, `
import sys, numpy as np, netCDF4
path, d = sys.argv[1], sys.argv[2]
nt, ny, nx = 4, 3, 5
x = 100.0 + 0.25 * np.arange(nx)
y = -1.0 + 0.5 * np.arange(ny)
tms = 40.0 * np.arange(nt)                      # milliseconds
tt, yy, xx = np.meshgrid(tms / 1000.0, y, x, indexing='ij')
eta = (0.3 * np.sin(2 * np.pi * (xx / 1.25 - tt)) + 0.01 * yy).astype('f4')
mask = np.zeros(eta.shape, bool)
mask[1, 0, 2] = True
mask[3, 2, 4] = True
foam = (eta > 0.2).astype('i1')
with netCDF4.Dataset(path, 'w', format='NETCDF4') as ds:
    ds.createDimension('time', None)
    ds.createDimension('y', ny)
    ds.createDimension('x', nx)
    v = ds.createVariable('time', 'f8', ('time',)); v.units = 'milliseconds since 2026-06-01 00:00:00'
    v[:] = tms
    v = ds.createVariable('y', 'f8', ('y',)); v.units = 'm'; v[:] = y
    v = ds.createVariable('x', 'f8', ('x',)); v.units = 'metre'; v[:] = x
    v = ds.createVariable('eta', 'f4', ('time', 'y', 'x'), fill_value=np.float32(-9999.0))
    v.units = 'm'
    v[:] = np.ma.masked_array(eta, mask)
    v = ds.createVariable('foam', 'i1', ('time', 'y', 'x'))
    v[:] = foam
    ds.water_depth_m = 12.5
    ds.title = 'made by netCDF4-python'
    ds.institution = 'elsewhere'
np.where(mask, np.nan, eta).astype('<f4').tofile(d + '/eta.bin')
foam.astype('<f4').tofile(d + '/foam.bin')
(tms * 1e-3).astype('<f8').tofile(d + '/time.bin')
np.concatenate([y, x]).astype('<f8').tofile(d + '/coords.bin')
`, path, dir)
	wantEta, wantFoam := readF32(t, filepath.Join(dir, "eta.bin")), readF32(t, filepath.Join(dir, "foam.bin"))
	wantTime, wantCoords := readF64(t, filepath.Join(dir, "time.bin")), readF64(t, filepath.Join(dir, "coords.bin"))

	s, err := OpenElevation(path, ElevationOptions{})
	if err != nil {
		t.Fatal(err)
	}
	defer s.Close()
	m := s.Meta()
	const nt, ny, nx = 4, 3, 5
	if m.DepthM != 12.5 || m.Title != "made by netCDF4-python" || m.Attrs["institution"] != "elsewhere" || !m.HasFoam {
		t.Errorf("meta %+v", m)
	}
	if m.TimeUnits != "seconds since 2026-06-01 00:00:00" {
		t.Errorf("time units %q", m.TimeUnits)
	}
	for i, v := range append(append([]float64{}, m.Grid.Y...), m.Grid.X...) {
		if v != wantCoords[i] {
			t.Errorf("coordinate %d: %v, numpy %v", i, v, wantCoords[i])
		}
	}
	var f Frame
	nNaN := 0
	for k := range nt {
		if err := s.Next(&f); err != nil {
			t.Fatal(err)
		}
		if f.Index != k || f.Time != wantTime[k] {
			t.Errorf("frame %d: index %d time %v; numpy time %v", k, f.Index, f.Time, wantTime[k])
		}
		for i := range f.Eta {
			w := wantEta[k*ny*nx+i]
			if !sameF32(f.Eta[i], w) || f.Valid[i] == math.IsNaN(float64(w)) || float32(f.Foam[i]) != wantFoam[k*ny*nx+i] {
				t.Errorf("frame %d cell %d: eta %v valid %v foam %d; numpy %v foam %v", k, i, f.Eta[i], f.Valid[i], f.Foam[i], w, wantFoam[k*ny*nx+i])
			}
			if !f.Valid[i] {
				nNaN++
			}
		}
	}
	if nNaN != 2 { // the two masked cells of the snippet
		t.Errorf("%d unknown cells, want 2", nNaN)
	}
}

// rawSpec describes a file written with the low-level binding, to make
// files that break the contract.
type rawSpec struct {
	etaName string
	etaDims []string // order of eta's dimensions
	x, y, t []float64
}

func writeRaw(t *testing.T, path string, sp rawSpec) {
	t.Helper()
	w, err := netcdf.Create(path)
	if err != nil {
		t.Fatal(err)
	}
	defer w.Abort()
	must := func(err error) {
		t.Helper()
		if err != nil {
			t.Fatal(err)
		}
	}
	lens := map[string]int{"time": len(sp.t), "y": len(sp.y), "x": len(sp.x)}
	must(w.DefDim("time", len(sp.t)))
	must(w.DefDim("y", len(sp.y)))
	must(w.DefDim("x", len(sp.x)))
	for _, c := range []string{"time", "y", "x"} {
		must(w.DefVar(c, netcdf.Float64, []string{c}))
	}
	must(w.DefVar(sp.etaName, netcdf.Float32, sp.etaDims))
	must(w.EndDef())
	must(w.PutFloat64("time", sp.t))
	must(w.PutFloat64("y", sp.y))
	must(w.PutFloat64("x", sp.x))
	n := 1
	count := make([]int, len(sp.etaDims))
	for i, d := range sp.etaDims {
		count[i] = lens[d]
		n *= lens[d]
	}
	data := make([]float32, n)
	for i := range data {
		data[i] = float32(i%5) * 0.1
	}
	must(w.PutFloat32Slab(sp.etaName, make([]int, len(count)), count, data))
	must(w.Commit())
}

func goodSpec() rawSpec {
	return rawSpec{etaName: "eta", etaDims: []string{"time", "y", "x"},
		x: []float64{0, 1, 2, 3, 4}, y: []float64{0, 2, 4}, t: []float64{0, 0.1, 0.2, 0.3}}
}

// openErr opens path and returns the error, failing if there is none or if
// it does not name the file and contain every fragment.
func openErr(t *testing.T, path string, fragments ...string) {
	t.Helper()
	s, err := OpenElevation(path, ElevationOptions{})
	if err == nil {
		s.Close()
		t.Fatalf("OpenElevation(%s) succeeded; want an error", path)
	}
	msg := err.Error()
	if !strings.Contains(msg, path) {
		t.Errorf("error does not name the file: %v", err)
	}
	for _, f := range fragments {
		if !strings.Contains(msg, f) {
			t.Errorf("error lacks %q: %v", f, err)
		}
	}
	if strings.Count(strings.TrimSuffix(msg, "."), ". ") > 0 || strings.Contains(msg, "\n") {
		t.Errorf("error is not one sentence: %v", err)
	}
}

func TestGoodRawFileOpens(t *testing.T) {
	path := filepath.Join(t.TempDir(), "good.nc")
	writeRaw(t, path, goodSpec())
	s, err := OpenElevation(path, ElevationOptions{})
	if err != nil {
		t.Fatal(err)
	}
	s.Close()
}

func TestBadMissingFile(t *testing.T) {
	openErr(t, filepath.Join(t.TempDir(), "nothere.nc"), "does not exist")
}

func TestBadTextFile(t *testing.T) {
	path := filepath.Join(t.TempDir(), "notes.nc")
	if err := os.WriteFile(path, []byte("these are field notes, not elevation maps\n"), 0o644); err != nil {
		t.Fatal(err)
	}
	openErr(t, path, "is not a NetCDF file or is damaged")
}

func TestBadTruncatedFile(t *testing.T) {
	dir := t.TempDir()
	full, _, _, _, _ := writeTestFile(t, dir, 8, 16, 16, WriteOptions{Deflate: -1})
	data, err := os.ReadFile(full)
	if err != nil {
		t.Fatal(err)
	}
	path := filepath.Join(dir, "half.nc")
	if err := os.WriteFile(path, data[:len(data)/2], 0o644); err != nil {
		t.Fatal(err)
	}
	openErr(t, path, "is not a NetCDF file or is damaged")
}

// TestBadMissingEta: a variable called "elevation" with no standard_name is
// not guessed; the message names the setting and lists the candidates, and
// the setting then reads it.
func TestBadMissingEta(t *testing.T) {
	path := filepath.Join(t.TempDir(), "noeta.nc")
	sp := goodSpec()
	sp.etaName = "elevation"
	writeRaw(t, path, sp)
	openErr(t, path, `none is named "eta"`, "set variable", "variables of three dimensions: elevation")
	if s, err := OpenElevation(path, ElevationOptions{Variable: "elevation"}); err != nil {
		t.Errorf("configured name: %v", err)
	} else {
		s.Close()
	}
	_, err := OpenElevation(path, ElevationOptions{Variable: "z"})
	if err == nil || !strings.Contains(err.Error(), `no variable "z" (the setting variable)`) || !strings.Contains(err.Error(), "elevation") {
		t.Errorf("configured missing name: %v", err)
	}
}

func TestBadIrregularX(t *testing.T) {
	path := filepath.Join(t.TempDir(), "irregular.nc")
	sp := goodSpec()
	sp.x = []float64{0, 1, 2, 3.5, 4}
	writeRaw(t, path, sp)
	openErr(t, path, `coordinate "x"`, "not regularly spaced")
}

func TestBadNonMonotonicY(t *testing.T) {
	path := filepath.Join(t.TempDir(), "zigzag.nc")
	sp := goodSpec()
	sp.y = []float64{0, 4, 2}
	writeRaw(t, path, sp)
	openErr(t, path, `coordinate "y"`, "not strictly increasing")
}

func TestBadNonIncreasingTime(t *testing.T) {
	path := filepath.Join(t.TempDir(), "time.nc")
	sp := goodSpec()
	sp.t = []float64{0, 0.1, 0.1, 0.3}
	writeRaw(t, path, sp)
	openErr(t, path, "time is not strictly increasing at index 2")
}

func TestBadOneFrame(t *testing.T) {
	path := filepath.Join(t.TempDir(), "one.nc")
	sp := goodSpec()
	sp.t = []float64{0}
	writeRaw(t, path, sp)
	openErr(t, path, "holds 1 frame(s)", "at least 2")
}

func TestBadNarrowGrid(t *testing.T) {
	path := filepath.Join(t.TempDir(), "narrow.nc")
	sp := goodSpec()
	sp.y = []float64{0}
	writeRaw(t, path, sp)
	openErr(t, path, `coordinate "y" has 1 cells`)
}

// TestGapsAndAllNaN: times 0, 0.1, 0.2, 0.5, 0.6, 0.7 with frame 4 all
// unknown. By counting, the step 0.2 -> 0.5 spans three intervals of 0.1, so
// the frames at 0.3 and 0.4 are missing (2), and the median step is 0.1.
func TestGapsAndAllNaN(t *testing.T) {
	g := Grid{X: []float64{0, 1, 2}, Y: []float64{0, 1}}
	path := filepath.Join(t.TempDir(), "gaps.nc")
	w, err := CreateElevation(path, g, WriteOptions{})
	if err != nil {
		t.Fatal(err)
	}
	defer w.Abort()
	times := []float64{0, 0.1, 0.2, 0.5, 0.6, 0.7}
	nan := float32(math.NaN())
	for k, tk := range times {
		eta := []float32{1, 2, 3, 4, 5, float32(k)}
		if k == 4 {
			eta = []float32{nan, nan, nan, nan, nan, nan}
		}
		if err := w.WriteFrame(tk, eta, nil); err != nil {
			t.Fatal(err)
		}
	}
	if err := w.Commit(); err != nil {
		t.Fatal(err)
	}
	s, err := OpenElevation(path, ElevationOptions{})
	if err != nil {
		t.Fatal(err)
	}
	defer s.Close()
	if math.Abs(s.FrameInterval()-0.1) > 1e-12 {
		t.Errorf("frame interval %v, want 0.1", s.FrameInterval())
	}
	gaps := s.Gaps()
	if len(gaps) != 1 || gaps[0].AfterIndex != 2 || gaps[0].Start != 0.2 || gaps[0].End != 0.5 || gaps[0].Missing != 2 {
		t.Errorf("gaps %+v; want one after index 2 from 0.2 to 0.5 missing 2", gaps)
	}
	for pass := range 2 {
		var got []int
		var f Frame
		for {
			err := s.Next(&f)
			if err == io.EOF {
				break
			}
			if err != nil {
				t.Fatal(err)
			}
			got = append(got, f.Index)
		}
		if !slices.Equal(got, []int{0, 1, 2, 3, 5}) {
			t.Errorf("pass %d: frames %v; want 0,1,2,3,5", pass, got)
		}
		sk := s.Skipped()
		if sk[SkipAllNaN] != 1 || sk[SkipTimeGap] != 2 || len(sk) != 2 {
			t.Errorf("pass %d: skipped %v; want 1 all-NaN frame and 2 dropped frames", pass, sk)
		}
		s.Rewind()
	}
	// A gap factor of 1 or less cannot separate gaps from jitter: refused.
	if _, err := OpenElevation(path, ElevationOptions{GapFactor: 0.5}); err == nil {
		t.Error("gap factor 0.5 accepted")
	}
}

// TestCommitAndAbort: Abort leaves nothing; Commit leaves exactly the final
// file; Abort after Commit is harmless.
func TestCommitAndAbort(t *testing.T) {
	dir := t.TempDir()
	g := Grid{X: []float64{0, 1}, Y: []float64{0, 1}}
	w, err := CreateElevation(filepath.Join(dir, "a.nc"), g, WriteOptions{})
	if err != nil {
		t.Fatal(err)
	}
	if err := w.WriteFrame(0, []float32{1, 2, 3, 4}, nil); err != nil {
		t.Fatal(err)
	}
	w.Abort()
	if ents, _ := os.ReadDir(dir); len(ents) != 0 {
		t.Errorf("Abort left %v", ents)
	}
	w, err = CreateElevation(filepath.Join(dir, "b.nc"), g, WriteOptions{})
	if err != nil {
		t.Fatal(err)
	}
	for k := range 2 {
		if err := w.WriteFrame(float64(k), []float32{1, 2, 3, 4}, nil); err != nil {
			t.Fatal(err)
		}
	}
	if err := w.Commit(); err != nil {
		t.Fatal(err)
	}
	w.Abort()
	ents, _ := os.ReadDir(dir)
	if len(ents) != 1 || ents[0].Name() != "b.nc" {
		t.Errorf("Commit left %v; want only b.nc", ents)
	}
}

func TestWriterRejects(t *testing.T) {
	dir := t.TempDir()
	g := Grid{X: []float64{0, 1, 2}, Y: []float64{0, 1}}
	p := filepath.Join(dir, "r.nc")
	if _, err := CreateElevation(p, Grid{X: []float64{0, 1, 3}, Y: g.Y}, WriteOptions{}); err == nil {
		t.Error("irregular grid accepted")
	}
	if _, err := CreateElevation(p, g, WriteOptions{TimeUnits: "days since 2026-01-01"}); err == nil {
		t.Error("time units in days accepted")
	}
	if _, err := CreateElevation(p, g, WriteOptions{DepthM: -3}); err == nil {
		t.Error("negative depth accepted")
	}
	w, err := CreateElevation(p, g, WriteOptions{})
	if err != nil {
		t.Fatal(err)
	}
	defer w.Abort()
	eta := make([]float32, 6)
	if err := w.WriteFrame(1, eta[:5], nil); err == nil {
		t.Error("short frame accepted")
	}
	if err := w.WriteFrame(1, eta, make([]uint8, 6)); err == nil {
		t.Error("foam accepted without WithFoam")
	}
	if err := w.WriteFrame(1, eta, nil); err != nil {
		t.Fatal(err)
	}
	if err := w.WriteFrame(1, eta, nil); err == nil {
		t.Error("repeated time accepted")
	}
	if err := w.WriteFrame(math.NaN(), eta, nil); err == nil {
		t.Error("NaN time accepted")
	}
	w.Abort()
	if err := w.WriteFrame(2, eta, nil); err == nil {
		t.Error("write after Abort accepted")
	}
	if ents, _ := os.ReadDir(dir); len(ents) != 0 {
		t.Errorf("rejected writers left %v", ents)
	}
}

// TestTimeUnits checks the conversion factors to seconds against the
// definitions of the units (SI second; 1 min = 60 s, 1 h = 3600 s,
// 1 d = 86400 s, as in the UDUNITS tables CF relies on).
func TestTimeUnits(t *testing.T) {
	for _, c := range []struct {
		u      string
		factor float64
		ref    string
	}{
		{"seconds since 2026-06-01T00:00:00Z", 1, " since 2026-06-01T00:00:00Z"},
		{"s", 1, ""},
		{"milliseconds since 2026-06-01", 1e-3, " since 2026-06-01"},
		{"minutes since 2026-06-01", 60, " since 2026-06-01"},
		{"hours since 2026-06-01", 3600, " since 2026-06-01"},
		{"days since 2026-06-01", 86400, " since 2026-06-01"},
	} {
		f, ref, err := parseTimeUnits(c.u)
		if err != nil || f != c.factor || ref != c.ref {
			t.Errorf("%q: factor %v ref %q err %v", c.u, f, ref, err)
		}
	}
	if _, _, err := parseTimeUnits("m"); err == nil {
		t.Error(`"m" accepted as a time unit`)
	}
}
