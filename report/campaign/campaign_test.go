package campaign

import (
	"bytes"
	"encoding/json"
	"errors"
	"math"
	"os"
	"path/filepath"
	"strings"
	"testing"

	"crestspeed/internal/pyref"
	"crestspeed/report"
	"crestspeed/report/stats"
	"crestspeed/report/table"
)

// testOptions are the campaign options of the tests: fewer resamples
// than by default, to keep the tests short.
func testOptions() Options {
	o := DefaultOptions()
	o.Bootstrap.Resamples, o.Bootstrap.Workers, o.Version = 300, 2, "test"
	return o
}

func analyseFixture(t *testing.T, opt Options) (*Result, []Deployment) {
	t.Helper()
	deps, err := Load(fixture(t))
	if err != nil {
		t.Fatal(err)
	}
	res, err := Analyse(deps, opt)
	if err != nil {
		t.Fatal(err)
	}
	return res, deps
}

// refStats are statistics of one group as numpy computes them.
type refStats struct {
	N, Tracks              int
	Mean, Median, P05, P95 float64
}

// Pooling two deployments equals one analysis of their concatenated rows:
// the crests.csv and whitecaps.csv of both, read by Python's csv module,
// concatenated and described by numpy (numpy.mean; numpy.percentile,
// linear interpolation = Hyndman & Fan type 7) per steepness class of
// the campaign — n, the number of distinct (deployment, track) pairs,
// mean, median, 5 and 95 % points of c_cr/c_p, c_cr/c_loc and c_br/c_p —
// equal the pooled statistics of the campaign to 1e-12, and the counts of
// rows and tracks add up.
func TestPoolEqualsConcatenated(t *testing.T) {
	res, deps := analyseFixture(t, testOptions())
	dirs := fixture(t)
	var want map[string][]refStats
	pyref.JSON(t, `
import csv, json, sys
import numpy as np
d = json.load(sys.stdin)
bounds = [0.0] + d["bounds"] + [np.inf]
def rows(path):
    return list(csv.DictReader(open(path, newline="")))
def num(s):
    return float(s) if s != "" else np.nan
out = {}
for name, fname, val, by, unit in (("peak", "crests.csv", "ratio_peak", "steepness_sc", "track_id"),
                                    ("local", "crests.csv", "ratio_local", "steepness_sc", "track_id"),
                                    ("front", "whitecaps.csv", "ratio_peak", "parent_steepness_sc", "whitecap_id")):
    v, s, u = [], [], []
    for k, folder in enumerate(d["dirs"]):
        for r in rows(folder + "/" + fname):
            v.append(num(r[val])); s.append(num(r[by])); u.append((k, int(r[unit])))
    v, s = np.array(v), np.array(s)
    groups = []
    for g in range(len(bounds)):
        if g < len(bounds) - 1:
            sel = (s >= bounds[g]) & (s < bounds[g + 1])
        else:
            sel = np.ones(len(v), bool)
        sel &= np.isfinite(v)
        x = v[sel]
        st = {"N": int(sel.sum()), "Tracks": len({u[i] for i in np.flatnonzero(sel)})}
        if len(x):
            st.update(Mean=float(np.mean(x)), Median=float(np.percentile(x, 50)), P05=float(np.percentile(x, 5)), P95=float(np.percentile(x, 95)))
        groups.append(st)
    out[name] = groups
print(json.dumps(out))
`, map[string]any{"dirs": dirs, "bounds": res.Bounds}, &want)
	got := map[string][]stats.Stats{
		"peak":  res.Summary.Campaign.CrestRatio["peak"].Groups(),
		"local": res.Summary.Campaign.CrestRatio["local"].Groups(),
		"front": res.Summary.Campaign.FrontRatio["peak"].Groups(),
	}
	for name, groups := range want {
		for g, w := range groups {
			s := got[name][g]
			if s.N != w.N || s.Tracks != w.Tracks {
				t.Errorf("%s group %d: n %d from %d tracks; concatenated rows: n %d from %d tracks", name, g, s.N, s.Tracks, w.N, w.Tracks)
			}
			if w.N == 0 {
				continue
			}
			for _, c := range []struct {
				stat      string
				have, ref float64
			}{{"mean", s.Mean, w.Mean}, {"median", s.Median, w.Median}, {"p05", s.P05, w.P05}, {"p95", s.P95, w.P95}} {
				if math.Abs(c.have-c.ref) > 1e-12*math.Max(1, math.Abs(c.ref)) {
					t.Errorf("%s group %d: %s %.15g, numpy on the concatenated rows %.15g", name, g, c.stat, c.have, c.ref)
				}
			}
		}
		all := groups[len(groups)-1]
		t.Logf("%s, all: n %d from %d tracks, median %.4f (numpy %.4f)", name, got[name][len(groups)-1].N, got[name][len(groups)-1].Tracks, got[name][len(groups)-1].Median, all.Median)
	}
	c := res.Summary.Campaign.Counts
	rows, tracks := 0, 0
	for _, d := range deps {
		rows += d.Crests.Len()
		tracks += d.Summary.Crests.Tracks
	}
	if c.CrestRows != rows || c.CrestTracks != tracks || c.Deployments != 2 || c.DeploymentsWithWhitecap != 2 {
		t.Errorf("counts %+v; the deployments have %d rows and %d tracks", c, rows, tracks)
	}
	// the pooled intervals come from the stratified bootstrap and contain their estimates
	for name, gs := range got {
		for g, s := range gs {
			if s.Tracks >= 2 && !s.MedianCI.Contains(s.Median) {
				t.Errorf("%s group %d: median %.4f outside its interval %+v", name, g, s.Median, s.MedianCI)
			}
		}
	}
}

// Each deployment's own statistics in the campaign are those its
// deployment report gives (report.WriteReport on its track folder, with
// the same classes and bootstrap settings): the same numbers and the same
// intervals, for the crest and the whitecap ratios.
func TestDeploymentStatisticsEqualDeploymentReport(t *testing.T) {
	opt := testOptions()
	res, deps := analyseFixture(t, opt)
	for i, d := range deps {
		rr, err := report.WriteReport(t.TempDir(), d.Deployment, report.Options{Bootstrap: opt.Bootstrap, MinClassTracks: opt.MinClassTracks, Version: "test"})
		if err != nil {
			t.Fatal(err)
		}
		ds := res.Summary.Campaign.Deployments[i]
		for _, ref := range ratioNames {
			a, _ := json.Marshal(ds.CrestRatio[ref])
			b, _ := json.Marshal(rr.Summary.Ratio[ref])
			if !bytes.Equal(a, b) {
				t.Errorf("deployment %d, c_cr/c_%s: campaign\n%s\ndeployment report\n%s", i+1, ref, a, b)
			}
			a, _ = json.Marshal(ds.FrontRatio[ref])
			b, _ = json.Marshal(rr.Summary.Whitecaps.Ratio[ref])
			if !bytes.Equal(a, b) {
				t.Errorf("deployment %d, c_br/c_%s: campaign\n%s\ndeployment report\n%s", i+1, ref, a, b)
			}
		}
	}
}

// Λ(c/c_p). (1) The Jacobian: a campaign of one deployment with bins of
// c/c_p that are the deployment's own speed bins divided by its c_p gives
// Λ̂_j = c_p Λ_j, Λ_j the values of its lambda.csv (Phillips 1985; the
// change of variable c = c_p ĉ), to the 6 significant digits lambda.csv
// keeps. (2) Its integral over c/c_p is the tracking stage's ∫ Λ dc
// (summary.json lambda_integral_per_m) to the rounding of the front
// lengths and areas. (3) The pooled curve is the frame-weighted mean of
// the deployments' curves: Σ_d F_d Λ̂_d / Σ_d F_d, to 1e-12. (4) Every
// curve equals Phillips's definition evaluated by numpy from the files.
func TestLambdaNormalised(t *testing.T) {
	deps, err := Load(fixture(t))
	if err != nil {
		t.Fatal(err)
	}
	for i, d := range deps {
		lam := d.Whitecaps.Lambda
		cp := d.Summary.SeaState.PeakPhaseSpeed
		width := lam.Cols[1][0] - lam.Cols[0][0]
		opt := testOptions()
		opt.LambdaBinWidth, opt.LambdaMaxRatio = width/cp, lam.Cols[1][lam.Len()-1]/cp
		res, err := Analyse([]Deployment{d}, opt)
		if err != nil {
			t.Fatal(err)
		}
		got := res.Summary.Campaign.Deployments[0].Lambda
		if len(got.Bins) != lam.Len() {
			t.Fatalf("deployment %d: %d bins of c/c_p, lambda.csv has %d", i+1, len(got.Bins), lam.Len())
		}
		// A front whose speed lies within the rounding of whitecaps.csv
		// (1 mm/s) of a bin edge may fall on the other side of it than in
		// lambda.csv, made from the unrounded speeds: a difference in two
		// neighbouring bins is accepted when their sum agrees and such a
		// front exists.
		nearEdge := func(j int) bool {
			edge := lam.Cols[1][j]
			for _, v := range d.Whitecaps.Rows.Cols[table.WhitecapFrontSpeed] {
				if math.Abs(v-edge) <= 0.0005+1e-9 {
					return true
				}
			}
			return false
		}
		near := func(a, b float64) bool { return math.Abs(a-b) <= 5e-6*math.Max(math.Abs(b), 1e-300) }
		filled, flips := 0, 0
		for j := 0; j < len(got.Bins); j++ {
			want := cp * lam.Cols[2][j]
			if got.Bins[j].Lambda > 0 {
				filled++
			}
			if near(got.Bins[j].Lambda, want) {
				continue
			}
			if j+1 < len(got.Bins) && nearEdge(j) && near(got.Bins[j].Lambda+got.Bins[j+1].Lambda, want+cp*lam.Cols[2][j+1]) {
				flips++
				j++
				continue
			}
			t.Errorf("deployment %d bin %d: Λ(c/c_p) %.7g, c_p Λ(c) from lambda.csv %.7g", i+1, j, got.Bins[j].Lambda, want)
		}
		// every flip was matched to a front within the rounding of its bin
		// edge above; more flips than such edges would mean misplaced bins
		edges := 0
		for j := range got.Bins {
			if nearEdge(j) {
				edges++
			}
		}
		if flips > edges {
			t.Errorf("deployment %d: %d bins differ across edges, but only %d edges have a front within the rounding", i+1, flips, edges)
		}
		ws := d.Summary.Whitecaps
		if ws.LengthOutOfRange == 0 && math.Abs(got.Integral-ws.LambdaIntegral) > 1e-4*ws.LambdaIntegral {
			t.Errorf("deployment %d: ∫Λ(c/c_p) d(c/c_p) = %.7g, ∫Λ dc of the tracking stage %.7g", i+1, got.Integral, ws.LambdaIntegral)
		}
		t.Logf("deployment %d: %d of %d bins filled (%d front on a bin edge), ∫ %.5g 1/m (tracking stage %.5g)", i+1, filled, len(got.Bins), flips, got.Integral, ws.LambdaIntegral)
		if filled < 3 {
			t.Errorf("deployment %d: only %d filled bins; the check needs fronts", i+1, filled)
		}
	}
	res, _ := analyseFixture(t, testOptions())
	cb := res.Summary.Campaign
	// Phillips's definition evaluated by numpy from the files: front
	// samples are the whitecaps.csv rows with a front speed and a front
	// length, on the area of their frame in coverage.csv, each
	// deployment's speeds over its c_p, Λ̂_j = Σ L / (A F Δĉ) over the F
	// analysed frames (coverage.csv rows) of the deployment, or of all.
	var ref struct {
		Deployments [][]float64
		Pooled      []float64
	}
	var cps []float64
	for _, d := range cb.Deployments {
		cps = append(cps, d.PeakPhaseSpeed)
	}
	pyref.JSON(t, `
import csv, json, sys
import numpy as np
d = json.load(sys.stdin)
w, top = d["width"], d["top"]
nb = int(np.ceil(top / w - 1e-9))
def samples(folder, cp):
    area = {int(r["frame"]): float(r["area_m2"]) for r in csv.DictReader(open(folder + "/coverage.csv"))}
    frames = len(area)
    out = []
    for r in csv.DictReader(open(folder + "/whitecaps.csv")):
        if r["front_speed_mps"] == "" or r["front_length_m"] == "" or not float(r["front_length_m"]) > 0:
            continue
        out.append((float(r["front_speed_mps"]) / cp, float(r["front_length_m"]), area[int(r["frame"])]))
    return out, frames
def lam(s, frames):
    L = np.zeros(nb)
    for c, l, a in s:
        if c < 0 or c >= nb * w:
            continue
        L[min(int(np.floor(c / w)), nb - 1)] += l / a / frames / w
    return L.tolist()
per, alls, allf = [], [], 0
for folder, cp in zip(d["dirs"], d["cps"]):
    s, f = samples(folder, cp)
    per.append(lam(s, f)); alls += s; allf += f
print(json.dumps({"Deployments": per, "Pooled": lam(alls, allf)}))
`, map[string]any{"dirs": fixture(t), "cps": cps, "width": res.Options.LambdaBinWidth, "top": res.Options.LambdaMaxRatio}, &ref)
	for i, d := range cb.Deployments {
		for j, b := range d.Lambda.Bins {
			if w := ref.Deployments[i][j]; math.Abs(b.Lambda-w) > 1e-9*math.Max(w, 1e-300) {
				t.Errorf("deployment %d bin %d: Λ(c/c_p) %.10g, numpy %.10g", i+1, j, b.Lambda, w)
			}
		}
	}
	for j, b := range cb.Lambda.Bins {
		if w := ref.Pooled[j]; math.Abs(b.Lambda-w) > 1e-9*math.Max(w, 1e-300) {
			t.Errorf("pooled bin %d: Λ(c/c_p) %.10g, numpy %.10g", j, b.Lambda, w)
		}
	}
	frames := 0
	for _, d := range cb.Deployments {
		frames += d.Lambda.Frames
	}
	if cb.Lambda.Frames != frames {
		t.Errorf("pooled Λ over %d frames, the deployments have %d", cb.Lambda.Frames, frames)
	}
	for j, b := range cb.Lambda.Bins {
		var want float64
		for _, d := range cb.Deployments {
			want += float64(d.Lambda.Frames) * d.Lambda.Bins[j].Lambda
		}
		want /= float64(frames)
		if math.Abs(b.Lambda-want) > 1e-12*math.Max(want, 1e-300) {
			t.Errorf("pooled bin %d: %.15g, frame-weighted mean of the deployments %.15g", j, b.Lambda, want)
		}
	}
}

// copyFolder copies a track folder (its files) to a new folder.
func copyFolder(t *testing.T, src string) string {
	t.Helper()
	dst := filepath.Join(t.TempDir(), filepath.Base(src))
	if err := os.MkdirAll(dst, 0o755); err != nil {
		t.Fatal(err)
	}
	entries, err := os.ReadDir(src)
	if err != nil {
		t.Fatal(err)
	}
	for _, e := range entries {
		if e.IsDir() {
			continue
		}
		b, err := os.ReadFile(filepath.Join(src, e.Name()))
		if err != nil {
			t.Fatal(err)
		}
		os.WriteFile(filepath.Join(dst, e.Name()), b, 0o644)
	}
	return dst
}

// editSummary changes the summary.json of a track folder.
func editSummary(t *testing.T, dir string, edit func(m map[string]any)) {
	t.Helper()
	p := filepath.Join(dir, "summary.json")
	b, err := os.ReadFile(p)
	if err != nil {
		t.Fatal(err)
	}
	var m map[string]any
	if err := json.Unmarshal(b, &m); err != nil {
		t.Fatal(err)
	}
	edit(m)
	b, _ = json.MarshalIndent(m, "", "  ")
	os.WriteFile(p, b, 0o644)
}

// Deployments whose reference settings differ are refused with one
// sentence naming the folder and the setting (*SettingError); different
// steepness classes are converted exactly — the rows are classed again,
// so the pooled statistics are those of deployments with the same classes
// — and said so; a deployment given twice is refused (ErrDuplicate).
func TestMismatchedSettings(t *testing.T) {
	dirs := fixture(t)
	for _, c := range []struct {
		name, setting string
		edit          func(m map[string]any)
	}{
		{"peak reference", "the peak reference speed c_p", func(m map[string]any) {
			m["method"].(map[string]any)["peak_reference"] = "linear dispersion at the mean period"
		}},
		{"steepness definition", "the steepness definition", func(m map[string]any) {
			m["method"].(map[string]any)["steepness"] = "S_c = a_c k_p"
		}},
		{"speed window", "the crest-speed window setting track.speed_window_s (0 = Tp/8)", func(m map[string]any) {
			m["config"].(map[string]any)["track"].(map[string]any)["speed_window_s"] = 1.5
		}},
		{"foam patch", "the smallest whitecap patch kept, track.min_foam_patch_area_m2", func(m map[string]any) {
			m["config"].(map[string]any)["track"].(map[string]any)["min_foam_patch_area_m2"] = 4.0
		}},
	} {
		other := copyFolder(t, dirs[1])
		editSummary(t, other, c.edit)
		deps, err := Load([]string{dirs[0], other})
		if err != nil {
			t.Fatalf("%s: %v", c.name, err)
		}
		_, err = Analyse(deps, testOptions())
		var se *SettingError
		if !errors.As(err, &se) || se.Folder != other || se.Setting != c.setting || se.First != dirs[0] {
			t.Errorf("%s: got %v", c.name, err)
			continue
		}
		msg := err.Error()
		if !strings.Contains(msg, other) || !strings.Contains(msg, c.setting) || strings.Count(msg, ". ") > 0 {
			t.Errorf("%s: message is not one sentence naming the folder and the setting: %s", c.name, msg)
		}
	}
	// other classes: converted exactly
	base, _ := analyseFixture(t, testOptions())
	other := copyFolder(t, dirs[1])
	editSummary(t, other, func(m map[string]any) { m["method"].(map[string]any)["steepness_bounds"] = []any{0.15} })
	deps, err := Load([]string{dirs[0], other})
	if err != nil {
		t.Fatal(err)
	}
	res, err := Analyse(deps, testOptions())
	if err != nil {
		t.Fatal(err)
	}
	conv := res.Summary.Campaign.Deployments[1].Conversions
	if len(conv) != 1 || !strings.Contains(conv[0], other) || !strings.Contains(conv[0], "[0.15]") || len(res.Summary.Settings.Conversions) != 1 {
		t.Errorf("conversion not stated: %q", conv)
	}
	a, _ := json.Marshal(base.Summary.Campaign.CrestRatio)
	b, _ := json.Marshal(res.Summary.Campaign.CrestRatio)
	if !bytes.Equal(a, b) {
		t.Error("the pooled statistics changed when a deployment recorded other classes; its rows should have been classed again")
	}
	// other speed bins of Λ(c) in lambda.csv: Λ(c/c_p) is rebuilt from
	// the whitecap rows, so the pooled curve is unchanged, and said so
	other = copyFolder(t, dirs[1])
	lp := filepath.Join(other, "lambda.csv")
	lam, err := table.ReadFile(lp, table.Lambda)
	if err != nil {
		t.Fatal(err)
	}
	for k := 0; k < 2; k++ {
		for i := range lam.Cols[k] {
			lam.Cols[k][i] *= 1.2
		}
	}
	f, _ := os.Create(lp)
	lam.Write(f)
	f.Close()
	deps2, err := Load([]string{dirs[0], other})
	if err != nil {
		t.Fatal(err)
	}
	res2, err := Analyse(deps2, testOptions())
	if err != nil {
		t.Fatal(err)
	}
	if conv := res2.Summary.Campaign.Deployments[1].Conversions; len(conv) != 1 || !strings.Contains(conv[0], "Λ(c)") || !strings.Contains(conv[0], other) {
		t.Errorf("other Λ bins: conversions %q", conv)
	}
	a, _ = json.Marshal(base.Summary.Campaign.Lambda)
	b, _ = json.Marshal(res2.Summary.Campaign.Lambda)
	if !bytes.Equal(a, b) {
		t.Error("the pooled Λ(c/c_p) changed with the bins of a lambda.csv")
	}
	// the campaign's own classes, given
	opt := testOptions()
	opt.SteepnessBounds = []float64{0.15}
	res, err = Analyse(deps, opt)
	if err != nil {
		t.Fatal(err)
	}
	if n := len(res.Summary.Campaign.CrestRatio["peak"].Classes); n != 2 || len(res.Summary.Settings.Conversions) != 1 {
		t.Errorf("with classes [0.15]: %d classes, conversions %q", n, res.Summary.Settings.Conversions)
	}
	// given twice, or a copy
	for _, pair := range [][]string{{dirs[0], dirs[0]}, {dirs[0], copyFolder(t, dirs[0])}} {
		if _, err := Load(pair); !errors.Is(err, ErrDuplicate) || !strings.Contains(err.Error(), "crests.csv") {
			t.Errorf("%v: got %v", pair, err)
		}
	}
	// no folder, a missing folder
	if _, err := Load(nil); err == nil {
		t.Error("no folder: no error")
	}
	if _, err := Load([]string{filepath.Join(t.TempDir(), "none")}); err == nil || !strings.Contains(err.Error(), "none") {
		t.Errorf("missing folder: %v", err)
	}
	// a setting out of range
	bad := testOptions()
	bad.LambdaBinWidth = 3
	if _, err := Analyse(deps, bad); err == nil || !strings.Contains(err.Error(), "c/c_p") {
		t.Errorf("bin width 3: %v", err)
	}
}

// DefaultOptions are report.DefaultOptions where the settings are the same.
func TestDefaultOptions(t *testing.T) {
	d, r := DefaultOptions(), report.DefaultOptions()
	if d.Bootstrap != r.Bootstrap || d.MinClassTracks != r.MinClassTracks || d.Validate() != nil {
		t.Fatalf("campaign defaults %+v, report defaults %+v", d, r)
	}
	if (Options{}).Validate() != nil {
		t.Fatal("zero options (all defaults) refused")
	}
}

// deploymentsCSV reads deployments.csv back through its schema.
func deploymentsCSV(t *testing.T, path string, bounds []float64) *table.Table {
	t.Helper()
	tab, err := table.ReadFile(path, table.Deployments(stats.ClassBounds(bounds)))
	if err != nil {
		t.Fatal(err)
	}
	return tab
}
