package slurm

import (
	"bytes"
	"context"
	"errors"
	"fmt"
	"os/exec"
	"sort"
	"strconv"
	"strings"
)

// Class is what a task's Slurm state means for crestspeed.
type Class int

const (
	// Unknown: the cluster no longer (or never) knew the task.
	Unknown Class = iota
	// Queued: waiting to start (pending, held, requeued).
	Queued
	// Running: started, not yet ended.
	Running
	// Done: ended with exit code 0.
	Done
	// Failed: ended any other way (failed, cancelled, out of time or memory,
	// node failure).
	Failed
)

func (c Class) String() string {
	return [...]string{"unknown", "queued", "running", "done", "failed"}[c]
}

// ClassOf classifies a Slurm job state (squeue %T, sacct State; sacct may
// add words, as in "CANCELLED by 0").
func ClassOf(state string) Class {
	s, _, _ := strings.Cut(strings.TrimSpace(state), " ")
	s = strings.TrimSuffix(strings.ToUpper(s), "+")
	switch s {
	case "PENDING", "PD", "REQUEUED", "REQUEUE_HOLD", "REQUEUE_FED", "RESV_DEL_HOLD", "CONFIGURING", "CF", "SUSPENDED", "S", "STOPPED", "ST":
		return Queued
	case "RUNNING", "R", "COMPLETING", "CG", "SIGNALING", "SI", "STAGE_OUT", "SO", "RESIZING", "RS":
		return Running
	case "COMPLETED", "CD":
		return Done
	case "FAILED", "F", "CANCELLED", "CA", "TIMEOUT", "TO", "NODE_FAIL", "NF", "OUT_OF_MEMORY", "OOM",
		"PREEMPTED", "PR", "BOOT_FAIL", "BF", "DEADLINE", "DL", "REVOKED", "RV", "SPECIAL_EXIT", "SE":
		return Failed
	}
	return Unknown
}

// Task is the state of one job, or one task of an array job.
type Task struct {
	Job   string // the job id, for an array the array's job id
	Index int    // array task index; -1 for a job that is not an array
	State string // Slurm's state word (PENDING, RUNNING, COMPLETED ...)
	// Reason is squeue's reason a queued job waits ("Dependency",
	// "Resources"), or sacct's exit code ("0:0").
	Reason string
}

// Class is the meaning of the task's state.
func (t Task) Class() Class { return ClassOf(t.State) }

// squeueFormat is the output format the parser reads: array job id, array
// task index (N/A when not an array), state, reason; run with -h -r so that
// there is no header and every array task has its own line.
const squeueFormat = "%F|%K|%T|%r"

// ParseSqueue reads the output of
// squeue -h -r -t all -o '%F|%K|%T|%r'. Blank lines are skipped; any other
// line that does not fit is an error naming it.
func ParseSqueue(out string) ([]Task, error) {
	var ts []Task
	for i, l := range strings.Split(out, "\n") {
		l = strings.TrimSpace(l)
		if l == "" {
			continue
		}
		f := strings.Split(l, "|")
		if len(f) != 4 {
			return nil, fmt.Errorf("squeue line %d %q has %d fields, not 4 (array job|task|state|reason)", i+1, l, len(f))
		}
		if _, err := strconv.ParseUint(f[0], 10, 64); err != nil {
			return nil, fmt.Errorf("squeue line %d %q: job id %q is not a number", i+1, l, f[0])
		}
		idx := -1
		if f[1] != "N/A" {
			v, err := strconv.Atoi(f[1])
			if err != nil || v < 0 {
				return nil, fmt.Errorf("squeue line %d %q: array task %q is not an index (run squeue with -r)", i+1, l, f[1])
			}
			idx = v
		}
		if f[2] == "" {
			return nil, fmt.Errorf("squeue line %d %q has no state", i+1, l)
		}
		ts = append(ts, Task{Job: f[0], Index: idx, State: f[2], Reason: f[3]})
	}
	return ts, nil
}

// ParseSacct reads the output of
// sacct -n -P -X -j IDS -o JobID,State,ExitCode. A job id is "123" for a
// job, "123_4" for an array task, "123_[5-7,9]" (or "123_[5-7%2]") for
// tasks not yet started, which are expanded, one Task each.
func ParseSacct(out string) ([]Task, error) {
	var ts []Task
	for i, l := range strings.Split(out, "\n") {
		l = strings.TrimSpace(l)
		if l == "" {
			continue
		}
		f := strings.Split(l, "|")
		if len(f) != 3 {
			return nil, fmt.Errorf("sacct line %d %q has %d fields, not 3 (JobID|State|ExitCode)", i+1, l, len(f))
		}
		if f[1] == "" {
			return nil, fmt.Errorf("sacct line %d %q has no state", i+1, l)
		}
		job, rest, isArray := strings.Cut(f[0], "_")
		if _, err := strconv.ParseUint(job, 10, 64); err != nil {
			return nil, fmt.Errorf("sacct line %d %q: job id %q is not a number", i+1, l, job)
		}
		if !isArray {
			ts = append(ts, Task{Job: job, Index: -1, State: f[1], Reason: f[2]})
			continue
		}
		idx, err := parseIndexList(rest)
		if err != nil {
			return nil, fmt.Errorf("sacct line %d %q: %v", i+1, l, err)
		}
		for _, k := range idx {
			ts = append(ts, Task{Job: job, Index: k, State: f[1], Reason: f[2]})
		}
	}
	return ts, nil
}

// maxExpand bounds the tasks one array line may stand for (Slurm's
// MaxArraySize default is 1001; clusters raise it, rarely past a million).
const maxExpand = 1 << 20

// parseIndexList reads "4" or "[5-7,9]" or "[5-7%2]".
func parseIndexList(s string) ([]int, error) {
	if !strings.HasPrefix(s, "[") {
		v, err := strconv.Atoi(s)
		if err != nil || v < 0 {
			return nil, fmt.Errorf("array task %q is not an index", s)
		}
		return []int{v}, nil
	}
	if !strings.HasSuffix(s, "]") {
		return nil, fmt.Errorf("array tasks %q lack the closing ]", s)
	}
	body := s[1 : len(s)-1]
	body, _, _ = strings.Cut(body, "%") // throttle
	var out []int
	for _, part := range strings.Split(body, ",") {
		lo, hi, isRange := strings.Cut(part, "-")
		a, err := strconv.Atoi(lo)
		if err != nil || a < 0 {
			return nil, fmt.Errorf("array tasks %q: %q is not an index", s, lo)
		}
		b := a
		if isRange {
			b, err = strconv.Atoi(hi)
			if err != nil || b < a {
				return nil, fmt.Errorf("array tasks %q: %q is not a range", s, part)
			}
		}
		if b-a >= maxExpand || len(out)+(b-a+1) > maxExpand {
			return nil, fmt.Errorf("array tasks %q stand for more than %d tasks", s, maxExpand)
		}
		for k := a; k <= b; k++ {
			out = append(out, k)
		}
	}
	return out, nil
}

// ParseSubmit reads the output of sbatch --parsable: "ID" or "ID;CLUSTER".
func ParseSubmit(out string) (string, error) {
	s := strings.TrimSpace(out)
	if i := strings.LastIndexByte(s, '\n'); i >= 0 { // warnings may come first
		s = strings.TrimSpace(s[i+1:])
	}
	id, _, _ := strings.Cut(s, ";")
	if _, err := strconv.ParseUint(id, 10, 64); err != nil || id == "" {
		return "", fmt.Errorf("sbatch printed %q, not a job id", strings.TrimSpace(out))
	}
	return id, nil
}

// run runs a Slurm client and returns its standard output; a failure says
// which command failed and what it printed.
func run(ctx context.Context, name string, args ...string) (string, error) {
	var stdout, stderr bytes.Buffer
	cmd := exec.CommandContext(ctx, name, args...)
	cmd.Stdout, cmd.Stderr = &stdout, &stderr
	err := cmd.Run()
	if errors.Is(err, exec.ErrNotFound) {
		return "", fmt.Errorf("%s is not on PATH: this machine is not a Slurm submit host (scripts/slurm-local starts a one-node cluster for trying)", name)
	}
	if err != nil {
		return stdout.String(), fmt.Errorf("%s %s failed (%v): %s", name, strings.Join(args, " "), err, strings.TrimSpace(stderr.String()))
	}
	return stdout.String(), nil
}

// Submit submits the batch script at path with sbatch --parsable and
// returns the job id.
func Submit(ctx context.Context, path string) (string, error) {
	out, err := run(ctx, "sbatch", "--parsable", path)
	if err != nil {
		return "", err
	}
	return ParseSubmit(out)
}

// Cancel cancels jobs or array tasks ("123", "123_4") with scancel.
func Cancel(ctx context.Context, ids ...string) error {
	if len(ids) == 0 {
		return nil
	}
	_, err := run(ctx, "scancel", ids...)
	return err
}

// States returns the state of every task of the given jobs that squeue
// still knows, or, for jobs squeue has forgotten, that sacct knows when the
// cluster keeps accounting. Tasks neither knows are missing from the result
// (their Class would be Unknown). The result is sorted by job, then index.
func States(ctx context.Context, jobs ...string) ([]Task, error) {
	if len(jobs) == 0 {
		return nil, nil
	}
	var ts []Task
	known := map[string]bool{}
	for _, j := range jobs {
		// one call per job: squeue refuses the whole list when one id is gone
		out, err := run(ctx, "squeue", "-h", "-r", "-t", "all", "-j", j, "-o", squeueFormat)
		if err != nil {
			if strings.Contains(err.Error(), "Invalid job id") {
				continue
			}
			return nil, err
		}
		t, err := ParseSqueue(out)
		if err != nil {
			return nil, err
		}
		for _, x := range t {
			known[x.Job] = true
		}
		ts = append(ts, t...)
	}
	var gone []string
	for _, j := range jobs {
		if !known[j] {
			gone = append(gone, j)
		}
	}
	if len(gone) > 0 {
		out, err := run(ctx, "sacct", "-n", "-P", "-X", "-j", strings.Join(gone, ","), "-o", "JobID,State,ExitCode")
		if err == nil { // no accounting: those jobs are simply unknown
			t, perr := ParseSacct(out)
			if perr != nil {
				return nil, perr
			}
			ts = append(ts, t...)
		}
	}
	sort.SliceStable(ts, func(a, b int) bool {
		if ts[a].Job != ts[b].Job {
			if len(ts[a].Job) != len(ts[b].Job) {
				return len(ts[a].Job) < len(ts[b].Job)
			}
			return ts[a].Job < ts[b].Job
		}
		return ts[a].Index < ts[b].Index
	})
	return ts, nil
}
