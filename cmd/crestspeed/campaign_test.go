package main

import (
	"bytes"
	"fmt"
	"os"
	"path/filepath"
	"strings"
	"testing"
)

// trackSmall synthesises a small record (seed, peak period tp) and runs
// "crestspeed track" on it into dir/name, with extra track flags.
func trackSmall(t *testing.T, dir, name string, seed int, tp float64, extra ...string) string {
	t.Helper()
	cfg := filepath.Join(dir, name+".yaml")
	os.WriteFile(cfg, []byte(fmt.Sprintf(`synthesize:
  site: "Kelvane Sound %s (invented)"
  kind: jonswap
  jonswap: {hs_m: 1.0, tp_s: %g, spreading_s: 15, seed: %d, components: 64, f_max_over_fp: 2.5}
  grid: {nx: 56, ny: 24, duration_s: 24, frame_rate_hz: 10}
`, name, tp, seed)), 0o644)
	nc := filepath.Join(dir, name+".nc")
	if _, _, err := run(t, "synthesize", "--config", cfg, "--out", nc, "--quiet"); err != nil {
		t.Fatal(err)
	}
	out := filepath.Join(dir, name)
	if _, _, err := run(t, append([]string{"track", "--input", nc, "--out", out, "--quiet", "--no-report"}, extra...)...); err != nil {
		t.Fatal(err)
	}
	return out
}

// "crestspeed campaign" pools two track folders: it prints the path of
// report.html and writes every output; results do not depend on the
// number of workers; finished outputs are kept without --force; a
// deployment tracked with another crest-speed window is refused with a
// sentence naming its folder and the setting; no folders, no --out, or
// --out onto a track folder are usage errors (exit status 2).
func TestCampaignVerb(t *testing.T) {
	dir := t.TempDir()
	a := trackSmall(t, dir, "north", 3, 4)
	b := trackSmall(t, dir, "south", 5, 3.5)
	var csvs [][]byte
	for _, w := range []string{"1", "2"} {
		out := filepath.Join(dir, "campaign"+w)
		stdout, _, err := run(t, "campaign", "--out", out, "--workers", w, "--resamples", "200", "--quiet", a, b)
		if err != nil {
			t.Fatal(err)
		}
		if abs, _ := filepath.Abs(filepath.Join(out, "report.html")); strings.TrimSpace(stdout) != abs {
			t.Errorf("campaign printed %q, want %s", stdout, abs)
		}
		for _, f := range []string{"report.html", "summary.json", "deployments.csv", "crest_tracks.nc", "figures/campaign1_ratio_peak_pdf.svg"} {
			if _, err := os.Stat(filepath.Join(out, f)); err != nil {
				t.Errorf("campaign did not write %s", f)
			}
		}
		c, _ := os.ReadFile(filepath.Join(out, "deployments.csv"))
		csvs = append(csvs, c)
		sum, _ := os.ReadFile(filepath.Join(out, "summary.json"))
		if !bytes.Contains(sum, []byte(`"bootstrap_resamples": 200`)) || !bytes.Contains(sum, []byte(`"campaign"`)) {
			t.Error("summary.json does not record the campaign settings used")
		}
	}
	if len(csvs[0]) < 200 || !bytes.Equal(csvs[0], csvs[1]) {
		t.Error("deployments.csv differs between 1 and 2 workers")
	}
	out := filepath.Join(dir, "campaign1")
	_, _, err := run(t, "campaign", "--out", out, "--quiet", a, b)
	if err == nil || !strings.Contains(err.Error(), "--force") || exitCode(err) != exitUsage {
		t.Errorf("second campaign without --force: %v", err)
	}
	if _, _, err := run(t, "campaign", "--out", out, "--quiet", "--force", "--resamples", "200", a, b); err != nil {
		t.Errorf("campaign --force: %v", err)
	}
	c := trackSmall(t, dir, "west", 7, 4, "--window", "0.5")
	_, _, err = run(t, "campaign", "--out", filepath.Join(dir, "mixed"), "--quiet", a, c)
	if err == nil || !strings.Contains(err.Error(), c) || !strings.Contains(err.Error(), "track.speed_window_s") || exitCode(err) != exitFailed {
		t.Errorf("deployments with different crest-speed windows: %v", err)
	}
	if _, err := os.Stat(filepath.Join(dir, "mixed", "report.html")); err == nil {
		t.Error("a refused campaign left a report")
	}
	for _, args := range [][]string{
		{"campaign", "--out", filepath.Join(dir, "x")},
		{"campaign", a, b},
		{"campaign", "--out", a, a, b},
		{"campaign", "--out", filepath.Join(dir, "y"), a, a},
	} {
		_, _, err := run(t, append(args, "--quiet")...)
		if err == nil || exitCode(err) != exitUsage {
			t.Errorf("%v: %v (exit %d), want a usage error", args, err, exitCode(err))
		}
	}
}
