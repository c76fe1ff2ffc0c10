package main

import (
	"os"
	"path/filepath"
	"strings"
	"testing"
)

// "track" writes the report by default and prints its path; "report"
// rebuilds it from the track files into another folder; finished reports
// are not overwritten without --force; --no-report skips it.
func TestTrackAndReportVerbs(t *testing.T) {
	dir := t.TempDir()
	cfg := filepath.Join(dir, "c.yaml")
	os.WriteFile(cfg, []byte("synthesize:\n  kind: jonswap\n  jonswap:\n    tp_s: 4\n    components: 64\n  grid:\n    nx: 56\n    ny: 24\n    duration_s: 24\nreport:\n  bootstrap_resamples: 200\n"), 0o644)
	nc := filepath.Join(dir, "sea.nc")
	if _, _, err := run(t, "synthesize", "--config", cfg, "--out", nc, "--quiet"); err != nil {
		t.Fatal(err)
	}
	tracks := filepath.Join(dir, "tracks")
	stdout, _, err := run(t, "track", "--config", cfg, "--input", nc, "--out", tracks, "--quiet")
	if err != nil {
		t.Fatal(err)
	}
	html := filepath.Join(tracks, "report.html")
	if abs, _ := filepath.Abs(html); strings.TrimSpace(stdout) != abs {
		t.Errorf("track printed %q, want the path of report.html %s", stdout, abs)
	}
	for _, f := range []string{"report.html", "crest_tracks.nc", "spectrum.csv", "figures/fig3_space_time.svg"} {
		if _, err := os.Stat(filepath.Join(tracks, f)); err != nil {
			t.Errorf("track did not write %s", f)
		}
	}
	sum, _ := os.ReadFile(filepath.Join(tracks, "summary.json"))
	if !strings.Contains(string(sum), `"median_ci90": [`) || !strings.Contains(string(sum), `"report.html":`) {
		t.Error("summary.json lacks the confidence intervals or the report's path")
	}

	rep := filepath.Join(dir, "rep")
	stdout, _, err = run(t, "report", "--config", cfg, "--tracks", tracks, "--out", rep, "--quiet", "--seed", "3")
	if err != nil {
		t.Fatal(err)
	}
	if !strings.HasSuffix(strings.TrimSpace(stdout), filepath.Join("rep", "report.html")) {
		t.Errorf("report printed %q", stdout)
	}
	_, _, err = run(t, "report", "--tracks", tracks, "--out", rep, "--quiet")
	if err == nil || !strings.Contains(err.Error(), "--force") || exitCode(err) != 2 {
		t.Errorf("second report without --force: %v", err)
	}
	if _, _, err := run(t, "report", "--config", cfg, "--tracks", tracks, "--out", rep, "--quiet", "--force"); err != nil {
		t.Errorf("report --force: %v", err)
	}

	quiet := filepath.Join(dir, "quiet")
	if _, _, err := run(t, "track", "--config", cfg, "--input", nc, "--out", quiet, "--quiet", "--no-report"); err != nil {
		t.Fatal(err)
	}
	if _, err := os.Stat(filepath.Join(quiet, "report.html")); err == nil {
		t.Error("--no-report still wrote report.html")
	}
}

// Bad input to "report": one sentence, non-zero exit, no report left.
func TestReportBadInput(t *testing.T) {
	dir := t.TempDir()
	empty := filepath.Join(dir, "empty")
	os.MkdirAll(empty, 0o755)
	bad := filepath.Join(dir, "bad")
	os.MkdirAll(bad, 0o755)
	os.WriteFile(filepath.Join(bad, "crests.csv"), []byte("track_id,time_s,x_m\n1,0,3\n"), 0o644)
	os.WriteFile(filepath.Join(bad, "summary.json"), []byte(`{"tool":{"name":"crestspeed"}}`), 0o644)
	os.WriteFile(filepath.Join(bad, "spectrum.csv"), []byte("frequency_hz,psd_m2_per_hz\n0,0\n0.1,1\n0.2,0.5\n"), 0o644)
	cases := []struct {
		args []string
		code int
	}{
		{[]string{"report", "--out", filepath.Join(dir, "o0")}, 2},
		{[]string{"report", "--tracks", empty, "--out", filepath.Join(dir, "o1")}, 1},
		{[]string{"report", "--tracks", bad, "--out", filepath.Join(dir, "o2")}, 1},
		{[]string{"report", "--tracks", filepath.Join(dir, "missing"), "--out", filepath.Join(dir, "o3")}, 1},
		{[]string{"report", "--tracks", bad, "--out", filepath.Join(dir, "o4"), "--resamples", "5"}, 2},
		{[]string{"report", "--tracks", bad, "--out", filepath.Join(dir, "o5"), "--highest-crests", "50"}, 2},
	}
	for i, c := range cases {
		_, _, err := run(t, append(c.args, "--quiet")...)
		if err == nil {
			t.Errorf("%v: no error", c.args)
			continue
		}
		if exitCode(err) != c.code {
			t.Errorf("%v: exit code %d, want %d", c.args, exitCode(err), c.code)
		}
		if strings.Count(sentence(err), ". ") > 0 {
			t.Errorf("%v: not one sentence: %q", c.args, sentence(err))
		}
		if _, err := os.Stat(filepath.Join(dir, "o"+string(rune('0'+i)))); err == nil {
			t.Errorf("%v: left an output folder behind", c.args)
		}
		t.Logf("%v → %s", c.args[1:], sentence(err))
	}
}
