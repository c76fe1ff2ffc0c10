package main

import (
	"bufio"
	"bytes"
	"context"
	"encoding/json"
	"fmt"
	"image"
	"io/fs"
	"maps"
	"os"
	"os/exec"
	"path/filepath"
	"regexp"
	"slices"
	"strings"
	"sync"
	"syscall"
	"testing"
	"time"

	"crestspeed/samples"
)

// runDeployment renders, once per test binary, a small deployment for the
// run tests: the demo rig at 640×512 px looking 45° down at a short wind
// sea (Hs 0.6 m, Tp 2.8 s), 16 frames at 4 Hz.
var runDep struct {
	once sync.Once
	dir  string
	err  error
}

// TestMain removes the deployment shared by the run tests.
func TestMain(m *testing.M) {
	code := m.Run()
	if runDep.dir != "" {
		os.RemoveAll(filepath.Dir(runDep.dir))
	}
	os.Exit(code)
}

// smallDeployment is the deployment of the run tests, its sea drawn with
// the given seed.
func smallDeployment(seed uint64) samples.Deployment {
	d := samples.DemoDeployment()
	d.ImageSize = image.Pt(640, 512)
	d.DepressionDeg = 45
	d.Sea.JONSWAP.HsM = 0.6
	d.Sea.JONSWAP.TpS = 2.8
	d.Sea.JONSWAP.Seed = seed
	d.FPS = 4
	d.Frames = 16
	d.CalibrationViews = 1
	return d
}

func runDeploymentDir(t *testing.T) string {
	t.Helper()
	runDep.once.Do(func() {
		base, err := os.MkdirTemp("", "crestspeed-run-test-")
		if err != nil {
			runDep.err = err
			return
		}
		runDep.dir = filepath.Join(base, "dep")
		_, runDep.err = samples.WriteDeployment(context.Background(), smallDeployment(samples.DemoDeployment().Sea.JONSWAP.Seed), runDep.dir, 2, nil)
	})
	if runDep.err != nil {
		t.Fatal(runDep.err)
	}
	return runDep.dir
}

// writeRunConfig writes a deployment configuration for the rendered
// deployment dep, with extra YAML lines appended.
// The lines of extra that start with "  " before any section line go into
// the reconstruct section.
func writeRunConfig(t *testing.T, dep, path string, extra ...string) {
	t.Helper()
	lines := []string{
		"reconstruct:",
		"  frames: " + filepath.Join(dep, samples.DeploymentFramesDir),
		"  rig: " + filepath.Join(dep, samples.DeploymentRig),
	}
	lines = append(lines, extra...)
	if err := os.WriteFile(path, []byte(strings.Join(lines, "\n")+"\n"), 0o644); err != nil {
		t.Fatal(err)
	}
}

// runArgs are the arguments of every run in these tests.
func runArgs(cfg, out string) []string {
	return []string{"run", "--config", cfg, "--out", out, "--parts", "3", "--workers", "2"}
}

// A run done twice does nothing the second time and says so; a changed
// tracking setting redoes only the tracking, naming the setting; a changed
// setting of the part files redoes the parts but not the settling; a folder
// of another deployment is refused; status exits 0 on a complete run and 3
// on an incomplete or failed one, naming the step and why.
func TestRunResumable(t *testing.T) {
	dep := runDeploymentDir(t)
	base := t.TempDir()
	cfg := filepath.Join(base, "dep.yaml")
	writeRunConfig(t, dep, cfg)
	out := filepath.Join(base, "run")
	if _, stderr, err := run(t, runArgs(cfg, out)...); err != nil {
		t.Fatalf("%v\n%s", err, stderr)
	}
	for _, f := range []string{"geometry.yaml", "parts/part-0000.nc", "parts/part-0002-points.nc", "parts/index.json",
		"tracks/crests.csv", "tracks/summary.json", "run.log", ".crestspeed/config.yaml", ".crestspeed/run.json", ".crestspeed/parts.json", "logs/part-0001.log"} {
		if _, err := os.Stat(filepath.Join(out, f)); err != nil {
			t.Errorf("the run did not write %s: %v", f, err)
		}
	}

	// (a) The same command again.
	_, stderr, err := run(t, runArgs(cfg, out)...)
	if err != nil {
		t.Fatalf("%v\n%s", err, stderr)
	}
	if !strings.Contains(stderr, "nothing to do") || strings.Contains(stderr, "doing it") {
		t.Errorf("the second run did something:\n%s", stderr)
	}

	// (e) status of a complete run.
	stdout, _, err := run(t, "status", out)
	if err != nil || exitCode(err) != 0 || !strings.Contains(stdout, "complete") {
		t.Errorf("status of a complete run: %v (exit %d)\n%s", err, exitCode(err), stdout)
	}

	// (b) A setting of the tracking only.
	writeRunConfig(t, dep, cfg, "track:", "  max_gap_frames: 3")
	_, stderr, err = run(t, runArgs(cfg, out)...)
	if err != nil {
		t.Fatalf("%v\n%s", err, stderr)
	}
	if got := doneSteps(stderr); strings.Join(got, ",") != "track" {
		t.Errorf("after a change of track.max_gap_frames the run did %v, want only track:\n%s", got, stderr)
	}
	if !strings.Contains(stderr, "track: doing it because the settings track.max_gap_frames changed") {
		t.Errorf("the run does not say why it tracks again:\n%s", stderr)
	}

	// A setting of the part files only: every part, the index and the
	// tracking again, not the settling.
	writeRunConfig(t, dep, cfg, "  deflate: 5", "track:", "  max_gap_frames: 3")
	_, stderr, err = run(t, runArgs(cfg, out)...)
	if err != nil {
		t.Fatalf("%v\n%s", err, stderr)
	}
	if got := doneSteps(stderr); strings.Join(got, ",") != "part-0000,part-0001,part-0002,index,track" {
		t.Errorf("after a change of reconstruct.deflate the run did %v:\n%s", got, stderr)
	}
	if !strings.Contains(stderr, "part-0001: doing it because the settings reconstruct.deflate changed") {
		t.Errorf("the run does not say why it redoes the parts:\n%s", stderr)
	}

	// (e) status of an incomplete run: a part file removed.
	if err := os.Remove(filepath.Join(out, "parts", "part-0001.nc")); err != nil {
		t.Fatal(err)
	}
	stdout, _, err = run(t, "status", out)
	if exitCode(err) != 3 || !strings.Contains(stdout, "part-0001  out of date: its output parts/part-0001.nc is missing") ||
		!strings.Contains(stdout, "part-0000  done") {
		t.Errorf("status with a part file removed: %v (exit %d)\n%s", err, exitCode(err), stdout)
	}
	// A failed step: the tracking cannot write its folder.
	if err := os.RemoveAll(filepath.Join(out, "tracks")); err != nil {
		t.Fatal(err)
	}
	if err := os.WriteFile(filepath.Join(out, "tracks"), []byte("in the way\n"), 0o644); err != nil {
		t.Fatal(err)
	}
	if _, stderr, err = run(t, runArgs(cfg, out)...); err == nil {
		t.Fatalf("a run whose tracking folder is a file succeeded:\n%s", stderr)
	}
	stdout, _, err = run(t, "status", out)
	if exitCode(err) != 3 || !strings.Contains(stdout, "track      failed: ") || !strings.Contains(stdout, "    | === ") ||
		!strings.Contains(stdout, "part-0001  done") {
		t.Errorf("status with a failed step: %v (exit %d)\n%s", err, exitCode(err), stdout)
	}
	if err := os.Remove(filepath.Join(out, "tracks")); err != nil {
		t.Fatal(err)
	}

	// (d) The folder of another deployment.
	other := filepath.Join(base, "other-frames")
	if err := os.Symlink(filepath.Join(dep, samples.DeploymentFramesDir), other); err != nil {
		t.Fatal(err)
	}
	cfg2 := filepath.Join(base, "other.yaml")
	writeRunConfig(t, dep, cfg2)
	if err := os.WriteFile(cfg2, bytes.Replace(mustRead(t, cfg2), []byte(filepath.Join(dep, samples.DeploymentFramesDir)), []byte(other), 1), 0o644); err != nil {
		t.Fatal(err)
	}
	_, _, err = run(t, runArgs(cfg2, out)...)
	checkSentence(t, err, out, "another deployment", other[:0]+filepath.Join(dep, samples.DeploymentFramesDir), "--out")
	if exitCode(err) != 2 {
		t.Errorf("another deployment's folder: exit %d, want 2", exitCode(err))
	}
	// A folder holding other files.
	junk := filepath.Join(base, "junk")
	if err := os.MkdirAll(junk, 0o755); err != nil {
		t.Fatal(err)
	}
	if err := os.WriteFile(filepath.Join(junk, "notes.txt"), []byte("x\n"), 0o644); err != nil {
		t.Fatal(err)
	}
	_, _, err = run(t, runArgs(cfg, junk)...)
	checkSentence(t, err, junk, "holds no crestspeed run")
	_, _, err = run(t, "status", junk)
	checkSentence(t, err, junk, "holds no crestspeed run")
}

// Several deployment files in one run: each into its own folder, then the
// campaign report; a rerun does nothing; a tracking setting changed in one
// file redoes that deployment's tracking and the campaign only.
func TestRunCampaign(t *testing.T) {
	depA := runDeploymentDir(t)
	base := t.TempDir()
	depB := filepath.Join(base, "dep-b")
	if _, err := samples.WriteDeployment(context.Background(), smallDeployment(424242), depB, 2, nil); err != nil {
		t.Fatal(err)
	}
	a, b := filepath.Join(base, "north.yaml"), filepath.Join(base, "south.yaml")
	writeRunConfig(t, depA, a)
	writeRunConfig(t, depB, b)
	out := filepath.Join(base, "campaign-run")
	args := []string{"run", "--out", out, "--parts", "2", "--workers", "2", a, b}
	if _, stderr, err := run(t, args...); err != nil {
		t.Fatalf("%v\n%s", err, stderr)
	}
	for _, f := range []string{"north/tracks/summary.json", "south/parts/part-0001.nc", "campaign/report.html", "campaign/deployments.csv"} {
		if _, err := os.Stat(filepath.Join(out, f)); err != nil {
			t.Errorf("the campaign run did not write %s: %v", f, err)
		}
	}
	csv := string(mustRead(t, filepath.Join(out, "campaign", "deployments.csv")))
	if n := strings.Count(strings.TrimSpace(csv), "\n"); n != 2 {
		t.Errorf("deployments.csv has %d rows, want 2:\n%s", n, csv)
	}
	_, stderr, err := run(t, args...)
	if err != nil {
		t.Fatalf("%v\n%s", err, stderr)
	}
	if strings.Count(stderr, "nothing to do") != 2 || !strings.Contains(stderr, "campaign report") || !strings.Contains(stderr, "up to date") || doneSteps(stderr) != nil {
		t.Errorf("the second campaign run did something:\n%s", stderr)
	}
	writeRunConfig(t, depB, b, "track:", "  max_gap_frames: 3")
	_, stderr, err = run(t, args...)
	if err != nil {
		t.Fatalf("%v\n%s", err, stderr)
	}
	if got := doneSteps(stderr); strings.Join(got, ",") != "track,campaign" {
		t.Errorf("after a change in south.yaml the run did %v, want track (of south) and campaign:\n%s", got, stderr)
	}
	_, _, err = run(t, "run", "--out", out, a, filepath.Join(base, "sub", "north.yaml"))
	checkSentence(t, err, "same name", "north")
}

func mustRead(t *testing.T, path string) []byte {
	t.Helper()
	b, err := os.ReadFile(path)
	if err != nil {
		t.Fatal(err)
	}
	return b
}

func TestPlanParts(t *testing.T) {
	c := defaultConfig()
	for _, tc := range []struct {
		pairs, parts, cfgParts, per int
		want                        [][2]int
	}{
		{10, 3, 0, 0, [][2]int{{0, 4}, {4, 7}, {7, 10}}},
		{10, 0, 2, 0, [][2]int{{0, 5}, {5, 10}}},
		{2500, 0, 0, 0, [][2]int{{0, 834}, {834, 1667}, {1667, 2500}}}, // 1000 pairs a part: 3 parts
		{2000, 0, 0, 0, [][2]int{{0, 1000}, {1000, 2000}}},
		{5, 0, 0, 2, [][2]int{{0, 2}, {2, 4}, {4, 5}}},
		{3, 8, 0, 0, [][2]int{{0, 1}, {1, 2}, {2, 3}}}, // never more parts than pairs
		{0, 3, 0, 0, nil},
	} {
		c.Run.Parts, c.Run.PairsPerPart = tc.cfgParts, tc.per
		got := planParts(c, tc.pairs, tc.parts)
		if fmt.Sprint(got) != fmt.Sprint(tc.want) {
			t.Errorf("planParts(%d pairs, %d parts, run.parts %d, per %d) = %v, want %v", tc.pairs, tc.parts, tc.cfgParts, tc.per, got, tc.want)
		}
	}
}

// doneSteps lists the steps a run's log says it did, in order.
func doneSteps(log string) []string {
	var out []string
	for _, m := range regexp.MustCompile(`(?m)^run: (\S+): doing it because`).FindAllStringSubmatch(log, -1) {
		out = append(out, m[1])
	}
	return out
}

// TestRunChildProcess is the run killed by TestRunKilled: it runs the
// command line of RUNTEST_ARGS and, when the step named by RUNTEST_STALL
// has reported two items of progress, says STALLED and waits to be killed.
func TestRunChildProcess(t *testing.T) {
	if os.Getenv("RUNTEST_CHILD") == "" {
		t.Skip("run only as the child of TestRunKilled")
	}
	stall := os.Getenv("RUNTEST_STALL")
	passHook = func(step, pass string, done, total int) {
		if step == stall && done >= 2 {
			fmt.Fprintln(os.Stderr, "STALLED in "+step+" "+pass)
			select {}
		}
	}
	app := newApp(os.Stdout, os.Stderr)
	root := newRootCmd(app)
	root.SetArgs(strings.Split(os.Getenv("RUNTEST_ARGS"), "\x1f"))
	if err := root.Execute(); err != nil {
		fmt.Fprintln(os.Stderr, err)
		os.Exit(1)
	}
	os.Exit(0)
}

// A run killed with SIGKILL in the middle of a part's reconstruction, or in
// the middle of tracking, and run again, leaves the same files as an
// uninterrupted run, byte for byte: the part files, their index, the
// geometry and every tracking output.
func TestRunKilled(t *testing.T) {
	dep := runDeploymentDir(t)
	base := t.TempDir()
	cfg := filepath.Join(base, "dep.yaml")
	writeRunConfig(t, dep, cfg)
	out := filepath.Join(base, "run")
	if _, stderr, err := run(t, runArgs(cfg, out)...); err != nil {
		t.Fatalf("%v\n%s", err, stderr)
	}
	ref := filepath.Join(base, "reference")
	if err := os.Rename(out, ref); err != nil {
		t.Fatal(err)
	}
	for _, c := range []struct{ stall, redone string }{
		{"part-0001", "part-0001,part-0002,index,track"},
		{"track", "track"},
	} {
		t.Run(c.stall, func(t *testing.T) {
			if err := os.RemoveAll(out); err != nil {
				t.Fatal(err)
			}
			killRunAt(t, c.stall, runArgs(cfg, out), func() {
				// While the child holds the step: status says so, and a
				// second run is refused rather than doing it twice.
				stdout, _, err := run(t, "status", out)
				if exitCode(err) != 3 || !strings.Contains(stdout, fmt.Sprintf("%-10s running", c.stall)) {
					t.Errorf("status during the run: %v (exit %d)\n%s", err, exitCode(err), stdout)
				}
				_, _, err = run(t, runArgs(cfg, out)...)
				checkSentence(t, err, c.stall, "another crestspeed process")
			})
			if c.stall == "part-0001" {
				if _, err := os.Stat(filepath.Join(out, "parts", "part-0001.nc")); err == nil {
					t.Errorf("a part killed in the middle is there")
				}
			}
			stdout, _, err := run(t, "status", out)
			if exitCode(err) != 3 || !strings.Contains(stdout, c.stall+" ") || !strings.Contains(stdout, "missing") {
				t.Errorf("status after the kill: %v (exit %d)\n%s", err, exitCode(err), stdout)
			}
			_, stderr, err := run(t, runArgs(cfg, out)...)
			if err != nil {
				t.Fatalf("%v\n%s", err, stderr)
			}
			if got := doneSteps(stderr); strings.Join(got, ",") != c.redone {
				t.Errorf("the rerun did %v, want %s:\n%s", got, c.redone, stderr)
			}
			compareRunTrees(t, ref, out)
		})
	}
	// The steps one by one, as cluster jobs do them: the parts in any
	// order, the same files.
	t.Run("run-step", func(t *testing.T) {
		if err := os.RemoveAll(out); err != nil {
			t.Fatal(err)
		}
		c := defaultConfig()
		c.Reconstruct.Frames = filepath.Join(dep, samples.DeploymentFramesDir)
		c.Reconstruct.Rig = filepath.Join(dep, samples.DeploymentRig)
		c.Out, c.Workers, c.Run.Parts = out, 2, 3
		var log bytes.Buffer
		n, err := prepareRun(context.Background(), &console{stdout: &log, stderr: &log}, c)
		if err != nil || n != 3 {
			t.Fatalf("prepareRun: %d parts, %v", n, err)
		}
		if _, err := os.Stat(filepath.Join(out, runGeometryName)); err == nil {
			t.Errorf("prepareRun settled the record; it should only plan it")
		}
		_, _, err = run(t, "run-step", "--out", out, "--step", "part", "--part", "1")
		checkSentence(t, err, "settle", "--step prepare")
		if exitCode(err) != 3 {
			t.Errorf("a part before the settling: exit %d, want 3", exitCode(err))
		}
		for _, args := range [][]string{{"prepare"}, {"part", "--part", "2"}, {"part", "--part", "0"}, {"finish"}} {
			_, stderr, err := run(t, append([]string{"run-step", "--out", out, "--workers", "2", "--step"}, args...)...)
			if len(args) == 1 && args[0] == "finish" {
				checkSentence(t, err, "part-0001", "--step part --part 1")
				continue
			}
			if err != nil {
				t.Fatalf("run-step %v: %v\n%s", args, err, stderr)
			}
		}
		for _, args := range [][]string{{"part", "--part", "1"}, {"part", "--part", "1"}, {"finish"}} {
			_, stderr, err := run(t, append([]string{"run-step", "--out", out, "--workers", "2", "--step"}, args...)...)
			if err != nil {
				t.Fatalf("run-step %v: %v\n%s", args, err, stderr)
			}
			if args[0] == "part" && strings.Contains(stderr, "nothing to do") == (doneSteps(stderr) != nil) {
				t.Errorf("run-step %v:\n%s", args, stderr)
			}
		}
		_, _, err = run(t, "run-step", "--out", out, "--step", "part", "--part", "3")
		checkSentence(t, err, "part 3 does not exist", "0 to 2")
		compareRunTrees(t, ref, out)

		// Fewer parts: the files of the part that is no more go.
		_, stderr, err := run(t, "run", "--config", cfg, "--out", out, "--parts", "2", "--workers", "2")
		if err != nil {
			t.Fatalf("%v\n%s", err, stderr)
		}
		if _, err := os.Stat(filepath.Join(out, "parts", "part-0002.nc")); err == nil {
			t.Errorf("part-0002.nc is left after the run was planned in 2 parts")
		}
		if got := doneSteps(stderr); strings.Join(got, ",") != "part-0000,part-0001,index,track" {
			t.Errorf("in 2 parts the run did %v:\n%s", got, stderr)
		}
	})
}

// killRunAt starts a run in a child process, waits until it stalls in the
// named step, calls whileStalled and kills the child with SIGKILL.
func killRunAt(t *testing.T, stall string, args []string, whileStalled func()) {
	t.Helper()
	cmd := exec.Command(os.Args[0], "-test.run=^TestRunChildProcess$", "-test.count=1")
	cmd.Env = append(os.Environ(), "RUNTEST_CHILD=1", "RUNTEST_STALL="+stall, "RUNTEST_ARGS="+strings.Join(args, "\x1f"))
	pipe, err := cmd.StderrPipe()
	if err != nil {
		t.Fatal(err)
	}
	if err := cmd.Start(); err != nil {
		t.Fatal(err)
	}
	stalled := make(chan bool, 1)
	var log strings.Builder
	go func() {
		sc := bufio.NewScanner(pipe)
		for sc.Scan() {
			log.WriteString(sc.Text() + "\n")
			if strings.HasPrefix(sc.Text(), "STALLED") {
				stalled <- true
			}
		}
		close(stalled)
	}()
	select {
	case ok := <-stalled:
		if !ok {
			cmd.Wait()
			t.Fatalf("the child run ended without stalling in %s:\n%s", stall, log.String())
		}
	case <-time.After(90 * time.Second):
		cmd.Process.Kill()
		cmd.Wait()
		t.Fatalf("the child run did not reach %s in 90 s", stall)
	}
	whileStalled()
	if err := cmd.Process.Signal(syscall.SIGKILL); err != nil {
		t.Fatal(err)
	}
	cmd.Wait()
}

// Three outputs of the report carry the wall clock, from packages that
// take no fixed time yet: summary.json its timings_s (report/write.go),
// report.html the time it was generated and the timings table
// (report/page), crest_tracks.nc the time in its history attribute
// (report/cf), which the file's HDF5 checksums cover. Those are compared
// without those values; every other output byte for byte.

// stampRE matches the generation time on the report's page.
var stampRE = regexp.MustCompile(`\d{4}-\d\d-\d\d \d\d:\d\d UTC`)

// withoutTimings decodes summary.json and drops its timings.
func withoutTimings(t *testing.T, b []byte) (string, []string) {
	t.Helper()
	var m map[string]any
	if err := json.Unmarshal(b, &m); err != nil {
		t.Fatalf("summary.json: %v", err)
	}
	var keys []string
	for k := range m["timings_s"].(map[string]any) {
		keys = append(keys, k)
	}
	delete(m, "timings_s")
	out, _ := json.Marshal(m)
	return string(out), keys
}

// sameTrajectories compares two CF trajectory files with Debian's
// python3-netCDF4 (a reference reader): every variable's values and
// attributes and every global attribute but history equal.
func sameTrajectories(t *testing.T, a, b string) bool {
	t.Helper()
	const py = "/usr/bin/python3"
	if _, err := os.Stat(py); err != nil {
		t.Skip("/usr/bin/python3 is absent; run scripts/setup-deps")
	}
	script := `
import sys, netCDF4, numpy as np
def load(p):
    d = netCDF4.Dataset(p)
    d.set_auto_mask(False)
    g = {k: d.getncattr(k) for k in d.ncattrs() if k != "history"}
    v = {n: (np.asarray(x[...]).tobytes(), {k: str(x.getncattr(k)) for k in x.ncattrs()}, x.dimensions) for n, x in d.variables.items()}
    dims = {n: len(x) for n, x in d.dimensions.items()}
    return g, v, dims
print("same" if repr(load(sys.argv[1])) == repr(load(sys.argv[2])) else "different")
`
	cmd := exec.Command(py, "-c", script, a, b)
	var stderr strings.Builder
	cmd.Stderr = &stderr
	out, err := cmd.Output()
	if err != nil {
		t.Fatalf("python failed (is python3-netcdf4 installed? run scripts/setup-deps): %v\n%s", err, stderr.String())
	}
	return strings.TrimSpace(string(out)) == "same"
}

// compareRunTrees checks that got holds the same outputs as ref, byte for
// byte, leaving out the run's own records and logs (which hold times).
func compareRunTrees(t *testing.T, ref, got string) {
	t.Helper()
	skip := func(rel string) bool {
		return rel == "run.log" || strings.HasPrefix(rel, "logs/") || strings.HasPrefix(rel, ".crestspeed/steps/") || strings.HasPrefix(rel, ".crestspeed/locks/")
	}
	files := map[string]bool{}
	for _, root := range []string{ref, got} {
		err := filepath.WalkDir(root, func(p string, d fs.DirEntry, err error) error {
			if err != nil || d.IsDir() {
				return err
			}
			rel, _ := filepath.Rel(root, p)
			if !skip(rel) {
				files[rel] = true
			}
			return nil
		})
		if err != nil {
			t.Fatal(err)
		}
	}
	var timingKeys []string
	n := 0
	for _, rel := range slices.Sorted(maps.Keys(files)) {
		a, errA := os.ReadFile(filepath.Join(ref, rel))
		b, errB := os.ReadFile(filepath.Join(got, rel))
		if errA != nil || errB != nil {
			t.Errorf("%s: in one run only (%v, %v)", rel, errA, errB)
			continue
		}
		n++
		switch rel {
		case "tracks/summary.json":
			sa, keys := withoutTimings(t, a)
			sb, _ := withoutTimings(t, b)
			timingKeys = keys
			if sa != sb {
				t.Errorf("%s differs from the uninterrupted run's beyond its timings", rel)
			}
			continue
		case "tracks/report.html":
			continue // below, once the timing keys are known
		case "tracks/crest_tracks.nc":
			if !sameTrajectories(t, filepath.Join(ref, rel), filepath.Join(got, rel)) {
				t.Errorf("%s differs from the uninterrupted run's beyond its history", rel)
			}
			continue
		}
		if !bytes.Equal(a, b) {
			t.Errorf("%s differs from the uninterrupted run's (%d and %d bytes)%s", rel, len(a), len(b), firstDifference(a, b))
		}
	}
	if files["tracks/report.html"] {
		a, _ := os.ReadFile(filepath.Join(ref, "tracks/report.html"))
		b, _ := os.ReadFile(filepath.Join(got, "tracks/report.html"))
		mask := func(x []byte) []byte {
			x = stampRE.ReplaceAll(x, []byte("<time>"))
			for _, k := range timingKeys {
				re := regexp.MustCompile(`<tr><td>` + regexp.QuoteMeta(k) + `</td><td class="num">[0-9.]+ s</td></tr>`)
				x = re.ReplaceAll(x, []byte("<timing>"))
			}
			return x
		}
		if a, b := mask(a), mask(b); !bytes.Equal(a, b) {
			t.Errorf("tracks/report.html differs from the uninterrupted run's beyond its times%s", firstDifference(a, b))
		}
	}
	for _, must := range []string{"parts/part-0000.nc", "parts/part-0001.nc", "parts/part-0002.nc", "parts/index.json",
		"geometry.yaml", "tracks/crests.csv", "tracks/tracks.csv", "tracks/summary.json", "tracks/crest_tracks.nc", "tracks/report.html"} {
		if !files[must] {
			t.Errorf("%s was not written", must)
		}
	}
	t.Logf("%d files compared", n)
}

// firstDifference shows the first differing line of two texts.
func firstDifference(a, b []byte) string {
	la, lb := strings.Split(string(a), "\n"), strings.Split(string(b), "\n")
	for i := 0; i < len(la) && i < len(lb); i++ {
		if la[i] != lb[i] {
			if len(la[i]) > 200 || len(lb[i]) > 200 {
				return fmt.Sprintf(" at line %d", i+1)
			}
			return fmt.Sprintf(" at line %d: %q vs %q", i+1, la[i], lb[i])
		}
	}
	return ""
}
