// Package pagecheck checks the report pages in tests: statically (self-
// contained, embedded PNGs that decode) and in Debian's headless Chromium
// (no console message, no network request, every image decoded, every
// number shown in a data-sum cell equal to summary.json within the
// rounding of its display), and keeps a screenshot as a test artifact.
// It is for tests only, like internal/pyref.
package pagecheck

import (
	"bufio"
	"bytes"
	"context"
	"encoding/base64"
	"encoding/json"
	"fmt"
	"html"
	"image/png"
	"math"
	"net"
	"os"
	"os/exec"
	"path/filepath"
	"regexp"
	"strconv"
	"strings"
	"sync"
	"testing"
	"time"
)

// Chromium is Debian's headless Chromium, driven with a fresh profile; a
// local listener posing as the HTTP proxy records every request the
// browser sends to the network.
type Chromium struct{ bin string }

// NewChromium returns the browser, or nil (and a log line) when
// /usr/bin/chromium is not installed.
func NewChromium(t testing.TB) *Chromium {
	if _, err := os.Stat("/usr/bin/chromium"); err != nil {
		t.Log("/usr/bin/chromium is not installed (scripts/setup-deps installs it); browser checks skipped")
		return nil
	}
	return &Chromium{bin: "/usr/bin/chromium"}
}

// browserHosts are the Google service hosts Chromium contacts on its own
// whatever page it loads; requests to them are not the page's.
var browserHosts = []string{".google.com", ".googleapis.com", ".gvt1.com"}

func (c *Chromium) run(t testing.TB, args ...string) (stdout, logs string, requests []string) {
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
			host := strings.TrimPrefix(strings.TrimPrefix(f[1], "http://"), "https://")
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

// DumpDOM loads a page and returns its DOM after scripts ran, the
// browser's log and the requests it sent to the network.
func (c *Chromium) DumpDOM(t testing.TB, page string) (dom, logs string, requests []string) {
	abs, _ := filepath.Abs(page)
	return c.run(t, "--virtual-time-budget=5000", "--dump-dom", "file://"+abs)
}

// Screenshot renders a page into the PNG shot, w × h pixels.
func (c *Chromium) Screenshot(t testing.TB, page, shot string, w, h int) {
	abs, _ := filepath.Abs(page)
	sabs, _ := filepath.Abs(shot)
	c.run(t, fmt.Sprintf("--window-size=%d,%d", w, h), "--screenshot="+sabs, "file://"+abs)
}

var dataPNG = regexp.MustCompile(`src="data:image/png;base64,([^"]+)"`)

// Page is a page to check: its file, the summary.json its cells show,
// how many embedded images it has, the fewest data-sum cells it must
// show, words it must contain (the sources it cites), and where to keep
// its screenshot ("" for none).
type Page struct {
	Path        string
	SummaryJSON []byte
	Images      int
	MinCells    int
	Contains    []string
	Caution     string
	Screenshot  string
}

// Check checks a page statically and, when Chromium is installed, in the
// browser (see the package documentation).
func Check(t testing.TB, p Page) {
	t.Helper()
	raw, err := os.ReadFile(p.Path)
	if err != nil {
		t.Fatal(err)
	}
	s := string(raw)
	for _, bad := range []string{"http://", "https://", "<script", "<link", "@import", "url(", "<iframe", "<object"} {
		if strings.Contains(strings.ToLower(s), bad) {
			t.Errorf("%s contains %q", p.Path, bad)
		}
	}
	imgs := dataPNG.FindAllStringSubmatch(s, -1)
	if n := strings.Count(s, "<img "); n != p.Images || len(imgs) != p.Images {
		t.Errorf("%s has %d images, %d of them embedded PNGs; want %d and %d", p.Path, n, len(imgs), p.Images, p.Images)
	}
	for i, m := range imgs {
		b, err := base64.StdEncoding.DecodeString(html.UnescapeString(m[1])) // html/template writes + as &#43;
		if err != nil {
			t.Errorf("image %d: base64: %v", i, err)
			continue
		}
		if img, err := png.Decode(bytes.NewReader(b)); err != nil || img.Bounds().Empty() {
			t.Errorf("image %d does not decode as PNG: %v", i, err)
		}
	}
	if p.Caution != "" && strings.Count(s, p.Caution) < 1 {
		t.Errorf("%s lacks the caution", p.Path)
	}
	for _, w := range p.Contains {
		if !strings.Contains(s, w) {
			t.Errorf("%s does not contain %q", p.Path, w)
		}
	}
	cr := NewChromium(t)
	if cr == nil {
		if n := CheckSumCells(t, s, p.SummaryJSON); n < p.MinCells {
			t.Errorf("%s shows %d checked cells, want at least %d", p.Path, n, p.MinCells)
		}
		return
	}
	// The detectors work: a control page with a console message and a
	// request to the network is caught.
	ctrl := filepath.Join(t.TempDir(), "control.html")
	os.WriteFile(ctrl, []byte(`<!DOCTYPE html><html><head><title>c</title></head><body><img src="http://example.invalid/x.png"><script>console.error("control")</script></body></html>`), 0o644)
	_, logs, reqs := cr.DumpDOM(t, ctrl)
	if !strings.Contains(logs, ":CONSOLE") || len(reqs) == 0 {
		t.Fatalf("the control page's console message or network request went unnoticed (console seen: %v, requests: %v)",
			strings.Contains(logs, ":CONSOLE"), reqs)
	}
	// The page, with a probe that counts decoded images and measures the
	// page (added to a copy; the page itself has no script).
	probe := `<script>addEventListener("load", () => { const im = [...document.images];
document.title = "PROBE " + im.length + " " + im.filter(i => i.complete && i.naturalWidth > 0 && i.naturalHeight > 0).length + " " + document.documentElement.scrollHeight; });</script>`
	probed := filepath.Join(filepath.Dir(p.Path), "probe.html")
	os.WriteFile(probed, []byte(strings.Replace(s, "</body>", probe+"</body>", 1)), 0o644)
	defer os.Remove(probed)
	dom, logs, reqs := cr.DumpDOM(t, probed)
	for _, l := range strings.Split(logs, "\n") {
		if strings.Contains(l, ":CONSOLE") {
			t.Errorf("console message while loading %s: %s", p.Path, l)
		}
	}
	if len(reqs) > 0 {
		t.Errorf("%s made network requests: %v", p.Path, reqs)
	}
	var nImg, nOK, height int
	if m := regexp.MustCompile(`<title>PROBE (\d+) (\d+) (\d+)</title>`).FindStringSubmatch(dom); m != nil {
		fmt.Sscan(m[1], &nImg)
		fmt.Sscan(m[2], &nOK)
		fmt.Sscan(m[3], &height)
	}
	if nImg != p.Images || nOK != p.Images {
		t.Errorf("Chromium decoded %d of %d images, want %d of %d", nOK, nImg, p.Images, p.Images)
	}
	if n := CheckSumCells(t, dom, p.SummaryJSON); n < p.MinCells {
		t.Errorf("Chromium's DOM shows %d checked cells, want at least %d", n, p.MinCells)
	}
	if p.Screenshot == "" || height == 0 {
		return
	}
	if err := os.MkdirAll(filepath.Dir(p.Screenshot), 0o755); err != nil {
		t.Errorf("no folder for the screenshot: %v", err)
		return
	}
	cr.Screenshot(t, p.Path, p.Screenshot, 1200, min(height+20, 16000))
	if b, err := os.ReadFile(p.Screenshot); err != nil {
		t.Errorf("no screenshot: %v", err)
	} else if img, err := png.Decode(bytes.NewReader(b)); err != nil || img.Bounds().Dy() < 1000 {
		t.Errorf("screenshot does not decode to a full page: %v", err)
	} else {
		t.Logf("screenshot of %s (%d×%d) in %s", filepath.Base(p.Path), img.Bounds().Dx(), img.Bounds().Dy(), p.Screenshot)
	}
}

// sumCellRE matches the cells of a page that show a number of
// summary.json.
var sumCellRE = regexp.MustCompile(`data-sum="([^"]+)"(?: data-scale="([^"]*)")?>([^<]*)<`)

// superRE matches the m×10ⁿ notation of the pages.
var superRE = regexp.MustCompile(`×10([⁻⁰¹²³⁴⁵⁶⁷⁸⁹]+)$`)

// parseShown reads a number as a page shows it and the half unit of its
// last digit (the rounding the display allows).
func parseShown(s string) (v, half float64, err error) {
	exp := 0
	if m := superRE.FindStringSubmatch(s); m != nil {
		plain := strings.NewReplacer("⁻", "-", "⁰", "0", "¹", "1", "²", "2", "³", "3", "⁴", "4", "⁵", "5", "⁶", "6", "⁷", "7", "⁸", "8", "⁹", "9").Replace(m[1])
		exp, _ = strconv.Atoi(plain)
		s = s[:len(s)-len(m[0])]
	}
	if i := strings.IndexAny(s, "eE"); i >= 0 {
		e, err := strconv.Atoi(s[i+1:])
		if err != nil {
			return 0, 0, err
		}
		exp += e
		s = s[:i]
	}
	v, err = strconv.ParseFloat(s, 64)
	if err != nil {
		return 0, 0, err
	}
	dec := 0
	if i := strings.IndexByte(s, '.'); i >= 0 {
		dec = len(s) - i - 1
	}
	scale := math.Pow(10, float64(exp))
	return v * scale, 0.5 * math.Pow(10, -float64(dec)) * scale, nil
}

// Lookup follows a path like "campaign/deployments/0/hm0_m" through
// decoded JSON; a segment ending in # is the length of that list.
func Lookup(js map[string]any, path string) (any, bool) {
	var cur any = js
	for _, p := range strings.Split(path, "/") {
		count := strings.HasSuffix(p, "#")
		p = strings.TrimSuffix(p, "#")
		switch c := cur.(type) {
		case map[string]any:
			v, ok := c[p]
			if !ok {
				return nil, false
			}
			cur = v
		case []any:
			i, err := strconv.Atoi(p)
			if err != nil || i < 0 || i >= len(c) {
				return nil, false
			}
			cur = c[i]
		default:
			return nil, false
		}
		if count {
			l, ok := cur.([]any)
			if !ok {
				return nil, false
			}
			cur = float64(len(l))
		}
	}
	return cur, true
}

// CheckSumCells compares every data-sum cell of a page with the value at
// its path in summary.json, within the rounding of the display — a
// number, "–" for null, or an interval "lo – hi" — and returns the number
// of cells checked.
func CheckSumCells(t testing.TB, page string, summaryJSON []byte) int {
	t.Helper()
	var js map[string]any
	if err := json.Unmarshal(summaryJSON, &js); err != nil {
		t.Fatal(err)
	}
	n := 0
	for _, c := range sumCellRE.FindAllStringSubmatch(page, -1) {
		key, scaleText, text := c[1], c[2], strings.TrimSpace(html.UnescapeString(c[3]))
		n++
		want, ok := Lookup(js, key)
		if !ok {
			t.Errorf("cell %s: summary.json has no such value", key)
			continue
		}
		scale := 1.0
		if scaleText != "" {
			scale, _ = strconv.ParseFloat(scaleText, 64)
		}
		switch w := want.(type) {
		case nil:
			if text != "–" {
				t.Errorf("cell %s shows %q, summary.json has null", key, text)
			}
		case float64:
			checkShown(t, key, text, w*scale)
		case []any:
			lo, hi, ok := strings.Cut(text, " – ")
			if !ok || len(w) != 2 {
				t.Errorf("cell %s shows %q, summary.json has the interval %v", key, text, w)
				continue
			}
			checkShown(t, key, lo, w[0].(float64)*scale)
			checkShown(t, key, hi, w[1].(float64)*scale)
		default:
			t.Errorf("cell %s: summary.json value %v is not a number", key, want)
		}
	}
	return n
}

// checkShown checks that text shows want within the rounding of its last
// digit.
func checkShown(t testing.TB, key, text string, want float64) {
	t.Helper()
	v, half, err := parseShown(text)
	if err != nil {
		t.Errorf("cell %s shows %q, not a number", key, text)
		return
	}
	if math.Abs(v-want) > half*(1+1e-9) {
		t.Errorf("cell %s shows %q, summary.json has %v", key, text, want)
	}
}
