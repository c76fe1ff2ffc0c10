package main

import (
	"bytes"
	"context"
	"fmt"
	"os"
	"path/filepath"
	"strings"
	"testing"
	"time"

	"crestspeed/internal/slurm"
	"crestspeed/internal/slurm/localcluster"
)

// asCLI is the variable that makes the test binary act as the crestspeed
// executable (for the jobs the end-to-end Slurm test submits): it runs
// main before any test. The package's other files have registered their
// commands by then (test files are initialised after them).
const asCLI = "CS_TEST_BINARY_AS_CLI"

func init() {
	if os.Getenv(asCLI) == "1" {
		os.Args = append(os.Args[:1], flagless(os.Args[1:])...)
		main()
		os.Exit(0)
	}
}

// startCluster starts the one-node Slurm of scripts/slurm-local for one
// test, on a folder and ports of its own (internal/slurm's tests use
// others, so that `go test ./...` may run both packages at once), and
// stops it when the test ends.
func startCluster(t *testing.T) {
	t.Helper()
	c, err := localcluster.Start("/tmp/crestspeed-slurm-cmdtest", 6847)
	if err != nil {
		t.Fatal(err)
	}
	t.Cleanup(func() {
		if err := c.Stop(); err != nil {
			t.Error(err)
		}
	})
}

// flagless drops the go test flags (-test.*) a wrapper may pass on.
func flagless(args []string) []string {
	var out []string
	for _, a := range args {
		if !strings.HasPrefix(a, "-test.") {
			out = append(out, a)
		}
	}
	return out
}

// waitSlurm polls the run's states in the queue until ok says so.
func waitSlurm(t *testing.T, dir, what string, limit time.Duration, ok func(map[int]slurmPartState, *slurmPartState) bool) {
	t.Helper()
	deadline := time.Now().Add(limit)
	for {
		parts, fin, err := slurmStates(context.Background(), dir)
		if err != nil {
			t.Fatal(err)
		}
		if ok(parts, fin) {
			return
		}
		if time.Now().After(deadline) {
			t.Fatalf("%s: not within %v; parts %+v, finish %+v", what, limit, parts, fin)
		}
		time.Sleep(300 * time.Millisecond)
	}
}

// TestSlurmSubmitResubmit drives submitSlurm on the local cluster with a
// stand-in executable that takes run-step's arguments (part K writes
// parts/K.done; finish checks every part and writes finished): a second
// call while the jobs are queued submits nothing; after one part's task is
// cancelled (scancel), the finishing job is dropped by Slurm and the next
// call submits that part alone with a new finishing job; once complete,
// a call submits nothing.
func TestSlurmSubmitResubmit(t *testing.T) {
	startCluster(t)
	ctx := context.Background()
	dir := t.TempDir()
	exe := filepath.Join(dir, "fake-crestspeed")
	if err := os.WriteFile(exe, []byte(`#!/bin/bash
set -eu
# run-step --out DIR --step part|finish [--part K] --workers W
out=$3; step=$5
if [ "$step" = part ]; then
  k=$7
  [ "$k" = 2 ] && [ ! -e "$out/again" ] && sleep 120
  mkdir -p "$out/parts"; echo "part $k workers $9" > "$out/parts/$k.done"
else
  for k in 0 1 2 3; do cat "$out/parts/$k.done"; done > "$out/finished"
fi
`), 0o755); err != nil {
		t.Fatal(err)
	}
	exists := func(p string) bool { _, err := os.Stat(p); return err == nil }
	o := slurm.DefaultOptions()
	o.CPUsPerTask, o.Memory, o.Time = 1, "200M", "5"
	plan := slurmPlan{Dir: dir, Parts: 4, Opts: o, Exe: exe,
		PartDone:   func(k int) bool { return exists(filepath.Join(dir, "parts", fmt.Sprintf("%d.done", k))) },
		FinishDone: func() bool { return exists(filepath.Join(dir, "finished")) }}
	var log bytes.Buffer
	con := &console{stdout: &log, stderr: &log}

	first, err := submitSlurm(ctx, con, plan)
	if err != nil {
		t.Fatal(err)
	}
	if first.ArrayJob == "" || first.FinishJob == "" || fmt.Sprint(first.Tasks) != "[0 1 2 3]" || fmt.Sprint(first.After) != "["+first.ArrayJob+"]" {
		t.Fatalf("first submission %+v", first)
	}
	again, err := submitSlurm(ctx, con, plan)
	if err != nil || again.ArrayJob != "" || !again.Queued || again.FinishJob != first.FinishJob {
		t.Fatalf("a second call while queued submitted %+v (%v)", again, err)
	}
	waitSlurm(t, dir, "parts 0, 1, 3 done and 2 running", 60*time.Second, func(p map[int]slurmPartState, f *slurmPartState) bool {
		return p[0].Class == slurm.Done && p[1].Class == slurm.Done && p[3].Class == slurm.Done && p[2].Class == slurm.Running
	})
	if err := slurm.Cancel(ctx, first.ArrayJob+"_2"); err != nil {
		t.Fatal(err)
	}
	waitSlurm(t, dir, "part 2 cancelled, finishing job dropped", 30*time.Second, func(p map[int]slurmPartState, f *slurmPartState) bool {
		return p[2].Class == slurm.Failed && f != nil && f.Class == slurm.Failed
	})
	if err := os.WriteFile(filepath.Join(dir, "again"), nil, 0o644); err != nil {
		t.Fatal(err)
	}
	re, err := submitSlurm(ctx, con, plan)
	if err != nil {
		t.Fatal(err)
	}
	if fmt.Sprint(re.Tasks) != "[2]" || re.FinishJob == "" || fmt.Sprint(re.After) != "["+re.ArrayJob+"]" {
		t.Fatalf("resubmission %+v", re)
	}
	b, err := os.ReadFile(filepath.Join(dir, "slurm", "parts.sbatch"))
	if err != nil || !strings.Contains(string(b), "#SBATCH --array=2\n") {
		t.Fatalf("parts.sbatch of the resubmission: %v\n%s", err, b)
	}
	waitSlurm(t, dir, "resubmitted part and finish done", 60*time.Second, func(p map[int]slurmPartState, f *slurmPartState) bool {
		return p[2].Class == slurm.Done && f != nil && f.Class == slurm.Done
	})
	got, err := os.ReadFile(filepath.Join(dir, "finished"))
	if err != nil {
		t.Fatal(err)
	}
	if want := "part 0 workers 1\npart 1 workers 1\npart 2 workers 1\npart 3 workers 1\n"; string(got) != want {
		t.Errorf("finished = %q, want %q", got, want)
	}
	if !exists(partLog(dir, re.ArrayJob, 2)) || !exists(finishLog(dir, re.FinishJob)) {
		t.Errorf("logs missing: %s, %s", partLog(dir, re.ArrayJob, 2), finishLog(dir, re.FinishJob))
	}
	done, err := submitSlurm(ctx, con, plan)
	if err != nil || done.FinishJob != "" {
		t.Fatalf("a call on a complete run submitted %+v (%v)", done, err)
	}
	rec, err := readSlurmRecord(dir)
	if err != nil || len(rec.Submissions) != 2 || rec.Parts != 4 {
		t.Fatalf("record %+v (%v)", rec, err)
	}
	if !strings.Contains(log.String(), "ended CANCELLED; submitting it again") {
		t.Errorf("the log does not say why part 2 was submitted again:\n%s", log.String())
	}
}

// Bad Slurm settings and an unknown scheduler are one sentence and exit
// status 2, before anything is written or submitted.
func TestSlurmBadSettings(t *testing.T) {
	base := t.TempDir()
	cfg := filepath.Join(base, "c.yaml")
	if err := os.WriteFile(cfg, []byte("slurm:\n  time: 1h\n"), 0o644); err != nil {
		t.Fatal(err)
	}
	out := filepath.Join(base, "run")
	_, _, err := run(t, "run", "--config", cfg, "--out", out, "--scheduler", "slurm")
	if exitCode(err) != exitUsage || !strings.Contains(fmt.Sprint(err), `slurm.time: "1h" is not a Slurm time`) {
		t.Errorf("bad slurm.time: exit %d, %v", exitCode(err), err)
	}
	_, _, err = run(t, "run", "--out", out, "--scheduler", "pbs")
	if exitCode(err) != exitUsage || !strings.Contains(fmt.Sprint(err), `--scheduler "pbs" is not a scheduler`) {
		t.Errorf("unknown scheduler: exit %d, %v", exitCode(err), err)
	}
	if _, err := os.Stat(out); err == nil {
		t.Errorf("a refused run wrote %s", out)
	}
}
