package slurm

import (
	"context"
	"fmt"
	"os"
	"path/filepath"
	"strings"
	"testing"
	"time"

	"crestspeed/internal/slurm/localcluster"
)

// cluster is the one-node Slurm of scripts/slurm-local, started by the
// first test that needs it and stopped by TestMain.
var cluster = &localcluster.Lazy{Dir: "/tmp/crestspeed-slurm-pkgtest", Port: 6837}

func TestMain(m *testing.M) {
	code := m.Run()
	if err := cluster.Stop(); err != nil {
		fmt.Fprintln(os.Stderr, err)
		if code == 0 {
			code = 1
		}
	}
	os.Exit(code)
}

// waitFor polls the states of jobs until done says so, failing after limit.
func waitFor(t *testing.T, what string, limit time.Duration, jobs []string, done func(map[string][]Task) bool) map[string][]Task {
	t.Helper()
	deadline := time.Now().Add(limit)
	for {
		ts, err := States(context.Background(), jobs...)
		if err != nil {
			t.Fatal(err)
		}
		by := map[string][]Task{}
		for _, x := range ts {
			by[x.Job] = append(by[x.Job], x)
		}
		if done(by) {
			return by
		}
		if time.Now().After(deadline) {
			t.Fatalf("%s: not within %v; states %+v", what, limit, by)
		}
		time.Sleep(300 * time.Millisecond)
	}
}

func allClass(ts []Task, n int, c Class) bool {
	if len(ts) != n {
		return false
	}
	for _, x := range ts {
		if x.Class() != c {
			return false
		}
	}
	return true
}

// TestClusterArrayCancelResubmit runs a real array job and a job that waits
// on it (afterok) on the local cluster, cancels one array task, sees the
// waiting job removed, resubmits the missing index with a new waiting job,
// and checks every output.
func TestClusterArrayCancelResubmit(t *testing.T) {
	if _, err := cluster.Get(); err != nil {
		t.Fatal(err)
	}
	ctx := context.Background()
	dir := t.TempDir()
	o := DefaultOptions()
	o.CPUsPerTask, o.Memory, o.Time = 1, "200M", "5"
	// Task 2 hangs until cancelled on the first submission (no marker file).
	body := []string{
		`k=$SLURM_ARRAY_TASK_ID`,
		`if [ "$k" = 2 ] && [ ! -e again ]; then sleep 120; fi`,
		`echo "task $k of $SLURM_ARRAY_JOB_ID cpus $SLURM_CPUS_PER_TASK" >&2`,
		`echo $((k*k)) > part_$k.tmp && mv part_$k.tmp part_$k.txt`,
	}
	finish := []string{`cat part_0.txt part_1.txt part_2.txt part_3.txt > all.txt`}
	submit := func(name string, s Script) string {
		t.Helper()
		text, err := Render(o, s)
		if err != nil {
			t.Fatal(err)
		}
		path := filepath.Join(dir, name)
		if err := os.WriteFile(path, []byte(text), 0o644); err != nil {
			t.Fatal(err)
		}
		id, err := Submit(ctx, path)
		if err != nil {
			t.Fatal(err)
		}
		return id
	}
	arr := submit("parts.sbatch", Script{Name: "cs-parts", Tasks: []int{0, 1, 2, 3}, Log: filepath.Join(dir, "part_%A_%a.log"), Dir: dir, Body: body})
	fin := submit("finish.sbatch", Script{Name: "cs-finish", After: []string{arr}, Log: filepath.Join(dir, "finish_%j.log"), Dir: dir, Body: finish})

	// task 2 running, the others done, finish waiting
	waitFor(t, "tasks 0, 1, 3 done and 2 running", 60*time.Second, []string{arr, fin}, func(by map[string][]Task) bool {
		ts := by[arr]
		if len(ts) != 4 || len(by[fin]) != 1 || by[fin][0].Class() != Queued {
			return false
		}
		return ts[0].Class() == Done && ts[1].Class() == Done && ts[3].Class() == Done && ts[2].Class() == Running
	})
	if err := Cancel(ctx, arr+"_2"); err != nil {
		t.Fatal(err)
	}
	by := waitFor(t, "task 2 cancelled and finish removed", 30*time.Second, []string{arr, fin}, func(by map[string][]Task) bool {
		return len(by[arr]) == 4 && by[arr][2].Class() == Failed && allClass(by[fin], 1, Failed)
	})
	if by[arr][2].State != "CANCELLED" {
		t.Errorf("task 2 is %s, want CANCELLED", by[arr][2].State)
	}
	if _, err := os.Stat(filepath.Join(dir, "part_2.txt")); err == nil {
		t.Fatal("the cancelled task wrote its output")
	}
	if _, err := os.Stat(filepath.Join(dir, "all.txt")); err == nil {
		t.Fatal("the finishing job ran although a task it waits on was cancelled")
	}

	// resubmit the missing index only, and a new finishing job
	if err := os.WriteFile(filepath.Join(dir, "again"), nil, 0o644); err != nil {
		t.Fatal(err)
	}
	arr2 := submit("parts2.sbatch", Script{Name: "cs-parts", Tasks: []int{2}, Log: filepath.Join(dir, "part_%A_%a.log"), Dir: dir, Body: body})
	fin2 := submit("finish2.sbatch", Script{Name: "cs-finish", After: []string{arr2}, Log: filepath.Join(dir, "finish_%j.log"), Dir: dir, Body: finish})
	by = waitFor(t, "resubmitted task and finish done", 60*time.Second, []string{arr2, fin2}, func(by map[string][]Task) bool {
		return allClass(by[arr2], 1, Done) && allClass(by[fin2], 1, Done)
	})
	if by[arr2][0].Index != 2 || by[fin2][0].Index != -1 {
		t.Errorf("indices: %+v", by)
	}
	got, err := os.ReadFile(filepath.Join(dir, "all.txt"))
	if err != nil {
		t.Fatal(err)
	}
	if string(got) != "0\n1\n4\n9\n" { // k*k for k = 0..3
		t.Errorf("all.txt = %q", got)
	}
	// logs follow %A_%a: the first array's tasks 0, 1, 3 and the second's task 2
	for _, name := range []string{"part_" + arr + "_0.log", "part_" + arr + "_1.log", "part_" + arr + "_3.log", "part_" + arr2 + "_2.log", "finish_" + fin2 + ".log"} {
		b, err := os.ReadFile(filepath.Join(dir, name))
		if err != nil {
			t.Errorf("log %s: %v", name, err)
			continue
		}
		if strings.HasPrefix(name, "part_") && !strings.Contains(string(b), "cpus 1") {
			t.Errorf("log %s = %q: SLURM_CPUS_PER_TASK did not follow cpus_per_task", name, b)
		}
	}
}
