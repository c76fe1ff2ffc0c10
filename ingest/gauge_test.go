package ingest

import (
	"bytes"
	"math"
	"path/filepath"
	"strings"
	"testing"

	"crestspeed/internal/pyref"
)

// FuzzGaugeCSV: any bytes give a series or an error, never a panic, and a
// series has as many times as elevations.
func FuzzGaugeCSV(f *testing.F) {
	for _, s := range []string{
		"time_s,eta_m\n0,0.1\n0.25,0.2\n",
		"utc,eta_m\n2026-06-14T09:00:00Z,0.1\n2026-06-14T09:00:00.25Z,NaN\n",
		"time_s;eta_m\n0;1\n",
		"\ufefftime_s,heave_m\n0,\"1\n",
		"eta_m\n1\n",
		"time_s,eta_m\n1e309,1\n-0,inf\n",
	} {
		f.Add([]byte(s))
	}
	f.Fuzz(func(t *testing.T, data []byte) {
		g, err := ReadGaugeCSV(bytes.NewReader(data), "fuzz.csv", "")
		if err != nil {
			return
		}
		if len(g.Times) != len(g.Eta) || len(g.Times) == 0 {
			t.Fatalf("%d times and %d elevations", len(g.Times), len(g.Eta))
		}
		_ = g.check()
	})
}

func TestGaugeCSVColumnsAndRefusals(t *testing.T) {
	g, err := ReadGaugeCSV(strings.NewReader("station,utc,eta_m\nA,2026-06-14T09:00:01.5Z,0.25\nA,not a time,0.3\nA,2026-06-14T09:00:02Z,-0.125\n"), "g.csv", "")
	if err != nil {
		t.Fatal(err)
	}
	if len(g.Times) != 2 || g.Times[1]-g.Times[0] != 0.5 || g.Eta[1] != -0.125 || g.Origin.Second() != 1 {
		t.Errorf("read %+v", g)
	}
	for _, c := range []struct{ in, want string }{
		{"when,height\n1,2\n", "no time column"},
		{"time_s,height\n1,2\n", "no elevation column"},
		{"time_s,eta_m\nx,y\n", "no readable sample"},
	} {
		if _, err := ReadGaugeCSV(strings.NewReader(c.in), "g.csv", ""); err == nil || !strings.Contains(err.Error(), c.want) {
			t.Errorf("%q: %v, want %q", c.in, err, c.want)
		}
	}
}

// A CF time series written by netCDF4-python (sea_surface_height standard
// name, minutes since an instant, a fill value) reads back with its times
// in seconds from that instant and the fill as unknown.
func TestGaugeNetCDF(t *testing.T) {
	p := filepath.Join(t.TempDir(), "buoy.nc")
	var out struct{ OK bool }
	pyref.JSON(t, `
import json, sys, numpy as np, netCDF4
a = json.load(open(sys.argv[1]))
d = netCDF4.Dataset(a["path"], "w")
d.createDimension("time", 40)
t = d.createVariable("time", "f8", ("time",)); t.units = "minutes since 2026-06-14 09:00:00"; t.standard_name = "time"
t[:] = np.arange(40) * 0.5 / 60
h = d.createVariable("heave", "f4", ("time",), fill_value=-999.0); h.standard_name = "sea_surface_height_above_mean_sea_level"
v = np.sin(np.arange(40) * 0.3).astype("f4"); v[7] = -999.0
h[:] = np.ma.masked_equal(v, -999.0)
d.close()
print(json.dumps({"OK": True}))
`, map[string]string{"path": p}, &out)
	g, err := ReadGauge(p, "")
	if err != nil {
		t.Fatal(err)
	}
	if len(g.Times) != 40 || math.Abs(g.Times[3]-1.5) > 1e-9 || !math.IsNaN(g.Eta[7]) || math.Abs(g.Eta[2]-math.Sin(0.6)) > 1e-6 {
		t.Errorf("times %v…, eta[2] %v, eta[7] %v", g.Times[:4], g.Eta[2], g.Eta[7])
	}
	if g.Origin.Hour() != 9 || g.Origin.Year() != 2026 {
		t.Errorf("origin %v", g.Origin)
	}
}
