package slurm

import (
	"fmt"
	"sort"
	"strconv"
	"strings"
)

// Script is one batch script to render.
type Script struct {
	// Name is the job name (sbatch --job-name).
	Name string
	// Tasks are the array indices; none = a single job.
	Tasks []int
	// After are the jobs this job waits for, each to end successfully
	// (--dependency=afterok:ID:ID...): "ID" for a job or a whole array,
	// "ID_K" for task K of an array.
	After []string
	// Log is the path of the job's log. For an array "%A_%a" in it is the
	// array job id and task index (Slurm's own filename pattern); for a
	// single job "%j" is its id.
	Log string
	// Dir is the working folder of the job (sbatch --chdir); "" = the
	// folder sbatch is called from.
	Dir string
	// Body is the shell commands the job runs, one a line.
	Body []string
}

// ArraySpec writes array indices as sbatch --array does: sorted, with runs
// of consecutive indices as ranges ("0-3,5,7-8").
func ArraySpec(tasks []int) string {
	t := append([]int(nil), tasks...)
	sort.Ints(t)
	var b strings.Builder
	for i := 0; i < len(t); {
		j := i
		for j+1 < len(t) && t[j+1] <= t[j]+1 {
			j++
		}
		if b.Len() > 0 {
			b.WriteByte(',')
		}
		b.WriteString(strconv.Itoa(t[i]))
		if t[j] != t[i] {
			b.WriteByte('-')
			b.WriteString(strconv.Itoa(t[j]))
		}
		i = j + 1
	}
	return b.String()
}

// Quote quotes s for a POSIX shell.
func Quote(s string) string {
	if s != "" && strings.IndexFunc(s, func(r rune) bool {
		return !(r >= 'a' && r <= 'z' || r >= 'A' && r <= 'Z' || r >= '0' && r <= '9' || strings.ContainsRune("_-./=:,+@%", r))
	}) < 0 {
		return s
	}
	return "'" + strings.ReplaceAll(s, "'", `'\''`) + "'"
}

// Render writes the batch script of s with the options o. The #SBATCH lines
// come first, as sbatch reads them only before the first command.
func Render(o Options, s Script) (string, error) {
	if err := o.Validate(); err != nil {
		return "", err
	}
	if s.Name == "" || !wordRe.MatchString(s.Name) {
		return "", fmt.Errorf("job name %q must be a word (letters, digits and _ . , : + @ -)", s.Name)
	}
	if s.Log == "" || strings.ContainsAny(s.Log, "\n\r\x00 \t") {
		return "", fmt.Errorf("log path %q must be given and hold no blanks (sbatch reads #SBATCH lines word by word)", s.Log)
	}
	if strings.ContainsAny(s.Dir, "\n\r\x00 \t") {
		return "", fmt.Errorf("job folder %q must hold no blanks (sbatch reads #SBATCH lines word by word)", s.Dir)
	}
	for _, t := range s.Tasks {
		if t < 0 {
			return "", fmt.Errorf("array index %d is negative", t)
		}
	}
	for _, id := range s.After {
		job, task, isTask := strings.Cut(id, "_")
		_, err := strconv.ParseUint(job, 10, 64)
		if err == nil && isTask {
			_, err = strconv.ParseUint(task, 10, 31)
		}
		if err != nil {
			return "", fmt.Errorf("job %q to wait for is neither a job id nor ID_TASK", id)
		}
	}
	var b strings.Builder
	line := func(f string, a ...any) { fmt.Fprintf(&b, f+"\n", a...) }
	line("#!/bin/bash")
	line("#SBATCH --job-name=%s", s.Name)
	if len(s.Tasks) > 0 {
		line("#SBATCH --array=%s", ArraySpec(s.Tasks))
	}
	if len(s.After) > 0 {
		line("#SBATCH --dependency=afterok:%s", strings.Join(s.After, ":"))
		// a job whose dependency can never be met is removed, not left pending
		line("#SBATCH --kill-on-invalid-dep=yes")
	}
	line("#SBATCH --output=%s", s.Log)
	if s.Dir != "" {
		line("#SBATCH --chdir=%s", s.Dir)
	}
	if o.Partition != "" {
		line("#SBATCH --partition=%s", o.Partition)
	}
	if o.Account != "" {
		line("#SBATCH --account=%s", o.Account)
	}
	if o.Time != "" {
		line("#SBATCH --time=%s", o.Time)
	}
	if o.Memory != "" {
		line("#SBATCH --mem=%s", o.Memory)
	}
	line("#SBATCH --cpus-per-task=%d", o.CPUsPerTask)
	for _, e := range o.Extra {
		line("#SBATCH %s", strings.TrimSpace(e))
	}
	line("set -euo pipefail")
	for _, c := range s.Body {
		if strings.ContainsAny(c, "\n\r\x00") {
			return "", fmt.Errorf("command %q must fit on one line", c)
		}
		line("%s", c)
	}
	return b.String(), nil
}
