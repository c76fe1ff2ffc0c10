package ingest

import (
	"bufio"
	"bytes"
	"encoding/json"
	"errors"
	"fmt"
	"io"
	"maps"
	"math"
	"os"
	"path/filepath"
	"slices"
	"strings"
	"time"

	"crestspeed/internal/atomicfile"
)

// ElevationStream is what the later stages read an elevation-map record
// through: one file ([ElevationSource]) or several files in time order
// ([MultiSource]) look the same.
type ElevationStream interface {
	Meta() ElevationMeta
	FrameInterval() float64
	Gaps() []Gap
	Skipped() SkipCounts
	Path() string
	Rewind()
	Next(*Frame) error
	Close() error
	// Paths are the files of the record, in time order.
	Paths() []string
	// Warnings say where reading is slow or degraded (not fatal).
	Warnings() []string
	// MaskedCells counts the cells masked on reading, by reason.
	MaskedCells() CellCounts
}

var (
	_ ElevationStream = (*ElevationSource)(nil)
	_ ElevationStream = (*MultiSource)(nil)
)

// OpenElevations opens an elevation-map record given as one file, a glob
// of files (a pattern with *, ? or [), or an index of part files (a name
// ending in .json or .txt; see [ReadElevationIndex]).
func OpenElevations(input string, opt ElevationOptions) (ElevationStream, error) {
	switch {
	case strings.ContainsAny(input, "*?["):
		return OpenElevationGlob(input, opt)
	case strings.HasSuffix(input, ".json") || strings.HasSuffix(input, ".txt"):
		return OpenElevationIndex(input, opt)
	}
	return OpenElevation(input, opt)
}

// MultiSource reads the frames of several elevation-map files, one after
// the other in time order, as one record, with no merged copy: one per
// frame, per hour or per part of a partitioned run. The files must agree
// on the grid, the elevation variable, its units, the foam mask and the
// water depth; their time axes join into one, with dropped-frame gaps found
// across file boundaries like within a file. Times of files whose units
// name another reference instant are shifted onto the first file's.
//
// One file is open at a time. Skips and masked cells are counted per file
// and added up; the limit on unreadable frames applies to the whole record.
// It is not safe for concurrent use.
type MultiSource struct {
	name    string
	paths   []string
	opt     ElevationOptions
	meta    ElevationMeta
	gaps    []Gap
	dt      float64
	starts  []int     // record index of each file's first frame
	offsets []float64 // seconds added to each file's own times
	limit   int       // unreadable frames allowed

	cur     *ElevationSource
	curFile int
	next    int // record index of the next frame to examine

	skips    []SkipCounts // per file, the most counted in any pass
	masked   [][3]int64
	warnings []string
}

// OpenElevationGlob opens the files matching a glob pattern as one record.
// They are put in time order by their first times, which must not
// overlap.
func OpenElevationGlob(pattern string, opt ElevationOptions) (*MultiSource, error) {
	paths, err := filepath.Glob(pattern)
	if err != nil {
		return nil, fmt.Errorf("ingest: elevation-map pattern %q is malformed: %v", pattern, err)
	}
	if len(paths) == 0 {
		return nil, fmt.Errorf("ingest: no file matches the elevation-map pattern %q; check the pattern and the folder", pattern)
	}
	slices.Sort(paths)
	return openMulti(pattern, paths, opt, true)
}

// OpenElevationFiles opens files, given in time order, as one record.
func OpenElevationFiles(paths []string, opt ElevationOptions) (*MultiSource, error) {
	if len(paths) == 0 {
		return nil, errors.New("ingest: no elevation-map files were given")
	}
	return openMulti(paths[0], slices.Clone(paths), opt, false)
}

// OpenElevationIndex opens the part files listed in an index (see
// [ReadElevationIndex]) as one record.
func OpenElevationIndex(path string, opt ElevationOptions) (*MultiSource, error) {
	parts, err := ReadElevationIndex(path)
	if err != nil {
		return nil, err
	}
	paths := make([]string, len(parts))
	for i, p := range parts {
		paths[i] = p.File
	}
	m, err := openMulti(path, paths, opt, false)
	if err != nil {
		return nil, err
	}
	for i, p := range parts {
		n := m.fileFrames(i)
		if p.Frames > 0 && p.Frames != n {
			return nil, fmt.Errorf("ingest: index %s lists %d frames for %s but the file holds %d; the part was rewritten or the index is stale, write the index again", path, p.Frames, p.File, n)
		}
		if p.FirstFrame != nil && *p.FirstFrame != m.starts[i] {
			return nil, fmt.Errorf("ingest: index %s says %s starts at frame %d but the parts before it hold %d frames; write the index again", path, p.File, *p.FirstFrame, m.starts[i])
		}
	}
	return m, nil
}

// fileFrames returns the number of frames of file i.
func (m *MultiSource) fileFrames(i int) int {
	end := len(m.meta.Times)
	if i+1 < len(m.starts) {
		end = m.starts[i+1]
	}
	return end - m.starts[i]
}

// scanned is what openMulti learns about one file.
type scanned struct {
	path   string
	meta   ElevationMeta
	eta    string
	unit   float64
	ref    time.Time // reference instant of the time units
	hasRef bool
	warn   []string
}

func openMulti(name string, paths []string, opt ElevationOptions, sortByTime bool) (*MultiSource, error) {
	o, err := opt.withDefaults()
	if err != nil {
		return nil, err
	}
	files := make([]scanned, len(paths))
	for i, p := range paths {
		s, err := openElevation(p, o, true)
		if err != nil {
			return nil, err
		}
		files[i] = scanned{path: p, meta: s.meta, eta: s.names.Eta, unit: s.unit, warn: s.warnings}
		files[i].ref, files[i].hasRef = timeReference(s.meta.TimeUnits)
		s.Close()
	}
	first := files[0]
	for _, f := range files[1:] {
		if err := agree(first, f); err != nil {
			return nil, err
		}
	}
	m := &MultiSource{name: name, opt: o}
	offsets := make([]float64, len(files))
	for i, f := range files {
		if f.meta.TimeUnits == first.meta.TimeUnits {
			continue
		}
		if !first.hasRef || !f.hasRef {
			return nil, fmt.Errorf("ingest: %s has time units %q but %s has %q, and the reference instants cannot be compared; write the files with the same time units",
				f.path, f.meta.TimeUnits, first.path, first.meta.TimeUnits)
		}
		offsets[i] = f.ref.Sub(first.ref).Seconds()
	}
	order := make([]int, len(files))
	for i := range order {
		order[i] = i
	}
	if sortByTime {
		slices.SortStableFunc(order, func(a, b int) int {
			ta, tb := files[a].meta.Times[0]+offsets[a], files[b].meta.Times[0]+offsets[b]
			switch {
			case ta < tb:
				return -1
			case ta > tb:
				return 1
			}
			return 0
		})
	}
	var times []float64
	for j, i := range order {
		f := files[i]
		if j > 0 {
			prev := files[order[j-1]]
			last := prev.meta.Times[len(prev.meta.Times)-1] + offsets[order[j-1]]
			if t0 := f.meta.Times[0] + offsets[i]; !(t0 > last) {
				return nil, fmt.Errorf("ingest: %s starts at %g s, not after the end of %s (%g s); give the files in time order, without overlaps", f.path, t0, prev.path, last)
			}
		}
		m.paths = append(m.paths, f.path)
		m.starts = append(m.starts, len(times))
		m.offsets = append(m.offsets, offsets[i])
		for _, t := range f.meta.Times {
			times = append(times, t+offsets[i])
		}
		for _, w := range f.warn {
			if !slices.Contains(m.warnings, w) {
				m.warnings = append(m.warnings, w)
			}
		}
	}
	m.meta = first.meta
	m.meta.Attrs = maps.Clone(first.meta.Attrs)
	m.meta.Times = times
	if len(times) < 2 {
		return nil, fmt.Errorf("ingest: %s holds %d frame(s); at least 2 are needed to follow the surface in time", name, len(times))
	}
	m.dt, m.gaps = findGaps(times, o.GapFactor)
	m.limit = int(math.Ceil(o.MaxUnreadableFraction * float64(len(times))))
	m.skips = make([]SkipCounts, len(m.paths))
	m.masked = make([][3]int64, len(m.paths))
	m.curFile = -1
	return m, nil
}

// agree says in one sentence how file f differs from the first file, or
// nil.
func agree(first, f scanned) error {
	differ := func(what, a, b string) error {
		return fmt.Errorf("ingest: %s differs from %s in %s (%s against %s); the files of one record must share it", f.path, first.path, what, b, a)
	}
	g0, g := first.meta.Grid, f.meta.Grid
	sameAxis := func(a, b []float64) bool {
		if len(a) != len(b) {
			return false
		}
		tol := spacingTol * math.Abs(spacing(a))
		for i := range a {
			if math.Abs(a[i]-b[i]) > tol {
				return false
			}
		}
		return true
	}
	switch {
	case !sameAxis(g0.X, g.X) || !sameAxis(g0.Y, g.Y):
		return differ("its grid", gridText(g0), gridText(g))
	case f.eta != first.eta:
		return differ("the elevation variable", first.eta, f.eta)
	case f.unit != first.unit:
		return differ("the units of the elevation", fmt.Sprintf("%g m", first.unit), fmt.Sprintf("%g m", f.unit))
	case f.meta.HasFoam != first.meta.HasFoam:
		return differ("having a foam mask", fmt.Sprint(first.meta.HasFoam), fmt.Sprint(f.meta.HasFoam))
	case f.meta.DepthM != first.meta.DepthM:
		return differ("the water depth", fmt.Sprintf("%g m", first.meta.DepthM), fmt.Sprintf("%g m", f.meta.DepthM))
	}
	return nil
}

func gridText(g Grid) string {
	return fmt.Sprintf("%d x %d cells from (%g, %g) m at %g x %g m", g.Nx(), g.Ny(), g.X[0], g.Y[0], g.Dx(), g.Dy())
}

// timeReference parses the reference instant of CF time units
// ("seconds since 2026-06-01T00:00:00Z"); an instant without a zone is
// UTC, as in CF (and UDUNITS).
func timeReference(units string) (time.Time, bool) {
	i := strings.Index(strings.ToLower(units), " since ")
	if i < 0 {
		return time.Time{}, false
	}
	s := strings.TrimSpace(units[i+len(" since "):])
	for _, layout := range []string{time.RFC3339Nano, "2006-01-02T15:04:05", "2006-01-02 15:04:05Z07:00", "2006-01-02 15:04:05",
		"2006-01-02 15:04:05 Z07:00", "2006-01-02T15:04Z07:00", "2006-01-02 15:04", "2006-01-02"} {
		if t, err := time.Parse(layout, s); err == nil {
			return t, true
		}
	}
	if strings.HasSuffix(s, " UTC") || strings.HasSuffix(s, " utc") {
		return timeReference(units[:len(units)-4])
	}
	return time.Time{}, false
}

// Meta returns a description of the whole record (grid, depth, title and
// attributes of the first file). The slices and map are copies.
func (m *MultiSource) Meta() ElevationMeta { return m.meta.clone() }

// Path returns the pattern, index or first file the record was opened
// from.
func (m *MultiSource) Path() string { return m.name }

// Paths returns the files of the record in time order.
func (m *MultiSource) Paths() []string { return slices.Clone(m.paths) }

// FrameInterval returns the median time step of the whole record.
func (m *MultiSource) FrameInterval() float64 { return m.dt }

// Gaps returns the dropped-frame gaps of the whole record, across file
// boundaries too; AfterIndex counts frames of the record.
func (m *MultiSource) Gaps() []Gap { return slices.Clone(m.gaps) }

// Warnings returns the files' warnings, each once.
func (m *MultiSource) Warnings() []string { return slices.Clone(m.warnings) }

// settle keeps the counts of the open file.
func (m *MultiSource) settle() {
	if m.cur == nil {
		return
	}
	for k, v := range m.cur.frameSkips() {
		if v > m.skips[m.curFile][k] {
			if m.skips[m.curFile] == nil {
				m.skips[m.curFile] = SkipCounts{}
			}
			m.skips[m.curFile][k] = v
		}
	}
	for r, v := range m.cur.masked {
		m.masked[m.curFile][r] = max(m.masked[m.curFile][r], v)
	}
}

// Skipped returns the frames not delivered over the whole record, by
// reason (see [ElevationSource.Skipped]).
func (m *MultiSource) Skipped() SkipCounts {
	m.settle()
	c := SkipCounts{}
	for _, s := range m.skips {
		for k, v := range s {
			c[k] += v
		}
	}
	addGapSkips(c, m.gaps)
	return c
}

// MaskedCells returns the cells masked over the whole record, by reason.
func (m *MultiSource) MaskedCells() CellCounts {
	m.settle()
	c := CellCounts{}
	for _, f := range m.masked {
		for i, r := range []string{MaskValidRange, MaskBound, MaskSpike} {
			if f[i] > 0 {
				c[r] += f[i]
			}
		}
	}
	return c
}

// Rewind makes the next call to Next return the first frame again.
func (m *MultiSource) Rewind() {
	m.next = 0
	if m.cur != nil && m.curFile == 0 {
		m.cur.Rewind()
		return
	}
	m.closeCur()
}

func (m *MultiSource) closeCur() error {
	if m.cur == nil {
		return nil
	}
	m.settle()
	err := m.cur.Close()
	m.cur, m.curFile = nil, -1
	return err
}

// Close releases the open file. Next fails after Close.
func (m *MultiSource) Close() error {
	err := m.closeCur()
	m.paths = nil
	return err
}

// fileOf returns the file holding record frame k.
func (m *MultiSource) fileOf(k int) int {
	i, found := slices.BinarySearch(m.starts, k)
	if !found {
		i--
	}
	return i
}

// Next reads the next frame of the record with at least one known cell;
// see [ElevationSource.Next]. Frame.Index counts frames of the whole
// record and Frame.Time is on the first file's time axis.
func (m *MultiSource) Next(f *Frame) error {
	if m.paths == nil {
		return fmt.Errorf("ingest: %s: elevation source is closed", m.name)
	}
	for m.next < len(m.meta.Times) {
		fi := m.fileOf(m.next)
		if m.cur == nil || m.curFile != fi {
			if err := m.closeCur(); err != nil {
				return err
			}
			s, err := openElevation(m.paths[fi], m.opt, true)
			if err != nil {
				return fmt.Errorf("ingest: %s changed while the record was read: %w", m.paths[fi], err)
			}
			s.noLimit = true
			m.cur, m.curFile = s, fi
		}
		local := m.next - m.starts[fi]
		if m.cur.next != local {
			m.cur.seek(local)
		}
		err := m.cur.Next(f)
		if err := m.checkUnreadable(); err != nil {
			return err
		}
		if err == io.EOF {
			m.next = m.starts[fi] + m.fileFrames(fi)
			continue
		}
		if err != nil {
			return err
		}
		f.Index += m.starts[fi]
		f.Time = m.meta.Times[f.Index]
		m.next = f.Index + 1
		return nil
	}
	return io.EOF
}

// checkUnreadable applies the record-wide limit on unreadable frames.
func (m *MultiSource) checkUnreadable() error {
	m.settle()
	bad := 0
	first := ""
	for i, s := range m.skips {
		bad += s[SkipUnreadableFrame]
		if first == "" && s[SkipUnreadableFrame] > 0 {
			first = m.paths[i]
		}
	}
	if bad > m.limit {
		return fmt.Errorf("ingest: %s: %d of its %d frames are unreadable (the first in %s), more than the %d (%g %%) that max_unreadable_fraction lets be skipped; copy the damaged files again or repair them",
			m.name, bad, len(m.meta.Times), first, m.limit, 100*m.opt.MaxUnreadableFraction)
	}
	return nil
}

// seek makes the next call to Next start at frame k of the file.
func (s *ElevationSource) seek(k int) { s.next = k }

// IndexPart is one part file of a record listed in an index.
type IndexPart struct {
	// File is the part's path; in the index file it is relative to the
	// index's folder (or absolute).
	File string `json:"file"`
	// FirstFrame and Frames, when given, are checked against the files:
	// the record index of the part's first frame and its number of frames.
	FirstFrame *int `json:"first_frame,omitempty"`
	Frames     int  `json:"frames,omitempty"`
}

// elevationIndex is the JSON form of an index.
type elevationIndex struct {
	Format string      `json:"format"`
	Parts  []IndexPart `json:"parts"`
}

// IndexFormat names the JSON index format written by [WriteElevationIndex].
const IndexFormat = "crestspeed elevation-map parts, version 1"

// ReadElevationIndex reads an index of part files: either JSON,
// {"format": IndexFormat, "parts": [{"file": "part-0000.nc", "first_frame": 0,
// "frames": 250}, ...]}, or plain text with one file per line (blank lines
// and lines starting with # are ignored). Relative paths are taken from the
// index's folder. The parts are returned in the index's order, which must
// be time order.
func ReadElevationIndex(path string) ([]IndexPart, error) {
	data, err := os.ReadFile(path)
	if err != nil {
		return nil, fmt.Errorf("ingest: cannot read the elevation-map index %s: %v", path, err)
	}
	var parts []IndexPart
	if t := bytes.TrimSpace(data); len(t) > 0 && t[0] == '{' {
		var idx elevationIndex
		dec := json.NewDecoder(bytes.NewReader(data))
		dec.DisallowUnknownFields()
		if err := dec.Decode(&idx); err != nil {
			return nil, fmt.Errorf("ingest: elevation-map index %s is not valid JSON of the parts format: %v", path, err)
		}
		if idx.Format != IndexFormat {
			return nil, fmt.Errorf("ingest: elevation-map index %s has format %q; expected %q", path, idx.Format, IndexFormat)
		}
		parts = idx.Parts
	} else {
		sc := bufio.NewScanner(bytes.NewReader(data))
		for sc.Scan() {
			line := strings.TrimSpace(sc.Text())
			if line == "" || strings.HasPrefix(line, "#") {
				continue
			}
			parts = append(parts, IndexPart{File: line})
		}
		if err := sc.Err(); err != nil {
			return nil, fmt.Errorf("ingest: cannot read the elevation-map index %s: %v", path, err)
		}
	}
	if len(parts) == 0 {
		return nil, fmt.Errorf("ingest: elevation-map index %s lists no part files", path)
	}
	dir := filepath.Dir(path)
	for i, p := range parts {
		if p.File == "" {
			return nil, fmt.Errorf("ingest: elevation-map index %s: part %d has no file name", path, i)
		}
		if !filepath.IsAbs(p.File) {
			parts[i].File = filepath.Join(dir, p.File)
		}
	}
	return parts, nil
}

// WriteElevationIndex writes a JSON index of part files (paths relative to
// the index's folder when they lie under it) atomically: a temporary file,
// flushed, renamed into place, the folder flushed.
func WriteElevationIndex(path string, parts []IndexPart) error {
	dir := filepath.Dir(path)
	idx := elevationIndex{Format: IndexFormat, Parts: make([]IndexPart, len(parts))}
	for i, p := range parts {
		if rel, err := filepath.Rel(dir, p.File); err == nil && !strings.HasPrefix(rel, "..") {
			p.File = filepath.ToSlash(rel)
		}
		idx.Parts[i] = p
	}
	data, err := json.MarshalIndent(idx, "", "  ")
	if err != nil {
		return fmt.Errorf("ingest: cannot encode the index %s: %v", path, err)
	}
	data = append(data, '\n')
	if err := atomicfile.WriteFile(path, data); err != nil {
		return fmt.Errorf("ingest: cannot write the index %s: %w", path, err)
	}
	return nil
}
