package ingest

import (
	"errors"
	"io"
	"math"
	"math/rand/v2"
	"os"
	"path/filepath"
	"slices"
	"strings"
	"testing"

	"crestspeed/internal/netcdf"
)

// fieldScript writes, with netCDF4-python, the same record in the layouts
// and conventions field data come in, and beside each file the values
// netCDF4-python itself decodes from it (automatic masking and scaling) in
// (time, y increasing, x) order, as little-endian float32 with NaN where
// masked, and the times and axes as float64. The tests compare the source's
// frames with those exactly.
const fieldScript = `
import sys, json, numpy as np, netCDF4
d = sys.argv[1]
nt, ny, nx = 9, 6, 7
t = 0.25 * np.arange(nt)
x = 10.0 + 0.5 * np.arange(nx)
y = -3.0 + 0.75 * np.arange(ny)
tt, yy, xx = np.meshgrid(t, y, x, indexing='ij')
eta = (0.4 * np.sin(0.8 * xx - 1.1 * tt + 0.3 * yy) + 0.02 * yy - 0.01 * xx).astype('f4')
eta[2, 1, 3] = np.nan
eta[5, 4, 0] = np.nan
cases = {}

def write(name, order, fmt='NETCDF4', flip_y=False, chunks=None, dimnames=('time', 'y', 'x'),
          axis_attrs=False, packed=None, std=None, varname='eta', extra=None, zlib=False, fletcher=False, dtype='f4', unlimited=True):
    path = d + '/' + name + '.nc'
    with netCDF4.Dataset(path, 'w', format=fmt) as ds:
        names = dict(zip('tyx', dimnames))
        ds.createDimension(names['t'], None if order[0] == 't' and unlimited else nt)
        ds.createDimension(names['y'], ny)
        ds.createDimension(names['x'], nx)
        tv = ds.createVariable(names['t'], 'f8', (names['t'],)); tv.units = 'seconds since 2026-06-01T00:00:00Z'
        yv = ds.createVariable(names['y'], 'f8', (names['y'],)); yv.units = 'm'
        xv = ds.createVariable(names['x'], 'f8', (names['x'],)); xv.units = 'm'
        if axis_attrs:
            tv.axis, yv.axis, xv.axis = 'T', 'Y', 'X'
        tv[:] = t
        yv[:] = y[::-1] if flip_y else y
        xv[:] = x
        data = eta[:, ::-1, :] if flip_y else eta
        perm = ['tyx'.index(c) for c in order]
        kw = {}
        if chunks is not None:
            kw['chunksizes'] = chunks
        if packed is not None:
            typ, scale, offset, fill = packed
            v = ds.createVariable(varname, typ, tuple(names[c] for c in order), fill_value=fill, zlib=zlib, fletcher32=fletcher, **kw)
            v.scale_factor = np.float64(scale)
            v.add_offset = np.float64(offset)
            if extra:
                for k, val in extra.items():
                    setattr(v, k, val)
            v.units = 'm'
            v[:] = np.ma.masked_invalid(np.transpose(data, perm).astype('f8'))
        else:
            v = ds.createVariable(varname, dtype, tuple(names[c] for c in order), fill_value=np.array(-9999.0, dtype), zlib=zlib, fletcher32=fletcher, **kw)
            v.units = 'm'
            if extra:
                for k, val in extra.items():
                    setattr(v, k, val)
            v[:] = np.ma.masked_invalid(np.transpose(data, perm))
        if std:
            v.standard_name = std
    # What netCDF4-python decodes, back in (t, y, x) order with y increasing.
    with netCDF4.Dataset(path) as ds:
        v = ds[varname]
        a = v[:]
        dn = [dd for dd in v.dimensions]
        order_idx = [dn.index(dimnames[i]) for i in range(3)]
        a = np.ma.transpose(a, order_idx)
        if flip_y:
            a = a[:, ::-1, :]
        np.ma.filled(a.astype('f8'), np.nan).astype('<f4').tofile(d + '/' + name + '.want')

write('natural', 'tyx')
write('txy', 'txy')
write('yxt', 'yxt')
write('xty', 'xty')
write('flip_y', 'tyx', flip_y=True)
write('axis_named', 'txy', dimnames=('t', 'northing', 'easting'), axis_attrs=True)
write('chunked', 'tyx', chunks=(4, 4, 3), zlib=True)
write('chunked_yxt', 'yxt', chunks=(3, 5, 4), zlib=True)
write('classic', 'tyx', fmt='NETCDF3_CLASSIC')
write('classic_txy', 'txy', fmt='NETCDF3_64BIT_OFFSET')
write('packed_i2', 'tyx', packed=('i2', 0.0005, 1.0, np.int16(-32767)))
write('packed_i1', 'txy', packed=('i1', 0.01, 0.0, np.int8(-127)))
write('packed_i4', 'tyx', packed=('i4', 1e-7, -0.5, np.int32(-2147483647)))
write('scale_one', 'tyx', packed=('f4', 1.0, 0.0, np.float32(-9999.0)))
write('valid_range', 'tyx', extra={'valid_range': np.array([-0.3, 0.35], 'f4')})
write('valid_min', 'tyx', extra={'valid_min': np.float32(-0.2)})
write('packed_valid', 'tyx', packed=('i2', 0.0005, 1.0, np.int16(-32767)), extra={'valid_min': np.int16(-1400)})
write('by_std', 'tyx', varname='z', std='sea_surface_height_above_mean_sea_level')
write('classic_fixed', 'tyx', fmt='NETCDF3_CLASSIC', unlimited=False)
write('classic_f8', 'tyx', fmt='NETCDF3_CLASSIC', dtype='f8')
write('classic_f8_packed', 'tyx', fmt='NETCDF3_64BIT_OFFSET', packed=('f8', 1.0, 0.5, np.float64(-9999.0)))
write('classic_i2', 'tyx', fmt='NETCDF3_CLASSIC', packed=('i2', 0.0005, 1.0, np.int16(-32767)), unlimited=False)
write('classic_i1', 'tyx', fmt='NETCDF3_CLASSIC', packed=('i1', 0.01, 0.0, np.int8(-127)))
write('classic_i4', 'tyx', fmt='NETCDF3_64BIT_OFFSET', packed=('i4', 1e-7, -0.5, np.int32(-2147483647)), extra={'valid_min': np.int32(1000000)})
np.concatenate([t, y, x]).astype('<f8').tofile(d + '/axes.bin')
`

// fieldFiles runs fieldScript once per test binary.
func fieldFiles(t *testing.T) string {
	t.Helper()
	dir := t.TempDir()
	runPython(t, fieldScript, dir)
	return dir
}

// readFrames reads every frame of a source into one (t, y, x) array with NaN
// for unknown cells and for frames not delivered.
func readFrames(t *testing.T, s interface {
	Next(*Frame) error
	Meta() ElevationMeta
}) ([]float32, []int) {
	t.Helper()
	m := s.Meta()
	cells := m.Grid.Nx() * m.Grid.Ny()
	out := make([]float32, len(m.Times)*cells)
	for i := range out {
		out[i] = float32(math.NaN())
	}
	var idx []int
	var f Frame
	for {
		err := s.Next(&f)
		if err == io.EOF {
			break
		}
		if err != nil {
			t.Fatal(err)
		}
		idx = append(idx, f.Index)
		copy(out[f.Index*cells:], f.Eta)
		for i, v := range f.Eta {
			if f.Valid[i] == math.IsNaN(float64(v)) {
				t.Fatalf("frame %d cell %d: valid %v with eta %v", f.Index, i, f.Valid[i], v)
			}
		}
	}
	return out, idx
}

// TestFieldLayouts reads the record in every layout and convention of the
// script and compares with netCDF4-python's decoding of the same file,
// value for value (packed data are unpacked in float64 and rounded to
// float32 by both).
func TestFieldLayouts(t *testing.T) {
	dir := fieldFiles(t)
	axes := readF64(t, filepath.Join(dir, "axes.bin"))
	const nt, ny, nx = 9, 6, 7
	for _, c := range []struct {
		name string
		opt  ElevationOptions
	}{
		{"natural", ElevationOptions{}},
		{"txy", ElevationOptions{}},
		{"yxt", ElevationOptions{}},
		{"xty", ElevationOptions{}},
		{"flip_y", ElevationOptions{}},
		{"axis_named", ElevationOptions{}},
		{"chunked", ElevationOptions{}},
		{"chunked_yxt", ElevationOptions{}},
		{"classic", ElevationOptions{}},
		{"classic_txy", ElevationOptions{}},
		{"packed_i2", ElevationOptions{}},
		{"packed_i1", ElevationOptions{}},
		{"packed_i4", ElevationOptions{}},
		{"scale_one", ElevationOptions{}},
		{"valid_range", ElevationOptions{}},
		{"valid_min", ElevationOptions{}},
		{"packed_valid", ElevationOptions{}},
		{"by_std", ElevationOptions{}},
		{"classic_fixed", ElevationOptions{}},
		{"classic_f8", ElevationOptions{}},
		{"classic_f8_packed", ElevationOptions{}},
		{"classic_i2", ElevationOptions{}},
		{"classic_i1", ElevationOptions{}},
		{"classic_i4", ElevationOptions{}},
	} {
		t.Run(c.name, func(t *testing.T) {
			path := filepath.Join(dir, c.name+".nc")
			s, err := OpenElevation(path, c.opt)
			if err != nil {
				t.Fatal(err)
			}
			defer s.Close()
			m := s.Meta()
			if m.Grid.Nx() != nx || m.Grid.Ny() != ny || len(m.Times) != nt {
				t.Fatalf("grid %d x %d, %d frames", m.Grid.Nx(), m.Grid.Ny(), len(m.Times))
			}
			for i, v := range slices.Concat(m.Times, m.Grid.Y, m.Grid.X) {
				if v != axes[i] {
					t.Fatalf("axis value %d: %v, want %v", i, v, axes[i])
				}
			}
			want := readF32(t, filepath.Join(dir, c.name+".want"))
			for pass := range 2 {
				got, _ := readFrames(t, s)
				for i := range want {
					if !sameF32(got[i], want[i]) {
						t.Fatalf("pass %d, cell %d (frame %d): %v, netCDF4-python %v", pass, i, i/(ny*nx), got[i], want[i])
					}
				}
				s.Rewind()
			}
			if strings.HasPrefix(c.name, "classic") && c.name != "classic_txy" && s.rd.direct == nil {
				t.Errorf("classic file in (time, y, x) order not read directly")
			}
			if c.name == "valid_range" || c.name == "valid_min" || c.name == "packed_valid" || c.name == "classic_i4" {
				mc := s.MaskedCells()
				nan := 0
				for _, v := range want {
					if math.IsNaN(float64(v)) {
						nan++
					}
				}
				// Two cells are NaN in the file; the rest are masked by range.
				if mc[MaskValidRange] != int64(nan-2) || mc[MaskValidRange] == 0 {
					t.Errorf("masked %v; %d cells outside the valid range expected", mc, nan-2)
				}
			}
		})
	}
}

// TestPermute checks the blocked permutation against direct indexing for
// every order of three dimensions, with and without flips, on sizes that
// are not multiples of the tile.
func TestPermute(t *testing.T) {
	rng := rand.New(rand.NewPCG(3, 4))
	orders := [][3]int{{0, 1, 2}, {0, 2, 1}, {1, 0, 2}, {1, 2, 0}, {2, 0, 1}, {2, 1, 0}}
	for _, ord := range orders {
		for _, flip := range [][3]bool{{}, {false, true, false}, {false, false, true}, {false, true, true}} {
			n := [3]int{3 + rng.IntN(5), 30 + rng.IntN(40), 33 + rng.IntN(40)}
			// ord[r] is the file position of role r.
			var shape [3]int
			for r := range 3 {
				shape[ord[r]] = n[r]
			}
			l := &layout{shape: shape[:], pos: ord, flip: flip}
			src := make([]int32, n[0]*n[1]*n[2])
			for i := range src {
				src[i] = int32(i)
			}
			dst := make([]int32, len(src))
			base, st := l.strides(n[0])
			permute(dst, src, n, base, st)
			for ti := range n[0] {
				for y := range n[1] {
					for x := range n[2] {
						idx := [3]int{ti, y, x}
						if flip[1] {
							idx[1] = n[1] - 1 - y
						}
						if flip[2] {
							idx[2] = n[2] - 1 - x
						}
						var fi [3]int
						for r := range 3 {
							fi[ord[r]] = idx[r]
						}
						want := int32((fi[0]*shape[1]+fi[1])*shape[2] + fi[2])
						if got := dst[(ti*n[1]+y)*n[2]+x]; got != want {
							t.Fatalf("order %v flip %v: (%d,%d,%d) = %d, want %d", ord, flip, ti, y, x, got, want)
						}
					}
				}
			}
		}
	}
}

// TestQuantileMid checks the selection against sorting.
func TestQuantileMid(t *testing.T) {
	rng := rand.New(rand.NewPCG(5, 6))
	for _, n := range []int{1, 2, 3, 4, 7, 64, 1000, 4097} {
		v := make([]float64, n)
		for i := range v {
			v[i] = math.Round(rng.NormFloat64()*3) / 2 // many ties
		}
		s := slices.Clone(v)
		slices.Sort(s)
		if got := quantileMid(v); got != s[(n-1)/2] {
			t.Errorf("n=%d: %v, want %v", n, got, s[(n-1)/2])
		}
	}
}

// seaFile writes a record of nt frames of a short-crested sea of Hs about
// 1.7 m (the sum of a few components, σ about 0.43 m), with the cells
// listed in bad overwritten, through the package writer.
func seaFile(t *testing.T, path string, nt, ny, nx int, bad map[[3]int]float32) {
	t.Helper()
	g := Grid{X: make([]float64, nx), Y: make([]float64, ny)}
	for i := range g.X {
		g.X[i] = 0.5 * float64(i)
	}
	for i := range g.Y {
		g.Y[i] = 0.5 * float64(i)
	}
	w, err := CreateElevation(path, g, WriteOptions{})
	if err != nil {
		t.Fatal(err)
	}
	defer w.Abort()
	eta := make([]float32, nx*ny)
	for k := range nt {
		tk := 0.1 * float64(k)
		for iy := range ny {
			for ix := range nx {
				x, y := g.X[ix], g.Y[iy]
				v := 0.45*math.Cos(0.2*x+0.05*y-1.4*tk) + 0.3*math.Cos(0.31*x-0.12*y-1.74*tk+1) + 0.25*math.Cos(0.15*x+0.2*y-1.35*tk+2)
				if b, ok := bad[[3]int{k, iy, ix}]; ok {
					v = float64(b)
				}
				eta[iy*nx+ix] = float32(v)
			}
		}
		if err := w.WriteFrame(tk, eta, nil); err != nil {
			t.Fatal(err)
		}
	}
	if err := w.Commit(); err != nil {
		t.Fatal(err)
	}
}

// TestPlausibility: cells at ±999 m in 12 frames are masked by the
// elevation bound, 6 m spikes on a sea of σ 0.43 m by the spike test
// (10 · 1.4826 · MAD is about 4.3 m), and every other cell is kept; the
// counts give the reasons. With the tests off the values pass through.
func TestPlausibility(t *testing.T) {
	const nt, ny, nx = 20, 40, 60
	bad := map[[3]int]float32{}
	for k := range 12 {
		bad[[3]int{k, 3 + k, 7}] = 999
		bad[[3]int{k, 20, 11 + 2*k}] = -999
	}
	bad[[3]int{15, 10, 10}] = 6
	bad[[3]int{16, 30, 50}] = -6
	path := filepath.Join(t.TempDir(), "spikes.nc")
	seaFile(t, path, nt, ny, nx, bad)
	s, err := OpenElevation(path, ElevationOptions{})
	if err != nil {
		t.Fatal(err)
	}
	defer s.Close()
	got, _ := readFrames(t, s)
	for i, v := range got {
		k, iy, ix := i/(ny*nx), i/nx%ny, i%nx
		_, isBad := bad[[3]int{k, iy, ix}]
		if isBad != math.IsNaN(float64(v)) {
			t.Fatalf("frame %d cell (%d,%d): %v (a planted fault: %v)", k, iy, ix, v, isBad)
		}
	}
	mc := s.MaskedCells()
	if mc[MaskBound] != 24 || mc[MaskSpike] != 2 || len(mc) != 2 {
		t.Errorf("masked %v; want 24 beyond the bound and 2 spikes", mc)
	}
	// Rewinding does not count again.
	s.Rewind()
	readFrames(t, s)
	if s.MaskedCells()[MaskBound] != 24 {
		t.Errorf("counts grew on the second pass: %v", s.MaskedCells())
	}
	s2, err := OpenElevation(path, ElevationOptions{MaxAbsElevationM: -1, SpikeFactor: -1})
	if err != nil {
		t.Fatal(err)
	}
	defer s2.Close()
	got, _ = readFrames(t, s2)
	if v := got[(0*ny+3)*nx+7]; v != 999 {
		t.Errorf("with the tests off the planted 999 reads %v", v)
	}
	if len(s2.MaskedCells()) != 0 {
		t.Errorf("tests off but masked %v", s2.MaskedCells())
	}
}

// TestSpikeKeepsGroupOnFlatSea: a frame that is flat except for one wave
// group of 0.8 m crests keeps the group (the 1 m floor of the spike test).
func TestSpikeKeepsGroupOnFlatSea(t *testing.T) {
	const nt, ny, nx = 3, 32, 128
	bad := map[[3]int]float32{}
	for k := range nt {
		for iy := range ny {
			for ix := range nx {
				x := float64(ix) - 64
				bad[[3]int{k, iy, ix}] = float32(0.8 * math.Exp(-x*x/50) * math.Cos(0.6*x))
			}
		}
	}
	path := filepath.Join(t.TempDir(), "group.nc")
	seaFile(t, path, nt, ny, nx, bad)
	s, err := OpenElevation(path, ElevationOptions{})
	if err != nil {
		t.Fatal(err)
	}
	defer s.Close()
	readFrames(t, s)
	if mc := s.MaskedCells(); len(mc) != 0 {
		t.Errorf("the wave group was cut: %v", mc)
	}
}

// TestTruncatedClassicElevation: a classic-format record cut at 10 %, 50 %
// and 99 % is refused with the sizes named; libnetcdf alone reads the
// missing part as zeros.
func TestTruncatedClassicElevation(t *testing.T) {
	dir := fieldFiles(t)
	data, err := os.ReadFile(filepath.Join(dir, "classic.nc"))
	if err != nil {
		t.Fatal(err)
	}
	for _, frac := range []float64{0.5, 0.99} {
		path := filepath.Join(dir, "cut.nc")
		os.WriteFile(path, data[:int(frac*float64(len(data)))], 0o644)
		_, err := OpenElevation(path, ElevationOptions{})
		if err == nil || !errors.Is(err, netcdf.ErrTruncated) || !strings.Contains(err.Error(), path) || !strings.Contains(err.Error(), "is truncated") {
			t.Errorf("cut at %.0f %%: %v", 100*frac, err)
		}
	}
	path := filepath.Join(dir, "cut.nc")
	os.WriteFile(path, data[:len(data)/10], 0o644)
	if _, err := OpenElevation(path, ElevationOptions{}); err == nil || !strings.Contains(err.Error(), path) {
		t.Errorf("cut at 10 %%: %v", err)
	}
}

// damagedScript writes 20 frames of 16 x 12 cells, one frame per chunk,
// with Fletcher-32 checksums (netCDF4-python), frames 5, 9 and 13 holding
// a constant the test can find in the file to damage their chunks.
const damagedScript = `
import sys, numpy as np, netCDF4
path = sys.argv[1]
nt, ny, nx = 20, 12, 16
with netCDF4.Dataset(path, 'w') as ds:
    ds.createDimension('time', None); ds.createDimension('y', ny); ds.createDimension('x', nx)
    t = ds.createVariable('time', 'f8', ('time',)); t.units = 'seconds since 2026-06-01T00:00:00Z'
    ds.createVariable('y', 'f8', ('y',))[:] = np.arange(ny) * 0.5
    ds.createVariable('x', 'f8', ('x',))[:] = np.arange(nx) * 0.5
    e = ds.createVariable('eta', 'f4', ('time', 'y', 'x'), chunksizes=(1, ny, nx), fletcher32=True)
    for k in range(nt):
        t[k] = 0.1 * k
        if k in (5, 9, 13):
            e[k] = np.full((ny, nx), 0.123 + 0.001 * k, 'f4')
        else:
            e[k] = np.sin(np.arange(ny * nx).reshape(ny, nx) * 0.1 + k).astype('f4')
`

// damage flips a byte inside the stored chunk of frame k of the damaged
// record (found by its constant value).
func damage(t *testing.T, data []byte, k int) {
	t.Helper()
	v := math.Float32bits(float32(0.123 + 0.001*float64(k)))
	pat := []byte{byte(v), byte(v >> 8), byte(v >> 16), byte(v >> 24)}
	pat = slices.Concat(pat, pat, pat, pat)
	i := strings.Index(string(data), string(pat))
	if i < 0 {
		t.Fatalf("frame %d not found in the file", k)
	}
	data[i+100] ^= 0xff
}

// TestUnreadableFrames: a damaged chunk (its checksum fails) costs only its
// frame, which is skipped and counted; more damaged frames than
// max_unreadable_fraction allows refuse the record with a sentence.
func TestUnreadableFrames(t *testing.T) {
	dir := t.TempDir()
	path := filepath.Join(dir, "fletcher.nc")
	runPython(t, damagedScript, path)
	data, err := os.ReadFile(path)
	if err != nil {
		t.Fatal(err)
	}
	one := slices.Clone(data)
	damage(t, one, 9)
	p1 := filepath.Join(dir, "one.nc")
	os.WriteFile(p1, one, 0o644)
	s, err := OpenElevation(p1, ElevationOptions{})
	if err != nil {
		t.Fatal(err)
	}
	defer s.Close()
	for pass := range 2 {
		_, idx := readFrames(t, s)
		if len(idx) != 19 || slices.Contains(idx, 9) {
			t.Errorf("pass %d: frames %v; want all but 9", pass, idx)
		}
		if sk := s.Skipped(); sk[SkipUnreadableFrame] != 1 || len(sk) != 1 {
			t.Errorf("pass %d: skipped %v", pass, sk)
		}
		s.Rewind()
	}
	three := slices.Clone(data)
	for _, k := range []int{5, 9, 13} {
		damage(t, three, k)
	}
	p3 := filepath.Join(dir, "three.nc")
	os.WriteFile(p3, three, 0o644)
	s3, err := OpenElevation(p3, ElevationOptions{})
	if err != nil {
		t.Fatal(err)
	}
	defer s3.Close()
	var f Frame
	for err == nil {
		err = s3.Next(&f)
	}
	if err == io.EOF || !strings.Contains(err.Error(), p3) || !strings.Contains(err.Error(), "frames are unreadable") || !strings.Contains(err.Error(), "max_unreadable_fraction") {
		t.Errorf("three damaged frames of 20: %v", err)
	}
	// A larger allowance skips all three.
	s4, err := OpenElevation(p3, ElevationOptions{MaxUnreadableFraction: 0.2})
	if err != nil {
		t.Fatal(err)
	}
	defer s4.Close()
	if _, idx := readFrames(t, s4); len(idx) != 17 || s4.Skipped()[SkipUnreadableFrame] != 3 {
		t.Errorf("allowance 0.2: %d frames, skipped %v", len(idx), s4.Skipped())
	}
}

// TestDamagedClassicHeaderElevation: a classic header on which libnetcdf
// 4.9 crashes is refused by OpenElevation with a sentence.
func TestDamagedClassicHeaderElevation(t *testing.T) {
	path := filepath.Join("..", "internal", "netcdf", "testdata", "damaged", "dim-count-negative-138.nc")
	_, err := OpenElevation(path, ElevationOptions{})
	if err == nil || !strings.Contains(err.Error(), path) || !strings.Contains(err.Error(), "is not a NetCDF file or is damaged") {
		t.Errorf("%v", err)
	}
}

// conventionScript writes files that exercise how the variable, the
// dimensions and the grid are found.
const conventionScript = `
import sys, numpy as np, netCDF4
d = sys.argv[1]
nt, ny, nx = 4, 5, 6
x = 2.0 + 0.5 * np.arange(nx); y = -1.0 + 0.25 * np.arange(ny)
data = np.arange(nt * ny * nx, dtype='f4').reshape(nt, ny, nx) * 0.01
def base(path, dims=('time', 'nj', 'ni')):
    ds = netCDF4.Dataset(path, 'w')
    ds.createDimension(dims[0], nt); ds.createDimension(dims[1], ny); ds.createDimension(dims[2], nx)
    t = ds.createVariable(dims[0], 'f8', (dims[0],)); t.units = 'seconds since 2026-06-01T00:00:00Z'; t[:] = 0.1 * np.arange(nt)
    return ds
# 2-D coordinate arrays of a regular grid, listed in the coordinates attribute.
ds = base(d + '/coords2d.nc')
X, Y = np.meshgrid(x, y)
xv = ds.createVariable('xc', 'f8', ('nj', 'ni')); xv.units = 'm'; xv.standard_name = 'projection_x_coordinate'; xv[:] = X
yv = ds.createVariable('yc', 'f8', ('nj', 'ni')); yv.units = 'm'; yv.standard_name = 'projection_y_coordinate'; yv[:] = Y
e = ds.createVariable('eta', 'f4', ('time', 'nj', 'ni')); e.coordinates = 'xc yc'; e.units = 'm'; e[:] = data
ds.close()
# The same, transposed in space: eta(time, ni, nj).
ds = base(d + '/coords2d_t.nc')
xv = ds.createVariable('xc', 'f8', ('nj', 'ni')); xv.units = 'm'; xv.axis = 'X'; xv[:] = X
yv = ds.createVariable('yc', 'f8', ('nj', 'ni')); yv.units = 'm'; yv.axis = 'Y'; yv[:] = Y
e = ds.createVariable('eta', 'f4', ('time', 'ni', 'nj')); e.units = 'm'; e[:] = np.transpose(data, (0, 2, 1))
ds.close()
# A rotated grid: refused.
ds = base(d + '/rotated.nc')
c, s = np.cos(0.2), np.sin(0.2)
xv = ds.createVariable('xc', 'f8', ('nj', 'ni')); xv.units = 'm'; xv.axis = 'X'; xv[:] = c * X - s * Y
yv = ds.createVariable('yc', 'f8', ('nj', 'ni')); yv.units = 'm'; yv.axis = 'Y'; yv[:] = s * X + c * Y
e = ds.createVariable('eta', 'f4', ('time', 'nj', 'ni')); e.units = 'm'; e[:] = data
ds.close()
# Two variables with the same elevation standard_name: ambiguous.
ds = base(d + '/ambiguous.nc', ('time', 'y', 'x'))
ds.createVariable('y', 'f8', ('y',))[:] = y; ds.createVariable('x', 'f8', ('x',))[:] = x
for n in ('zraw', 'zfilt'):
    v = ds.createVariable(n, 'f4', ('time', 'y', 'x')); v.standard_name = 'sea_surface_height_above_mean_sea_level'; v[:] = data
ds.close()
# Dimensions that nothing names: a, b.
ds = base(d + '/anonymous.nc', ('time', 'a', 'b'))
ds.createVariable('a', 'f8', ('a',))[:] = y; ds.createVariable('b', 'f8', ('b',))[:] = x
ds.createVariable('eta', 'f4', ('time', 'a', 'b'))[:] = data
ds.close()
data.astype('<f4').tofile(d + '/want.bin')
`

// TestGridConventions: 2-D coordinate arrays of a regular grid are read in
// either dimension order; a rotated grid, an ambiguous standard_name and
// dimensions nothing identifies are refused with the setting that helps.
func TestGridConventions(t *testing.T) {
	dir := t.TempDir()
	runPython(t, conventionScript, dir)
	want := readF32(t, filepath.Join(dir, "want.bin"))
	for _, name := range []string{"coords2d", "coords2d_t"} {
		s, err := OpenElevation(filepath.Join(dir, name+".nc"), ElevationOptions{})
		if err != nil {
			t.Fatalf("%s: %v", name, err)
		}
		g := s.Meta().Grid
		if g.Nx() != 6 || g.Ny() != 5 || g.X[0] != 2 || g.Dx() != 0.5 || g.Y[0] != -1 || g.Dy() != 0.25 {
			t.Errorf("%s: grid %+v", name, g)
		}
		got, _ := readFrames(t, s)
		if !slices.Equal(got, want) {
			t.Errorf("%s: values differ from the written ones", name)
		}
		s.Close()
	}
	openErrOpt(t, filepath.Join(dir, "rotated.nc"), ElevationOptions{}, "does not describe a regular grid", "rotated")
	openErrOpt(t, filepath.Join(dir, "ambiguous.nc"), ElevationOptions{}, "several variables", "zraw, zfilt", "set variable")
	if s, err := OpenElevation(filepath.Join(dir, "ambiguous.nc"), ElevationOptions{Variable: "zfilt"}); err != nil {
		t.Error(err)
	} else {
		s.Close()
	}
	openErrOpt(t, filepath.Join(dir, "anonymous.nc"), ElevationOptions{}, "cannot tell which dimension", "y_dimension", "x_dimension")
	s, err := OpenElevation(filepath.Join(dir, "anonymous.nc"), ElevationOptions{YDimension: "a", XDimension: "b"})
	if err != nil {
		t.Fatal(err)
	}
	defer s.Close()
	if got, _ := readFrames(t, s); !slices.Equal(got, want) {
		t.Error("anonymous dimensions set by name: values differ")
	}
	openErrOpt(t, filepath.Join(dir, "anonymous.nc"), ElevationOptions{YDimension: "c"}, `no dimension "c" (the setting y_dimension)`)
}

// openErrOpt is openErr with options.
func openErrOpt(t *testing.T, path string, opt ElevationOptions, fragments ...string) {
	t.Helper()
	s, err := OpenElevation(path, opt)
	if err == nil {
		s.Close()
		t.Fatalf("OpenElevation(%s) succeeded; want an error", path)
	}
	msg := err.Error()
	for _, f := range append([]string{path}, fragments...) {
		if !strings.Contains(msg, f) {
			t.Errorf("error lacks %q: %v", f, err)
		}
	}
	if strings.Contains(msg, "\n") {
		t.Errorf("error is not one line: %v", err)
	}
}

// TestChunkRowOverLimit: a file whose chunk row along time exceeds the
// read limit is read frame by frame, with the same values, and the source
// returns a warning that says why it is slow and how to rechunk.
func TestChunkRowOverLimit(t *testing.T) {
	dir := fieldFiles(t)
	path := filepath.Join(dir, "chunked.nc") // chunks of 4 frames
	s, err := OpenElevation(path, ElevationOptions{ReadBlockLimitMB: 1e-4})
	if err != nil {
		t.Fatal(err)
	}
	defer s.Close()
	if s.BlockFrames() != 1 || len(s.Warnings()) != 1 || !strings.Contains(s.Warnings()[0], "read_block_limit_mb") || !strings.Contains(s.Warnings()[0], "nccopy -c") {
		t.Errorf("block %d frames, warnings %q", s.BlockFrames(), s.Warnings())
	}
	got, _ := readFrames(t, s)
	want := readF32(t, filepath.Join(dir, "chunked.want"))
	if !slices.EqualFunc(got, want, sameF32) {
		t.Error("values differ when read frame by frame")
	}
	d, err := OpenElevation(path, ElevationOptions{})
	if err != nil {
		t.Fatal(err)
	}
	defer d.Close()
	if (d.BlockFrames()%4 != 0 && d.BlockFrames() != 9) || len(d.Warnings()) != 0 {
		t.Errorf("default limit: %d frames per block, warnings %q", d.BlockFrames(), d.Warnings())
	}
}
