package campaign

import (
	"bytes"
	"encoding/json"
	"encoding/xml"
	"image/png"
	"io"
	"math"
	"os"
	"path/filepath"
	"strings"
	"testing"

	"crestspeed/internal/pagecheck"
	"crestspeed/internal/pyref"
	"crestspeed/report"
	"crestspeed/report/summary"
	"crestspeed/report/table"
)

// noTemporaries fails when a temporary file or folder is left in dir.
func noTemporaries(t *testing.T, dir string) {
	t.Helper()
	filepath.Walk(dir, func(p string, fi os.FileInfo, err error) error {
		if strings.Contains(filepath.Base(p), ".part-") || strings.HasSuffix(p, ".old") {
			t.Errorf("temporary left behind: %s", p)
		}
		return nil
	})
}

// The campaign's outputs: every file listed in summary.json exists;
// deployments.csv read back through its schema holds the numbers of
// summary.json; crest_tracks.nc and whitecap_tracks.nc, opened by xarray
// (Debian python3-xarray), hold every row of both deployments, each
// trajectory tied to its deployment, times on one axis from the earlier
// deployment's reference (the second starts 1 day 5.5 h = 106200 s
// later, as their start times say); figures decode (PNG) and parse (SVG);
// report.html passes the page check of the deployment report in headless
// Chromium (no console message, no network request, images decoded, every
// table cell equal to summary.json), with a screenshot kept in
// test-artifacts/.
func TestWriteCampaign(t *testing.T) {
	res, deps := analyseFixture(t, testOptions())
	out := filepath.Join(t.TempDir(), "campaign")
	if err := Write(out, res); err != nil {
		t.Fatal(err)
	}
	noTemporaries(t, out)
	raw, err := os.ReadFile(filepath.Join(out, "summary.json"))
	if err != nil {
		t.Fatal(err)
	}
	var js map[string]any
	if err := json.Unmarshal(raw, &js); err != nil {
		t.Fatal(err)
	}
	outs := js["outputs"].(map[string]any)
	for _, name := range []string{"report.html", "summary.json", "deployments.csv", "crest_tracks.nc", "whitecap_tracks.nc"} {
		if _, ok := outs[name]; !ok {
			t.Errorf("summary.json does not list %s", name)
		}
	}
	nfig := 0
	for name, p := range outs {
		fi, err := os.Stat(p.(string))
		if err != nil || fi.Size() == 0 {
			t.Errorf("output %s (%s) is missing or empty", name, p)
			continue
		}
		b, _ := os.ReadFile(p.(string))
		switch {
		case strings.HasSuffix(name, ".png"):
			nfig++
			if img, err := png.Decode(bytes.NewReader(b)); err != nil || img.Bounds().Empty() {
				t.Errorf("%s does not decode: %v", name, err)
			}
		case strings.HasSuffix(name, ".svg"):
			if err := wellFormed(b); err != nil {
				t.Errorf("%s is not well-formed XML: %v", name, err)
			}
		}
	}
	if nfig != 5 {
		t.Errorf("%d figures, want 5 (two PDFs, medians against peak steepness and wave age, Λ(c/c_p))", nfig)
	}
	// inputs: every file read, with its checksum
	inputs := js["inputs"].([]any)
	if len(inputs) != 2*6 {
		t.Errorf("%d inputs listed, want crests.csv, spectrum.csv, summary.json and the three whitecap files of both deployments", len(inputs))
	}
	for _, in := range inputs {
		if len(in.(map[string]any)["sha256"].(string)) != 64 {
			t.Errorf("input without a checksum: %v", in)
		}
	}
	// deployments.csv = summary.json
	tab := deploymentsCSV(t, filepath.Join(out, "deployments.csv"), res.Bounds)
	if tab.Len() != 2 {
		t.Fatalf("deployments.csv has %d rows", tab.Len())
	}
	for i, d := range res.Summary.Campaign.Deployments {
		for name, want := range map[string]float64{"hm0_m": d.Hm0, "tp_s": d.Tp, "peak_phase_speed_mps": d.PeakPhaseSpeed,
			"crest_tracks": float64(d.CrestTracks), "median_ccr_over_cp_all": d.CrestRatio["peak"].All.Median,
			"median_ccr_over_cp_class2_lo90": d.CrestRatio["peak"].Classes[1].MedianCI.Lo,
			"median_cbr_over_cp_all_hi90":    d.FrontRatio["peak"].All.MedianCI.Hi, "wave_age": d.WaveAge} {
			col := tab.Schema.Columns[tab.Schema.Index(name)]
			got, w := tab.Col(name)[i], col.Round(want)
			if !(got == w || math.IsNaN(got) && math.IsNaN(w)) {
				t.Errorf("deployments.csv row %d %s = %v, summary.json %v", i+1, name, got, want)
			}
		}
		if tab.TextCol("site")[i] != d.Site || tab.TextCol("start_utc")[i] != d.StartUTC || d.StartUTC == "" {
			t.Errorf("deployments.csv row %d: site %q start %q; summary.json %q %q", i+1, tab.TextCol("site")[i], tab.TextCol("start_utc")[i], d.Site, d.StartUTC)
		}
	}
	if !math.IsNaN(tab.Col("wave_age")[1]) || !(tab.Col("wave_age")[0] > 0) {
		t.Errorf("wave age %v: the first deployment records a wind speed, the second none", tab.Col("wave_age"))
	}
	// the pooled NetCDF files
	var crestRows, crestTracks, wcRows []int
	var firstTime []float64
	for _, d := range deps {
		crestRows = append(crestRows, d.Crests.Len())
		crestTracks = append(crestTracks, d.Summary.Crests.Tracks)
		wcRows = append(wcRows, d.Whitecaps.Rows.Len())
		firstTime = append(firstTime, d.Crests.Cols[table.CrestTime][0])
	}
	var nc struct {
		Obs, Traj, WcObs    int
		PerDeployment       []int
		RowsPerDeployment   []int
		WcRowsPerDeployment []int
		Units, WcUnits      string
		FirstTime           []float64
	}
	pyref.JSON(t, `
import json, sys
import numpy as np
import xarray as xr
d = json.load(sys.stdin)
c = xr.open_dataset(d["crests"], decode_times=False)
w = xr.open_dataset(d["whitecaps"], decode_times=False)
dep = c["deployment"].values; rs = c["row_size"].values
obsdep = np.repeat(dep, rs)
wobsdep = np.repeat(w["deployment"].values, w["row_size"].values)
print(json.dumps({"Obs": c.sizes["obs"], "Traj": c.sizes["trajectory"], "WcObs": w.sizes["obs"],
  "PerDeployment": [int((dep == k).sum()) for k in (1, 2)],
  "RowsPerDeployment": [int((obsdep == k).sum()) for k in (1, 2)],
  "WcRowsPerDeployment": [int((wobsdep == k).sum()) for k in (1, 2)],
  "Units": c["time"].attrs["units"], "WcUnits": w["time"].attrs["units"],
  "FirstTime": [float(c["time"].values[obsdep == k][0]) for k in (1, 2)]}))
`, map[string]string{"crests": filepath.Join(out, "crest_tracks.nc"), "whitecaps": filepath.Join(out, "whitecap_tracks.nc")}, &nc)
	if nc.Obs != crestRows[0]+crestRows[1] || nc.Traj != crestTracks[0]+crestTracks[1] ||
		nc.PerDeployment[0] != crestTracks[0] || nc.RowsPerDeployment[1] != crestRows[1] || nc.WcRowsPerDeployment[0] != wcRows[0] || nc.WcObs != wcRows[0]+wcRows[1] {
		t.Errorf("crest_tracks.nc: %+v; deployments have %v rows in %v tracks and %v whitecap rows", nc, crestRows, crestTracks, wcRows)
	}
	if nc.Units != "seconds since 2026-06-14T09:00:00Z" || nc.WcUnits != nc.Units {
		t.Errorf("time units %q and %q", nc.Units, nc.WcUnits)
	}
	if math.Abs(nc.FirstTime[0]-firstTime[0]) > 1e-6 || math.Abs(nc.FirstTime[1]-(firstTime[1]+106200)) > 1e-6 {
		t.Errorf("first times %v, want %v and %v + 106200 s", nc.FirstTime, firstTime[0], firstTime[1])
	}
	// the page
	pagecheck.Check(t, pagecheck.Page{Path: filepath.Join(out, "report.html"), SummaryJSON: raw, Images: 5,
		MinCells: 2*14 + 2*4*8 + 3*4*10 + 3*4, Caution: summary.Caution,
		Contains:   []string{"Efron", "Davison", "Phillips", "Jacobian", "stratified", "Kelvane Sound north pier (invented)"},
		Screenshot: filepath.Join("..", "..", "test-artifacts", "campaign.png")})

	// written again into the same folder: replaced, nothing stale; a
	// campaign without whitecaps removes the old whitecap_tracks.nc
	nowc := []Deployment{{Deployment: withoutWhitecaps(deps[0])}}
	res2, err := Analyse(nowc, testOptions())
	if err != nil {
		t.Fatal(err)
	}
	if err := Write(out, res2); err != nil {
		t.Fatal(err)
	}
	noTemporaries(t, out)
	if _, err := os.Stat(filepath.Join(out, "whitecap_tracks.nc")); err == nil {
		t.Error("a stale whitecap_tracks.nc was left")
	}
	figs, _ := os.ReadDir(filepath.Join(out, "figures"))
	for _, f := range figs {
		if strings.Contains(f.Name(), "front_ratio") || strings.Contains(f.Name(), "lambda") {
			t.Errorf("stale figure %s left from the earlier campaign", f.Name())
		}
	}
	raw2, _ := os.ReadFile(filepath.Join(out, "summary.json"))
	if bytes.Contains(raw2, []byte(`"front_speed_ratio"`)) {
		t.Error("summary.json of a campaign without whitecaps has front-speed statistics")
	}
}

// withoutWhitecaps is a copy of a deployment without its whitecap tables.
func withoutWhitecaps(d Deployment) *report.Deployment {
	c := *d.Deployment
	c.Whitecaps = nil
	s := c.Summary.Copy()
	s.Whitecaps = nil
	c.Summary = s
	return &c
}

func wellFormed(b []byte) error {
	dec := xml.NewDecoder(bytes.NewReader(b))
	for {
		_, err := dec.Token()
		if err == io.EOF {
			return nil
		}
		if err != nil {
			return err
		}
	}
}

// A failure while committing (a file named "figures" in the way) leaves
// none of the outputs behind, and no temporary.
func TestWriteFailureLeavesNothing(t *testing.T) {
	res, _ := analyseFixture(t, testOptions())
	out := t.TempDir()
	os.WriteFile(filepath.Join(out, "figures"), []byte("in the way"), 0o644)
	err := Write(out, res)
	if err == nil || !strings.Contains(err.Error(), "figures") {
		t.Fatalf("got %v", err)
	}
	entries, _ := os.ReadDir(out)
	if len(entries) != 1 {
		var names []string
		for _, e := range entries {
			names = append(names, e.Name())
		}
		t.Errorf("folder holds %v after the failure, want only the file in the way", names)
	}
}
