package main

import (
	"bytes"
	"crestspeed/internal/pyref"
	"encoding/json"
	"math"
	"os"
	"path/filepath"
	"strings"
	"testing"
)

func synthSmall(t *testing.T, dir string) string {
	t.Helper()
	cfg := filepath.Join(dir, "c.yaml")
	os.WriteFile(cfg, []byte(`synthesize:
  kind: jonswap
  jonswap: {hs_m: 1.0, tp_s: 4.0, spreading_s: 15, seed: 3, components: 128, f_max_over_fp: 2.5}
  grid: {nx: 96, ny: 64, duration_s: 40, frame_rate_hz: 10}
`), 0o644)
	out := filepath.Join(dir, "s.nc")
	if _, _, err := run(t, "synthesize", "--config", cfg, "--out", out, "--quiet"); err != nil {
		t.Fatal(err)
	}
	return out
}

// Results must not depend on the number of workers (docs/architecture.md).
func TestTrackDeterministicAcrossWorkers(t *testing.T) {
	dir := t.TempDir()
	in := synthSmall(t, dir)
	var outs [][]byte
	for _, w := range []string{"1", "2"} {
		od := filepath.Join(dir, "w"+w)
		if _, _, err := run(t, "track", "--input", in, "--out", od, "--workers", w, "--quiet", "--no-report"); err != nil {
			t.Fatal(err)
		}
		b, err := os.ReadFile(filepath.Join(od, "crests.csv"))
		if err != nil {
			t.Fatal(err)
		}
		outs = append(outs, b)
	}
	if len(outs[0]) < 1000 || !bytes.Equal(outs[0], outs[1]) {
		t.Fatalf("crests.csv differs between 1 and 2 workers (%d vs %d bytes)", len(outs[0]), len(outs[1]))
	}
	// the header is the documented one
	if !strings.HasPrefix(string(outs[0]), "track_id,time_s,x_m,y_m,crest_elevation_m,zero_crossing_width_m,steepness_sc,crest_speed_mps,phase_speed_peak_mps,phase_speed_local_mps,ratio_peak,ratio_local") {
		t.Fatalf("unexpected header: %.200s", outs[0])
	}
	var sum map[string]any
	b, _ := os.ReadFile(filepath.Join(dir, "w1", "summary.json"))
	if err := json.Unmarshal(b, &sum); err != nil {
		t.Fatal(err)
	}
	for _, k := range []string{"tool", "frames", "sea_state", "crests", "crest_speed_ratio", "masked_fraction"} {
		if _, ok := sum[k]; !ok {
			t.Errorf("summary.json lacks %q", k)
		}
	}
	// refuses to overwrite without --force
	if _, _, err := run(t, "track", "--input", in, "--out", filepath.Join(dir, "w1"), "--quiet", "--no-report"); err == nil {
		t.Error("track overwrote finished outputs without --force")
	}
}

func TestTrackBadInput(t *testing.T) {
	dir := t.TempDir()
	notnc := filepath.Join(dir, "x.nc")
	os.WriteFile(notnc, []byte("this is not a NetCDF file\n"), 0o644)
	in := synthSmall(t, dir)
	cases := [][]string{
		{"track", "--input", filepath.Join(dir, "missing.nc"), "--out", filepath.Join(dir, "o1")},
		{"track", "--input", notnc, "--out", filepath.Join(dir, "o2")},
		{"track", "--input", in, "--out", filepath.Join(dir, "o3"), "--depth", "-4"},
		{"track", "--input", in},
		{"track", "--out", filepath.Join(dir, "o5")},
	}
	for _, args := range cases {
		_, _, err := run(t, append(args, "--quiet", "--no-report")...)
		if err == nil {
			t.Errorf("%v: no error", args)
			continue
		}
		t.Logf("%v → %s", args[1:], sentence(err))
		for _, o := range []string{"o1", "o2", "o3", "o5"} {
			if _, err := os.Stat(filepath.Join(dir, o, "crests.csv")); err == nil {
				t.Errorf("%v left crests.csv behind", args)
			}
		}
	}
}

// A record spread over several files — here split by netCDF4-python into
// three files of unequal length, the layout of hourly files or of the parts
// of a partitioned reconstruction — tracks exactly as the single file does,
// whether given as a glob or as an index of parts.
func TestTrackMultiFileRecord(t *testing.T) {
	dir := t.TempDir()
	in := synthSmall(t, dir)
	parts := filepath.Join(dir, "parts")
	os.MkdirAll(parts, 0o755)
	var res struct{ Files []string }
	pyref.JSON(t, `
import json, sys, netCDF4
a = json.load(open(sys.argv[1]))
src = netCDF4.Dataset(a["in"])
n = len(src.dimensions["time"])
cuts = [0, 97, 250, n]
files = []
for i in range(3):
    p = "%s/maps_%02d.nc" % (a["dir"], i)
    dst = netCDF4.Dataset(p, "w", format="NETCDF4")
    dst.setncatts({k: src.getncattr(k) for k in src.ncattrs()})
    for d, v in src.dimensions.items():
        dst.createDimension(d, None if d == "time" else len(v))
    for name, v in src.variables.items():
        fill = v.getncattr("_FillValue") if "_FillValue" in v.ncattrs() else None
        w = dst.createVariable(name, v.datatype, v.dimensions, fill_value=fill)
        w.setncatts({k: v.getncattr(k) for k in v.ncattrs() if k != "_FillValue"})
        if "time" in v.dimensions:
            w[:] = v[cuts[i]:cuts[i+1]]
        else:
            w[:] = v[:]
    dst.close()
    files.append(p)
print(json.dumps({"Files": files}))
`, map[string]string{"in": in, "dir": parts}, &res)
	index := filepath.Join(dir, "parts.txt")
	os.WriteFile(index, []byte(strings.Join(res.Files, "\n")+"\n"), 0o644)
	read := func(input, name string) []byte {
		od := filepath.Join(dir, name)
		if _, _, err := run(t, "track", "--input", input, "--out", od, "--quiet", "--no-report", "--workers", "2"); err != nil {
			t.Fatal(err)
		}
		b, err := os.ReadFile(filepath.Join(od, "crests.csv"))
		if err != nil {
			t.Fatal(err)
		}
		return b
	}
	single := read(in, "single")
	if glob := read(filepath.Join(parts, "maps_*.nc"), "glob"); !bytes.Equal(single, glob) {
		t.Errorf("the glob of three files gives other crests than the single file (%d vs %d bytes)", len(glob), len(single))
	}
	if idx := read(index, "index"); !bytes.Equal(single, idx) {
		t.Errorf("the index of three files gives other crests than the single file")
	}
}

// With the grid's heading given, summary.json gives the mean direction as
// true bearings too: toward = heading − θ0 and from = toward + 180°
// (θ0 counter-clockwise from +x, bearings clockwise from north), and the
// site block says where the heading came from.
func TestTrackTrueBearings(t *testing.T) {
	dir := t.TempDir()
	in := synthSmall(t, dir)
	out := filepath.Join(dir, "tracks")
	if _, _, err := run(t, "track", "--input", in, "--out", out, "--heading", "200", "--quiet", "--no-report"); err != nil {
		t.Fatal(err)
	}
	var sum struct {
		SeaState struct {
			Mean float64 `json:"mean_direction_deg"`
			To   float64 `json:"direction_to_deg_true"`
			From float64 `json:"direction_from_deg_true"`
		} `json:"sea_state"`
		Site struct {
			Heading float64 `json:"grid_heading_deg"`
			Source  string  `json:"georeference_source"`
			Name    string  `json:"name"`
		} `json:"site"`
	}
	b, _ := os.ReadFile(filepath.Join(out, "summary.json"))
	if err := json.Unmarshal(b, &sum); err != nil {
		t.Fatal(err)
	}
	ss := sum.SeaState
	want := math.Mod(200-ss.Mean+720, 360)
	if math.Abs(ss.To-want) > 1e-9 || math.Abs(ss.From-math.Mod(want+180, 360)) > 1e-9 {
		t.Errorf("θ0 %.3f° with heading 200°: toward %.3f°, from %.3f°; want %.3f°, %.3f°", ss.Mean, ss.To, ss.From, want, math.Mod(want+180, 360))
	}
	// the synthetic sea travels toward 20° in the grid frame (samples default)
	if math.Abs(ss.To-180) > 5 {
		t.Errorf("toward %.1f° true, want about 180° for a sea along 20° on a grid heading 200°", ss.To)
	}
	if sum.Site.Heading != 200 || !strings.Contains(sum.Site.Source, "configuration") || sum.Site.Name == "" {
		t.Errorf("site block %+v", sum.Site)
	}
}

// A dominant-wave band asks for both analyses: the dominant waves in
// DIR/dominant with their own tables, summary and report (which states the
// band), and every wave in DIR, whose summary.json and report compare the
// two and link to the other; a rerun with --force and no band leaves no
// dominant-wave analysis behind.
func TestTrackDominantBand(t *testing.T) {
	dir := t.TempDir()
	in := synthSmall(t, dir)
	cfg := filepath.Join(dir, "band.yaml")
	os.WriteFile(cfg, []byte("track:\n  dominant_band_fp: [0, 2]\n"), 0o644)
	out := filepath.Join(dir, "out")
	if _, _, err := run(t, "track", "--config", cfg, "--input", in, "--out", out, "--quiet"); err != nil {
		t.Fatal(err)
	}
	var main, dom struct {
		Band *struct {
			HighFp float64 `json:"high_over_fp"`
		} `json:"dominant_band"`
		Dominant *struct {
			Folder string                    `json:"folder"`
			Tracks int                       `json:"tracks"`
			Ratio  map[string]map[string]any `json:"crest_speed_ratio"`
		} `json:"dominant"`
		Crests struct{ Tracks int } `json:"crests"`
	}
	for p, v := range map[string]any{filepath.Join(out, "summary.json"): &main, filepath.Join(out, "dominant", "summary.json"): &dom} {
		b, err := os.ReadFile(p)
		if err != nil {
			t.Fatal(err)
		}
		if err := json.Unmarshal(b, v); err != nil {
			t.Fatal(err)
		}
	}
	if main.Band != nil || main.Dominant == nil || main.Dominant.Folder != "dominant" || main.Dominant.Tracks != dom.Crests.Tracks || main.Dominant.Ratio["peak"] == nil {
		t.Errorf("the analysis of every wave does not describe the dominant one: band %v, dominant %+v (its own tracks %d)", main.Band, main.Dominant, dom.Crests.Tracks)
	}
	if dom.Band == nil || dom.Band.HighFp != 2 || dom.Dominant != nil {
		t.Errorf("the dominant-wave analysis does not record its band: %+v", dom.Band)
	}
	page, _ := os.ReadFile(filepath.Join(out, "report.html"))
	domPage, _ := os.ReadFile(filepath.Join(out, "dominant", "report.html"))
	if !strings.Contains(string(page), `id="dominant-table"`) || !strings.Contains(string(page), `href="dominant/report.html"`) || !strings.Contains(string(domPage), "band-passed to the dominant waves") {
		t.Error("the reports do not show both analyses")
	}
	if _, _, err := run(t, "track", "--input", in, "--out", out, "--quiet", "--force"); err != nil {
		t.Fatal(err)
	}
	if _, err := os.Stat(filepath.Join(out, "dominant", "summary.json")); err == nil {
		t.Error("a rerun without a band left the dominant-wave analysis behind")
	}
}
