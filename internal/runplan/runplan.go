// Package runplan records the steps of a long run — calibration, settling
// the record's geometry, each part of the reconstruction, tracking — so
// that a rerun does only what is missing or out of date, and says why.
//
// # Model
//
// A Step names what it depends on: the settings it reads (a map, compared
// key by key), its input files (by path, size and modification time, or by
// content for small files), the fingerprints of the steps before it, and
// the files it writes. Its fingerprint is a SHA-256 of all of that and of
// the tool's version. When a step's outputs are complete, Done writes a
// record beside the run — the fingerprint, what went into it and the
// SHA-256 of every output — atomically. Check compares a step with its
// record: a step is up to date when the fingerprint matches and every
// output is still there with the size and (optionally) content recorded;
// otherwise it returns, in one clause, the first reason it is not.
package runplan

import (
	"crypto/sha256"
	"encoding/hex"
	"encoding/json"
	"errors"
	"fmt"
	"io"
	"io/fs"
	"os"
	"path/filepath"
	"sort"
	"strings"
	"syscall"
	"time"

	"crestspeed/internal/atomicfile"
)

// Input is a file a step reads.
type Input struct {
	Path string `json:"path"`
	Size int64  `json:"size"`
	// ModTime is the modification time, Unix nanoseconds; Hash the
	// SHA-256 of the content, for inputs given by content (then ModTime
	// is 0).
	ModTime int64  `json:"mtime_ns,omitempty"`
	Hash    string `json:"sha256,omitempty"`
}

// Step is one unit of work of a run.
type Step struct {
	Name     string         `json:"name"`
	Settings map[string]any `json:"settings"`
	Inputs   []Input        `json:"inputs"`
	Upstream []string       `json:"upstream,omitempty"`
	// Outputs are the files the step writes, relative to the run folder.
	Outputs []string `json:"outputs"`
}

// Output is a written file of a finished step.
type Output struct {
	Path   string `json:"path"`
	Size   int64  `json:"size"`
	SHA256 string `json:"sha256"`
}

// Record is what Done writes for a finished step.
type Record struct {
	Step
	Version     string   `json:"version"`
	Fingerprint string   `json:"fingerprint"`
	Written     []Output `json:"written"`
	Finished    string   `json:"finished"`
}

// Plan is the record-keeping of one run folder.
type Plan struct {
	// Dir is the run folder; records live in Dir/.crestspeed/steps.
	Dir string
	// Version is the tool's version: a new version redoes every step.
	Version string
}

// StateDir is the folder, inside a run folder, of the run's own records.
const StateDir = ".crestspeed"

func (p Plan) recordPath(name string) string {
	return filepath.Join(p.Dir, StateDir, "steps", name+".json")
}

// FileInput describes a file by path, size and modification time (cheap:
// the content is not read).
func FileInput(path string) (Input, error) {
	fi, err := os.Stat(path)
	if err != nil {
		return Input{}, fmt.Errorf("input %s cannot be read: %w", path, err)
	}
	return Input{Path: path, Size: fi.Size(), ModTime: fi.ModTime().UnixNano()}, nil
}

// ContentInput describes a file by its content (for small files whose
// content decides the result, such as a rig file).
func ContentInput(path string) (Input, error) {
	h, n, err := hashFile(path)
	if err != nil {
		return Input{}, fmt.Errorf("input %s cannot be read: %w", path, err)
	}
	return Input{Path: path, Size: n, Hash: h}, nil
}

// Fingerprint returns the step's fingerprint for the given tool version.
func (s Step) Fingerprint(version string) string {
	type canon struct {
		Version  string         `json:"version"`
		Name     string         `json:"name"`
		Settings map[string]any `json:"settings"`
		Inputs   []Input        `json:"inputs"`
		Upstream []string       `json:"upstream"`
		Outputs  []string       `json:"outputs"`
	}
	// encoding/json writes map keys in sorted order, so the encoding is
	// canonical for equal values.
	b, err := json.Marshal(canon{version, s.Name, s.Settings, s.Inputs, s.Upstream, s.Outputs})
	if err != nil {
		panic("runplan: step settings cannot be encoded: " + err.Error()) // a caller's type defect
	}
	sum := sha256.Sum256(b)
	return hex.EncodeToString(sum[:])
}

// Check tells whether s is up to date in the run folder. When it is not,
// why says in one clause what differs from the recorded run (or that
// there is no record). With verify the outputs' contents are hashed too,
// otherwise only their sizes are compared.
func (p Plan) Check(s Step, verify bool) (upToDate bool, why string, err error) {
	rec, err := p.Load(s.Name)
	if errors.Is(err, fs.ErrNotExist) {
		return false, "not done yet", nil
	}
	if err != nil {
		return false, "", err
	}
	if fp := s.Fingerprint(p.Version); fp != rec.Fingerprint {
		return false, difference(rec, s, p.Version), nil
	}
	for _, o := range rec.Written {
		path := filepath.Join(p.Dir, o.Path)
		fi, err := os.Stat(path)
		switch {
		case errors.Is(err, fs.ErrNotExist), errors.Is(err, syscall.ENOTDIR):
			return false, "its output " + o.Path + " is missing", nil
		case err != nil:
			return false, "", fmt.Errorf("output %s cannot be checked: %w", path, err)
		case fi.Size() != o.Size:
			return false, "its output " + o.Path + " changed since it was written", nil
		}
		if verify {
			h, _, err := hashFile(path)
			if err != nil {
				return false, "", err
			}
			if h != o.SHA256 {
				return false, "its output " + o.Path + " changed since it was written", nil
			}
		}
	}
	return true, "", nil
}

// Done records that s finished: its outputs exist and are hashed.
func (p Plan) Done(s Step) error {
	rec := Record{Step: s, Version: p.Version, Fingerprint: s.Fingerprint(p.Version),
		Finished: time.Now().UTC().Format(time.RFC3339)}
	for _, o := range s.Outputs {
		h, n, err := hashFile(filepath.Join(p.Dir, o))
		if err != nil {
			return fmt.Errorf("step %s: output %s cannot be recorded: %w", s.Name, o, err)
		}
		rec.Written = append(rec.Written, Output{Path: o, Size: n, SHA256: h})
	}
	b, err := json.MarshalIndent(rec, "", "  ")
	if err != nil {
		return err
	}
	path := p.recordPath(s.Name)
	if err := os.MkdirAll(filepath.Dir(path), 0o755); err != nil {
		return err
	}
	return atomicfile.WriteFile(path, append(b, '\n'))
}

// Forget removes the record of a step (before it is redone).
func (p Plan) Forget(name string) error {
	err := os.Remove(p.recordPath(name))
	if errors.Is(err, fs.ErrNotExist) {
		return nil
	}
	return err
}

// Load reads the record of the named step.
func (p Plan) Load(name string) (*Record, error) {
	b, err := os.ReadFile(p.recordPath(name))
	if err != nil {
		return nil, err
	}
	var rec Record
	if err := json.Unmarshal(b, &rec); err != nil {
		return nil, fmt.Errorf("the record of step %s (%s) is damaged: %w; remove it to redo the step", name, p.recordPath(name), err)
	}
	return &rec, nil
}

// Fingerprint returns the recorded fingerprint of a finished step, "" when
// it has no record.
func (p Plan) Fingerprint(name string) string {
	rec, err := p.Load(name)
	if err != nil {
		return ""
	}
	return rec.Fingerprint
}

// difference says what differs between a record and a step.
func difference(rec *Record, s Step, version string) string {
	if rec.Version != version {
		return fmt.Sprintf("it was done by version %s and this is %s", rec.Version, version)
	}
	if keys := changedSettings(rec.Settings, s.Settings); len(keys) > 0 {
		more := ""
		if len(keys) > 3 {
			more = fmt.Sprintf(" and %d more", len(keys)-3)
			keys = keys[:3]
		}
		return "the settings " + strings.Join(keys, ", ") + more + " changed"
	}
	if what := changedInputs(rec.Inputs, s.Inputs); what != "" {
		return what
	}
	if strings.Join(rec.Upstream, ",") != strings.Join(s.Upstream, ",") {
		return "a step it depends on was redone"
	}
	return "its outputs are named differently"
}

// changedSettings lists the dotted keys whose values differ, in order.
func changedSettings(a, b map[string]any) []string {
	fa, fb := map[string]string{}, map[string]string{}
	flatten("", a, fa)
	flatten("", b, fb)
	var keys []string
	for k, v := range fa {
		if w, ok := fb[k]; !ok || w != v {
			keys = append(keys, k)
		}
	}
	for k := range fb {
		if _, ok := fa[k]; !ok {
			keys = append(keys, k)
		}
	}
	sort.Strings(keys)
	return keys
}

func flatten(prefix string, m map[string]any, out map[string]string) {
	for k, v := range m {
		key := k
		if prefix != "" {
			key = prefix + "." + k
		}
		if sub, ok := v.(map[string]any); ok {
			flatten(key, sub, out)
			continue
		}
		b, _ := json.Marshal(v)
		out[key] = string(b)
	}
}

// changedInputs says which input differs first, "" when none does.
func changedInputs(a, b []Input) string {
	byPath := map[string]Input{}
	for _, in := range a {
		byPath[in.Path] = in
	}
	added := 0
	for _, in := range b {
		old, ok := byPath[in.Path]
		if !ok {
			added++
			continue
		}
		if old != in {
			return "its input " + in.Path + " changed"
		}
		delete(byPath, in.Path)
	}
	if len(byPath) > 0 {
		for p := range byPath {
			return "its input " + p + " is no longer part of it"
		}
	}
	if added > 0 {
		return fmt.Sprintf("%d new input files belong to it", added)
	}
	return ""
}

// hashFile returns the SHA-256 and size of a file.
func hashFile(path string) (string, int64, error) {
	f, err := os.Open(path)
	if err != nil {
		return "", 0, err
	}
	defer f.Close()
	h := sha256.New()
	n, err := io.Copy(h, f)
	if err != nil {
		return "", 0, err
	}
	return hex.EncodeToString(h.Sum(nil)), n, nil
}
