package main

import (
	"context"
	"encoding/json"
	"errors"
	"fmt"
	"os"
	"path/filepath"
	"strings"
	"testing"

	"crestspeed/speed/analysis"
)

// expectRefusal runs the CLI and checks the refusal: the exit status, one
// sentence mentioning every want, and no file left in dir beyond keep.
func expectRefusal(t *testing.T, code int, want []string, args ...string) {
	t.Helper()
	_, _, err := run(t, append(args, "--quiet")...)
	if err == nil {
		t.Errorf("%v: accepted", args)
		return
	}
	if got := exitCode(err); got != code {
		t.Errorf("%v: exit status %d, want %d (%v)", args, got, code, err)
	}
	checkSentence(t, err, want...)
	t.Logf("%v → %s", args, sentence(err))
}

// Typos and wrong kinds of value in CRESTSPEED_* variables are refused like
// typos in the file, naming the variable.
func TestEnvironmentErrorsNameTheVariable(t *testing.T) {
	dir := t.TempDir()
	out := filepath.Join(dir, "a.nc")
	t.Run("typo", func(t *testing.T) {
		t.Setenv("CRESTSPEED_TRACK_DEPHT_M", "12")
		expectRefusal(t, exitUsage, []string{"CRESTSPEED_TRACK_DEPHT_M", "names no setting"}, "synthesize", "--out", out)
	})
	t.Run("kind", func(t *testing.T) {
		t.Setenv("CRESTSPEED_TRACK_MAX_GAP_FRAMES", "two")
		expectRefusal(t, exitUsage, []string{"CRESTSPEED_TRACK_MAX_GAP_FRAMES", "track.max_gap_frames"}, "synthesize", "--out", out)
	})
	t.Run("fraction", func(t *testing.T) {
		t.Setenv("CRESTSPEED_TRACK_MAX_GAP_FRAMES", "2.5")
		expectRefusal(t, exitUsage, []string{"CRESTSPEED_TRACK_MAX_GAP_FRAMES", "not a whole number"}, "synthesize", "--out", out)
	})
	if _, err := os.Stat(out); err == nil {
		t.Error("a refused configuration still wrote its output")
	}
}

// Absurd values are refused before any file is read, with the setting
// named; exit status 2 whether the value came from the file, the
// environment or a flag.
func TestAbsurdTrackSettings(t *testing.T) {
	dir := t.TempDir()
	in := filepath.Join(dir, "any.nc") // never opened: settings are checked first
	os.WriteFile(in, []byte("not read"), 0o644)
	n := 0
	conf := func(body string) string {
		n++
		p := filepath.Join(dir, fmt.Sprintf("c%d.yaml", n))
		os.WriteFile(p, []byte("track:\n"+body), 0o644)
		return p
	}
	cases := []struct {
		args []string
		want []string
	}{
		{[]string{"--config", conf("  speed_window_s: 1.0e9\n")}, []string{"speed_window_s"}},
		{[]string{"--config", conf("  speed_window_s: .inf\n")}, []string{"speed_window_s"}},
		{[]string{"--depth", "inf"}, []string{"depth_m", "finite"}},
		{[]string{"--depth", "NaN"}, []string{"depth_m", "finite"}},
		{[]string{"--depth", "0.001"}, []string{"depth_m", "shallower than 5 cm"}},
		{[]string{"--config", conf("  max_gap_frames: 2.5\n")}, []string{"not a whole number"}},
		{[]string{"--config", conf("  min_crest_length_m: .inf\n")}, []string{"min_crest_length_m"}},
		{[]string{"--config", conf("  current_direction_deg: .nan\n")}, []string{"current_direction_deg"}},
		{[]string{"--config", conf("  current_speed_mps: -1\n")}, []string{"current_speed_mps"}},
	}
	for _, c := range cases {
		args := append([]string{"track", "--input", in, "--out", filepath.Join(dir, "out"), "--no-report"}, c.args...)
		expectRefusal(t, exitUsage, c.want, args...)
	}
	if _, err := os.Stat(filepath.Join(dir, "out")); err == nil {
		t.Error("refused settings left an output folder")
	}
}

// --force replaces a whole earlier run: no output of it is left beside the
// new ones (a foam run's whitecap tables next to a run without foam), and
// temporaries of a killed run are cleared. Without --force nothing is
// touched.
func TestForceLeavesNoStaleOutputs(t *testing.T) {
	dir := t.TempDir()
	in := synthSmall(t, dir)
	out := filepath.Join(dir, "tracks")
	os.MkdirAll(out, 0o755)
	stale := []string{"whitecaps.csv", "lambda.csv", "coverage.csv", "crests.csv", ".crests.csv.part-123", ".summary.json.part-9"}
	for _, n := range stale {
		os.WriteFile(filepath.Join(out, n), []byte("from an earlier run\n"), 0o644)
	}
	expectRefusal(t, exitUsage, []string{"already exists", "--force"}, "track", "--input", in, "--out", out, "--no-report")
	if b, _ := os.ReadFile(filepath.Join(out, "whitecaps.csv")); string(b) != "from an earlier run\n" {
		t.Fatal("a refused run touched the earlier outputs")
	}
	if _, _, err := run(t, "track", "--input", in, "--out", out, "--no-report", "--force", "--quiet"); err != nil {
		t.Fatal(err)
	}
	for _, n := range stale {
		b, err := os.ReadFile(filepath.Join(out, n))
		if err == nil && strings.Contains(string(b), "from an earlier run") {
			t.Errorf("%s of the earlier run is still there after --force", n)
		}
	}
	if _, err := os.Stat(filepath.Join(out, "crests.csv")); err != nil {
		t.Errorf("the new run wrote no crests.csv: %v", err)
	}
}

// An output that cannot be written is found before the analysis starts.
func TestUnwritableOutputFailsFirst(t *testing.T) {
	dir := t.TempDir()
	in := synthSmall(t, dir)
	file := filepath.Join(dir, "plain-file")
	os.WriteFile(file, nil, 0o644)
	_, stderr, err := run(t, "track", "--input", in, "--out", filepath.Join(file, "tracks"), "--no-report")
	checkSentence(t, err, "cannot write in", "is not a folder")
	if strings.Contains(stderr, "sea state:") {
		t.Errorf("the analysis ran before the output was checked:\n%s", stderr)
	}
}

// One table of exit statuses, whatever the verb.
func TestExitStatuses(t *testing.T) {
	cases := []struct {
		err  error
		want int
	}{
		{usageError{errors.New("give --out")}, exitUsage},
		{fmt.Errorf("track settings: %w", analysis.Options{MaxGapFrames: -1}.Validate()), exitUsage},
		{incompleteError{errors.New("2 parts are queued")}, exitIncomplete},
		{fmt.Errorf("reading: %w", context.Canceled), exitInterrupted},
		{errors.New("frame 7 cannot be read"), exitFailed},
	}
	for _, c := range cases {
		if got := exitCode(c.err); got != c.want {
			t.Errorf("%v: exit status %d, want %d", c.err, got, c.want)
		}
	}
}

// Every setting a verb uses is what summary.json records, with its type,
// wherever it came from (file, environment, flag), and a stage of run or
// demo records its own inputs.
func TestRecordedSettingsAreThoseUsed(t *testing.T) {
	dir := t.TempDir()
	in := synthSmall(t, dir)
	conf := filepath.Join(dir, "track.yaml")
	os.WriteFile(conf, []byte("track:\n  min_crest_length_m: 3.5\n  steepness_bounds: [0.08, 0.16]\n"), 0o644)
	t.Setenv("CRESTSPEED_TRACK_DEPTH_M", "40")
	t.Setenv("CRESTSPEED_TRACK_BREAKING_INDEX", "false")
	out := filepath.Join(dir, "tracks")
	if _, _, err := run(t, "track", "--config", conf, "--input", in, "--out", out, "--max-gap", "3", "--no-report", "--quiet", "--workers", "1"); err != nil {
		t.Fatal(err)
	}
	b, err := os.ReadFile(filepath.Join(out, "summary.json"))
	if err != nil {
		t.Fatal(err)
	}
	var sum struct {
		Config   map[string]any `json:"config"`
		SeaState struct {
			Depth float64 `json:"depth_m"`
		} `json:"sea_state"`
	}
	if err := json.Unmarshal(b, &sum); err != nil {
		t.Fatal(err)
	}
	tr, _ := sum.Config["track"].(map[string]any)
	want := map[string]any{
		"min_crest_length_m": 3.5,   // file
		"depth_m":            40.0,  // environment: a number, not "40"
		"breaking_index":     false, // environment: a bool, not "false"
		"max_gap_frames":     3.0,   // flag (JSON numbers decode as float64)
		"input":              in,    // flag
		"report":             false, // --no-report
	}
	for k, v := range want {
		if fmt.Sprintf("%T %v", tr[k], tr[k]) != fmt.Sprintf("%T %v", v, v) {
			t.Errorf("summary.json records track.%s = %T %v, the run used %T %v", k, tr[k], tr[k], v, v)
		}
	}
	if got := fmt.Sprint(tr["steepness_bounds"]); got != "[0.08 0.16]" {
		t.Errorf("recorded steepness bounds %s, used [0.08 0.16]", got)
	}
	if sum.Config["workers"] != 1.0 {
		t.Errorf("recorded workers %v, used 1", sum.Config["workers"])
	}
	if sum.SeaState.Depth != 40 {
		t.Errorf("the run used depth %g m, the setting was 40 m", sum.SeaState.Depth)
	}
}
