package main

// Runs on a Slurm cluster: the parts of a run as one sbatch array job and
// the finishing step (track and report) as a job that waits for them
// (afterok). What was submitted is recorded in DIR/.crestspeed/slurm.json,
// so that running the same command again submits only the parts that are
// neither done nor still queued or running, and `status` can show each
// part's state in the queue.

import (
	"context"
	"encoding/json"
	"errors"
	"fmt"
	"os"
	"path/filepath"
	"sort"
	"strconv"
	"strings"
	"time"

	"crestspeed/internal/atomicfile"
	"crestspeed/internal/runplan"
	"crestspeed/internal/slurm"
)

// slurmRecordVersion is the version of slurm.json's layout.
const slurmRecordVersion = 1

// slurmRecord is DIR/.crestspeed/slurm.json: every submission of the run.
type slurmRecord struct {
	Version     int               `json:"version"`
	Parts       int               `json:"parts"`
	Submissions []slurmSubmission `json:"submissions"`
}

// slurmSubmission is one call of sbatch for the parts and one for the
// finishing job.
type slurmSubmission struct {
	Submitted string `json:"submitted"` // UTC, RFC 3339
	// ArrayJob is the array job of the parts, "" when every part was done
	// or in the queue already.
	ArrayJob string `json:"array_job"`
	Tasks    []int  `json:"tasks"` // the parts it runs (array indices = part numbers)
	// FinishJob is the job of the finishing step.
	FinishJob string `json:"finish_job"`
	// After are the jobs ("ID" or "ID_K") the finishing job waits for.
	After []string `json:"after"`
	// Queued: nothing was submitted; FinishJob is the one already queued.
	Queued bool `json:"-"`
}

// slurmPlan is what a submission needs to know about the run.
type slurmPlan struct {
	Dir        string // the run's output folder, absolute
	Parts      int    // parts 0 .. Parts-1
	Opts       slurm.Options
	Exe        string           // the crestspeed executable the jobs run, absolute
	PartDone   func(k int) bool // part k's output is complete
	FinishDone func() bool      // the finishing step's output is complete
}

func slurmRecordPath(dir string) string { return filepath.Join(dir, ".crestspeed", "slurm.json") }
func slurmDir(dir string) string        { return filepath.Join(dir, "slurm") }

// partLog is the log of part k run as task k of array job job (sbatch's
// %A_%a pattern in parts.sbatch).
func partLog(dir, job string, k int) string {
	return filepath.Join(slurmDir(dir), fmt.Sprintf("part_%s_%d.log", job, k))
}

func finishLog(dir, job string) string {
	return filepath.Join(slurmDir(dir), fmt.Sprintf("finish_%s.log", job))
}

// readSlurmRecord reads slurm.json; a missing file is an empty record.
func readSlurmRecord(dir string) (slurmRecord, error) {
	var r slurmRecord
	b, err := os.ReadFile(slurmRecordPath(dir))
	if errors.Is(err, os.ErrNotExist) {
		return slurmRecord{Version: slurmRecordVersion}, nil
	}
	if err != nil {
		return r, fmt.Errorf("cannot read the record of Slurm jobs: %w", err)
	}
	if err := json.Unmarshal(b, &r); err != nil {
		return r, fmt.Errorf("the record of Slurm jobs %s is damaged (%v); remove it to submit every unfinished part again", slurmRecordPath(dir), err)
	}
	if r.Version != slurmRecordVersion {
		return r, fmt.Errorf("the record of Slurm jobs %s has version %d, this crestspeed reads %d", slurmRecordPath(dir), r.Version, slurmRecordVersion)
	}
	return r, nil
}

func writeSlurmRecord(dir string, r slurmRecord) error {
	b, err := json.MarshalIndent(r, "", "  ")
	if err != nil {
		return err
	}
	if err := os.MkdirAll(filepath.Dir(slurmRecordPath(dir)), 0o755); err != nil {
		return err
	}
	return atomicfile.WriteFile(slurmRecordPath(dir), append(b, '\n'))
}

// slurmPartState is what the queue says of one part: its latest
// submission's task.
type slurmPartState struct {
	Class slurm.Class
	State string // Slurm's word, "" when the queue does not know the task
	Job   string // "ID_K", "" when never submitted
	Log   string // its log file
}

// slurmStates asks the cluster about the latest job of every part and of
// the finishing step. With no record it returns nil maps and no error.
func slurmStates(ctx context.Context, dir string) (map[int]slurmPartState, *slurmPartState, error) {
	rec, err := readSlurmRecord(dir)
	if err != nil || len(rec.Submissions) == 0 {
		return nil, nil, err
	}
	latest := map[int]string{} // part -> array job of its latest submission
	var jobs []string
	seen := map[string]bool{}
	add := func(j string) {
		if j != "" && !seen[j] {
			seen[j] = true
			jobs = append(jobs, j)
		}
	}
	for _, s := range rec.Submissions {
		for _, k := range s.Tasks {
			latest[k] = s.ArrayJob
		}
		add(s.ArrayJob)
	}
	last := rec.Submissions[len(rec.Submissions)-1]
	add(last.FinishJob)
	tasks, err := slurm.States(ctx, jobs...)
	if err != nil {
		return nil, nil, err
	}
	type key struct {
		job string
		k   int
	}
	byKey := map[key]slurm.Task{}
	for _, t := range tasks {
		byKey[key{t.Job, t.Index}] = t
	}
	parts := map[int]slurmPartState{}
	for k, job := range latest {
		st := slurmPartState{Job: job + "_" + strconv.Itoa(k), Log: partLog(dir, job, k)}
		if t, ok := byKey[key{job, k}]; ok {
			st.Class, st.State = t.Class(), t.State
		}
		parts[k] = st
	}
	var fin *slurmPartState
	if last.FinishJob != "" {
		fin = &slurmPartState{Job: last.FinishJob, Log: finishLog(dir, last.FinishJob)}
		if t, ok := byKey[key{last.FinishJob, -1}]; ok {
			fin.Class, fin.State = t.Class(), t.State
		}
	}
	return parts, fin, nil
}

// partsScript is the body of parts.sbatch: task K runs part K with as many
// workers as Slurm gave it CPUs.
func partsScript(p slurmPlan) []string {
	return []string{
		`workers=${SLURM_CPUS_PER_TASK:-1}`,
		fmt.Sprintf(`exec %s run-step --out %s --step part --part "$SLURM_ARRAY_TASK_ID" --workers "$workers"`,
			slurm.Quote(p.Exe), slurm.Quote(p.Dir)),
	}
}

func finishScript(p slurmPlan) []string {
	return []string{
		`workers=${SLURM_CPUS_PER_TASK:-1}`,
		fmt.Sprintf(`exec %s run-step --out %s --step finish --workers "$workers"`, slurm.Quote(p.Exe), slurm.Quote(p.Dir)),
	}
}

// submitSlurm submits what the run still needs: the parts that are neither
// done nor queued or running, as one array job (DIR/slurm/parts.sbatch),
// and a finishing job (DIR/slurm/finish.sbatch) that waits for every
// unfinished part's latest task. A finishing job of an earlier submission
// that is still waiting is cancelled first, so that one finishing job
// runs. It returns the submission, with no jobs when the run is complete.
func submitSlurm(ctx context.Context, con *console, p slurmPlan) (slurmSubmission, error) {
	var sub slurmSubmission
	if err := p.Opts.Validate(); err != nil {
		return sub, usageError{err}
	}
	if p.Parts < 1 {
		return sub, fmt.Errorf("the run has no parts to submit")
	}
	rec, err := readSlurmRecord(p.Dir)
	if err != nil {
		return sub, err
	}
	parts, fin, err := slurmStates(ctx, p.Dir)
	if err != nil {
		return sub, err
	}
	if rec.Parts != 0 && rec.Parts != p.Parts && len(rec.Submissions) > 0 {
		if err := cancelOldSplit(ctx, con, p, rec, parts, fin); err != nil {
			return sub, err
		}
		rec.Submissions, parts, fin = nil, nil, nil
	}
	var missing []int
	var after []string
	for k := 0; k < p.Parts; k++ {
		if p.PartDone(k) {
			continue
		}
		st, ok := parts[k]
		if ok && (st.Class == slurm.Queued || st.Class == slurm.Running) {
			after = append(after, st.Job)
			continue
		}
		if ok && st.Class == slurm.Failed {
			con.logf("slurm: part %d (job %s) ended %s; submitting it again (log %s)", k, st.Job, st.State, st.Log)
		}
		missing = append(missing, k)
	}
	if len(missing) == 0 && len(after) == 0 && p.FinishDone() {
		con.logf("slurm: every part and the finishing step are done; nothing to submit")
		return sub, nil
	}
	if fin != nil && len(missing) == 0 && (fin.Class == slurm.Queued || fin.Class == slurm.Running) {
		con.logf("slurm: nothing to submit; %d parts and the finishing job %s are in the queue", len(after), fin.Job)
		return slurmSubmission{FinishJob: fin.Job, Queued: true}, nil
	}
	if fin != nil && fin.Class == slurm.Queued {
		if err := slurm.Cancel(ctx, fin.Job); err != nil {
			return sub, err
		}
		con.logf("slurm: cancelled the waiting finishing job %s; a new one waits for the resubmitted parts", fin.Job)
	}
	if err := os.MkdirAll(slurmDir(p.Dir), 0o755); err != nil {
		return sub, fmt.Errorf("cannot create %s: %w", slurmDir(p.Dir), err)
	}
	sub.Submitted = time.Now().UTC().Format(time.RFC3339)
	if len(missing) > 0 {
		id, err := renderSubmit(ctx, p, "parts.sbatch", slurm.Script{Name: "crestspeed-parts", Tasks: missing,
			Log: filepath.Join(slurmDir(p.Dir), "part_%A_%a.log"), Dir: p.Dir, Body: partsScript(p)})
		if err != nil {
			return sub, err
		}
		sub.ArrayJob, sub.Tasks = id, missing
		for _, k := range missing {
			after = append(after, id+"_"+strconv.Itoa(k))
		}
	}
	sort.Strings(after)
	id, err := renderSubmit(ctx, p, "finish.sbatch", slurm.Script{Name: "crestspeed-finish", After: compactAfter(after, sub),
		Log: filepath.Join(slurmDir(p.Dir), "finish_%j.log"), Dir: p.Dir, Body: finishScript(p)})
	if err != nil {
		if sub.ArrayJob != "" {
			_ = slurm.Cancel(ctx, sub.ArrayJob) // no parts without their finishing job
		}
		return sub, err
	}
	sub.FinishJob, sub.After = id, compactAfter(after, sub)
	rec.Version, rec.Parts = slurmRecordVersion, p.Parts
	rec.Submissions = append(rec.Submissions, sub)
	if err := writeSlurmRecord(p.Dir, rec); err != nil {
		_ = slurm.Cancel(ctx, sub.ArrayJob, sub.FinishJob)
		return sub, fmt.Errorf("jobs cancelled: their record cannot be written: %w", err)
	}
	if sub.ArrayJob != "" {
		con.logf("slurm: submitted parts %s as array job %s (logs %s)", slurm.ArraySpec(sub.Tasks), sub.ArrayJob,
			filepath.Join(slurmDir(p.Dir), "part_"+sub.ArrayJob+"_K.log"))
	}
	con.logf("slurm: submitted the finishing job %s, after %s", sub.FinishJob, strings.Join(sub.After, ", "))
	return sub, nil
}

// cancelOldSplit cancels the queued and running jobs of a run whose part
// count has changed since they were submitted: they would write parts of
// another numbering.
func cancelOldSplit(ctx context.Context, con *console, p slurmPlan, rec slurmRecord, parts map[int]slurmPartState, fin *slurmPartState) error {
	var stale []string
	for _, st := range parts {
		if st.Class == slurm.Queued || st.Class == slurm.Running {
			stale = append(stale, st.Job)
		}
	}
	if fin != nil && (fin.Class == slurm.Queued || fin.Class == slurm.Running) {
		stale = append(stale, fin.Job)
	}
	sort.Strings(stale)
	if err := slurm.Cancel(ctx, stale...); err != nil {
		return err
	}
	con.logf("slurm: the run now has %d parts, the jobs recorded were for %d; cancelled those still in the queue (%s)", p.Parts, rec.Parts, strings.Join(stale, ", "))
	return nil
}

// renderSubmit writes the batch script sc as DIR/slurm/name and submits it.
func renderSubmit(ctx context.Context, p slurmPlan, name string, sc slurm.Script) (string, error) {
	text, err := slurm.Render(p.Opts, sc)
	if err != nil {
		return "", err
	}
	path := filepath.Join(slurmDir(p.Dir), name)
	if err := atomicfile.WriteFile(path, []byte(text)); err != nil {
		return "", err
	}
	return slurm.Submit(ctx, path)
}

// compactAfter lists the jobs the finishing job waits for: the whole new
// array job rather than each of its tasks, and each earlier task still in
// the queue by itself.
func compactAfter(after []string, sub slurmSubmission) []string {
	var out []string
	for _, a := range after {
		if sub.ArrayJob != "" && strings.HasPrefix(a, sub.ArrayJob+"_") {
			continue
		}
		out = append(out, a)
	}
	if sub.ArrayJob != "" {
		out = append(out, sub.ArrayJob)
	}
	return out
}

// slurmExecutable is the crestspeed the jobs run: this very executable
// (tests put a stand-in there).
var slurmExecutable = os.Executable

// runProgress says which parts of the prepared run in dir are up to date,
// and whether the finishing steps (index, track) are.
func runProgress(dir string) (parts []bool, finished bool, err error) {
	c, rp, err := loadRun(dir)
	if err != nil {
		return nil, false, err
	}
	steps, err := buildSteps(c, rp, nil)
	if err != nil {
		return nil, false, err
	}
	plan := runplan.Plan{Dir: c.Out, Version: version}
	parts = make([]bool, len(rp.Parts))
	finished = true
	for _, s := range steps {
		ok, _, err := plan.Check(s.Step, false)
		if err != nil {
			return nil, false, err
		}
		switch {
		case s.kind == stepPart:
			parts[s.part] = ok
		case wantFinish(s):
			finished = finished && ok
		}
	}
	return parts, finished, nil
}

// RunOnSlurm is "crestspeed run --scheduler slurm": the run is prepared on
// this machine (the configuration recorded; calibrate when needed and the
// settling of sea plane and grid, both small next to the parts), then its
// unfinished parts go to the cluster as one array job and the index, track
// and report as a job that waits for them. It prints the job ids. Running
// it again submits only what is neither done nor in the queue.
func RunOnSlurm(ctx context.Context, con *console, cfg Config) (slurmSubmission, error) {
	return runOnSlurm(ctx, con, cfg, cfg.Slurm)
}

// runOnSlurm is RunOnSlurm with the sbatch options opts.
func runOnSlurm(ctx context.Context, con *console, cfg Config, opts slurm.Options) (slurmSubmission, error) {
	var none slurmSubmission
	if err := opts.Validate(); err != nil {
		return none, usageError{err}
	}
	exe, err := slurmExecutable()
	if err != nil {
		return none, fmt.Errorf("cannot find the crestspeed executable for the jobs: %w", err)
	}
	if err := slurmPartsSize(con, &cfg, opts); err != nil {
		return none, err
	}
	n, err := prepareRun(ctx, con, cfg)
	if err != nil {
		return none, err
	}
	dir := absPath(cfg.Out)
	con.logf("run: %s, %d parts; preparing on this machine, then submitting to Slurm", dir, n)
	if err := doSteps(ctx, con, dir, cfg.Workers, wantPrepare); err != nil {
		return none, err
	}
	partOK, finOK, err := runProgress(dir)
	if err != nil {
		return none, err
	}
	sub, err := submitSlurm(ctx, con, slurmPlan{Dir: dir, Parts: n, Opts: opts, Exe: exe,
		PartDone: func(k int) bool { return partOK[k] }, FinishDone: func() bool { return finOK }})
	if err != nil {
		return none, err
	}
	if sub.ArrayJob != "" {
		fmt.Fprintf(con.stdout, "parts job %s (parts %s)\n", sub.ArrayJob, slurm.ArraySpec(sub.Tasks))
	}
	if sub.FinishJob != "" && !sub.Queued {
		fmt.Fprintf(con.stdout, "finish job %s\n", sub.FinishJob)
		con.logf("run: follow it with \"crestspeed status %s\"", dir)
	}
	return sub, nil
}

// runScheduled is "run --scheduler NAME [FILES...]" for a scheduler other
// than local.
func runScheduled(ctx context.Context, con *console, cfg Config, name string, files []string, configFile string, partsGiven bool) error {
	if name != "slurm" {
		return usageError{fmt.Errorf("--scheduler %q is not a scheduler; give local or slurm", name)}
	}
	if len(files) == 0 {
		_, err := RunOnSlurm(ctx, con, cfg)
		return err
	}
	return runCampaignOnSlurm(ctx, con, cfg, files, configFile, partsGiven)
}

// runCampaignOnSlurm is "run --scheduler slurm --out DIR A.yaml B.yaml...":
// each deployment is submitted as by RunOnSlurm into DIR/<name>, with the
// slurm section of the command's own configuration (--config), and one
// more job, after every deployment's finishing job, runs the same command
// on this machine's terms (--scheduler local): the deployments are then up
// to date, so it only pools them into DIR/campaign. When nothing is left
// for the cluster, the campaign is pooled here at once.
func runCampaignOnSlurm(ctx context.Context, con *console, cfg Config, files []string, configFile string, partsGiven bool) error {
	if cfg.Out == "" {
		return usageError{fmt.Errorf("give the campaign's output folder with --out DIR")}
	}
	if err := cfg.Slurm.Validate(); err != nil {
		return usageError{err}
	}
	dir := absPath(cfg.Out)
	parts := -1
	if partsGiven {
		parts = cfg.Run.Parts
	}
	var after []string
	for i, f := range files {
		c, err := loadConfigFile(f)
		if err != nil {
			return err
		}
		name := strings.TrimSuffix(filepath.Base(f), filepath.Ext(f))
		if name == campaignDirName || name == runplan.StateDir || name == "" {
			return usageError{fmt.Errorf("deployment file %s cannot be used: its name %q is that of the campaign's own folder; rename it", f, name)}
		}
		c.Out = filepath.Join(dir, name)
		c.Workers, c.Force, c.Quiet = cfg.Workers, cfg.Force, cfg.Quiet
		if parts >= 0 {
			c.Run.Parts = parts
		}
		con.logf("run: deployment %d of %d: %s → %s", i+1, len(files), f, c.Out)
		sub, err := runOnSlurm(ctx, con, c, cfg.Slurm) // the campaign's options, not the deployment's
		if err != nil {
			return fmt.Errorf("deployment %s: %w", f, err)
		}
		if sub.FinishJob != "" {
			after = append(after, sub.FinishJob)
		}
	}
	rec, err := readSlurmRecord(dir)
	if err != nil {
		return err
	}
	if n := len(rec.Submissions); n > 0 {
		last := rec.Submissions[n-1].FinishJob
		if ts, err := slurm.States(ctx, last); err == nil && len(ts) == 1 && ts[0].Class() == slurm.Queued {
			if err := slurm.Cancel(ctx, last); err != nil {
				return err
			}
			con.logf("slurm: cancelled the waiting campaign job %s; a new one waits for the deployments", last)
		}
	}
	if len(after) == 0 {
		con.logf("run: every deployment is done; pooling the campaign here")
		return RunCampaign(ctx, con, cfg, files, parts)
	}
	exe, err := slurmExecutable()
	if err != nil {
		return fmt.Errorf("cannot find the crestspeed executable for the jobs: %w", err)
	}
	cmd := []string{slurm.Quote(exe), "run", "--scheduler", "local", "--out", slurm.Quote(dir), `--workers "$workers"`}
	if configFile != "" {
		cmd = append(cmd, "--config", slurm.Quote(absPath(configFile)))
	}
	if parts >= 0 {
		cmd = append(cmd, "--parts", strconv.Itoa(parts))
	}
	for _, f := range files {
		cmd = append(cmd, slurm.Quote(absPath(f)))
	}
	if err := os.MkdirAll(slurmDir(dir), 0o755); err != nil {
		return err
	}
	text, err := slurm.Render(cfg.Slurm, slurm.Script{Name: "crestspeed-campaign", After: after,
		Log: filepath.Join(slurmDir(dir), "campaign_%j.log"), Dir: dir,
		Body: []string{`workers=${SLURM_CPUS_PER_TASK:-1}`, "exec " + strings.Join(cmd, " ")}})
	if err != nil {
		return err
	}
	path := filepath.Join(slurmDir(dir), "campaign.sbatch")
	if err := atomicfile.WriteFile(path, []byte(text)); err != nil {
		return err
	}
	id, err := slurm.Submit(ctx, path)
	if err != nil {
		return err
	}
	rec.Version = slurmRecordVersion
	rec.Submissions = append(rec.Submissions, slurmSubmission{Submitted: time.Now().UTC().Format(time.RFC3339), FinishJob: id, After: after})
	if err := writeSlurmRecord(dir, rec); err != nil {
		_ = slurm.Cancel(ctx, id)
		return fmt.Errorf("job cancelled: its record cannot be written: %w", err)
	}
	fmt.Fprintf(con.stdout, "campaign job %s\n", id)
	con.logf("slurm: submitted the campaign job %s, after %s; its log %s", id, strings.Join(after, ", "), filepath.Join(slurmDir(dir), "campaign_"+id+".log"))
	return nil
}

func init() { schedulerStates = slurmSchedulerStates }

// slurmSchedulerStates is status's view of the Slurm jobs of the run in
// dir, by step name: parts (part-NNNN) and the finishing steps (index,
// track) whose latest job is queued or running, and those whose job Slurm
// ended otherwise (cancelled, out of time or memory) while the step is not
// done: such a job may have been killed before the step could mark itself
// failed. A run never given to Slurm gives nothing.
func slurmSchedulerStates(ctx context.Context, dir string) (map[string]string, error) {
	parts, fin, err := slurmStates(ctx, dir)
	if err != nil || (parts == nil && fin == nil) {
		return nil, err
	}
	partOK, finOK, err := runProgress(dir)
	if err != nil {
		return nil, err
	}
	say := func(st slurmPartState, done bool) string {
		switch {
		case st.Class == slurm.Queued:
			return "queued (Slurm job " + st.Job + ")"
		case st.Class == slurm.Running:
			return "running (Slurm job " + st.Job + ", log " + st.Log + ")"
		case st.Class == slurm.Failed && !done:
			return fmt.Sprintf("failed: Slurm ended job %s %s; log %s%s", st.Job, st.State, st.Log, logTail(st.Log))
		}
		return ""
	}
	out := map[string]string{}
	for k, st := range parts {
		if k < len(partOK) {
			if s := say(st, partOK[k]); s != "" {
				out[partName(k)] = s
			}
		}
	}
	if fin != nil {
		if s := say(*fin, finOK); s != "" {
			out[stepIndex], out[stepTrack] = s, s
		}
	}
	return out, nil
}

// logTail is the last line of a job's log, after " — ", or "".
func logTail(path string) string {
	l := tailLines(path, 1)
	if len(l) == 0 || strings.TrimSpace(l[0]) == "" {
		return ""
	}
	return " — " + strings.TrimSpace(l[0])
}
