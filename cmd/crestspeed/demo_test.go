package main

import (
	"encoding/csv"
	"encoding/json"
	"os"
	"path/filepath"
	"strings"
	"testing"
)

// The demo end to end, as `make demo` runs it but with a one-minute long
// record: every stage runs, the printed comparison has its rows, the
// campaign pools both deployments (deployments.csv has one row each), and
// each deployment's summary.json records the settings the demo used —
// the same defaults as every other entry point (the template's value of
// track.min_foam_patch_area_m2, from defaultConfig).
func TestDemoEndToEnd(t *testing.T) {
	dir := t.TempDir()
	cfgPath := filepath.Join(dir, "demo.yaml")
	if err := os.WriteFile(cfgPath, []byte("synthesize:\n  grid:\n    duration_s: 60\n"), 0o644); err != nil {
		t.Fatal(err)
	}
	out := filepath.Join(dir, "demo")
	stdout, stderr, err := run(t, "demo", "--config", cfgPath, "--out", out, "--workers", "2")
	if err != nil {
		t.Fatalf("%v\n%s", err, stderr)
	}
	for _, w := range []string{"demo (stereo chain): measured against truth", "demo: measured against truth", "Hm0 (m)", "Tp (s)", "campaign: 2 deployments"} {
		if !strings.Contains(stderr, w) {
			t.Errorf("the demo's log lacks %q:\n%s", w, stderr)
		}
	}
	if !strings.Contains(stdout, filepath.Join(out, "campaign", "report.html")) {
		t.Errorf("stdout does not name the campaign report:\n%s", stdout)
	}
	f, err := os.Open(filepath.Join(out, "campaign", "deployments.csv"))
	if err != nil {
		t.Fatal(err)
	}
	rows, err := csv.NewReader(f).ReadAll()
	f.Close()
	if err != nil || len(rows) != 3 {
		t.Errorf("deployments.csv: %d lines (want a header and 2 deployments), %v", len(rows), err)
	}
	want := defaultConfig().Track.Breaking.MinPatchArea
	for _, d := range []string{filepath.Join(out, "stereo", "tracks"), filepath.Join(out, "tracks")} {
		data, err := os.ReadFile(filepath.Join(d, "summary.json"))
		if err != nil {
			t.Fatal(err)
		}
		var s struct {
			Config struct {
				Track map[string]any `json:"track"`
			} `json:"config"`
		}
		if err := json.Unmarshal(data, &s); err != nil {
			t.Fatal(err)
		}
		if got, ok := s.Config.Track["min_foam_patch_area_m2"].(float64); !ok || got != want {
			t.Errorf("%s records min_foam_patch_area_m2 %v; the default every entry point uses is %v", d, s.Config.Track["min_foam_patch_area_m2"], want)
		}
		if _, err := os.Stat(filepath.Join(d, "report.html")); err != nil {
			t.Errorf("no report: %v", err)
		}
	}
}
