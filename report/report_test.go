package report

import (
	"bufio"
	"bytes"
	"context"
	"crestspeed/speed/analysis"
	"encoding/base64"
	"encoding/json"
	"encoding/xml"
	"fmt"
	"html"
	"image/png"
	"io"
	"math"
	"net"
	"os"
	"os/exec"
	"path/filepath"
	"regexp"
	"strings"
	"sync"
	"testing"
	"time"

	"crestspeed/report/stats"
	"crestspeed/report/summary"
	"crestspeed/report/table"
)

// trackDir synthesises a small directional JONSWAP record (samples), runs
// the crest analysis on it (analysis.Run) and writes the files of
// the tracking stage (WriteTrackOutputs) into a fresh folder.
func trackDir(t *testing.T) (string, *analysis.Record) {
	t.Helper()
	dir := t.TempDir()
	nc := filepath.Join(dir, "elevation.nc")
	synthesize(t, testSea(), nc)
	rec := analyseFile(t, nc, analysis.Options{MinCrestFraction: 0.1, MinCrestLengthM: 2, MaxGapFrames: 2, Workers: 2})
	in, err := DescribeFile(nc)
	if err != nil {
		t.Fatal(err)
	}
	tracks := filepath.Join(dir, "tracks")
	if _, err := WriteTrackOutputs(tracks, rec, RunInfo{Version: "test", Config: map[string]any{"test": true},
		Inputs: []FileInfo{in}, SteepnessBounds: []float64{0.1, 0.2}}); err != nil {
		t.Fatal(err)
	}
	return tracks, rec
}

// The report rebuilt from the files of a tracking run: every output is
// written and listed in summary.json, the statistics equal those computed
// from the analysed rows in memory, figures decode, the NetCDF opens.
func TestReportFromTrackFiles(t *testing.T) {
	tracks, rec := trackDir(t)
	d, err := LoadDeployment(tracks)
	if err != nil {
		t.Fatal(err)
	}
	if d.Crests.Len() != len(rec.Rows) {
		t.Fatalf("crests.csv holds %d rows, the record %d", d.Crests.Len(), len(rec.Rows))
	}
	out := filepath.Join(t.TempDir(), "report")
	opt := Options{Bootstrap: BootstrapOptions{Resamples: 300, Seed: 4, Workers: 2}, Version: "test"}
	res, err := WriteReport(out, d, opt)
	if err != nil {
		t.Fatal(err)
	}
	// The same statistics from the rows in memory (the path the tracking
	// stage takes): the tables are rounded to the precision of their
	// files, so memory and files agree to the last bit.
	mem := crestRatioStats(DeploymentFromRecord(rec, d.Summary, tracks).Crests, []float64{0.1, 0.2},
		statsOptions(opt), d.Summary.SeaState.PeakSpeedRelativeUncertainty())
	for _, ref := range []string{"peak", "local"} {
		a, _ := json.Marshal(mem[ref])
		b, _ := json.Marshal(res.Summary.Ratio[ref])
		if !bytes.Equal(a, b) {
			t.Errorf("%s: statistics from crests.csv and from memory differ:\n%s\n%s", ref, b, a)
		}
	}
	// summary.json lists every output, and every listed file exists
	var js map[string]any
	raw, err := os.ReadFile(filepath.Join(out, "summary.json"))
	if err != nil {
		t.Fatal(err)
	}
	if err := json.Unmarshal(raw, &js); err != nil {
		t.Fatal(err)
	}
	outs := js["outputs"].(map[string]any)
	for _, name := range []string{"report.html", "crest_tracks.nc", "summary.json", "crests.csv", "tracks.csv", "spectrum.csv",
		"figures/fig1_ratio_peak_pdf.png", "figures/fig6_ratio_vs_steepness.svg"} {
		p, ok := outs[name].(string)
		if !ok {
			t.Errorf("summary.json does not list %s", name)
			continue
		}
		if fi, err := os.Stat(p); err != nil || fi.Size() == 0 {
			t.Errorf("output %s (%s) is missing or empty", name, p)
		}
	}
	if len(res.Figures) != 7 {
		t.Errorf("%d figures, want 7", len(res.Figures))
	}
	for _, f := range res.Figures {
		img, err := png.Decode(bytes.NewReader(f.PNG))
		if err != nil || img.Bounds().Dx() == 0 || img.Bounds().Dy() == 0 {
			t.Errorf("%s.png does not decode to a non-empty image: %v", f.Name, err)
		}
		if err := wellFormedXML(f.SVG); err != nil {
			t.Errorf("%s.svg is not well-formed XML: %v", f.Name, err)
		}
	}
	// every interval holds its estimate
	checkIntervals(t, res.Summary)
	// no temporary file is left
	filepath.Walk(out, func(p string, fi os.FileInfo, err error) error {
		if strings.Contains(p, ".part-") {
			t.Errorf("temporary file left behind: %s", p)
		}
		return nil
	})
	checkPage(t, filepath.Join(out, "report.html"), raw)
}

func wellFormedXML(b []byte) error {
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

var dataPNG = regexp.MustCompile(`src="data:image/png;base64,([^"]+)"`)

// checkPage checks report.html statically and in headless Chromium.
func checkPage(t *testing.T, page string, summaryJSON []byte) {
	page0, err := os.ReadFile(page)
	if err != nil {
		t.Fatal(err)
	}
	s := string(page0)
	// Self-contained: nothing that could fetch from elsewhere.
	for _, bad := range []string{"http://", "https://", "<script", "<link", "@import", "url(", "<iframe", "<object"} {
		if strings.Contains(strings.ToLower(s), bad) {
			t.Errorf("report.html contains %q", bad)
		}
	}
	if n := strings.Count(s, "<img "); n != 7 || len(dataPNG.FindAllStringSubmatch(s, -1)) != 7 {
		t.Errorf("report.html has %d images, %d of them embedded PNGs; want 7 and 7", n, len(dataPNG.FindAllStringSubmatch(s, -1)))
	}
	for i, m := range dataPNG.FindAllStringSubmatch(s, -1) {
		b, err := base64.StdEncoding.DecodeString(html.UnescapeString(m[1])) // html/template writes + as &#43;
		if err != nil {
			t.Errorf("image %d: base64: %v", i, err)
			continue
		}
		img, err := png.Decode(bytes.NewReader(b))
		if err != nil || img.Bounds().Empty() {
			t.Errorf("image %d does not decode as PNG: %v", i, err)
		}
	}
	if !strings.Contains(s, summary.Caution) {
		t.Error("report.html lacks the caution")
	}
	for _, src := range []string{"Savitzky", "Welch", "Fenton", "Silverman", "Freedman", "Efron"} {
		if !strings.Contains(s, src) {
			t.Errorf("report.html does not cite %s", src)
		}
	}
	cr := newChromium(t)
	if cr == nil {
		return
	}
	// The detectors work: a control page with a console message and a
	// request to the network is caught.
	ctrl := filepath.Join(t.TempDir(), "control.html")
	os.WriteFile(ctrl, []byte(`<!DOCTYPE html><html><head><title>c</title></head><body><img src="http://example.invalid/x.png"><script>console.error("control")</script></body></html>`), 0o644)
	_, logs, reqs := cr.dumpDOM(t, ctrl)
	if !strings.Contains(logs, ":CONSOLE") || len(reqs) == 0 {
		t.Fatalf("the control page's console message or network request went unnoticed (console seen: %v, requests: %v)",
			strings.Contains(logs, ":CONSOLE"), reqs)
	}
	// The report, with a probe that counts decoded images and measures
	// the page (added to a copy; the report itself has no script).
	probe := `<script>addEventListener("load", () => { const im = [...document.images];
document.title = "PROBE " + im.length + " " + im.filter(i => i.complete && i.naturalWidth > 0 && i.naturalHeight > 0).length + " " + document.documentElement.scrollHeight; });</script>`
	probed := filepath.Join(filepath.Dir(page), "probe.html")
	os.WriteFile(probed, []byte(strings.Replace(s, "</body>", probe+"</body>", 1)), 0o644)
	defer os.Remove(probed)
	dom, logs, reqs := cr.dumpDOM(t, probed)
	for _, l := range strings.Split(logs, "\n") {
		if strings.Contains(l, ":CONSOLE") {
			t.Errorf("console message while loading the report: %s", l)
		}
	}
	if len(reqs) > 0 {
		t.Errorf("the report made network requests: %v", reqs)
	}
	var nImg, nOK, height int
	if m := regexp.MustCompile(`<title>PROBE (\d+) (\d+) (\d+)</title>`).FindStringSubmatch(dom); m != nil {
		fmt.Sscan(m[1], &nImg)
		fmt.Sscan(m[2], &nOK)
		fmt.Sscan(m[3], &height)
	}
	if nImg != 7 || nOK != 7 {
		t.Errorf("Chromium decoded %d of %d images, want 7 of 7", nOK, nImg)
	}
	if n := checkSumCells(t, dom, summaryJSON, false); n < 2*4*10 {
		t.Errorf("Chromium's DOM shows %d checked cells, want at least the %d of the two statistics tables", n, 2*4*10)
	}
	// a screenshot of the whole page, kept as a test artifact
	art := filepath.Join("..", "test-artifacts")
	if err := os.MkdirAll(art, 0o755); err == nil && height > 0 {
		shot := filepath.Join(art, "report.png")
		cr.screenshot(t, page, shot, 1200, min(height+20, 16000))
		if b, err := os.ReadFile(shot); err != nil {
			t.Errorf("no screenshot: %v", err)
		} else if img, err := png.Decode(bytes.NewReader(b)); err != nil || img.Bounds().Dy() < 1000 {
			t.Errorf("screenshot does not decode to a full page: %v", err)
		} else {
			t.Logf("screenshot of report.html (%d×%d) in %s", img.Bounds().Dx(), img.Bounds().Dy(), shot)
		}
	}
}

// chromium drives Debian's headless Chromium with a fresh profile; a local
// listener posing as the HTTP proxy records every request the browser
// sends to the network.
type chromium struct {
	bin string
}

func newChromium(t *testing.T) *chromium {
	if _, err := os.Stat("/usr/bin/chromium"); err != nil {
		t.Log("/usr/bin/chromium is not installed (scripts/setup-deps installs it); browser checks skipped")
		return nil
	}
	return &chromium{bin: "/usr/bin/chromium"}
}

// browserHosts are the Google service hosts Chromium contacts on its own
// (clock, component updates, sign-in) whatever page it loads; requests to
// them are not the page's.
var browserHosts = []string{".google.com", ".googleapis.com", ".gvt1.com"}

func (c *chromium) run(t *testing.T, args ...string) (stdout, logs string, requests []string) {
	t.Helper()
	ln, err := net.Listen("tcp", "127.0.0.1:0")
	if err != nil {
		t.Fatal(err)
	}
	var mu sync.Mutex
	var wg sync.WaitGroup
	wg.Add(1)
	go func() {
		defer wg.Done()
		for {
			conn, err := ln.Accept()
			if err != nil {
				return
			}
			conn.SetReadDeadline(time.Now().Add(2 * time.Second))
			line, _ := bufio.NewReader(conn).ReadString('\n')
			conn.Close()
			f := strings.Fields(line)
			if len(f) < 2 {
				continue
			}
			host := f[1]
			host = strings.TrimPrefix(strings.TrimPrefix(host, "http://"), "https://")
			if i := strings.IndexAny(host, ":/"); i >= 0 {
				host = host[:i]
			}
			own := false
			for _, h := range browserHosts {
				if strings.HasSuffix(host, h) {
					own = true
				}
			}
			if !own {
				mu.Lock()
				requests = append(requests, strings.TrimSpace(line))
				mu.Unlock()
			}
		}
	}()
	base := []string{"--headless", "--no-sandbox", "--disable-gpu", "--disable-background-networking", "--no-first-run",
		"--disable-component-update", "--disable-sync", "--hide-scrollbars",
		"--user-data-dir=" + t.TempDir(), "--enable-logging=stderr", "--v=0",
		"--proxy-server=http://" + ln.Addr().String(), "--proxy-bypass-list=<-loopback>"}
	ctx, cancel := context.WithTimeout(context.Background(), 90*time.Second)
	defer cancel()
	cmd := exec.CommandContext(ctx, c.bin, append(base, args...)...)
	var so, se bytes.Buffer
	cmd.Stdout, cmd.Stderr = &so, &se
	if err := cmd.Run(); err != nil {
		t.Fatalf("chromium failed: %v\n%s", err, se.String())
	}
	ln.Close()
	wg.Wait()
	return so.String(), se.String(), requests
}

func (c *chromium) dumpDOM(t *testing.T, page string) (dom, logs string, requests []string) {
	abs, _ := filepath.Abs(page)
	return c.run(t, "--virtual-time-budget=5000", "--dump-dom", "file://"+abs)
}

func (c *chromium) screenshot(t *testing.T, page, shot string, w, h int) {
	abs, _ := filepath.Abs(page)
	sabs, _ := filepath.Abs(shot)
	c.run(t, fmt.Sprintf("--window-size=%d,%d", w, h), "--screenshot="+sabs, "file://"+abs)
}

// Bad input: an empty folder, a crests.csv lacking columns or with a
// non-numeric field, each is one clear sentence naming the file.
func TestLoadDeploymentBadInput(t *testing.T) {
	good := filepath.Join(t.TempDir(), "good")
	os.MkdirAll(good, 0o755)
	writeSyntheticTrackDir(t, good, 5, 10, 1)
	csv, _ := os.ReadFile(filepath.Join(good, "crests.csv"))
	lines := strings.Split(string(csv), "\n")

	cases := map[string]struct {
		crests string // "" = leave out the files
		want   string
	}{
		"empty folder":    {"", "is empty"},
		"missing columns": {strings.Replace(string(csv), ",ratio_local", "", 1), "lacks the column(s) ratio_local"},
		"non-numeric":     {strings.Join(append(append([]string{}, lines[:3]...), strings.Replace(lines[3], ",", ",abc,", 1)[:len(lines[3])+4]), "\n") + "\n", "line 4"},
		"header only":     {lines[0] + "\n", "no crest rows"},
		"short row":       {lines[0] + "\n1,2,3\n", "has 3 fields"},
		// a copy cut short (a full disk, a killed transfer): in the middle
		// of a line, or at a line end, where only the counts of
		// summary.json tell
		"cut mid-line": {string(csv[:len(csv)/2]), "ends in the middle of a line"},
		"cut at a line": {strings.Join(lines[:len(lines)/2], "\n") + "\n",
			fmt.Sprintf("holds %d crest rows but summary.json counts %d, so it is truncated", len(lines)/2-1, len(lines)-2)},
	}
	// a non-numeric field in the middle of a row, precisely
	fields := strings.Split(lines[5], ",")
	fields[7] = "fast"
	cases["non-numeric"] = struct{ crests, want string }{strings.Join(append(append([]string{}, lines[:5]...), strings.Join(fields, ",")), "\n") + "\n",
		`line 6, column crest_speed_mps: "fast" is not a number`}
	for name, c := range cases {
		dir := filepath.Join(t.TempDir(), "tracks")
		os.MkdirAll(dir, 0o755)
		if c.crests != "" {
			for _, f := range []string{"summary.json", "spectrum.csv"} {
				b, _ := os.ReadFile(filepath.Join(good, f))
				os.WriteFile(filepath.Join(dir, f), b, 0o644)
			}
			os.WriteFile(filepath.Join(dir, "crests.csv"), []byte(c.crests), 0o644)
		}
		_, err := LoadDeployment(dir)
		if err == nil {
			t.Errorf("%s: no error", name)
			continue
		}
		msg := err.Error()
		if !strings.Contains(msg, c.want) {
			t.Errorf("%s: error %q does not say %q", name, msg, c.want)
		}
		if strings.Count(strings.TrimSuffix(msg, "."), ". ") > 0 {
			t.Errorf("%s: not one sentence: %q", name, msg)
		}
		t.Logf("%s → %s", name, msg)
	}
}

// A report that fails while being written leaves nothing behind: here the
// figures folder is blocked by a file of that name.
func TestWriteReportFailureLeavesNothing(t *testing.T) {
	src := t.TempDir()
	writeSyntheticTrackDir(t, src, 30, 15, 2)
	d, err := LoadDeployment(src)
	if err != nil {
		t.Fatal(err)
	}
	out := t.TempDir()
	os.WriteFile(filepath.Join(out, "figures"), []byte("in the way"), 0o644)
	_, err = WriteReport(out, d, Options{Bootstrap: BootstrapOptions{Resamples: 100}})
	if err == nil {
		t.Fatal("no error with a file in the way of the figures folder")
	}
	t.Logf("→ %v", err)
	entries, _ := os.ReadDir(out)
	if len(entries) != 1 {
		var names []string
		for _, e := range entries {
			names = append(names, e.Name())
		}
		t.Errorf("failed report left %v behind", names)
	}
}

// A deployment whose ratios are all unknown (no track long enough for a
// speed) still gives a report, with unknown statistics shown as such.
func TestReportWithoutSpeeds(t *testing.T) {
	src := t.TempDir()
	writeSyntheticTrackDir(t, src, 8, 10, 3)
	d, err := LoadDeployment(src)
	if err != nil {
		t.Fatal(err)
	}
	for _, c := range []int{table.CrestSpeed, table.CrestRatioPeak, table.CrestRatioLocal} {
		for i := range d.Crests.Cols[c] {
			d.Crests.Cols[c][i] = math.NaN()
		}
	}
	res, err := WriteReport(t.TempDir(), d, Options{Bootstrap: BootstrapOptions{Resamples: 100}})
	if err != nil {
		t.Fatal(err)
	}
	if s := res.Summary.Ratio["peak"].All; s.N != 0 || !math.IsNaN(s.Median) || s.MedianCI.Known() {
		t.Errorf("statistics of no values: %+v", s)
	}
}

// The tracking stage's own path (WriteTrackOutputsForReport): crests.csv
// is written a block of rows at a time and read back once the rows are let
// go. Its files are those WriteTrackOutputs writes from the whole table,
// byte for byte (the record spans several blocks), its crest table and
// summary are those of the in-memory tables to the last bit, and the rows
// are released.
func TestTrackOutputsForReportReadBack(t *testing.T) {
	tracks, rec := trackDir(t)
	defer func(n int) { crestsBlock = n }(crestsBlock)
	crestsBlock = 1000
	if len(rec.Rows) <= 2*crestsBlock {
		t.Fatalf("%d crest rows: the record needs several blocks of %d", len(rec.Rows), crestsBlock)
	}
	whole := tablesOf(rec)
	rows := len(rec.Rows)
	dir := filepath.Join(t.TempDir(), "tracks")
	sum, d, err := WriteTrackOutputsForReport(dir, rec, RunInfo{Version: "test", Config: map[string]any{"test": true},
		SteepnessBounds: []float64{0.1, 0.2}})
	if err != nil {
		t.Fatal(err)
	}
	if rec.Rows != nil {
		t.Errorf("the crest rows are still held (%d)", len(rec.Rows))
	}
	if d.Crests.Len() != rows || sum.Crests.Rows != rows {
		t.Fatalf("crest table %d rows, summary %d, record %d", d.Crests.Len(), sum.Crests.Rows, rows)
	}
	for k, col := range whole.Crests.Cols {
		for i, v := range col {
			if w := d.Crests.Cols[k][i]; math.Float64bits(v) != math.Float64bits(w) && !(math.IsNaN(v) && math.IsNaN(w)) {
				t.Fatalf("%s row %d: read back %v, in memory %v", table.Crests.Columns[k].Name, i, w, v)
			}
		}
	}
	for _, name := range []string{"crests.csv", "tracks.csv", "spectrum.csv"} {
		a, errA := os.ReadFile(filepath.Join(tracks, name))
		b, errB := os.ReadFile(filepath.Join(dir, name))
		if errA != nil || errB != nil || !bytes.Equal(a, b) {
			t.Errorf("%s differs from the one written from the whole table (%v, %v)", name, errA, errB)
		}
	}
	mem := crestRatioStats(whole.Crests, []float64{0.1, 0.2}, stats.Options{}, 0)
	a, _ := json.Marshal(mem)
	b, _ := json.Marshal(sum.Ratio)
	if !bytes.Equal(a, b) {
		t.Errorf("summary statistics differ from those of the in-memory table:\n%s\n%s", b, a)
	}
}
