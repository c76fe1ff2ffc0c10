package report

import (
	"bytes"
	"context"
	"crestspeed/internal/pyref"
	"crestspeed/speed/analysis"
	"encoding/base64"
	"encoding/json"
	"html"
	"image/png"
	"math"
	"os"
	"os/exec"
	"path/filepath"
	"regexp"
	"sort"
	"strconv"
	"strings"
	"testing"

	"crestspeed/ingest"
	"crestspeed/report/stats"
	"crestspeed/samples"
	"crestspeed/speed"
)

// testSea is the small directional JONSWAP record of the tests: 40 s of
// a 72 m × 40 m grid at 10 frames per second.
func testSea() samples.Scenario {
	return samples.Scenario{
		Site: "test basin (synthetic)", Kind: samples.KindJONSWAP,
		JONSWAP: samples.JONSWAPSea{HsM: 1.2, TpS: 4, Gamma: 3.3, Spreading: 10, DirectionDeg: 20, Seed: 3, Components: 96, FMaxRatio: 2.5},
		Grid:    samples.GridSpec{Nx: 72, Ny: 40, DxM: 1, DyM: 1, FPS: 10, Duration: 40},
	}
}

// synthesize writes the record of a scenario (samples.Synthesize).
func synthesize(t *testing.T, sc samples.Scenario, nc string) {
	t.Helper()
	if _, err := samples.Synthesize(context.Background(), sc, nc, 1, 2, nil); err != nil {
		t.Fatal(err)
	}
}

// analyseFile runs the crest analysis on an elevation-map file.
func analyseFile(t *testing.T, nc string, opt analysis.Options) *analysis.Record {
	t.Helper()
	src, err := ingest.OpenElevation(nc, ingest.ElevationOptions{})
	if err != nil {
		t.Fatal(err)
	}
	defer src.Close()
	rec, err := analysis.Run(context.Background(), src, opt)
	if err != nil {
		t.Fatal(err)
	}
	return rec
}

// breakingTrackDir makes a track folder with whitecaps and B_x: a small
// directional JONSWAP record (samples.Synthesize) is analysed once with
// the breaking index on; foam patches (samples.FoamPatch) are then painted
// on crests picked by their B_x — on five of the eight tracks whose B_x is
// highest, at the frame of their largest B_x, and on four tracks below
// those — with one saturated foam frame; the record is synthesised again
// with the foam and analysed with whitecaps and B_x (analysis.Run),
// and the files of "crestspeed track" are written (WriteTrackOutputs).
//
// A linear synthetic sea keeps B_x well below the published threshold
// (about 0.85, Barthelemy et al. 2018), so the threshold here is set
// between the eighth and ninth highest track maxima: eight tracks are
// flagged, and every cell of the confusion table is populated.
func breakingTrackDir(t *testing.T) (string, *analysis.Record, *Summary) {
	t.Helper()
	dir := t.TempDir()
	sc := testSea()
	plain := filepath.Join(dir, "plain.nc")
	synthesize(t, sc, plain)
	opt := analysis.Options{MinCrestFraction: 0.1, MinCrestLengthM: 2, MaxGapFrames: 2, Workers: 2, BreakingIndex: true}
	first := analyseFile(t, plain, opt)
	type peak struct {
		bx  float64
		row speed.CrestRow
	}
	best := map[int]peak{}
	for _, r := range first.Rows {
		if b, ok := best[r.TrackID]; !math.IsNaN(r.BreakingIndex) && (!ok || r.BreakingIndex > b.bx) {
			best[r.TrackID] = peak{r.BreakingIndex, r}
		}
	}
	var ranked []peak
	for _, p := range best {
		ranked = append(ranked, p)
	}
	sort.Slice(ranked, func(i, j int) bool { return ranked[i].bx > ranked[j].bx })
	if len(ranked) < 14 {
		t.Fatalf("only %d tracks have a B_x; the scenario needs at least 14", len(ranked))
	}
	opt.BxThreshold = 0.5 * (ranked[7].bx + ranked[8].bx)
	theta := first.Refs.Theta
	cp := first.Refs.PeakPhaseSpeed
	ratios := []float64{0.7, 0.8, 0.9, 0.75, 0.85, 0.65, 0.95, 0.8, 0.72}
	sc.Foam = samples.FoamSpec{Enabled: true, SaturatedFrames: []int{150}}
	for i, k := range []int{0, 1, 2, 3, 4, 10, 11, 12, 13} {
		r := ranked[k].row
		sc.Foam.Patches = append(sc.Foam.Patches, samples.FoamPatch{
			StartS: r.Time, FrontXM: r.X + math.Cos(theta), FrontYM: r.Y + math.Sin(theta),
			DirectionDeg: theta * 180 / math.Pi, SpeedMPS: ratios[i] * cp,
			FrontLengthM: 8, LengthM: 3, DurationS: 2.5,
		})
	}
	nc := filepath.Join(dir, "elevation.nc")
	synthesize(t, sc, nc)
	opt.Whitecaps = true
	rec := analyseFile(t, nc, opt)
	if rec.Whitecaps == nil || rec.Inception == nil {
		t.Fatal("the analysis gave no whitecaps or no inception flags")
	}
	in, err := DescribeFile(nc)
	if err != nil {
		t.Fatal(err)
	}
	tracks := filepath.Join(dir, "tracks")
	sum, err := WriteTrackOutputs(tracks, rec, RunInfo{Version: "test", Config: map[string]any{"test": true},
		Inputs: []FileInfo{in}, SteepnessBounds: []float64{0.1, 0.2}})
	if err != nil {
		t.Fatal(err)
	}
	return tracks, rec, sum
}

// The report rebuilt from the files of a tracking run with whitecaps and
// B_x: the "Whitecaps and breaking" section shows the numbers of
// summary.json, its four figures decode, the Λ(c) reference line has slope
// −6 on the log–log axes, and the section reads the same from the files as
// from the record in memory.
func TestBreakingReport(t *testing.T) {
	tracks, rec, trackSum := breakingTrackDir(t)
	ws, inc := trackSum.Whitecaps, trackSum.Inception
	t.Logf("record: %d whitecaps in %d rows over %d frames (skipped %v), mean W %.4f, R %.4g, ε %.3g; B_x threshold %.3f, %d of %d tracks flagged, confusion FF %d FN %d NF %d NN %d, lead median %.2f s (n %d)",
		ws.Whitecaps, ws.Rows, ws.FramesAnalysed, ws.Skipped, ws.MeanCoverage, ws.PassageRate, ws.Dissipation,
		inc.Threshold, len(inc.Flags), inc.TracksWithBx, inc.FlaggedFoamed, inc.FlaggedNotFoamed, inc.NotFlaggedFoamed, inc.NotFlaggedNotFoamed,
		inc.LeadTimeMedian, inc.LeadTimeN)
	if inc.FlaggedFoamed == 0 || inc.FlaggedNotFoamed == 0 || inc.NotFlaggedFoamed == 0 || inc.NotFlaggedNotFoamed == 0 {
		t.Errorf("the test record should populate every cell of the confusion table")
	}

	d, err := LoadDeployment(tracks)
	if err != nil {
		t.Fatal(err)
	}
	if d.Whitecaps == nil || d.Whitecaps.Rows.Len() != ws.Rows || d.Whitecaps.Coverage.Len() != ws.FramesAnalysed {
		t.Fatalf("whitecap files not read back: %+v", d.Whitecaps)
	}
	out := filepath.Join(t.TempDir(), "report")
	opt := Options{Bootstrap: BootstrapOptions{Resamples: 200, Seed: 4, Workers: 2}, Version: "test"}
	res, err := WriteReport(out, d, opt)
	if err != nil {
		t.Fatal(err)
	}

	// whitecap_tracks.nc: CF-1.8 trajectories, one per whitecap, read by
	// xarray (decode_cf, with warnings as errors) with the rows and
	// whitecaps of whitecaps.csv.
	var wc struct {
		Trajectories, Obs   int
		FeatureType, CFRole string
	}
	pyref.JSON(t, `
import json, sys, warnings
import netCDF4  # imported first: Debian's build warns of a numpy header size on import
import xarray as xr
warnings.simplefilter("error")
d = json.load(sys.stdin)
ds = xr.open_dataset(d["nc"])
print(json.dumps({"Trajectories": ds.sizes["trajectory"], "Obs": ds.sizes["obs"],
    "FeatureType": ds.attrs.get("featureType", ""), "CFRole": ds["trajectory_id"].attrs.get("cf_role", "")}))
`, map[string]any{"nc": filepath.Join(out, "whitecap_tracks.nc")}, &wc)
	if wc.Trajectories != ws.Whitecaps || wc.Obs != ws.Rows || wc.FeatureType != "trajectory" || wc.CFRole != "trajectory_id" {
		t.Errorf("whitecap_tracks.nc: %+v; want %d whitecaps in %d rows as CF trajectories", wc, ws.Whitecaps, ws.Rows)
	}

	// figures: the six of the crest speeds and the tracking steps', then
	// the four of this section
	wantNames := []string{"fig8_lambda", "fig9_coverage", "fig10_whitecap_ratio_pdf", "fig11_bx_highest_crests"}
	if len(res.Figures) != 11 || res.Figures[6].Name != "fig7_step_residuals" {
		t.Fatalf("%d figures, want 11 with fig7_step_residuals the seventh", len(res.Figures))
	}
	for i, f := range res.Figures[7:] {
		if f.Name != wantNames[i] || f.Section != "breaking" {
			t.Errorf("figure %d is %s (section %q), want %s in the breaking section", 7+i, f.Name, f.Section, wantNames[i])
		}
		img, err := png.Decode(bytes.NewReader(f.PNG))
		if err != nil || img.Bounds().Dx() == 0 || img.Bounds().Dy() == 0 {
			t.Errorf("%s.png does not decode to a non-empty image: %v", f.Name, err)
		}
		if err := wellFormedXML(f.SVG); err != nil {
			t.Errorf("%s.svg is not well-formed XML: %v", f.Name, err)
		}
		for _, ext := range []string{".png", ".svg"} {
			if fi, err := os.Stat(filepath.Join(out, "figures", f.Name+ext)); err != nil || fi.Size() == 0 {
				t.Errorf("figures/%s%s is missing or empty", f.Name, ext)
			}
		}
	}

	// Λ(c) reference line: slope −6 on the log–log axes (Phillips 1985,
	// Λ(c) ∝ c⁻⁶ in the equilibrium range), computed from the points drawn;
	// its amplitude is the least-squares fit of numpy.linalg.lstsq.
	ref := res.Breaking.Reference
	if len(ref.C) < 2 || len(ref.Fitted) < stats.MinReferenceBins {
		t.Fatalf("no reference line drawn: %+v", ref)
	}
	for i := 1; i < len(ref.C); i++ {
		slope := (math.Log10(ref.Lambda[i]) - math.Log10(ref.Lambda[i-1])) / (math.Log10(ref.C[i]) - math.Log10(ref.C[i-1]))
		if math.Abs(slope+6) > 1e-9 {
			t.Errorf("reference line segment %d has slope %.12f on log–log axes, want −6 (Phillips 1985)", i, slope)
		}
	}
	svgSlope := svgReferenceSlope(t, res.Figures[7].SVG)
	t.Logf("Λ(c): peak bin %d, %d bins above it fitted, A = %.6g m⁴ s⁻⁵; the drawn line's slope in the SVG, converted with the axes' decades: %.6f",
		ref.Peak, len(ref.Fitted), ref.Amplitude, svgSlope)
	if math.Abs(svgSlope+6) > 0.01 {
		t.Errorf("the reference line drawn in %s.svg has slope %.4f on the log–log axes, want −6 (Phillips 1985)", res.Figures[7].Name, svgSlope)
	}
	checkAmplitudeWithNumpy(t, filepath.Join(tracks, "lambda.csv"), ref.Amplitude)

	// the page
	raw, err := os.ReadFile(filepath.Join(out, "summary.json"))
	if err != nil {
		t.Fatal(err)
	}
	pageBytes, err := os.ReadFile(filepath.Join(out, "report.html"))
	if err != nil {
		t.Fatal(err)
	}
	page := string(pageBytes)
	sec := sectionOf(t, page)
	// cells: statistics (3 counts, one per skip reason, 9 figures), two
	// ratio tables of 4 rows × 10 (the cells of the crest tables),
	// inception (3), confusion (4), shares (2), lead times (4)
	wantCells := 3 + len(ws.Skipped) + 9 + 2*4*10 + 3 + 4 + 2 + 4
	if n := checkSumCells(t, sec, raw, false); n != wantCells {
		t.Errorf("the section shows %d checked cells, want %d", n, wantCells)
	}
	// ... and they equal those of the track stage's summary.json
	trackRaw, err := os.ReadFile(filepath.Join(tracks, "summary.json"))
	if err != nil {
		t.Fatal(err)
	}
	checkSumCells(t, sec, trackRaw, true)
	checkIntervals(t, res.Summary)
	for _, s := range []string{"Phillips", "Barthelemy", "order of magnitude", "not a fit of the exponent", "underestimate"} {
		if !strings.Contains(sec, s) {
			t.Errorf("the section does not say %q", s)
		}
	}
	imgs := dataPNG.FindAllStringSubmatch(page, -1)
	if n := strings.Count(page, "<img "); n != 11 || len(imgs) != 11 {
		t.Errorf("report.html has %d images, %d embedded PNGs; want 11 and 11", n, len(imgs))
	}
	for i, m := range imgs {
		b, err := base64.StdEncoding.DecodeString(html.UnescapeString(m[1]))
		if err != nil {
			t.Errorf("image %d: base64: %v", i, err)
			continue
		}
		img, err := png.Decode(bytes.NewReader(b))
		if err != nil || img.Bounds().Dx() == 0 || img.Bounds().Dy() == 0 {
			t.Errorf("embedded image %d does not decode to a non-empty PNG: %v", i, err)
		}
	}

	// The report from the record in memory (the path the tracking stage
	// takes) computes the same section: the tables are rounded to the
	// precision of their files.
	mem, err := WriteReport(t.TempDir(), DeploymentFromRecord(rec, trackSum, tracks), opt)
	if err != nil {
		t.Fatal(err)
	}
	a, _ := json.Marshal(mem.Breaking.FrontRatio.Stats())
	b, _ := json.Marshal(res.Breaking.FrontRatio.Stats())
	if !bytes.Equal(a, b) || mem.Breaking.Reference.Amplitude != ref.Amplitude {
		t.Errorf("whitecap statistics from the files and from memory differ:\n%s\n%s", b, a)
	}
	// the class statistics drawn are those of the report's summary.json,
	// and their estimates (including the number of whitecaps per class)
	// those of the tracking stage's
	b, _ = json.Marshal(res.Breaking.FrontRatio.Stats())
	c, _ := json.Marshal(res.Summary.Whitecaps.Ratio["peak"])
	if !bytes.Equal(b, c) {
		t.Errorf("the figure's statistics differ from summary.json's:\n%s\n%s", b, c)
	}
	b, _ = json.Marshal(pointEstimates(res.Breaking.FrontRatio.Stats()))
	c, _ = json.Marshal(trackSum.Whitecaps.Ratio["peak"])
	if !bytes.Equal(b, c) {
		t.Errorf("the report's whitecap estimates differ from the tracking stage's:\n%s\n%s", b, c)
	}

	// in the browser: no console message or request, every image decoded;
	// a screenshot of the section kept as a test artifact
	if cr := newChromium(t); cr != nil {
		probe := `<script>addEventListener("load", () => { const im = [...document.images];
document.title = "PROBE " + im.length + " " + im.filter(i => i.complete && i.naturalWidth > 0 && i.naturalHeight > 0).length; });</script>`
		probed := filepath.Join(out, "probe.html")
		os.WriteFile(probed, []byte(strings.Replace(page, "</body>", probe+"</body>", 1)), 0o644)
		dom, logs, reqs := cr.dumpDOM(t, probed)
		os.Remove(probed)
		for _, l := range strings.Split(logs, "\n") {
			if strings.Contains(l, ":CONSOLE") {
				t.Errorf("console message while loading the report: %s", l)
			}
		}
		if len(reqs) > 0 {
			t.Errorf("the report made network requests: %v", reqs)
		}
		if !strings.Contains(dom, "<title>PROBE 11 11</title>") {
			t.Errorf("Chromium did not decode the 11 images: %s", regexp.MustCompile(`<title>[^<]*</title>`).FindString(dom))
		}
		if n := checkSumCells(t, sectionOf(t, dom), raw, false); n != wantCells {
			t.Errorf("Chromium's DOM shows %d checked cells, want %d", n, wantCells)
		}
		art := filepath.Join("..", "test-artifacts")
		if err := os.MkdirAll(art, 0o755); err == nil {
			only := filepath.Join(out, "section.html")
			style := `<style>main > :not(#breaking) { display: none; } main { padding-top: 0; }</style></head>`
			os.WriteFile(only, []byte(strings.Replace(page, "</head>", style, 1)), 0o644)
			shot := filepath.Join(art, "report_breaking.png")
			cr.screenshot(t, only, shot, 1100, 5200)
			os.Remove(only)
			if b, err := os.ReadFile(shot); err != nil {
				t.Errorf("no screenshot: %v", err)
			} else if img, err := png.Decode(bytes.NewReader(b)); err != nil || img.Bounds().Dy() < 1000 {
				t.Errorf("screenshot does not decode: %v", err)
			} else {
				t.Logf("screenshot of the section (%d×%d) in %s", img.Bounds().Dx(), img.Bounds().Dy(), shot)
			}
		}
	}

	t.Run("bad whitecap files", func(t *testing.T) { badWhitecapFiles(t, tracks) })
	t.Run("parts absent", func(t *testing.T) { breakingPartsAbsent(t, d) })
	t.Run("few whitecaps", func(t *testing.T) { fewWhitecaps(t, d, ws.Whitecaps) })
}

// sectionOf cuts the "Whitecaps and breaking" section out of a page.
func sectionOf(t *testing.T, page string) string {
	t.Helper()
	i := strings.Index(page, `<section id="breaking">`)
	if i < 0 {
		t.Fatal("report.html has no whitecaps and breaking section")
	}
	sec := page[i:]
	return sec[:strings.Index(sec, "</section>")]
}

// Each part of the section appears only with its data: B_x without a
// foam mask gives the B_x figure and no confusion table; whitecaps
// without B_x give the three whitecap figures and no inception table;
// neither gives one line and no figure.
func breakingPartsAbsent(t *testing.T, full *Deployment) {
	opt := Options{Bootstrap: BootstrapOptions{Resamples: 100, Seed: 1, Workers: 2}, Version: "test"}
	page := func(d *Deployment) (*Result, string) {
		res, err := WriteReport(t.TempDir(), d, opt)
		if err != nil {
			t.Fatal(err)
		}
		b, err := os.ReadFile(res.HTML)
		if err != nil {
			t.Fatal(err)
		}
		return res, sectionOf(t, string(b))
	}
	// B_x only
	d := *full
	sum := *full.Summary
	inc := *full.Summary.Inception
	inc.HaveFoam = false
	sum.Whitecaps, sum.Inception = nil, &inc
	d.Summary, d.Whitecaps = &sum, nil
	res, sec := page(&d)
	if len(res.Figures) != 8 || res.Figures[7].Name != "fig8_bx_highest_crests" {
		t.Errorf("B_x only: %d figures, the last %v; want 8 ending with fig8_bx_highest_crests", len(res.Figures), res.Figures[len(res.Figures)-1].Name)
	}
	for _, want := range []string{"No foam mask was analysed", "cannot be compared with whitecaps", `id="inception"`} {
		if !strings.Contains(sec, want) {
			t.Errorf("B_x only: the section lacks %q", want)
		}
	}
	if strings.Contains(sec, `id="confusion"`) || strings.Contains(sec, `id="whitecap-stats"`) {
		t.Error("B_x only: the section shows whitecap tables")
	}
	// whitecaps only
	d = *full
	sum = *full.Summary
	sum.Inception = nil
	d.Summary = &sum
	res, sec = page(&d)
	if len(res.Figures) != 10 || strings.Contains(sec, `id="inception"`) || !strings.Contains(sec, "B_x was not computed") &&
		!strings.Contains(sec, "B<sub>x</sub> was not computed") {
		t.Errorf("whitecaps only: %d figures (want 10), or the inception table is shown, or its absence is not said", len(res.Figures))
	}
	// neither: one line, no figure, no table
	src := t.TempDir()
	writeSyntheticTrackDir(t, src, 30, 15, 2)
	plain, err := LoadDeployment(src)
	if err != nil {
		t.Fatal(err)
	}
	res, sec = page(plain)
	if len(res.Figures) != 6 || res.Breaking != nil {
		t.Errorf("neither: %d figures, breaking result %v; want 6 and none", len(res.Figures), res.Breaking)
	}
	if n := strings.Count(sec, "<p"); n != 1 || strings.Contains(sec, "<figure") || strings.Contains(sec, "<table") {
		t.Errorf("neither: the section has %d paragraphs, figures or tables; want one line:\n%s", n, sec)
	}
	t.Logf("neither → %s", regexp.MustCompile(`<p class="note">([^\n]*)</p>`).FindStringSubmatch(sec)[1])
}

// svgPathRE finds the stroked paths of a gonum/plot SVG with their style.
var svgPathRE = regexp.MustCompile(`<path d="([^"]+)"\s+style="([^"]*)"`)

// svgReferenceSlope reads the c⁻⁶ reference line from the Λ(c) SVG (the
// only path stroked in vermillion, okabeIto[4]) and the axes' tick marks,
// and returns the line's slope in decades of Λ per decade of c as drawn.
func svgReferenceSlope(t *testing.T, svg []byte) float64 {
	t.Helper()
	s := string(svg)
	var ref []float64 // the longest vermillion path (the other is the legend's key)
	for _, m := range svgPathRE.FindAllStringSubmatch(s, -1) {
		if v := svgNumbers(m[1]); strings.Contains(strings.ToUpper(m[2]), "STROKE:#D55E00") && len(v) > len(ref) {
			ref = v
		}
	}
	if len(ref) < 4 {
		t.Fatalf("no vermillion reference line in the Λ(c) SVG")
	}
	x0, y0, x1, y1 := ref[0], ref[1], ref[len(ref)-2], ref[len(ref)-1]
	// the decades of the axes, in SVG units, from the figure's own log scale
	// as gonum/plot maps it: recompute where the labelled ticks fall.
	dx, dy := svgDecade(t, s)
	return ((y1 - y0) / dy) / ((x1 - x0) / dx)
}

func svgNumbers(d string) []float64 {
	var v []float64
	for _, f := range strings.FieldsFunc(d, func(r rune) bool { return r == 'M' || r == 'L' || r == ' ' || r == ',' || r == 'Z' }) {
		if x, err := strconv.ParseFloat(f, 64); err == nil {
			v = append(v, x)
		}
	}
	return v
}

// svgTextRE finds the tick labels (9 px text) of a gonum/plot SVG.
var svgTextRE = regexp.MustCompile(`<text x="([^"]+)" y="([^"]+)"[^>]*font-size:9px">([^<]*)</text>`)

// svgDecade returns the length of one decade along x and y of the Λ(c)
// SVG, in the units and orientation of its paths: the grid lines (drawn
// at the labelled ticks, stroke #E8E8E8) matched in order with the tick
// labels of each axis (9 px text; the x labels share one baseline). It
// also checks that every labelled tick sits where a logarithmic axis puts
// it.
func svgDecade(t *testing.T, s string) (dx, dy float64) {
	t.Helper()
	var gx, gy []float64
	for _, m := range svgPathRE.FindAllStringSubmatch(s, -1) {
		if !strings.Contains(strings.ToUpper(m[2]), "STROKE:#E8E8E8") {
			continue
		}
		v := svgNumbers(m[1])
		if len(v) != 4 {
			continue
		}
		switch {
		case v[0] == v[2]:
			gx = append(gx, v[0])
		case v[1] == v[3]:
			gy = append(gy, v[1])
		}
	}
	byBase := map[string][]float64{}
	for _, m := range svgTextRE.FindAllStringSubmatch(s, -1) {
		v, err := strconv.ParseFloat(m[3], 64)
		if err != nil {
			t.Fatalf("tick label %q is not a number", m[3])
		}
		byBase[m[2]] = append(byBase[m[2]], v)
	}
	var xs, ys []float64
	for _, v := range byBase {
		if len(v) > len(xs) {
			xs = v
		}
	}
	for _, v := range byBase {
		if &v[0] != &xs[0] {
			ys = append(ys, v...)
		}
	}
	sort.Float64s(gx)
	sort.Float64s(gy)
	sort.Float64s(xs)
	sort.Float64s(ys)
	if len(gx) != len(xs) || len(gy) != len(ys) || len(xs) < 2 || len(ys) < 2 {
		t.Fatalf("Λ(c) SVG: %d vertical grid lines for %d x labels, %d horizontal for %d y labels", len(gx), len(xs), len(gy), len(ys))
	}
	decade := func(g, v []float64, axis string) float64 {
		d := (g[len(g)-1] - g[0]) / math.Log10(v[len(v)-1]/v[0])
		for i := range g {
			if got, want := (g[i]-g[0])/d, math.Log10(v[i]/v[0]); math.Abs(got-want) > 0.01 {
				t.Errorf("Λ(c) SVG: %s tick %g sits %.3f decades from the first, a log axis puts it at %.3f", axis, v[i], got, want)
			}
		}
		return d
	}
	return decade(gx, xs, "x"), decade(gy, ys, "y")
}

// checkAmplitudeWithNumpy fits log Λ = log A − 6 log c over the bins above
// the peak of lambda.csv with numpy.linalg.lstsq and compares A.
func checkAmplitudeWithNumpy(t *testing.T, lambdaCSV string, amp float64) {
	t.Helper()
	if _, err := os.Stat("/usr/bin/python3"); err != nil {
		t.Log("/usr/bin/python3 missing; numpy check skipped")
		return
	}
	py := `import sys, numpy as np
d = np.genfromtxt(sys.argv[1], delimiter=",", names=True)
lam = d["lambda_m2_s"]
c = 0.5*(d["speed_min_mps"] + d["speed_max_mps"])
p = int(np.argmax(lam))
sel = np.arange(len(lam)) > p
sel &= lam > 0
A = np.ones((sel.sum(), 1))
coef = np.linalg.lstsq(A, np.log(lam[sel]) + 6*np.log(c[sel]), rcond=None)[0]
print(repr(float(np.exp(coef[0]))))
`
	out, err := exec.Command("/usr/bin/python3", "-c", py, lambdaCSV).CombinedOutput()
	if err != nil {
		t.Fatalf("numpy fit failed: %v\n%s", err, out)
	}
	want, err := strconv.ParseFloat(strings.TrimSpace(string(out)), 64)
	if err != nil {
		t.Fatalf("numpy printed %q", out)
	}
	t.Logf("amplitude of c⁻⁶: %.10g (numpy.linalg.lstsq %.10g)", amp, want)
	if math.Abs(amp-want) > 1e-9*want {
		t.Errorf("amplitude %.10g, numpy.linalg.lstsq gives %.10g", amp, want)
	}
}

// Malformed whitecap files: each is one clear sentence naming the file,
// and no report is written.
func badWhitecapFiles(t *testing.T, good string) {
	read := func(name string) string {
		b, err := os.ReadFile(filepath.Join(good, name))
		if err != nil {
			t.Fatal(err)
		}
		return string(b)
	}
	wc, lam, cov := read("whitecaps.csv"), read("lambda.csv"), read("coverage.csv")
	line := func(s string, i int) string { return strings.Split(s, "\n")[i] }
	setField := func(s string, row, col int, v string) string {
		ls := strings.Split(s, "\n")
		f := strings.Split(ls[row], ",")
		f[col] = v
		ls[row] = strings.Join(f, ",")
		return strings.Join(ls, "\n")
	}
	cases := []struct {
		name, file, content, want string
	}{
		{"whitecaps empty", "whitecaps.csv", "", "whitecaps.csv is empty"},
		{"whitecaps missing column", "whitecaps.csv", strings.Replace(wc, ",ratio_peak", "", 1), "lacks the column(s) ratio_peak"},
		{"whitecaps text in a number", "whitecaps.csv", setField(wc, 2, 9, "fast"), `whitecaps.csv line 3, column front_speed_mps: "fast" is not a number`},
		{"whitecaps bad fit kind", "whitecaps.csv", setField(wc, 1, 10, "guess"), `column speed_fit: "guess" is not one of`},
		{"whitecaps short row", "whitecaps.csv", wc + "1,2,3\n", "has 3 fields"},
		{"whitecaps rows lost", "whitecaps.csv", strings.Join(strings.Split(wc, "\n")[:3], "\n") + "\n", "whitecap rows but summary.json counts"},
		{"lambda header only", "lambda.csv", line(lam, 0) + "\n", "no speed bins"},
		{"lambda negative", "lambda.csv", setField(lam, 1, 2, "-1e-3"), `lambda.csv line 2, column lambda_m-2_s: "-1e-3" is negative`},
		{"lambda gap", "lambda.csv", setField(lam, 2, 0, "0.3"), "bins must adjoin"},
		{"lambda not a count", "lambda.csv", setField(lam, 1, 3, "2.5"), "is not a whole number"},
		{"coverage above one", "coverage.csv", setField(cov, 1, 2, "1.5"), `coverage.csv line 2, column coverage: "1.5" is above 1`},
		{"coverage foam beyond known", "coverage.csv", setField(cov, 1, 3, "999999"), "foam cells, more than its"},
		{"coverage missing", "coverage.csv", "-", "has no coverage.csv"},
	}
	for _, c := range cases {
		dir := filepath.Join(t.TempDir(), "tracks")
		os.MkdirAll(dir, 0o755)
		entries, _ := os.ReadDir(good)
		for _, e := range entries {
			if e.IsDir() {
				continue
			}
			b, _ := os.ReadFile(filepath.Join(good, e.Name()))
			os.WriteFile(filepath.Join(dir, e.Name()), b, 0o644)
		}
		if c.content == "-" {
			os.Remove(filepath.Join(dir, c.file))
		} else {
			os.WriteFile(filepath.Join(dir, c.file), []byte(c.content), 0o644)
		}
		before, _ := os.ReadDir(dir)
		_, err := LoadDeployment(dir)
		if err == nil {
			t.Errorf("%s: no error", c.name)
			continue
		}
		msg := err.Error()
		if !strings.Contains(msg, c.want) {
			t.Errorf("%s: error %q does not say %q", c.name, msg, c.want)
		}
		if strings.Count(strings.TrimSuffix(msg, "."), ". ") > 0 || strings.Contains(msg, "\n") {
			t.Errorf("%s: not one sentence: %q", c.name, msg)
		}
		if after, _ := os.ReadDir(dir); len(after) != len(before) {
			t.Errorf("%s: the failed load changed the folder (%d entries, were %d)", c.name, len(after), len(before))
		}
		t.Logf("%s → %s", c.name, msg)
	}
}

// The whitecap tables carry the few-tracks marker of the crest tables:
// with a minimum above the number of whitecaps every row of both whitecap
// tables is marked, and the whitecap PDF figure draws points, not curves;
// with the default (the record has 7 whitecaps, fewer than 10) the rows
// are marked where their class has fewer than 10 whitecaps.
func fewWhitecaps(t *testing.T, d *Deployment, whitecaps int) {
	for _, min := range []int{whitecaps + 1, 1} {
		res, err := WriteReport(t.TempDir(), d, Options{Bootstrap: BootstrapOptions{Resamples: 100, Seed: 1, Workers: 2}, MinClassTracks: min})
		if err != nil {
			t.Fatal(err)
		}
		b, _ := os.ReadFile(res.HTML)
		sec := sectionOf(t, string(b))
		var rows [][]string // the rows of the two ratio tables (not the confusion table's total)
		for _, m := range fewRowRE.FindAllStringSubmatch(sec, -1) {
			if m[3] != "total" {
				rows = append(rows, m)
			}
		}
		few := 0
		for _, m := range rows {
			if m[2] != "" {
				few++
			}
		}
		want := 0
		for _, ref := range []string{"peak", "local"} {
			for _, st := range res.Summary.Whitecaps.Ratio[ref].Groups() {
				if st.Tracks < min {
					want++
				}
			}
		}
		if len(rows) != 8 || few != want || (min > whitecaps && few != 8) {
			t.Errorf("minimum %d: %d of %d whitecap table rows marked as few, want %d of 8", min, few, len(rows), want)
		}
		var pdf []byte
		for _, f := range res.Figures {
			if strings.HasSuffix(f.Name, "whitecap_ratio_pdf") {
				pdf = f.SVG
			}
		}
		if n := strings.Count(string(pdf), "too few whitecaps for a curve"); (min > whitecaps) != (n > 0) {
			t.Errorf("minimum %d: the whitecap PDF figure draws %d groups as points", min, n)
		}
	}
}
