package netcdf

import (
	"encoding/json"
	"errors"
	"io/fs"
	"os"
	"os/exec"
	"path/filepath"
	"strings"
	"sync"
	"testing"
)

const python = "/usr/bin/python3"

// runPython runs a Python snippet with Debian's python3 (numpy, netCDF4) and
// returns its standard output. The test is skipped when /usr/bin/python3 is
// absent; a missing netCDF4 module is a setup error.
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
		t.Fatalf("python failed (is python3-netcdf4 installed? run scripts/setup-deps): %v\n%s", err, stderr.String())
	}
	return out
}

// writeSample writes a small file through the Writer and returns its path.
func writeSample(t *testing.T, dir string) string {
	t.Helper()
	path := filepath.Join(dir, "sample.nc")
	w, err := Create(path)
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
	must(w.DefDim("t", 0))
	must(w.DefDim("r", 2))
	must(w.DefDim("c", 3))
	must(w.DefVar("t", Float64, []string{"t"}))
	must(w.DefVar("c", Float64, []string{"c"}))
	must(w.DefVar("v", Float32, []string{"t", "r", "c"}))
	must(w.SetChunks("v", []int{1, 2, 3}))
	must(w.SetDeflate("v", 5, true))
	must(w.SetFill("v", -999))
	must(w.DefVar("m", Uint8, []string{"t", "r", "c"}))
	must(w.DefVar("i", Int32, []string{"t"}))
	must(w.DefVar("l", Int64, []string{"t"}))
	must(w.DefVar("d", Float64, []string{"t", "c"}))
	must(w.DefVar("nofill", Float32, []string{"c"}))
	must(w.PutAttText("v", "units", "m"))
	must(w.PutAttFloat64("v", "range", -1.5, 2.5))
	must(w.PutAttInt("i", "flags", 7, -3))
	must(w.PutAttText("", "title", "sample"))
	must(w.PutAttFloat64("", "depth", 12.5))
	must(w.EndDef())
	must(w.PutFloat64("c", []float64{0, 0.5, 1}))
	for k := range 3 {
		must(w.PutFloat64Slab("t", []int{k}, []int{1}, []float64{float64(k) * 0.25}))
		v := make([]float32, 6)
		m := make([]uint8, 6)
		for i := range v {
			v[i] = float32(k*10 + i)
			m[i] = uint8((k + i) % 2)
		}
		must(w.PutFloat32Slab("v", []int{k, 0, 0}, []int{1, 2, 3}, v))
		must(w.PutUint8Slab("m", []int{k, 0, 0}, []int{1, 2, 3}, m))
		must(w.PutInt32Slab("i", []int{k}, []int{1}, []int32{int32(-k)}))
		must(w.PutInt64Slab("l", []int{k}, []int{1}, []int64{int64(k) << 40}))
		must(w.PutFloat64Slab("d", []int{k, 0}, []int{1, 3}, []float64{1, 2, float64(k)}))
	}
	must(w.Commit())
	return path
}

// TestRoundTrip writes every kind of value through the Writer and reads it
// back through File (identity of a round trip; the same file is checked
// independently by netCDF4-python in TestReadByPython).
func TestRoundTrip(t *testing.T) {
	path := writeSample(t, t.TempDir())
	f, err := Open(path)
	if err != nil {
		t.Fatal(err)
	}
	defer f.Close()
	if fm, err := f.Format(); err != nil || fm != "netcdf4" {
		t.Errorf("Format = %q, %v; want netcdf4", fm, err)
	}
	for name, want := range map[string]int{"t": 3, "r": 2, "c": 3} {
		if n, err := f.Dim(name); err != nil || n != want {
			t.Errorf("Dim(%q) = %d, %v; want %d", name, n, err, want)
		}
	}
	dims, err := f.VarDims("v")
	if err != nil || strings.Join(dims, ",") != "t,r,c" {
		t.Errorf("VarDims(v) = %v, %v", dims, err)
	}
	if typ, err := f.VarType("m"); err != nil || typ != Uint8 {
		t.Errorf("VarType(m) = %v, %v", typ, err)
	}
	if !f.HasVar("v") || f.HasVar("nope") || f.HasVar("") {
		t.Error("HasVar wrong")
	}
	tm, err := f.ReadFloat64("t")
	if err != nil || len(tm) != 3 || tm[2] != 0.5 {
		t.Errorf("ReadFloat64(t) = %v, %v", tm, err)
	}
	buf := make([]float32, 8) // larger than needed on purpose
	if err := f.ReadFloat32Slab("v", []int{2, 0, 0}, []int{1, 2, 3}, buf); err != nil {
		t.Fatal(err)
	}
	for i := range 6 {
		if buf[i] != float32(20+i) {
			t.Errorf("v[2][%d] = %v, want %v", i, buf[i], 20+i)
		}
	}
	m := make([]uint8, 6)
	if err := f.ReadUint8Slab("m", []int{1, 0, 0}, []int{1, 2, 3}, m); err != nil {
		t.Fatal(err)
	}
	for i := range m {
		if m[i] != uint8((1+i)%2) {
			t.Errorf("m[1][%d] = %d", i, m[i])
		}
	}
	if s, ok, err := f.AttText("v", "units"); err != nil || !ok || s != "m" {
		t.Errorf("AttText(v, units) = %q %v %v", s, ok, err)
	}
	if _, ok, err := f.AttText("v", "absent"); err != nil || ok {
		t.Errorf("absent attribute: ok=%v err=%v", ok, err)
	}
	if _, _, err := f.AttText("v", "range"); err == nil {
		t.Error("AttText on a numeric attribute did not fail")
	}
	if r, ok, err := f.AttFloat64s("v", "range"); err != nil || !ok || len(r) != 2 || r[0] != -1.5 || r[1] != 2.5 {
		t.Errorf("AttFloat64s(v, range) = %v %v %v", r, ok, err)
	}
	if r, ok, err := f.AttFloat64s("i", "flags"); err != nil || !ok || len(r) != 2 || r[1] != -3 {
		t.Errorf("AttFloat64s(i, flags) = %v %v %v", r, ok, err)
	}
	if d, ok, err := f.AttFloat64("", "depth"); err != nil || !ok || d != 12.5 {
		t.Errorf("AttFloat64(global depth) = %v %v %v", d, ok, err)
	}
	if fv, explicit, ok, err := f.FillValue("v"); err != nil || !ok || !explicit || fv != -999 {
		t.Errorf("FillValue(v) = %v %v %v %v", fv, explicit, ok, err)
	}
	atts, err := f.TextAtts("")
	if err != nil || atts["title"] != "sample" || len(atts) != 1 {
		t.Errorf("TextAtts(global) = %v, %v", atts, err)
	}
}

// TestReadByPython checks the Writer's output with netCDF4-python, the
// reference reader: every value, the attribute types and the default fill.
func TestReadByPython(t *testing.T) {
	path := writeSample(t, t.TempDir())
	out := runPython(t, `
import sys, json, netCDF4
ds = netCDF4.Dataset(sys.argv[1])
ds.set_auto_mask(False)
v = ds['v']
print(json.dumps({
  "format": ds.data_model,
  "t": ds['t'][:].tolist(),
  "v": v[:].ravel().astype(float).tolist(),
  "v_dtype": str(v.dtype),
  "v_fill": float(v._FillValue),
  "v_chunks": v.chunking(),
  "v_filters": v.filters(),
  "m": ds['m'][:].ravel().tolist(),
  "m_dtype": str(ds['m'].dtype),
  "i": ds['i'][:].tolist(),
  "l": ds['l'][:].tolist(),
  "d": ds['d'][:].ravel().tolist(),
  "range": v.range.tolist(),
  "flags": ds['i'].flags.tolist(),
  "depth": float(ds.depth),
  "title": ds.title,
  "default_fill_f4": float(netCDF4.default_fillvals['f4']),
}))
`, path)
	var got struct {
		Format         string
		T, V, D, Range []float64
		VDtype         string         `json:"v_dtype"`
		VFill          float64        `json:"v_fill"`
		VChunks        []int          `json:"v_chunks"`
		VFilters       map[string]any `json:"v_filters"`
		M              []int
		MDtype         string `json:"m_dtype"`
		I, L, Flags    []int64
		Depth          float64
		Title          string
		DefaultFillF4  float64 `json:"default_fill_f4"`
	}
	if err := json.Unmarshal(out, &got); err != nil {
		t.Fatalf("%v: %s", err, out)
	}
	if got.Format != "NETCDF4" || got.VDtype != "float32" || got.MDtype != "uint8" {
		t.Errorf("format %q, v dtype %q, m dtype %q", got.Format, got.VDtype, got.MDtype)
	}
	if got.VFill != -999 || got.Depth != 12.5 || got.Title != "sample" {
		t.Errorf("fill %v depth %v title %q", got.VFill, got.Depth, got.Title)
	}
	if len(got.VChunks) != 3 || got.VChunks[0] != 1 || got.VChunks[1] != 2 || got.VChunks[2] != 3 {
		t.Errorf("v chunks %v; want [1 2 3]", got.VChunks)
	}
	if got.VFilters["zlib"] != true || got.VFilters["shuffle"] != true || got.VFilters["complevel"] != float64(5) {
		t.Errorf("v filters %v; want zlib, shuffle, level 5", got.VFilters)
	}
	for k := range 3 {
		if got.T[k] != float64(k)*0.25 || got.I[k] != int64(-k) || got.L[k] != int64(k)<<40 || got.D[3*k+2] != float64(k) {
			t.Errorf("record %d: t %v i %v l %v d %v", k, got.T[k], got.I[k], got.L[k], got.D[3*k+2])
		}
		for i := range 6 {
			if got.V[6*k+i] != float64(k*10+i) || got.M[6*k+i] != (k+i)%2 {
				t.Errorf("v/m[%d][%d] = %v/%v", k, i, got.V[6*k+i], got.M[6*k+i])
			}
		}
	}
	if len(got.Range) != 2 || got.Range[0] != -1.5 || len(got.Flags) != 2 || got.Flags[1] != -3 {
		t.Errorf("range %v flags %v", got.Range, got.Flags)
	}
	// The default fill of an unset float variable, compared with
	// netCDF4-python's table of library defaults.
	f, err := Open(path)
	if err != nil {
		t.Fatal(err)
	}
	defer f.Close()
	fv, explicit, ok, err := f.FillValue("nofill")
	if err != nil || !ok || explicit || fv != got.DefaultFillF4 {
		t.Errorf("FillValue(nofill) = %v %v %v %v; want default %v", fv, explicit, ok, err, got.DefaultFillF4)
	}
}

// TestReadPythonFile reads a file written by netCDF4-python: a string-typed
// global attribute, a signed byte variable with negative values and a short
// variable read as float32.
func TestReadPythonFile(t *testing.T) {
	path := filepath.Join(t.TempDir(), "py.nc")
	runPython(t, `
import sys, numpy as np, netCDF4
ds = netCDF4.Dataset(sys.argv[1], 'w', format='NETCDF4')
ds.createDimension('n', 4)
b = ds.createVariable('b', 'i1', ('n',))
b[:] = np.array([-1, 0, 1, -128], 'i1')
s = ds.createVariable('s', 'i2', ('n',))
s[:] = np.array([-300, 0, 7, 32767], 'i2')
ds.setncattr_string('note', 'string-typed text')
ds.chars = 'char-typed text'
ds.close()
`, path)
	f, err := Open(path)
	if err != nil {
		t.Fatal(err)
	}
	defer f.Close()
	if s, ok, err := f.AttText("", "note"); err != nil || !ok || s != "string-typed text" {
		t.Errorf("string attribute = %q %v %v", s, ok, err)
	}
	if s, ok, err := f.AttText("", "chars"); err != nil || !ok || s != "char-typed text" {
		t.Errorf("char attribute = %q %v %v", s, ok, err)
	}
	b := make([]uint8, 4)
	if err := f.ReadUint8Slab("b", []int{0}, []int{4}, b); err != nil {
		t.Fatal(err)
	}
	// Raw two's-complement bytes of int8 -1, 0, 1, -128 (Go spec conversion).
	want := []uint8{255, 0, 1, 128}
	for i := range b {
		if b[i] != want[i] {
			t.Errorf("b[%d] = %d, want %d", i, b[i], want[i])
		}
	}
	s := make([]float32, 4)
	if err := f.ReadFloat32Slab("s", []int{0}, []int{4}, s); err != nil {
		t.Fatal(err)
	}
	for i, w := range []float32{-300, 0, 7, 32767} {
		if s[i] != w {
			t.Errorf("s[%d] = %v, want %v", i, s[i], w)
		}
	}
	if typ, _ := f.VarType("b"); typ != Int8 {
		t.Errorf("VarType(b) = %v, want byte", typ)
	}
}

func TestOpenErrors(t *testing.T) {
	dir := t.TempDir()
	_, err := Open(filepath.Join(dir, "missing.nc"))
	if !errors.Is(err, fs.ErrNotExist) || !strings.Contains(err.Error(), "missing.nc") {
		t.Errorf("missing file: %v", err)
	}
	text := filepath.Join(dir, "text.nc")
	if err := os.WriteFile(text, []byte("time,eta\n0,1.5\n"), 0o644); err != nil {
		t.Fatal(err)
	}
	_, err = Open(text)
	if !errors.Is(err, ErrNotNetCDF) || !strings.Contains(err.Error(), text+" is not a NetCDF file or is damaged") {
		t.Errorf("text file: %v", err)
	}
	_, err = Open(dir)
	if err == nil || !strings.Contains(err.Error(), "directory") {
		t.Errorf("directory: %v", err)
	}
	// A NetCDF-4 file cut in half.
	full := writeSample(t, dir)
	data, err := os.ReadFile(full)
	if err != nil {
		t.Fatal(err)
	}
	half := filepath.Join(dir, "half.nc")
	if err := os.WriteFile(half, data[:len(data)/2], 0o644); err != nil {
		t.Fatal(err)
	}
	if f, err := Open(half); err == nil {
		f.Close()
		t.Error("truncated file opened without error")
	} else if !errors.Is(err, ErrNotNetCDF) {
		t.Errorf("truncated file: %v", err)
	}
}

func TestCallErrors(t *testing.T) {
	path := writeSample(t, t.TempDir())
	f, err := Open(path)
	if err != nil {
		t.Fatal(err)
	}
	buf := make([]float32, 6)
	err = f.ReadFloat32Slab("v", []int{3, 0, 0}, []int{1, 2, 3}, buf) // record 3 of 3
	var ne *Error
	if !errors.As(err, &ne) || !strings.HasPrefix(err.Error(), "netcdf: "+path+`: variable "v": `) || !strings.Contains(err.Error(), "NetCDF: ") {
		t.Errorf("out-of-range slab: %v", err)
	}
	if err := f.ReadFloat32Slab("v", []int{0, 0, 0}, []int{1, 2, 3}, buf[:5]); err == nil || !strings.Contains(err.Error(), "larger buffer") {
		t.Errorf("small buffer: %v", err)
	}
	if err := f.ReadFloat32Slab("v", []int{0, 0}, []int{1, 2}, buf); err == nil || !strings.Contains(err.Error(), "3 dimensions") {
		t.Errorf("wrong rank: %v", err)
	}
	if err := f.ReadFloat32Slab("v", []int{-1, 0, 0}, []int{1, 2, 3}, buf); err == nil {
		t.Error("negative start accepted")
	}
	if _, err := f.ReadFloat64("absent"); !IsNotFound(err) || !strings.Contains(err.Error(), `variable "absent"`) {
		t.Errorf("absent variable: %v", err)
	}
	if _, err := f.Dim("absent"); !IsNotFound(err) || !strings.Contains(err.Error(), `dimension "absent"`) {
		t.Errorf("absent dimension: %v", err)
	}
	if err := f.Close(); err != nil {
		t.Fatal(err)
	}
	if err := f.Close(); err != nil {
		t.Errorf("second Close: %v", err)
	}
	if err := f.ReadFloat32Slab("v", []int{0, 0, 0}, []int{1, 2, 3}, buf); err == nil || !strings.Contains(err.Error(), "closed") {
		t.Errorf("read after close: %v", err)
	}
}

func TestWriterErrors(t *testing.T) {
	dir := t.TempDir()
	w, err := Create(filepath.Join(dir, "w.nc"))
	if err != nil {
		t.Fatal(err)
	}
	defer w.Abort()
	if err := w.DefDim("x", 4); err != nil {
		t.Fatal(err)
	}
	if err := w.DefVar("v", Float32, []string{"y"}); err == nil || !strings.Contains(err.Error(), `dimension "y"`) {
		t.Errorf("unknown dimension: %v", err)
	}
	if err := w.DefVar("v", Uint8, []string{"x"}); err != nil {
		t.Fatal(err)
	}
	if err := w.SetFill("v", 300); err == nil {
		t.Error("fill 300 accepted for ubyte")
	}
	if err := w.SetDeflate("v", 10, false); err == nil {
		t.Error("deflate level 10 accepted")
	}
	if err := w.EndDef(); err != nil {
		t.Fatal(err)
	}
	if err := w.PutUint8Slab("v", []int{0}, []int{4}, []uint8{1, 2}); err == nil {
		t.Error("short data accepted")
	}
	if _, err := Create(dir); err == nil {
		t.Error("Create on a directory succeeded")
	}
	if _, err := Create(filepath.Join(dir, "no", "such", "dir.nc")); err == nil {
		t.Error("Create in a missing directory succeeded")
	}
}

// TestCommitAbort checks that only the final file is left by Commit, nothing
// by Abort, and that Abort after Commit is harmless.
func TestCommitAbort(t *testing.T) {
	dir := t.TempDir()
	final := filepath.Join(dir, "out.nc")
	w, err := Create(final)
	if err != nil {
		t.Fatal(err)
	}
	if !strings.HasPrefix(filepath.Base(w.TempPath()), "out.nc.part-") || filepath.Dir(w.TempPath()) != dir {
		t.Errorf("temporary path %s", w.TempPath())
	}
	if err := w.DefDim("x", 1); err != nil {
		t.Fatal(err)
	}
	w.Abort()
	w.Abort()
	if ents, _ := os.ReadDir(dir); len(ents) != 0 {
		t.Errorf("Abort left %v", ents)
	}
	w, err = Create(final)
	if err != nil {
		t.Fatal(err)
	}
	if err := w.DefDim("x", 1); err != nil {
		t.Fatal(err)
	}
	if err := w.Commit(); err != nil {
		t.Fatal(err)
	}
	w.Abort()
	if err := w.Commit(); err == nil {
		t.Error("second Commit succeeded")
	}
	ents, _ := os.ReadDir(dir)
	if len(ents) != 1 || ents[0].Name() != "out.nc" {
		t.Errorf("Commit left %v; want only out.nc", ents)
	}
}

// TestConcurrentReads reads one file from several goroutines; run with -race
// to check the locking.
func TestConcurrentReads(t *testing.T) {
	path := writeSample(t, t.TempDir())
	var wg sync.WaitGroup
	errs := make(chan error, 8)
	for g := range 8 {
		wg.Go(func() {
			f, err := Open(path)
			if err != nil {
				errs <- err
				return
			}
			defer f.Close()
			buf := make([]float32, 6)
			for range 50 {
				k := g % 3
				if err := f.ReadFloat32Slab("v", []int{k, 0, 0}, []int{1, 2, 3}, buf); err != nil {
					errs <- err
					return
				}
				if buf[5] != float32(10*k+5) {
					errs <- errors.New("wrong value read concurrently")
					return
				}
			}
		})
	}
	wg.Wait()
	close(errs)
	for err := range errs {
		t.Error(err)
	}
}
