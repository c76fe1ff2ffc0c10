package ingest

import (
	"errors"
	"fmt"
	"io"
	"os"
	"path/filepath"
	"slices"
	"strings"
	"time"
)

// Reasons for skipping point files, used in [SkipCounts] besides those of
// the names and the timestamps file.
const (
	// SkipBadPoints: a point file that cannot be read: missing,
	// unreadable, of an unknown format, or malformed (the detail gives
	// the line or byte offset).
	SkipBadPoints = "unreadable or malformed point file"
	// SkipTooManyPoints: a point file holding more points than
	// max_points.
	SkipTooManyPoints = "more points than max_points in one file"
)

// DefaultMaxPoints is the default largest number of points read from one
// file: 20 million, 480 MB as float64 coordinates. A stereo pair of 5
// megapixel cameras gives at most 5 million points (common practice).
const DefaultMaxPoints = 20_000_000

// Point-file formats for [PointSpec.Format].
const (
	FormatAuto = ""
	FormatPLY  = "ply"
	FormatXYZ  = "xyz"
)

// PointSpec says where the point clouds of a record are, one file per
// frame, and how to time them. The yaml names are those of the settings.
type PointSpec struct {
	// Glob is a path/filepath.Match pattern for the point files, for
	// example "run1/cloud_*.ply".
	Glob string `yaml:"points"`
	// TimestampsFile is an optional CSV file whose header names the
	// columns frame, time_s and/or utc, and file (the point file,
	// relative to the CSV file's folder unless absolute), in any order.
	// It gives the times; with Glob, the pattern selects its rows.
	TimestampsFile string `yaml:"timestamps"`
	// FPS is the frame rate in Hz, the time base when the names carry
	// bare frame numbers and there is no timestamps file. 0 = none.
	FPS float64 `yaml:"fps"`
	// StartUTC, when set, is the instant of time 0 (ISO 8601, see
	// [ParseInstant]). Default "": from the utc column, or none.
	StartUTC string `yaml:"start_utc"`
	// MaxSpanS is the longest plausible record in seconds (see
	// [PairSpec.MaxSpanS]); 0 means [DefaultMaxSpanS].
	MaxSpanS float64 `yaml:"max_record_span_s"`
	// Format is "ply", "xyz" (text columns) or "" to tell by the
	// extension: .ply is PLY; .xyz, .txt, .csv, .tsv and .asc are text.
	// Default "".
	Format string `yaml:"format"`
	// XYZ says how to read text columns.
	XYZ XYZOptions `yaml:"xyz"`
	// MaxPoints is the largest number of points read from one file; a
	// file with more is skipped and counted. 0 means [DefaultMaxPoints].
	MaxPoints int `yaml:"max_points"`
}

// DefaultPointSpec returns the defaults of the settings of [PointSpec];
// the files are still to be given.
func DefaultPointSpec() PointSpec {
	return PointSpec{MaxSpanS: DefaultMaxSpanS, MaxPoints: DefaultMaxPoints}
}

// PointFrame is the point cloud of one frame.
type PointFrame struct {
	// Index is the 0-based rank of the file among those the source
	// tries, in time order; files skipped by Next leave holes.
	Index int
	// Time in seconds (see [OpenPoints]).
	Time float64
	// Path is the point file.
	Path string
	// Points are the points of the file with finite coordinates, in file
	// order. Next reuses the slice: copy what must outlive the next call.
	Points []Point
	// Dropped is the number of points of the file left out because a
	// coordinate is not finite.
	Dropped int
}

// PointSource streams the point clouds of a record, one file per frame, in
// time order. It is not safe for concurrent use.
type PointSource struct {
	items     []pairItem // left: the file
	spec      PointSpec
	next      int
	visited   int
	log       skipLog
	rule      string
	origin    TimeOrigin
	hasOrigin bool
	closed    bool
	buf       []Point
}

// OpenPoints lists the point files of a record and orders them by time:
// from a timestamps file (given by TimestampsFile, or timestamps.csv in the
// folder of the matches), else from the file names with the rules of
// [OpenPairs] (a time with its unit, a frame number at FPS, or nine-digit
// milliseconds), with the same checks of the times: rows that cannot be
// read, times that are not finite, farther than MaxSpanS from the median,
// or out of order are skipped, counted and named. A file whose name
// carries no number, or a number already seen, is skipped too. It fails,
// with one sentence, when nothing matches, when there is no time base, when
// a setting is out of range, or when no file is left.
func OpenPoints(spec PointSpec) (*PointSource, error) {
	if spec.FPS != 0 {
		if err := checkFPS(spec.FPS, "FPS"); err != nil {
			return nil, err
		}
	}
	maxSpan, err := checkMaxSpan(spec.MaxSpanS)
	if err != nil {
		return nil, err
	}
	spec.MaxSpanS = maxSpan
	switch {
	case spec.MaxPoints == 0:
		spec.MaxPoints = DefaultMaxPoints
	case spec.MaxPoints < 0:
		return nil, fmt.Errorf("ingest: max_points %d is not a usable number of points; give the most points one file may hold, or 0 for the default of %d", spec.MaxPoints, DefaultMaxPoints)
	}
	switch spec.Format {
	case FormatAuto, FormatPLY, FormatXYZ:
	default:
		return nil, fmt.Errorf("ingest: the point format setting %q is not \"ply\", \"xyz\" or empty (by the extension)", spec.Format)
	}
	if _, err := NewXYZReader(strings.NewReader(""), "", spec.XYZ); err != nil {
		return nil, err // a bad XYZ setting, before any file
	}
	start, haveStart, err := originFromSetting(spec.StartUTC)
	if err != nil {
		return nil, err
	}
	var files []string
	ts := spec.TimestampsFile
	switch {
	case spec.Glob != "":
		m, err := filepath.Glob(spec.Glob)
		if err != nil {
			return nil, fmt.Errorf("ingest: point file pattern %q is not a valid pattern (%v); fix its brackets or escapes", spec.Glob, err)
		}
		m = regularFiles(m)
		// A timestamps file among the matches (a pattern such as
		// "run1/*") is not a point file.
		m = slices.DeleteFunc(m, func(p string) bool { return filepath.Base(p) == TimestampsName })
		if len(m) == 0 {
			return nil, fmt.Errorf("ingest: point file pattern %q matches no file; check the folder and quote the pattern so that the shell does not expand it", spec.Glob)
		}
		if files, err = absSorted(m); err != nil {
			return nil, err
		}
		if ts == "" {
			p := filepath.Join(filepath.Dir(files[0]), TimestampsName)
			if isFile(p) {
				ts = p
			}
		}
	case ts == "":
		return nil, errors.New("ingest: no point files are given; give a pattern for the point files or a timestamps file")
	}
	s := &PointSource{spec: spec, log: newSkipLog()}
	if ts != "" {
		tab, err := readTimestamps(ts, []string{"file"})
		if err != nil {
			return nil, err
		}
		s.fromTable(tab, files, start, haveStart)
	} else if err := s.fromNames(files); err != nil {
		return nil, err
	}
	if len(s.items) == 0 {
		first := ""
		if it, ok := s.log.first(); ok {
			first = "; the first: " + it.String()
		}
		return nil, fmt.Errorf("ingest: no usable point file was found (%s%s); check the names or the rows of the timestamps file", describeSkips(s.log.Counts()), first)
	}
	if haveStart && (!s.hasOrigin || s.origin.From != OriginSetting) {
		if s.hasOrigin {
			start.From = fmt.Sprintf("%s (the %s would put it at %s)", OriginSetting, s.origin.From, FormatInstant(s.origin.UTC))
		}
		s.origin, s.hasOrigin = start, true
	}
	return s, nil
}

func pointFiles(it pairItem) []string { return []string{it.left} }

func (s *PointSource) fromNames(files []string) error {
	var named []namedFile
	for _, p := range files {
		n := parseName(p)
		if n.kind == kindNone {
			s.log.add(SkippedItem{Files: []string{p}, Reason: SkipNoNumber})
			continue
		}
		named = append(named, namedFile{p, n})
	}
	if len(named) == 0 {
		return fmt.Errorf("ingest: no point file name carries a number (for example %s); give a timestamps file, or names with a time or frame number", oneLineText(files[0]))
	}
	rule, err := chooseNameRule(named, s.spec.FPS, "point file")
	if err != nil {
		return err
	}
	s.rule = rule.note
	seen := map[float64]string{}
	for _, n := range named {
		if first, dup := seen[n.p.value]; dup {
			s.log.add(SkippedItem{Files: []string{n.path}, Reason: SkipDuplicate, Detail: "same number as " + filepath.Base(first)})
			continue
		}
		seen[n.p.value] = n.path
		s.items = append(s.items, pairItem{time: rule.toTime(n.p.value), left: n.path})
	}
	slices.SortFunc(s.items, func(a, b pairItem) int {
		if c := compareOrder(a.time, b.time); c != 0 {
			return c
		}
		return strings.Compare(a.left, b.left)
	})
	s.items = screenItems(s.items, s.spec.MaxSpanS, false, &s.log, pointFiles)
	return nil
}

func (s *PointSource) fromTable(tab *tsTable, files []string, start TimeOrigin, haveStart bool) {
	selecting := files != nil
	in := setOf(files)
	listed := map[string]bool{}
	for _, it := range tab.skips {
		f := it.Files[1]
		listed[f] = true
		if !selecting || in[f] || f == "" {
			s.log.add(it)
		}
	}
	rows := tab.rows
	slices.SortStableFunc(rows, func(a, b tsRow) int { return compareOrder(a.frame, b.frame) })
	seen := map[int]bool{}
	for _, r := range rows {
		f := r.files[0]
		listed[f] = true
		if selecting && !in[f] && f != "" {
			continue
		}
		item := SkippedItem{Files: []string{f}, Line: r.line}
		switch {
		case seen[r.frame]:
			item.Reason, item.Detail = SkipDuplicate, fmt.Sprintf("frame %d", r.frame)
		case (selecting && !in[f]) || (!selecting && !isFile(f)):
			item.Reason = SkipNotFound
		}
		seen[r.frame] = true
		if item.Reason != "" {
			s.log.add(item)
			continue
		}
		s.items = append(s.items, pairItem{time: r.time, left: f, line: r.line, utc: r.utc, hasUTC: r.hasUTC})
	}
	for _, p := range files {
		if !listed[p] {
			s.log.add(SkippedItem{Files: []string{p}, Reason: SkipNotListed})
		}
	}
	s.items = screenItems(s.items, s.spec.MaxSpanS, true, &s.log, pointFiles)
	col := colTime
	switch {
	case tab.haveTime:
		kept := make([]tsRow, len(s.items))
		for i, it := range s.items {
			kept[i] = tsRow{time: it.time, utc: it.utc, hasUTC: it.hasUTC}
		}
		s.origin, s.hasOrigin = tab.origin(kept)
	case len(s.items) > 0:
		col = colUTC
		t0 := s.items[0].utc.Truncate(time.Second)
		from := fmt.Sprintf("%s %s (time 0 at the whole second of the first file)", OriginUTCColumn, tab.path)
		if haveStart {
			t0, from = start.UTC, start.From
		}
		for i := range s.items {
			s.items[i].time = s.items[i].utc.Sub(t0).Seconds()
		}
		s.origin, s.hasOrigin = TimeOrigin{UTC: t0, From: from}, true
	}
	s.rule = fmt.Sprintf("times read from the %s column of timestamps file %s", col, tab.path)
}

// Len returns the number of files the source tries; Next delivers at most
// that many.
func (s *PointSource) Len() int { return len(s.items) }

// Times returns the times of the files the source tries, seconds, in
// order.
func (s *PointSource) Times() []float64 {
	t := make([]float64, len(s.items))
	for i, it := range s.items {
		t[i] = it.time
	}
	return t
}

// Skipped returns the number of files (and timestamps rows) left out so
// far, by reason.
func (s *PointSource) Skipped() SkipCounts { return s.log.Counts() }

// SkippedFiles names the files and rows skipped so far with their reasons
// (the first [MaxNamedSkips]; the rest are counted in Unnamed).
func (s *PointSource) SkippedFiles() SkipList { return s.log.List() }

// TimeRule says in one sentence how the times of the files were found.
func (s *PointSource) TimeRule() string { return s.rule }

// Origin returns the absolute instant of time 0 and where it came from; ok
// is false when the record gives none.
func (s *PointSource) Origin() (o TimeOrigin, ok bool) { return s.origin, s.hasOrigin }

// Seek makes the next call to Next start at file i (0 ≤ i < Len). A source
// that seeks ahead counts the skips of the files it passes over only when
// it reads them; use a separate source for sampling.
func (s *PointSource) Seek(i int) { s.next = min(max(i, 0), len(s.items)) }

// Rewind makes the next call to Next return the first file again. Files
// skipped by Next are counted once however often the record is read.
func (s *PointSource) Rewind() { s.next = 0 }

// Close ends the stream; Next fails after Close.
func (s *PointSource) Close() error {
	s.closed = true
	return nil
}

// Next reads the next file that can be read into f and returns io.EOF
// after the last one. A file that cannot be read or is malformed, or that
// holds more than MaxPoints points, is skipped, counted and named with the
// place of the fault. Memory: the points of one file, in f.Points, whose
// capacity is reused.
func (s *PointSource) Next(f *PointFrame) error {
	if s.closed {
		return errors.New("ingest: the point source is closed; open it again to read more files")
	}
	for ; s.next < len(s.items); s.next++ {
		it := s.items[s.next]
		pts, dropped, reason, detail := s.read(it.left, f.Points[:0])
		f.Points = pts[:0]
		if reason != "" {
			if s.next >= s.visited {
				s.log.add(SkippedItem{Files: []string{it.left}, Line: it.line, Reason: reason, Detail: detail})
				s.visited = s.next + 1
			}
			continue
		}
		if s.next >= s.visited {
			s.visited = s.next + 1
		}
		f.Index, f.Time, f.Path = s.next, it.time, it.left
		f.Points, f.Dropped = pts, dropped
		s.next++
		return nil
	}
	return io.EOF
}

// read reads a whole point file into pts.
func (s *PointSource) read(path string, pts []Point) ([]Point, int, string, string) {
	r, c, err := OpenPointFile(path, s.spec.Format, s.spec.XYZ)
	if err != nil {
		return pts, 0, SkipBadPoints, trimIngest(err)
	}
	defer c.Close()
	if s.buf == nil {
		s.buf = make([]Point, 4096)
	}
	for {
		n, err := r.Read(s.buf)
		if len(pts)+n > s.spec.MaxPoints {
			return pts, 0, SkipTooManyPoints, fmt.Sprintf("more than %d", s.spec.MaxPoints)
		}
		pts = append(pts, s.buf[:n]...)
		if err == io.EOF {
			return pts, r.Dropped(), "", ""
		}
		if err != nil {
			return pts, 0, SkipBadPoints, trimIngest(err)
		}
	}
}

// trimIngest turns an error of this package into a detail for a skipped
// item.
func trimIngest(err error) string { return strings.TrimPrefix(err.Error(), "ingest: ") }

// OpenPointFile opens a point file for streaming: format is "ply", "xyz"
// or "" to tell by the extension (see [PointSpec.Format]). Close the
// Closer when done.
func OpenPointFile(path, format string, opt XYZOptions) (PointReader, io.Closer, error) {
	if format == FormatAuto {
		switch strings.ToLower(filepath.Ext(path)) {
		case ".ply":
			format = FormatPLY
		case ".xyz", ".txt", ".csv", ".tsv", ".asc":
			format = FormatXYZ
		default:
			return nil, nil, fmt.Errorf("ingest: point file %s has the extension %q, which names no point format read here; use .ply or .xyz/.txt/.csv, or set the point format", oneLineText(path), filepath.Ext(path))
		}
	}
	fh, err := os.Open(path)
	if err != nil {
		return nil, nil, fmt.Errorf("ingest: point file %s cannot be opened (%v); check the path and its permissions", oneLineText(path), err)
	}
	var r PointReader
	if format == FormatPLY {
		r, err = NewPLYReader(fh, path)
	} else {
		r, err = NewXYZReader(fh, path, opt)
	}
	if err != nil {
		fh.Close()
		return nil, nil, err
	}
	return r, fh, nil
}
