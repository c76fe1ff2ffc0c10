package ingest

import (
	"errors"
	"math"
	"os"
	"path/filepath"
	"strconv"
	"strings"
	"syscall"
	"testing"
	"time"

	"crestspeed/internal/netcdf"
)

// cfScript opens a written file with xarray (decode_cf, every warning an
// error) and netCDF4-python and checks the CF-1.8 and ACDD-1.3 rules for
// the attributes the writer uses, naming the section of each; it checks the
// georeference with Vincenty's inverse geodesic on the WGS 84 ellipsoid
// (Vincenty 1975, Survey Review 23(176), 88-93), independent of the
// writer's local-plane formula.
const cfScript = `
import sys, re, math, warnings, datetime
import numpy as np, netCDF4, xarray as xr
warnings.simplefilter('error')
path = sys.argv[1]
heading, lat0, lon0, dx = map(float, sys.argv[2:6])
fails = []
def check(cond, rule):
    if not cond:
        fails.append(rule)

ds = xr.open_dataset(path, decode_cf=True)
nc = netCDF4.Dataset(path)
g = nc.__dict__
# CF-1.8 §2.6.1 Conventions, §2.6.2 description of contents.
check('CF-1.8' in [c.strip() for c in g['Conventions'].split(',')], '§2.6.1 Conventions names CF-1.8')
for a in ('title', 'history', 'source', 'institution'):
    check(isinstance(g.get(a), str) and g[a], '§2.6.2 %s is a non-empty string' % a)
check(all(re.match(r'^\d{4}-\d\d-\d\dT', l) for l in g['history'].splitlines()[1:]), '§2.6.2 history lines start with a time')
# §2.5.1 _FillValue of the variable's type.
for v in ('eta',):
    check(np.asarray(nc[v]._FillValue).dtype == nc[v].dtype, '§2.5.1 _FillValue of %s has its type' % v)
# §3.1 units.
for v, u in (('eta', 'm'), ('x', 'm'), ('y', 'm'), ('lat', 'degrees_north'), ('lon', 'degrees_east')):
    check(nc[v].units == u, '§3.1 units of %s are %s' % (v, u))
# §3.3 standard names: only names of the CF table, on what they describe.
sn = {v: nc[v].standard_name for v in nc.variables if 'standard_name' in nc[v].ncattrs()}
check(sn == {'time': 'time', 'lat': 'latitude', 'lon': 'longitude'}, '§3.3 standard names %s' % sn)
check('standard_name' not in nc['eta'].ncattrs(), '§3.3 eta (elevation about the record mean) has no datum standard name')
# §3.5 flags.
f = nc['foam']
fv = np.asarray(f.flag_values)
check(fv.dtype == f.dtype, '§3.5 flag_values of the variable type')
check(len(fv) == len(f.flag_meanings.split()) and len(set(fv.tolist())) == len(fv), '§3.5 one meaning per distinct flag value')
check(all(re.match(r'^[A-Za-z0-9_.+@-]+$', w) for w in f.flag_meanings.split()), '§3.5 flag meanings are single words')
# §4 axes, §4.4 time.
axes = [nc[v].axis for v in nc.variables if 'axis' in nc[v].ncattrs()]
check(sorted(axes) == ['T', 'X', 'Y'], '§4 one of each axis X, Y, T')
check(re.match(r'^seconds since \d{4}-\d\d-\d\d', nc['time'].units) is not None and nc['time'].calendar == 'standard', '§4.4 time units and calendar')
# §5 auxiliary coordinates, §5.6 grid mapping.
for v in ('eta', 'foam'):
    for c in nc[v].coordinates.split():
        check(set(nc[c].dimensions) <= set(nc[v].dimensions), '§5 dimensions of %s are a subset of %s' % (c, v))
    m = re.match(r'^(\w+): (.+)$', nc[v].grid_mapping)
    check(m is not None and m.group(1) in nc.variables and all(c in nc.variables for c in m.group(2).split()), '§5.6 grid_mapping of %s names a mapping and its coordinates' % v)
check(nc['crs'].grid_mapping_name == 'latitude_longitude', '§5.6 grid_mapping_name')
# ACDD-1.3 highly recommended and recommended attributes.
check('ACDD-1.3' in g['Conventions'], 'ACDD Conventions')
for a in ('title', 'summary', 'keywords', 'date_created', 'time_coverage_start', 'time_coverage_end', 'geospatial_bounds', 'platform'):
    check(a in g, 'ACDD %s present' % a)
iso = lambda s: datetime.datetime.fromisoformat(s.replace('Z', '+00:00'))
t = ds['time'].values
t0 = iso(g['time_coverage_start']).replace(tzinfo=None)
t1 = iso(g['time_coverage_end']).replace(tzinfo=None)
check(np.datetime64(t0) == t[0] and np.datetime64(t1) == t[-1], 'ACDD time coverage matches the decoded times')
check(g['time_coverage_duration'] == 'PT%sS' % ('%g' % ((t[-1] - t[0]) / np.timedelta64(1, 's'))), 'ACDD time_coverage_duration')
lat, lon = nc['lat'][:], nc['lon'][:]
check(g['geospatial_lat_min'] == lat.min() and g['geospatial_lat_max'] == lat.max() and g['geospatial_lon_min'] == lon.min() and g['geospatial_lon_max'] == lon.max(), 'ACDD geospatial extremes')
check(g['geospatial_bounds'].startswith('POLYGON ((') and g['geospatial_bounds_crs'] == 'EPSG:4326', 'ACDD geospatial bounds')
# Numbers stored as numbers.
for a in ('grid_spacing_m', 'water_depth_m', 'grid_heading_deg', 'gain_db'):
    check(isinstance(g[a], (float, np.floating)), 'numeric attribute %s is a number' % a)
check(g['grid_spacing_m'] == dx, 'grid_spacing_m is the spacing')
# The data decode: float32 metres with NaN, foam bytes.
check(ds['eta'].dtype == np.float32 and np.isnan(ds['eta'].values).sum() == 1, 'eta decodes as float32 with its NaN')

def vincenty(p1, l1, p2, l2):
    a, f = 6378137.0, 1 / 298.257223563
    b = (1 - f) * a
    U1, U2 = math.atan((1 - f) * math.tan(math.radians(p1))), math.atan((1 - f) * math.tan(math.radians(p2)))
    L = math.radians(l2 - l1); lam = L
    for _ in range(200):
        sl, cl = math.sin(lam), math.cos(lam)
        ss = math.hypot(math.cos(U2) * sl, math.cos(U1) * math.sin(U2) - math.sin(U1) * math.cos(U2) * cl)
        cs = math.sin(U1) * math.sin(U2) + math.cos(U1) * math.cos(U2) * cl
        sig = math.atan2(ss, cs)
        sa = math.cos(U1) * math.cos(U2) * sl / ss
        c2a = 1 - sa * sa
        c2sm = cs - 2 * math.sin(U1) * math.sin(U2) / c2a
        C = f / 16 * c2a * (4 + f * (4 - 3 * c2a))
        prev = lam
        lam = L + (1 - C) * f * sa * (sig + C * ss * (c2sm + C * cs * (-1 + 2 * c2sm * c2sm)))
        if abs(lam - prev) < 1e-13:
            break
    u2 = c2a * (a * a - b * b) / (b * b)
    A = 1 + u2 / 16384 * (4096 + u2 * (-768 + u2 * (320 - 175 * u2)))
    B = u2 / 1024 * (256 + u2 * (-128 + u2 * (74 - 47 * u2)))
    ds_ = B * ss * (c2sm + B / 4 * (cs * (-1 + 2 * c2sm ** 2) - B / 6 * c2sm * (-3 + 4 * ss ** 2) * (-3 + 4 * c2sm ** 2)))
    s = b * A * (sig - ds_)
    az = math.degrees(math.atan2(math.cos(U2) * math.sin(lam), math.cos(U1) * math.sin(U2) - math.sin(U1) * math.cos(U2) * math.cos(lam)))
    return s, az % 360
x, y = nc['x'][:], nc['y'][:]
ny, nx = lat.shape
for (i, j) in ((0, nx - 1), (ny - 1, 0), (ny - 1, nx - 1)):
    s, az = vincenty(lat0, lon0, lat[i, j], lon[i, j])
    d = math.hypot(x[j], y[i])
    bearing = (heading - math.degrees(math.atan2(y[i], x[j]))) % 360
    check(abs(s - d) < 1e-6 * d, 'geodesic distance %g m against grid distance %g m' % (s, d))
    check(abs((az - bearing + 180) % 360 - 180) < 0.01, 'geodesic azimuth %g against grid bearing %g' % (az, bearing))
if fails:
    sys.exit('CF/ACDD rules failed:\n' + '\n'.join(fails))
print('OK')
`

// TestWrittenFileConventions writes a georeferenced file with foam and
// checks it with xarray and netCDF4-python against the CF-1.8 and ACDD-1.3
// rules for the attributes used (sections named in the script).
func TestWrittenFileConventions(t *testing.T) {
	const nt, ny, nx = 4, 30, 40
	g := Grid{X: make([]float64, nx), Y: make([]float64, ny)}
	for i := range g.X {
		g.X[i] = 5 * float64(i)
	}
	for i := range g.Y {
		g.Y[i] = -60 + 5*float64(i)
	}
	geo := &Georef{HeadingDeg: 30, LatDeg: 57.1, LonDeg: 11.2}
	path := filepath.Join(t.TempDir(), "geo.nc")
	w, err := CreateElevation(path, g, WriteOptions{
		TimeUnits: "seconds since 2026-06-14T09:00:00Z", DepthM: 18, WithFoam: true, Georef: geo,
		Platform: "Orsund Bank research platform (invented)",
		Attrs:    map[string]string{"institution": "test bench", "grid_spacing_m": "5"},
		NumAttrs: map[string]float64{"gain_db": 3.5},
		Created:  time.Date(2026, 6, 15, 12, 0, 0, 0, time.UTC),
	})
	if err != nil {
		t.Fatal(err)
	}
	defer w.Abort()
	eta := make([]float32, ny*nx)
	foam := make([]uint8, ny*nx)
	for k := range nt {
		for i := range eta {
			eta[i] = float32(0.1 * math.Sin(float64(i+k)))
			foam[i] = uint8((i + k) % 2)
		}
		if k == 2 {
			eta[7] = float32(math.NaN())
		}
		if err := w.WriteFrame(10+0.25*float64(k), eta, foam); err != nil {
			t.Fatal(err)
		}
	}
	if err := w.Commit(); err != nil {
		t.Fatal(err)
	}
	out := runPython(t, cfScript, path, strconv.FormatFloat(geo.HeadingDeg, 'g', -1, 64),
		strconv.FormatFloat(geo.LatDeg, 'g', -1, 64), strconv.FormatFloat(geo.LonDeg, 'g', -1, 64), "5")
	if strings.TrimSpace(string(out)) != "OK" {
		t.Errorf("conventions: %s", out)
	}
	// The file reads back, the georeference ignored by the reader.
	s, err := OpenElevation(path, ElevationOptions{})
	if err != nil {
		t.Fatal(err)
	}
	s.Close()
}

// TestWriteDiskFull: elevation maps written to a full disk fail with a
// sentence that names the file and says the disk is full (libnetcdf says
// "NetCDF: HDF error"), and nothing is left behind.
func TestWriteDiskFull(t *testing.T) {
	dir := t.TempDir()
	if err := syscall.Mount("tmpfs", dir, "tmpfs", 0, "size=512k"); err != nil {
		t.Skipf("cannot mount a small tmpfs to fill (%v); needs root", err)
	}
	defer syscall.Unmount(dir, syscall.MNT_DETACH)
	path := filepath.Join(dir, "maps.nc")
	const ny, nx = 64, 64
	g := Grid{X: make([]float64, nx), Y: make([]float64, ny)}
	for i := range nx {
		g.X[i], g.Y[i] = float64(i), float64(i)
	}
	w, err := CreateElevation(path, g, WriteOptions{Deflate: -1})
	if err != nil {
		t.Fatal(err)
	}
	eta := make([]float32, ny*nx)
	for i := range eta {
		eta[i] = float32(i)
	}
	for k := 0; k < 100 && err == nil; k++ {
		err = w.WriteFrame(float64(k), eta, nil)
	}
	if err == nil {
		err = w.Commit()
	}
	w.Abort()
	if err == nil || !errors.Is(err, netcdf.ErrDiskFull) || !strings.Contains(err.Error(), path) || !strings.Contains(err.Error(), "is full") {
		t.Errorf("%v; want a full-disk sentence naming %s", err, path)
	}
	if ents, _ := os.ReadDir(dir); len(ents) != 0 {
		t.Errorf("left behind: %v", ents)
	}
}
