package main

import (
	"bytes"
	"context"
	"fmt"
	"image"
	"io/fs"
	"os"
	"os/exec"
	"path/filepath"
	"regexp"
	"sort"
	"strings"
	"testing"
	"time"

	"crestspeed/internal/slurm"
	"crestspeed/samples"
)

// resultFiles lists the result files of a run folder (relative paths):
// everything but the logs and the records of the run and of its jobs.
func resultFiles(t *testing.T, dir string) []string {
	t.Helper()
	var out []string
	err := filepath.WalkDir(dir, func(p string, d fs.DirEntry, err error) error {
		if err != nil {
			return err
		}
		rel, _ := filepath.Rel(dir, p)
		if d.IsDir() {
			switch rel {
			case ".crestspeed", "logs", "slurm":
				return filepath.SkipDir
			}
			return nil
		}
		if rel != "run.log" {
			out = append(out, rel)
		}
		return nil
	})
	if err != nil {
		t.Fatal(err)
	}
	sort.Strings(out)
	return out
}

// TestRunOnSlurmMatchesLocal runs a rendered deployment in 4 parts on the
// local Slurm cluster with `run --scheduler slurm`, cancels one part's
// job (scancel) while it runs, runs the same command again, which submits
// that part alone with a new finishing job, and compares every result file
// byte for byte with `run` on this machine.
func TestRunOnSlurmMatchesLocal(t *testing.T) {
	startCluster(t)
	t.Setenv("SOURCE_DATE_EPOCH", "1781427600") // fixed creation times in the part files
	dep := runDeploymentDir(t)                  // run_test.go
	base := t.TempDir()
	cfg := filepath.Join(base, "dep.yaml")
	conf := strings.Join([]string{
		"reconstruct:",
		"  frames: " + filepath.Join(dep, samples.DeploymentFramesDir),
		"  rig: " + filepath.Join(dep, samples.DeploymentRig),
		"slurm:",
		"  cpus_per_task: 1",
		"  memory: 2G",
		"  time: \"10\"",
	}, "\n") + "\n"
	if err := os.WriteFile(cfg, []byte(conf), 0o644); err != nil {
		t.Fatal(err)
	}
	// Both runs use the same folder (the local one is moved aside), as the
	// results record their paths, and one worker (a part job has one CPU;
	// summary.json records the workers).
	cluster := filepath.Join(base, "run")
	local := filepath.Join(base, "local")
	t0 := time.Now()
	if _, stderr, err := run(t, "run", "--config", cfg, "--out", cluster, "--parts", "4", "--workers", "1"); err != nil {
		t.Fatalf("local run: %v\n%s", err, stderr)
	}
	t.Logf("local run: %s", time.Since(t0).Round(time.Millisecond))
	if err := os.Rename(cluster, local); err != nil {
		t.Fatal(err)
	}

	// The jobs run this test binary as crestspeed, through a wrapper that
	// holds part 2's first job (before its work starts) until it is
	// cancelled.
	wrapper := filepath.Join(base, "crestspeed")
	held := filepath.Join(base, "held")
	if err := os.WriteFile(wrapper, []byte("#!/bin/bash\n"+
		"# run-step --out DIR --step part --part K ...\n"+
		"if [ \"$5\" = part ] && [ \"$7\" = 2 ] && [ ! -e "+slurm.Quote(held)+" ]; then touch "+slurm.Quote(held)+"; sleep 300; fi\n"+
		asCLI+"=1 exec "+slurm.Quote(os.Args[0])+" \"$@\"\n"), 0o755); err != nil {
		t.Fatal(err)
	}
	old := slurmExecutable
	slurmExecutable = func() (string, error) { return wrapper, nil }
	defer func() { slurmExecutable = old }()

	args := []string{"run", "--config", cfg, "--out", cluster, "--parts", "4", "--workers", "1", "--scheduler", "slurm"}
	t1 := time.Now()
	stdout, stderr, err := run(t, args...)
	if err != nil {
		t.Fatalf("run --scheduler slurm: %v\n%s", err, stderr)
	}
	if !strings.Contains(stdout, "(parts 0-3)") || !strings.Contains(stdout, "finish job ") {
		t.Fatalf("the job ids are not printed:\n%s\n%s", stdout, stderr)
	}
	rec, err := readSlurmRecord(cluster)
	if err != nil || len(rec.Submissions) != 1 {
		t.Fatalf("record %+v (%v)", rec, err)
	}
	first := rec.Submissions[0]
	waitSlurm(t, cluster, "part 2 running, the others done", 120*time.Second, func(p map[int]slurmPartState, f *slurmPartState) bool {
		return p[0].Class == slurm.Done && p[1].Class == slurm.Done && p[3].Class == slurm.Done && p[2].Class == slurm.Running
	})
	stdout, _, err = run(t, "status", cluster)
	if exitCode(err) != exitIncomplete || !regexp.MustCompile(`part-0002 +running \(Slurm job `+first.ArrayJob+`_2`).MatchString(stdout) ||
		!regexp.MustCompile(`track +queued \(Slurm job `+first.FinishJob+`\)`).MatchString(stdout) {
		t.Errorf("status while part 2 runs: exit %d\n%s", exitCode(err), stdout)
	}
	if err := slurm.Cancel(context.Background(), first.ArrayJob+"_2"); err != nil {
		t.Fatal(err)
	}
	waitSlurm(t, cluster, "part 2 cancelled and the finishing job dropped", 60*time.Second, func(p map[int]slurmPartState, f *slurmPartState) bool {
		return p[2].Class == slurm.Failed && f != nil && f.Class == slurm.Failed
	})
	if _, err := os.Stat(filepath.Join(cluster, "tracks")); err == nil {
		t.Fatal("tracks were written although part 2 was cancelled")
	}
	stdout, _, err = run(t, "status", cluster)
	if exitCode(err) != exitIncomplete || !strings.Contains(stdout, "part-0002  failed: Slurm ended job "+first.ArrayJob+"_2 CANCELLED") ||
		!regexp.MustCompile(`part-0001 +done`).MatchString(stdout) {
		t.Errorf("status after the cancellation: exit %d\n%s", exitCode(err), stdout)
	}

	stdout, stderr, err = run(t, args...)
	if err != nil {
		t.Fatalf("second run --scheduler slurm: %v\n%s", err, stderr)
	}
	if !strings.Contains(stdout, "(parts 2)") || !strings.Contains(stderr, "ended CANCELLED; submitting it again") {
		t.Fatalf("the second run did not resubmit part 2 alone:\n%s\n%s", stdout, stderr)
	}
	waitSlurm(t, cluster, "part 2 and the finishing job done", 120*time.Second, func(p map[int]slurmPartState, f *slurmPartState) bool {
		if f != nil && f.Class == slurm.Failed {
			b, _ := os.ReadFile(f.Log)
			t.Fatalf("the finishing job failed: %s", b)
		}
		return p[2].Class == slurm.Done && f != nil && f.Class == slurm.Done
	})
	t.Logf("cluster run with one cancellation: %s", time.Since(t1).Round(time.Millisecond))

	want, got := resultFiles(t, local), resultFiles(t, cluster)
	if strings.Join(want, ",") != strings.Join(got, ",") {
		t.Fatalf("result files differ:\nlocal   %v\ncluster %v", want, got)
	}
	if len(want) < 8 {
		t.Fatalf("too few result files to compare: %v", want)
	}
	for _, f := range want {
		a, err1 := os.ReadFile(filepath.Join(local, f))
		b, err2 := os.ReadFile(filepath.Join(cluster, f))
		if err1 != nil || err2 != nil {
			t.Fatal(err1, err2)
		}
		a, b = unclocked(t, f, a), unclocked(t, f, b)
		if !bytes.Equal(a, b) {
			t.Errorf("%s differs between the local and the Slurm run: %s", f, firstDiff(a, b))
		}
	}
	if stdout, _, err := run(t, "status", cluster); err != nil || !strings.Contains(stdout, "complete") {
		t.Errorf("status of the complete run: %v\n%s", err, stdout)
	}
	// once complete, the same command submits nothing
	stdout, stderr, err = run(t, args...)
	if err != nil || stdout != "" || !strings.Contains(stderr, "nothing to submit") {
		t.Errorf("a run on a complete folder: %v\n%s\n%s", err, stdout, stderr)
	}
}

var (
	historyStamp = regexp.MustCompile(`\d{4}-\d\d-\d\dT\d\d:\d\d:\d\dZ written by`)
	timingsJSON  = regexp.MustCompile(`(?s)"timings_s": \{[^}]*\}`)
	timingsHTML  = regexp.MustCompile(`<td class="num">[0-9.]+ s</td>`)
)

// unclocked blanks, in the tracking's outputs, the wall-clock values that
// differ between any two runs (the time the trajectories file was written,
// the seconds each pass took) and nothing else. Such a NetCDF file is
// compared as its full ncdump text, as its header checksums cover the
// written time; every other file byte for byte.
func unclocked(t *testing.T, name string, b []byte) []byte {
	if !strings.HasPrefix(name, "tracks"+string(filepath.Separator)) {
		return b
	}
	if strings.HasSuffix(name, ".nc") {
		tmp := filepath.Join(t.TempDir(), "x.nc")
		if err := os.WriteFile(tmp, b, 0o644); err != nil {
			t.Fatal(err)
		}
		out, err := exec.Command("/usr/bin/ncdump", tmp).Output()
		if err != nil {
			t.Fatalf("ncdump %s (netcdf-bin, scripts/setup-deps installs it): %v", name, err)
		}
		b = out
	}
	b = historyStamp.ReplaceAll(b, []byte("TIME written by"))
	b = timingsJSON.ReplaceAll(b, []byte(`"timings_s": {}`))
	return timingsHTML.ReplaceAll(b, []byte(`<td class="num">T s</td>`))
}

// TestCampaignOnSlurm submits two deployments and their campaign with one
// `run --scheduler slurm` command: the campaign job waits for both
// deployments' finishing jobs and pools them; the results equal those of
// the same command run on this machine.
func TestCampaignOnSlurm(t *testing.T) {
	startCluster(t)
	t.Setenv("SOURCE_DATE_EPOCH", "1781427600")
	base := t.TempDir()
	// north: the run tests' deployment; south: another sea (Hs 0.8 m,
	// other seeds), 16 frames
	d := samples.DemoDeployment()
	d.ImageSize = image.Pt(640, 512)
	d.DepressionDeg = 45
	d.Sea.JONSWAP.HsM, d.Sea.JONSWAP.TpS, d.Sea.JONSWAP.Seed, d.Seed = 0.8, 3.0, 11, 12
	d.FPS, d.Frames, d.CalibrationViews = 4, 16, 1
	south := filepath.Join(base, "south-dep")
	if _, err := samples.WriteDeployment(context.Background(), d, south, 2, nil); err != nil {
		t.Fatal(err)
	}
	for n, dep := range map[string]string{"north": runDeploymentDir(t), "south": south} { // runDeploymentDir: run_test.go
		conf := "reconstruct:\n  frames: " + filepath.Join(dep, samples.DeploymentFramesDir) + "\n  rig: " + filepath.Join(dep, samples.DeploymentRig) + "\n"
		if err := os.WriteFile(filepath.Join(base, n+".yaml"), []byte(conf), 0o644); err != nil {
			t.Fatal(err)
		}
	}
	camp := filepath.Join(base, "campaign.yaml")
	if err := os.WriteFile(camp, []byte("slurm:\n  cpus_per_task: 1\n  memory: 2G\n  time: \"10\"\n"), 0o644); err != nil {
		t.Fatal(err)
	}
	out := filepath.Join(base, "run")
	local := filepath.Join(base, "local")
	args := []string{"run", "--config", camp, "--out", out, "--parts", "2", "--workers", "1",
		filepath.Join(base, "north.yaml"), filepath.Join(base, "south.yaml")}
	if _, stderr, err := run(t, args...); err != nil {
		t.Fatalf("local campaign: %v\n%s", err, stderr)
	}
	if err := os.Rename(out, local); err != nil {
		t.Fatal(err)
	}
	wrapper := filepath.Join(base, "crestspeed")
	if err := os.WriteFile(wrapper, []byte("#!/bin/bash\n"+asCLI+"=1 exec "+slurm.Quote(os.Args[0])+" \"$@\"\n"), 0o755); err != nil {
		t.Fatal(err)
	}
	old := slurmExecutable
	slurmExecutable = func() (string, error) { return wrapper, nil }
	defer func() { slurmExecutable = old }()
	stdout, stderr, err := run(t, append(args, "--scheduler", "slurm")...)
	if err != nil {
		t.Fatalf("campaign on Slurm: %v\n%s", err, stderr)
	}
	m := regexp.MustCompile(`campaign job (\d+)`).FindStringSubmatch(stdout)
	if m == nil || strings.Count(stdout, "finish job ") != 2 {
		t.Fatalf("job ids not printed:\n%s\n%s", stdout, stderr)
	}
	deadline := time.Now().Add(150 * time.Second)
	for {
		ts, err := slurm.States(context.Background(), m[1])
		if err != nil {
			t.Fatal(err)
		}
		if len(ts) == 1 && ts[0].Class() == slurm.Done {
			break
		}
		if len(ts) == 1 && ts[0].Class() == slurm.Failed || time.Now().After(deadline) {
			b, _ := os.ReadFile(filepath.Join(out, "slurm", "campaign_"+m[1]+".log"))
			t.Fatalf("campaign job %s: %+v\n%s", m[1], ts, b)
		}
		time.Sleep(500 * time.Millisecond)
	}
	for _, f := range []string{"campaign/deployments.csv", "north/tracks/crests.csv", "south/tracks/crests.csv", "south/tracks/summary.json", "north/parts/index.json"} {
		a, err1 := os.ReadFile(filepath.Join(local, f))
		b, err2 := os.ReadFile(filepath.Join(out, f))
		if err1 != nil || err2 != nil {
			t.Fatal(err1, err2)
		}
		rel := strings.TrimPrefix(strings.TrimPrefix(f, "north/"), "south/")
		if a, b := unclocked(t, rel, a), unclocked(t, rel, b); !bytes.Equal(a, b) {
			t.Errorf("%s differs between the local and the Slurm campaign: %s", f, firstDiff(a, b))
		}
	}
}

// firstDiff shows where two files first differ.
func firstDiff(a, b []byte) string {
	i := 0
	for i < len(a) && i < len(b) && a[i] == b[i] {
		i++
	}
	lo := max(0, i-80)
	return fmt.Sprintf("%d and %d bytes, from byte %d: %q against %q", len(a), len(b), i, a[lo:min(len(a), i+40)], b[lo:min(len(b), i+40)])
}
