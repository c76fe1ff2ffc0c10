package main

// The steps of a deployment run, each a runplan.Step recorded in the run
// folder so that a rerun does only what is missing or out of date:
//
//	calibrate   (when the configuration gives no rig file) → DIR/rig.yaml
//	settle      the sea plane, disparity band and grid, once → DIR/geometry.yaml
//	part-%04d   one contiguous range of pairs → DIR/parts/part-%04d.nc (+ -points.nc)
//	index       the parts in time order → DIR/parts/index.json
//	track       crests, speeds and the report → DIR/tracks/
//
// The run folder also holds DIR/.crestspeed/config.yaml (the resolved
// configuration every step reads), DIR/.crestspeed/run.json (which
// deployment the folder belongs to), DIR/.crestspeed/parts.json (the part
// ranges), DIR/logs/<step>.log and DIR/run.log.

import (
	"context"
	"encoding/json"
	"errors"
	"fmt"
	"io"
	"io/fs"
	"os"
	"path/filepath"
	"strconv"
	"strings"
	"syscall"
	"time"

	"gopkg.in/yaml.v3"

	"crestspeed/calib"
	"crestspeed/ingest"
	"crestspeed/internal/atomicfile"
	"crestspeed/internal/runplan"
	"crestspeed/report"
	"crestspeed/surface"
)

// RunConfig configures how "crestspeed run" splits a record into parts.
type RunConfig struct {
	// Parts is the number of parts; 0 = one per PairsPerPart pairs.
	Parts int `yaml:"parts"`
	// PairsPerPart is the part size aimed at when Parts is 0; 0 =
	// automatic: defaultPairsPerPart, and on Slurm that many per two
	// workers of a part task (slurmPartsSize).
	PairsPerPart int `yaml:"pairs_per_part"`
}

// defaultPairsPerPart keeps a part at a few minutes to an hour of work on
// one node for the pair sizes of the field (0.35–0.6 s per 640×512 to
// 1024×768 pair on 2 cores, measured; a few seconds at 5 MP).
const defaultPairsPerPart = 1000

// Names of the files of a run folder.
const (
	runConfigName   = "config.yaml" // in DIR/.crestspeed
	runIdentityName = "run.json"    // in DIR/.crestspeed
	runPartsName    = "parts.json"  // in DIR/.crestspeed
	runGeometryName = "geometry.yaml"
	runRigName      = "rig.yaml"
	runPartsDir     = "parts"
	runIndexName    = "index.json" // in DIR/parts
	runTracksDir    = "tracks"
	runLogsDir      = "logs"
	runLogName      = "run.log"
	identityFormat  = "crestspeed deployment run, version 1"
	partsFormat     = "crestspeed run parts, version 1"
)

// Kinds of step.
const (
	stepCalibrate = "calibrate"
	stepSettle    = "settle"
	stepPart      = "part"
	stepIndex     = "index"
	stepTrack     = "track"
)

// partName is the step name and file stem of part k.
func partName(k int) string { return fmt.Sprintf("part-%04d", k) }

// planParts splits nPairs pairs into contiguous ranges [first, last) of
// pair indices (in time order, from 0), as even as possible: the first
// nPairs mod n ranges hold one pair more. parts > 0 asks for that many
// parts; otherwise cfg.Run.Parts is used, and when that is 0 too, one part
// per cfg.Run.PairsPerPart pairs (defaultPairsPerPart when unset). There
// are never more parts than pairs; no pairs give no parts.
func planParts(cfg Config, nPairs, parts int) [][2]int {
	if nPairs <= 0 {
		return nil
	}
	n := parts
	if n <= 0 {
		n = cfg.Run.Parts
	}
	if n <= 0 {
		per := cfg.Run.PairsPerPart
		if per <= 0 {
			per = defaultPairsPerPart
		}
		n = (nPairs + per - 1) / per
	}
	n = max(1, min(n, nPairs))
	out := make([][2]int, n)
	base, rem, first := nPairs/n, nPairs%n, 0
	for k := range out {
		size := base
		if k < rem {
			size++
		}
		out[k] = [2]int{first, first + size}
		first += size
	}
	return out
}

// runIdentity says which deployment a run folder belongs to: where its
// images and rig come from. Settings may change between runs of the same
// deployment; these may not.
type runIdentity struct {
	Format     string `json:"format"`
	Frames     string `json:"frames,omitempty"`
	Left       string `json:"left,omitempty"`
	Right      string `json:"right,omitempty"`
	Timestamps string `json:"timestamps,omitempty"`
	Rig        string `json:"rig"`
	CalibLeft  string `json:"calibrate_left,omitempty"`
	CalibRight string `json:"calibrate_right,omitempty"`
}

func identityOf(cfg Config) runIdentity {
	r := cfg.Reconstruct
	return runIdentity{Format: identityFormat, Frames: r.Frames, Left: r.Left, Right: r.Right, Timestamps: r.Timestamps,
		Rig: r.Rig, CalibLeft: cfg.Calibrate.Left, CalibRight: cfg.Calibrate.Right}
}

// describe names the deployment in a few words, for messages.
func (id runIdentity) describe() string {
	src := id.Frames
	if src == "" {
		src = id.Left + " and " + id.Right
	}
	if src == " and " {
		src = id.Timestamps
	}
	return "the images " + src
}

// partRange is one part of a run as written in parts.json.
type partRange struct {
	Name  string `json:"name"`
	First int    `json:"first_pair"`
	Last  int    `json:"last_pair"` // excluded
}

// runParts is parts.json.
type runParts struct {
	Format string      `json:"format"`
	Pairs  int         `json:"pairs"`
	Parts  []partRange `json:"parts"`
}

func stateDir(dir string) string { return filepath.Join(dir, runplan.StateDir) }

// absPath makes a configured path or glob absolute, so that the steps can
// run from any working folder (a cluster job's is not the user's).
func absPath(p string) string {
	if p == "" || filepath.IsAbs(p) {
		return p
	}
	a, err := filepath.Abs(p)
	if err != nil {
		return p
	}
	return a
}

// resolveRun returns the configuration a run records: paths absolute, the
// rig in the run folder when none is given, the stages' inputs and outputs
// set, and the per-invocation settings (workers, quiet, force) cleared.
func resolveRun(cfg Config) (Config, error) {
	if cfg.Out == "" {
		return cfg, usageError{fmt.Errorf("give the deployment's output folder with --out DIR")}
	}
	c := cfg
	c.Out = absPath(cfg.Out)
	c.Workers, c.Quiet, c.Force = 0, false, false
	r := &c.Reconstruct
	r.Frames, r.Left, r.Right, r.Timestamps = absPath(r.Frames), absPath(r.Left), absPath(r.Right), absPath(r.Timestamps)
	c.Calibrate.Left, c.Calibrate.Right = absPath(c.Calibrate.Left), absPath(c.Calibrate.Right)
	c.Track.Gauge.File = absPath(c.Track.Gauge.File)
	if r.Rig == "" {
		if c.Calibrate.Left == "" || c.Calibrate.Right == "" {
			return c, usageError{fmt.Errorf("the configuration gives neither a rig file (reconstruct.rig) nor calibration images (calibrate.left, calibrate.right)")}
		}
	} else {
		r.Rig = absPath(r.Rig)
		if _, err := os.Stat(r.Rig); err != nil {
			return c, usageError{fmt.Errorf("rig file %s cannot be read (%v); give an existing rig file, or leave reconstruct.rig empty to calibrate from calibrate.left and calibrate.right", r.Rig, errors.Unwrap(err))}
		}
	}
	if r.Frames == "" && r.Left == "" && r.Right == "" && r.Timestamps == "" {
		return c, usageError{fmt.Errorf("give the deployment's images: reconstruct.frames (a record folder) or reconstruct.left and reconstruct.right")}
	}
	c.Track.Input = filepath.Join(c.Out, runPartsDir, runIndexName)
	return c, nil
}

// rigPath is the rig file the run reconstructs with.
func rigPath(c Config) string {
	if c.Reconstruct.Rig != "" {
		return c.Reconstruct.Rig
	}
	return filepath.Join(c.Out, runRigName)
}

func pairSpec(c Config) ingest.PairSpec {
	r := c.Reconstruct
	return ingest.PairSpec{Dir: r.Frames, LeftGlob: r.Left, RightGlob: r.Right, TimestampsFile: r.Timestamps, FPS: r.FPS}
}

// prepareRun readies the run folder cfg.Out for a deployment: it refuses a
// folder that belongs to another deployment, writes the resolved
// configuration (DIR/.crestspeed/config.yaml), the identity
// (DIR/.crestspeed/run.json) and the part ranges (DIR/.crestspeed/parts.json),
// and returns the number of parts. It only lists the pairs; nothing is
// reconstructed. With cfg.Force the records of earlier steps are dropped,
// so every step is done again.
func prepareRun(ctx context.Context, con *console, cfg Config) (nParts int, err error) {
	c, err := resolveRun(cfg)
	if err != nil {
		return 0, err
	}
	dir := c.Out
	if err := checkRunFolder(dir, identityOf(c), cfg.Force); err != nil {
		return 0, err
	}
	if err := ctx.Err(); err != nil {
		return 0, err
	}
	src, err := ingest.OpenPairs(pairSpec(c))
	if err != nil {
		return 0, usageError{err}
	}
	n := src.Len()
	src.Close()
	if n == 0 {
		return 0, usageError{fmt.Errorf("the deployment has no stereo pairs that can be used (%s)", identityOf(c).describe())}
	}
	if err := os.MkdirAll(stateDir(dir), 0o755); err != nil {
		return 0, fmt.Errorf("cannot create the run folder %s: %w", dir, err)
	}
	if cfg.Force {
		if err := os.RemoveAll(filepath.Join(stateDir(dir), "steps")); err != nil {
			return 0, fmt.Errorf("cannot clear the records of the earlier run in %s: %w", dir, err)
		}
	}
	ranges := planParts(c, n, 0)
	if err := dropPartsFrom(dir, len(ranges)); err != nil {
		return 0, err
	}
	rp := runParts{Format: partsFormat, Pairs: n}
	for k, r := range ranges {
		rp.Parts = append(rp.Parts, partRange{Name: partName(k), First: r[0], Last: r[1]})
	}
	if err := writeJSON(filepath.Join(stateDir(dir), runIdentityName), identityOf(c)); err != nil {
		return 0, err
	}
	b, err := yaml.Marshal(c)
	if err != nil {
		return 0, fmt.Errorf("the configuration cannot be saved: %w", err)
	}
	header := "# The resolved configuration of this run, written by \"crestspeed run\";\n# every step reads it. Change the deployment's own file and run again\n# rather than editing this one.\n"
	if err := atomicfile.WriteFile(filepath.Join(stateDir(dir), runConfigName), append([]byte(header), b...)); err != nil {
		return 0, err
	}
	if err := writeJSON(filepath.Join(stateDir(dir), runPartsName), rp); err != nil {
		return 0, err
	}
	return len(rp.Parts), nil
}

// checkRunFolder refuses a folder holding the run of another deployment,
// or files that are no run's at all. force takes such a folder over.
func checkRunFolder(dir string, id runIdentity, force bool) error {
	b, err := os.ReadFile(filepath.Join(stateDir(dir), runIdentityName))
	switch {
	case err == nil:
		var old runIdentity
		if json.Unmarshal(b, &old) == nil && old == id {
			return nil
		}
		if force {
			return nil
		}
		return usageError{fmt.Errorf("%s holds the run of another deployment (%s, rig %s); give another --out folder for this one, or --force to replace that run", dir, old.describe(), old.Rig)}
	case !errors.Is(err, fs.ErrNotExist):
		return fmt.Errorf("cannot read %s: %w", filepath.Join(stateDir(dir), runIdentityName), err)
	}
	entries, err := os.ReadDir(dir)
	if errors.Is(err, fs.ErrNotExist) {
		return nil
	}
	if err != nil {
		return fmt.Errorf("cannot read the output folder %s: %w", dir, err)
	}
	if len(entries) > 0 && !force {
		return usageError{fmt.Errorf("%s is not empty and holds no crestspeed run; give a new or empty --out folder, or --force to use it anyway", dir)}
	}
	return nil
}

func writeJSON(path string, v any) error {
	b, err := json.MarshalIndent(v, "", "  ")
	if err != nil {
		return err
	}
	return atomicfile.WriteFile(path, append(b, '\n'))
}

// loadRun reads the resolved configuration and the part ranges of the run
// in dir.
func loadRun(dir string) (Config, runParts, error) {
	var c Config
	var rp runParts
	path := filepath.Join(stateDir(dir), runConfigName)
	b, err := os.ReadFile(path)
	if errors.Is(err, fs.ErrNotExist) {
		return c, rp, usageError{fmt.Errorf("%s holds no crestspeed run (no %s); start one with \"crestspeed run --config FILE --out %s\"", dir, filepath.Join(runplan.StateDir, runConfigName), dir)}
	}
	if err != nil {
		return c, rp, fmt.Errorf("cannot read %s: %w", path, err)
	}
	var m map[string]any
	if err := yaml.Unmarshal(b, &m); err != nil {
		return c, rp, fmt.Errorf("the run configuration %s is damaged (%v); run \"crestspeed run\" again to rewrite it", path, err)
	}
	if err := decodeInto(m, &c); err != nil {
		return c, rp, fmt.Errorf("the run configuration %s cannot be read: %s", path, cause(err))
	}
	pp := filepath.Join(stateDir(dir), runPartsName)
	b, err = os.ReadFile(pp)
	if err != nil {
		return c, rp, fmt.Errorf("the run in %s has no part list (%s): %w; run \"crestspeed run\" again", dir, pp, err)
	}
	if err := json.Unmarshal(b, &rp); err != nil || rp.Format != partsFormat || len(rp.Parts) == 0 {
		return c, rp, fmt.Errorf("the part list %s is damaged; run \"crestspeed run\" again to rewrite it", pp)
	}
	// The folder may have moved since the run was prepared.
	c.Out = absPath(dir)
	c.Track.Input = filepath.Join(c.Out, runPartsDir, runIndexName)
	return c, rp, nil
}

// runStep is one step of a run with what is needed to do it.
type runStep struct {
	runplan.Step
	kind        string
	part        int // for parts
	first, last int // pair range, for parts
	created     time.Time
}

// section returns one section of the settings map, without the given keys.
func section(all map[string]any, name string, drop ...string) map[string]any {
	m, _ := all[name].(map[string]any)
	out := map[string]any{}
	for k, v := range m {
		out[k] = v
	}
	for _, d := range drop {
		delete(out, d)
	}
	return out
}

// recordFiles are the files a run reads, listed once per invocation: the
// rig, and the two images of every pair in time order (then the timestamps
// file, when there is one).
type recordFiles struct {
	rig    []runplan.Input // empty until the rig exists
	rigMod time.Time
	pairs  []runplan.Input // 2 per pair
	stamps []runplan.Input // the timestamps file, when given
}

// listRecord lists the files of the run of c and checks that the record
// still has the pairs the run was planned for.
func listRecord(c Config, rp runParts) (*recordFiles, error) {
	rf := &recordFiles{}
	if fi, err := os.Stat(rigPath(c)); err == nil {
		in, err := runplan.ContentInput(rigPath(c))
		if err != nil {
			return nil, err
		}
		rf.rig, rf.rigMod = []runplan.Input{in}, fi.ModTime()
	}
	src, err := ingest.OpenPairs(pairSpec(c))
	if err != nil {
		return nil, usageError{err}
	}
	defer src.Close()
	if src.Len() != rp.Pairs {
		return nil, fmt.Errorf("the deployment now has %d pairs but the run was planned for %d; run \"crestspeed run\" again to plan it anew", src.Len(), rp.Pairs)
	}
	rf.pairs = make([]runplan.Input, 0, 2*src.Len())
	for i := 0; i < src.Len(); i++ {
		l, r := src.Files(i)
		for _, f := range []string{l, r} {
			in, err := runplan.FileInput(f)
			if err != nil {
				return nil, err
			}
			rf.pairs = append(rf.pairs, in)
		}
	}
	if c.Reconstruct.Timestamps != "" {
		in, err := runplan.ContentInput(c.Reconstruct.Timestamps)
		if err != nil {
			return nil, err
		}
		rf.stamps = []runplan.Input{in}
	}
	return rf, nil
}

// buildSteps lists the steps of the run of c, in order, with their
// fingerprints' ingredients. Upstream results are taken from the records
// of the steps before (an upstream step not done yet contributes a marker,
// so its dependants are not up to date either). rf == nil lists the files.
func buildSteps(c Config, rp runParts, rf *recordFiles) ([]runStep, error) {
	all := settingsMap(c)
	var steps []runStep
	if c.Reconstruct.Rig == "" {
		st, err := calibrateStep(c, all)
		if err != nil {
			return nil, err
		}
		steps = append(steps, st)
	}
	if rf == nil {
		var err error
		if rf, err = listRecord(c, rp); err != nil {
			return nil, err
		}
	}
	recon := section(all, "reconstruct", "rig", "deflate", "start_utc", "depth_m")
	steps = append(steps, runStep{kind: stepSettle, Step: runplan.Step{Name: stepSettle,
		Settings: map[string]any{"reconstruct": recon, "record_pairs": rp.Pairs},
		Inputs:   concat(rf.rig, rf.pairs, rf.stamps), Outputs: []string{runGeometryName}}})
	parts, err := partSteps(c, all, rp, rf)
	if err != nil {
		return nil, err
	}
	steps = append(steps, parts...)
	plan := runplan.Plan{Dir: c.Out, Version: version}
	var partHashes []string
	for _, p := range parts {
		partHashes = append(partHashes, outputHash(plan, p.Name))
	}
	steps = append(steps, runStep{kind: stepIndex, Step: runplan.Step{Name: stepIndex,
		Settings: map[string]any{"parts": len(rp.Parts)}, Upstream: partHashes,
		Outputs: []string{filepath.Join(runPartsDir, runIndexName)}}})
	st, err := trackStep(c, all, append([]string{outputHash(plan, stepIndex)}, partHashes...))
	if err != nil {
		return nil, err
	}
	// The report says it was made when its newest input was: the newest
	// part's creation time, so that a rerun writes the same bytes.
	for _, p := range parts {
		if p.created.After(st.created) {
			st.created = p.created
		}
	}
	return append(steps, st), nil
}

// concat joins lists of inputs into a new one.
func concat(lists ...[]runplan.Input) []runplan.Input {
	var out []runplan.Input
	for _, l := range lists {
		out = append(out, l...)
	}
	return out
}

// calibrateStep is the calibration of a run without a rig file.
func calibrateStep(c Config, all map[string]any) (runStep, error) {
	var inputs []runplan.Input
	pairs, err := calib.PairGlobs(c.Calibrate.Left, c.Calibrate.Right)
	if err != nil {
		return runStep{}, usageError{err}
	}
	for _, p := range pairs {
		for _, f := range []string{p.Left, p.Right} {
			in, err := runplan.FileInput(f)
			if err != nil {
				return runStep{}, err
			}
			inputs = append(inputs, in)
		}
	}
	outs := []string{runRigName}
	if c.Calibrate.Figures {
		w, r := calibrateOutputs(runRigName)
		outs = append(outs, w, r)
	}
	return runStep{kind: stepCalibrate, Step: runplan.Step{Name: stepCalibrate,
		Settings: map[string]any{"calibrate": section(all, "calibrate")}, Inputs: inputs, Outputs: outs}}, nil
}

// partSteps are the parts of the record. A part depends on the settled
// geometry by content, so that settling again to the same geometry keeps
// the parts, and on its own pairs' images only.
func partSteps(c Config, all map[string]any, rp runParts, rf *recordFiles) ([]runStep, error) {
	var geomIn []runplan.Input
	if in, err := runplan.ContentInput(filepath.Join(c.Out, runGeometryName)); err == nil {
		in.Path = runGeometryName
		geomIn = []runplan.Input{in}
	}
	settings := section(all, "reconstruct", "rig")
	epoch, haveEpoch, err := sourceDateEpoch()
	if err != nil {
		return nil, err
	}
	var steps []runStep
	for k, pr := range rp.Parts {
		if pr.First < 0 || pr.Last > rp.Pairs || pr.First >= pr.Last || (k > 0 && pr.First != rp.Parts[k-1].Last) {
			return nil, fmt.Errorf("the part list of the run in %s is damaged (%s: pairs %d–%d of %d); run \"crestspeed run\" again", c.Out, pr.Name, pr.First, pr.Last, rp.Pairs)
		}
		own := rf.pairs[2*pr.First : 2*pr.Last]
		// The files' creation time is that of their newest input, so that
		// the same inputs give the same bytes whenever they are processed.
		created := rf.rigMod
		for _, in := range own {
			if t := time.Unix(0, in.ModTime); t.After(created) {
				created = t
			}
		}
		if haveEpoch {
			created = epoch
		}
		created = created.UTC().Truncate(time.Second)
		name := partName(k)
		steps = append(steps, runStep{kind: stepPart, part: k, first: pr.First, last: pr.Last, created: created,
			Step: runplan.Step{Name: name,
				Settings: map[string]any{"reconstruct": settings, "site": section(all, "site"),
					"pairs": []int{pr.First, pr.Last}, "created": created.Format(time.RFC3339)},
				Inputs:  concat(geomIn, rf.rig, own, rf.stamps),
				Outputs: []string{filepath.Join(runPartsDir, name+".nc"), filepath.Join(runPartsDir, name+"-points.nc")}}})
	}
	return steps, nil
}

// trackStep is the tracking and report of the record, after upstream.
func trackStep(c Config, all map[string]any, upstream []string) (runStep, error) {
	var inputs []runplan.Input
	if g := c.Track.Gauge.File; g != "" {
		in, err := runplan.ContentInput(g)
		if err != nil {
			return runStep{}, err
		}
		inputs = append(inputs, in)
	}
	outs := inDir(runTracksDir, report.TrackOutputs...)
	if c.Track.Report {
		outs = append(outs, filepath.Join(runTracksDir, "report.html"), filepath.Join(runTracksDir, "crest_tracks.nc"))
	}
	return runStep{kind: stepTrack, Step: runplan.Step{Name: stepTrack,
		Settings: map[string]any{"track": section(all, "track", "input"), "report": section(all, "report"), "site": section(all, "site")},
		Inputs:   inputs, Upstream: upstream, Outputs: outs}}, nil
}

// outputHash is the SHA-256 of the first output recorded for a step, or a
// marker when the step has no record.
func outputHash(plan runplan.Plan, name string) string {
	rec, err := plan.Load(name)
	if err != nil || len(rec.Written) == 0 {
		return name + " not done"
	}
	return rec.Written[0].SHA256
}

// sourceDateEpoch reads SOURCE_DATE_EPOCH (seconds since 1970, the
// reproducible-builds convention), which fixes the creation time written
// into the part files.
func sourceDateEpoch() (time.Time, bool, error) {
	s := strings.TrimSpace(os.Getenv("SOURCE_DATE_EPOCH"))
	if s == "" {
		return time.Time{}, false, nil
	}
	v, err := strconv.ParseInt(s, 10, 64)
	if err != nil || v < 0 {
		return time.Time{}, false, usageError{fmt.Errorf("SOURCE_DATE_EPOCH=%q is not a whole number of seconds since 1970", s)}
	}
	return time.Unix(v, 0).UTC(), true, nil
}

// stepLogPath is the log of one step.
func stepLogPath(dir, name string) string { return filepath.Join(dir, runLogsDir, name+".log") }

// failedPath marks a step whose last attempt failed (it holds the error).
func failedPath(dir, name string) string {
	return filepath.Join(stateDir(dir), "steps", name+".failed")
}

// runLog writes the run's own lines to the console and, with a time stamp,
// to DIR/run.log.
type runLog struct {
	con *console
	f   *os.File
}

func openRunLog(con *console, dir string) (*runLog, error) {
	f, err := os.OpenFile(filepath.Join(dir, runLogName), os.O_CREATE|os.O_APPEND|os.O_WRONLY, 0o644)
	if err != nil {
		return nil, fmt.Errorf("cannot open the run log: %w", err)
	}
	return &runLog{con: con, f: f}, nil
}

func (l *runLog) logf(format string, args ...any) {
	l.con.logf(format, args...)
	fmt.Fprintf(l.f, "%s %s\n", time.Now().UTC().Format(time.RFC3339), fmt.Sprintf(format, args...))
}

func (l *runLog) close() { l.f.Close() }

// doSteps does, in order, the steps of the run in dir for which want is
// true and that are not up to date, with workers goroutines, and says for
// each why it is done (or that all are up to date).
func doSteps(ctx context.Context, con *console, dir string, workers int, want func(runStep) bool) error {
	c, rp, err := loadRun(dir)
	if err != nil {
		return err
	}
	c.Workers = workers
	for _, d := range []string{runLogsDir, runPartsDir} {
		if err := os.MkdirAll(filepath.Join(dir, d), 0o755); err != nil {
			return fmt.Errorf("cannot create %s: %w", filepath.Join(dir, d), err)
		}
	}
	log, err := openRunLog(con, dir)
	if err != nil {
		return err
	}
	defer log.close()
	plan := runplan.Plan{Dir: c.Out, Version: version}
	t0 := time.Now()
	var kept []string
	did, partsDone, partsToDo := 0, 0, 0
	var partTime time.Duration
	// The steps are rebuilt before each one, because a step's record
	// feeds the fingerprints of those after it; the record's files are
	// listed once (again after a calibration, which writes the rig).
	rf, err := listRecord(c, rp)
	if err != nil {
		return err
	}
	steps, err := buildSteps(c, rp, rf)
	if err != nil {
		return err
	}
	for _, s := range steps {
		if want(s) && s.kind == stepPart {
			if ok, _, _ := plan.Check(s.Step, false); !ok {
				partsToDo++
			}
		}
	}
	for i := range steps {
		steps, err := buildSteps(c, rp, rf)
		if err != nil {
			return err
		}
		s := steps[i]
		if !want(s) {
			continue
		}
		if err := checkBefore(plan, s, steps[:i], want); err != nil {
			return err
		}
		ok, why, err := plan.Check(s.Step, false)
		if err != nil {
			return err
		}
		if ok {
			kept = append(kept, s.Name)
			continue
		}
		log.logf("run: %s: doing it because %s", s.Name, why)
		st := time.Now()
		if err := doStep(ctx, con, c, plan, s); err != nil {
			log.logf("run: %s failed after %s: %s", s.Name, elapsed(st), sentence(err))
			return err
		}
		did++
		if s.kind == stepCalibrate {
			if rf, err = listRecord(c, rp); err != nil {
				return err
			}
		}
		msg := fmt.Sprintf("run: %s done in %s", s.Name, elapsed(st))
		if s.kind == stepPart {
			partsDone++
			partTime += time.Since(st)
			msg += fmt.Sprintf(" (pairs %d–%d); %d of %d parts to do are done", s.first, s.last-1, partsDone, partsToDo)
			if left := partsToDo - partsDone; left > 0 {
				msg += fmt.Sprintf(", about %s left for the rest", (partTime / time.Duration(partsDone) * time.Duration(left)).Round(time.Second))
			}
		}
		log.logf("%s", msg)
	}
	switch {
	case did == 0:
		log.logf("run: nothing to do: %s up to date", describeSteps(kept))
	case len(kept) > 0:
		log.logf("run: %d steps done in %s; kept %s, up to date", did, elapsed(t0), describeSteps(kept))
	default:
		log.logf("run: %d steps done in %s", did, elapsed(t0))
	}
	return nil
}

// checkBefore refuses to do s when a step it depends on, not done by this
// invocation, is not up to date: a part needs the settled geometry (not
// the other parts), the index every part.
func checkBefore(plan runplan.Plan, s runStep, before []runStep, want func(runStep) bool) error {
	for _, b := range before {
		if want(b) || (s.kind == stepPart && b.kind == stepPart) {
			continue
		}
		ok, why, err := plan.Check(b.Step, false)
		if err != nil {
			return err
		}
		if !ok {
			group := "prepare"
			switch b.kind {
			case stepPart:
				group = fmt.Sprintf("part --part %d", b.part)
			case stepIndex, stepTrack:
				group = "finish"
			}
			return incompleteError{fmt.Errorf("step %s is not up to date (%s); do it first (crestspeed run-step --step %s)", b.Name, why, group)}
		}
	}
	return nil
}

// describeSteps lists step names, parts counted rather than named.
func describeSteps(names []string) string {
	var other []string
	parts := 0
	for _, n := range names {
		if strings.HasPrefix(n, "part-") {
			parts++
			continue
		}
		other = append(other, n)
	}
	if parts > 0 {
		other = append(other, fmt.Sprintf("%d parts", parts))
	}
	if len(other) == 0 {
		return "no step"
	}
	return strings.Join(other, ", ")
}

// doStep does one step, its console output copied to DIR/logs/<step>.log,
// and records it when it succeeds (or marks it failed).
func doStep(ctx context.Context, con *console, c Config, plan runplan.Plan, s runStep) error {
	dir := c.Out
	unlock, err := lockStep(dir, s.Name)
	if err != nil {
		return err
	}
	defer unlock()
	if err := plan.Forget(s.Name); err != nil {
		return err
	}
	os.Remove(failedPath(dir, s.Name))
	lf, err := os.OpenFile(stepLogPath(dir, s.Name), os.O_CREATE|os.O_APPEND|os.O_WRONLY, 0o644)
	if err != nil {
		return fmt.Errorf("cannot open the log of step %s: %w", s.Name, err)
	}
	defer lf.Close()
	fmt.Fprintf(lf, "=== %s %s started\n", time.Now().UTC().Format(time.RFC3339), s.Name)
	sc := &console{stdout: io.MultiWriter(con.stdout, lf), stderr: io.MultiWriter(con.stderr, lf), quiet: con.quiet}
	if con.quiet {
		sc = &console{stdout: lf, stderr: lf}
	}
	err = runOne(ctx, sc, c, s)
	if err == nil {
		err = plan.Done(s.Step)
	}
	if err != nil {
		fmt.Fprintf(lf, "=== %s %s failed: %s\n", time.Now().UTC().Format(time.RFC3339), s.Name, sentence(err))
		if !errors.Is(err, context.Canceled) {
			_ = os.MkdirAll(filepath.Dir(failedPath(dir, s.Name)), 0o755)
			_ = atomicfile.WriteFile(failedPath(dir, s.Name), []byte(sentence(err)+"\n"))
		}
		return err
	}
	fmt.Fprintf(lf, "=== %s %s done\n", time.Now().UTC().Format(time.RFC3339), s.Name)
	return nil
}

// runOne does the work of one step.
func runOne(ctx context.Context, con *console, c Config, s runStep) error {
	dir := c.Out
	outs := inDir(dir, s.Outputs...)
	switch s.kind {
	case stepCalibrate:
		if err := claimOutputs(true, outs...); err != nil {
			return err
		}
		cc := c
		cc.Out = filepath.Join(dir, runRigName)
		return Calibrate(ctx, con, cc)
	case stepSettle:
		rig, opt, open, err := reconstructSetup(c)
		if err != nil {
			return err
		}
		if err := claimOutputs(true, outs...); err != nil {
			return err
		}
		update, stop := con.passes()
		opt.Progress = update
		g, err := surface.Settle(ctx, rig, open, opt)
		stop()
		if err != nil {
			return err
		}
		if g.PlaneFit != nil && g.PlaneFit.SpanS < planeSpanCaution {
			con.logf("settle: caution: the plane was fitted to pairs spanning only %.1f s, too short for the waves to average out; fit over a longer record (plane.span_s) or give the plane in the rig file", g.PlaneFit.SpanS)
		}
		con.logf("settle: %d pairs sampled over the record of %d; grid %d × %d cells of %g m (%s)",
			len(g.Samples), g.RecordPairs, g.Grid.Nx(), g.Grid.Ny(), g.Grid.Dx(), g.GridNote)
		return g.Save(outs[0])
	case stepPart:
		rig, opt, open, err := reconstructSetup(c)
		if err != nil {
			return err
		}
		geom, err := surface.LoadGeometry(filepath.Join(dir, runGeometryName))
		if err != nil {
			return err
		}
		if err := claimOutputs(true, outs...); err != nil {
			return err
		}
		if err := removeWriterTemps(outs...); err != nil {
			return err
		}
		units := ingest.DefaultTimeUnits
		if st := c.Reconstruct.StartUTC; st != "" {
			t, err := time.Parse(time.RFC3339, st)
			if err != nil {
				return usageError{fmt.Errorf("reconstruct.start_utc %q is not an RFC 3339 instant like 2026-06-14T09:00:00Z", st)}
			}
			units = "seconds since " + t.UTC().Format("2006-01-02T15:04:05Z")
		}
		sink := &surface.FileSink{Path: outs[0], PointsPath: outs[1], Options: ingest.WriteOptions{
			Deflate: c.Reconstruct.Deflate, TimeUnits: units, DepthM: c.Reconstruct.DepthM,
			Attrs:    map[string]string{"rig_file": rigPath(c), "site": c.Site.Name},
			Platform: c.Site.Platform, Georef: c.Site.georef(), Created: s.created,
		}}
		update, stop := con.passes()
		opt.Progress = hookPasses(s.Name, func(pass string, done, total int) { update(s.Name+" "+pass, done, total) })
		res, err := surface.WritePart(ctx, rig, open, geom, opt, s.first, s.last, sink)
		stop()
		if err != nil {
			return err
		}
		for _, k := range sortedSkipReasons(res.Skipped) {
			con.logf("%s: skipped %d pairs: %s", s.Name, res.Skipped[k], k)
		}
		con.logf("%s: %d maps of pairs %d–%d, %.0f %% of cells with elevations on average", s.Name, res.Frames, s.first, s.last-1, 100*res.CoverageMean)
		return nil
	case stepIndex:
		_, rp, err := loadRun(dir)
		if err != nil {
			return err
		}
		var parts []ingest.IndexPart
		for k := range rp.Parts {
			parts = append(parts, ingest.IndexPart{File: filepath.Join(dir, runPartsDir, partName(k)+".nc")})
		}
		return ingest.WriteElevationIndex(outs[0], parts)
	case stepTrack:
		tracks := filepath.Join(dir, runTracksDir)
		if err := os.MkdirAll(tracks, 0o755); err != nil {
			return err
		}
		all := inDir(tracks, report.AllTrackOutputs()...)
		all = append(all, inDir(tracks, report.ReportOutputs...)...)
		if err := claimOutputs(true, all...); err != nil {
			return err
		}
		cc := c
		cc.Out = tracks
		_, err := track(ctx, con, cc, s.created)
		return err
	}
	return fmt.Errorf("unknown step kind %q", s.kind)
}

// reconstructSetup loads the rig and the reconstruction options of a run.
func reconstructSetup(c Config) (*calib.Rig, surface.Options, surface.Opener, error) {
	opt := c.Reconstruct.surfaceOptions(max(c.Workers, 1))
	if err := opt.Validate(); err != nil {
		return nil, opt, nil, usageError{fmt.Errorf("reconstruct settings: %w", err)}
	}
	if err := c.Site.check(); err != nil {
		return nil, opt, nil, usageError{err}
	}
	rig, err := calib.LoadRig(rigPath(c))
	if err != nil {
		return nil, opt, nil, err
	}
	spec := pairSpec(c)
	open := func() (ingest.StereoSource, error) { return ingest.OpenPairs(spec) }
	return rig, opt, open, nil
}

// Which steps a run-step invocation does.
func wantPrepare(s runStep) bool { return s.kind == stepCalibrate || s.kind == stepSettle }
func wantFinish(s runStep) bool  { return s.kind == stepIndex || s.kind == stepTrack }
func wantPart(k int) func(runStep) bool {
	return func(s runStep) bool { return s.kind == stepPart && s.part == k }
}
func wantAll(runStep) bool { return true }

// passHook, when set, sees every progress update of the reconstruction of a
// part and of tracking, with the step's name: a test uses it to stop a run
// at a known point of its work.
var passHook func(step, pass string, done, total int)

// hookPasses returns update, seen by passHook first when one is set.
func hookPasses(step string, update func(pass string, done, total int)) func(pass string, done, total int) {
	if passHook == nil {
		return update
	}
	return func(pass string, done, total int) {
		passHook(step, pass, done, total)
		update(pass, done, total)
	}
}

// removeWriterTemps removes the temporaries the NetCDF writer
// (internal/netcdf) leaves beside a file when its process is killed:
// NAME.part-<16 hex digits>.
func removeWriterTemps(paths ...string) error {
	for _, p := range paths {
		matches, err := filepath.Glob(p + ".part-" + strings.Repeat("[0-9a-f]", 16))
		if err != nil {
			return err
		}
		for _, m := range matches {
			if err := os.Remove(m); err != nil && !errors.Is(err, fs.ErrNotExist) {
				return fmt.Errorf("cannot remove the temporary %s of a stopped run: %w", m, err)
			}
		}
	}
	return nil
}

// dropPartsFrom removes the files and records of the parts numbered n and
// above, left by an earlier plan of the run with more parts.
func dropPartsFrom(dir string, n int) error {
	plan := runplan.Plan{Dir: dir}
	for k := n; ; k++ {
		name := partName(k)
		files := []string{filepath.Join(dir, runPartsDir, name+".nc"), filepath.Join(dir, runPartsDir, name+"-points.nc")}
		_, errRec := plan.Load(name)
		_, errFile := os.Stat(files[0])
		if errors.Is(errRec, fs.ErrNotExist) && errors.Is(errFile, fs.ErrNotExist) {
			return nil
		}
		for _, f := range append(files, failedPath(dir, name)) {
			if err := os.Remove(f); err != nil && !errors.Is(err, fs.ErrNotExist) {
				return fmt.Errorf("cannot remove %s of the earlier plan of the run: %w", f, err)
			}
		}
		if err := plan.Forget(name); err != nil {
			return err
		}
	}
}

// lockPath is the lock file of a step: held (flock) by the process doing
// it, released by the system when that process ends, however it ends.
func lockPath(dir, name string) string {
	return filepath.Join(stateDir(dir), "locks", name+".lock")
}

// lockStep takes the lock of a step, refusing when another process holds
// it.
func lockStep(dir, name string) (unlock func(), err error) {
	path := lockPath(dir, name)
	if err := os.MkdirAll(filepath.Dir(path), 0o755); err != nil {
		return nil, fmt.Errorf("cannot create %s: %w", filepath.Dir(path), err)
	}
	f, err := os.OpenFile(path, os.O_CREATE|os.O_RDWR, 0o644)
	if err != nil {
		return nil, fmt.Errorf("cannot open the lock of step %s: %w", name, err)
	}
	// A few tries: "status" holds the lock for an instant when it looks.
	for try := 0; try < 20; try++ {
		if err = syscall.Flock(int(f.Fd()), syscall.LOCK_EX|syscall.LOCK_NB); !errors.Is(err, syscall.EWOULDBLOCK) {
			break
		}
		time.Sleep(50 * time.Millisecond)
	}
	if err != nil {
		f.Close()
		if errors.Is(err, syscall.EWOULDBLOCK) {
			return nil, incompleteError{fmt.Errorf("step %s is being done by another crestspeed process; wait for it to end (crestspeed status %s) or stop it", name, dir)}
		}
		return nil, fmt.Errorf("cannot lock step %s: %w", name, err)
	}
	return func() {
		syscall.Flock(int(f.Fd()), syscall.LOCK_UN)
		f.Close()
	}, nil
}

// stepRunning reports whether a process holds the lock of a step.
func stepRunning(dir, name string) bool {
	f, err := os.Open(lockPath(dir, name))
	if err != nil {
		return false
	}
	defer f.Close()
	if err := syscall.Flock(int(f.Fd()), syscall.LOCK_SH|syscall.LOCK_NB); err != nil {
		return errors.Is(err, syscall.EWOULDBLOCK)
	}
	syscall.Flock(int(f.Fd()), syscall.LOCK_UN)
	return false
}
