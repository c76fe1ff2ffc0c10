package ingest

import (
	"bufio"
	"encoding/csv"
	"errors"
	"fmt"
	"io"
	"io/fs"
	"math"
	"os"
	"path/filepath"
	"slices"
	"strconv"
	"strings"
	"time"
)

// Reasons for skipping rows of a timestamps file or frames whose time
// cannot be right, used in [SkipCounts] besides SkipTimeOrder.
const (
	// SkipBadRow: a row of a timestamps file that cannot be read: a
	// number of fields other than the header's, a stray quote, or a
	// frame number, time_s or utc cell that is not a number or instant.
	SkipBadRow = "malformed row in the timestamps file"
	// SkipBadTime: a time that is not a finite number (NaN, infinite, or
	// too large for a float64).
	SkipBadTime = "time not a finite number"
	// SkipTimeSpan: a time farther from the median time of the record
	// than the longest plausible record (PairSpec.MaxSpanS).
	SkipTimeSpan = "time far outside the span of the record"
)

// DefaultMaxSpanS is the default longest plausible record, seconds: two
// days. Stereo wave records last minutes to hours (common practice); a
// time farther than this from the record's median time is a corrupt value
// (a stray 1e300, a clock that jumped), not a frame of the record.
const DefaultMaxSpanS = 2 * 86400

// maxCSVLine is the longest line of a timestamps file read, bytes.
const maxCSVLine = 64 << 10

// Columns of a timestamps file.
const (
	colFrame = "frame"
	colTime  = "time_s"
	colUTC   = "utc"
)

// tsRow is one usable row of a timestamps file.
type tsRow struct {
	line   int
	frame  int
	time   float64   // seconds: time_s, or utc less tsTable.ref
	utc    time.Time // the utc cell, when hasUTC
	hasUTC bool
	files  []string // the file columns asked for, resolved; "" for empty cells
}

// tsTable is what a timestamps file says.
type tsTable struct {
	path      string
	fileCols  []string
	rows      []tsRow // rows with a finite time, in file order
	haveTime  bool    // a time_s column: times are its values
	haveUTC   bool    // a utc column
	ref       time.Time
	skips     []SkippedItem // rows skipped while reading, in file order
	nReadRows int
}

// errLineTooLong is returned by lineLimiter.
var errLineTooLong = errors.New("line too long")

// lineLimiter fails a read that would give a line longer than max bytes,
// so that a file without line ends cannot fill the memory.
type lineLimiter struct {
	r   io.Reader
	max int
	run int // bytes since the last '\n'
}

func (l *lineLimiter) Read(p []byte) (int, error) {
	n, err := l.r.Read(p)
	for i := 0; i < n; i++ {
		if p[i] == '\n' {
			l.run = 0
			continue
		}
		l.run++
		if l.run > l.max {
			return i, errLineTooLong
		}
	}
	return n, err
}

// readTimestamps reads a timestamps file: a header naming frame, time_s
// and/or utc, and fileCols (any order, other columns ignored), then one row
// per frame. Paths are made absolute relative to the file's folder; empty
// cells stay empty. Rows that cannot be read and times that are not finite
// are skipped and listed in the table's skips; a file that cannot be
// opened, has no usable header, or holds a quote left open over several
// lines is an error.
func readTimestamps(path string, fileCols []string) (*tsTable, error) {
	f, err := os.Open(path)
	if err != nil {
		if errors.Is(err, fs.ErrNotExist) {
			return nil, fmt.Errorf("ingest: timestamps file %s does not exist; check the path", path)
		}
		return nil, fmt.Errorf("ingest: cannot open timestamps file %s (%v); check its permissions", path, err)
	}
	defer f.Close()
	base, err := filepath.Abs(filepath.Dir(path))
	if err != nil {
		return nil, fmt.Errorf("ingest: cannot resolve the folder of timestamps file %s (%v); give an absolute path", path, err)
	}
	return parseTimestamps(bufio.NewReader(f), path, base, fileCols)
}

// headerHint is the header a timestamps file needs, for messages.
func headerHint(fileCols []string) string {
	return strings.Join(append([]string{colFrame, colTime}, fileCols...), ",")
}

// parseTimestamps reads a timestamps file from r; name labels it in
// messages and base is the folder relative paths start from.
func parseTimestamps(r io.Reader, name, base string, fileCols []string) (*tsTable, error) {
	hint := headerHint(fileCols)
	cr := csv.NewReader(&lineLimiter{r: r, max: maxCSVLine})
	cr.Comment = '#'
	cr.TrimLeadingSpace = true
	readErr := func(err error) error {
		if errors.Is(err, errLineTooLong) {
			return fmt.Errorf("ingest: timestamps file %s has a line longer than %d bytes, so it is not a timestamps file; give the CSV file with the header %s", name, maxCSVLine, hint)
		}
		return fmt.Errorf("ingest: timestamps file %s cannot be read (%v); check the file", name, err)
	}
	head, err := cr.Read()
	if err != nil {
		var pe *csv.ParseError
		switch {
		case err == io.EOF:
			return nil, fmt.Errorf("ingest: timestamps file %s is empty; it needs the header %s and one row per frame", name, hint)
		case errors.As(err, &pe):
			return nil, fmt.Errorf("ingest: timestamps file %s has a header that cannot be read as CSV (line %d: %v); write it as comma-separated text with the header %s", name, pe.Line, pe.Err, hint)
		default:
			return nil, readErr(err)
		}
	}
	t := &tsTable{path: name, fileCols: fileCols}
	col, err := headerColumns(head, fileCols, name, hint)
	if err != nil {
		return nil, err
	}
	t.haveTime, t.haveUTC = col[colTime] >= 0, col[colUTC] >= 0
	cell := func(rec []string, c string) string {
		if i := col[c]; i >= 0 && i < len(rec) {
			return strings.TrimSpace(rec[i])
		}
		return ""
	}
	filesOf := func(rec []string) []string {
		fs := make([]string, len(fileCols))
		for i, c := range fileCols {
			fs[i] = resolvePath(base, cell(rec, c))
		}
		return fs
	}
	skip := func(line int, rec []string, reason, detail string) {
		it := SkippedItem{Files: append([]string{name}, filesOf(rec)...), Line: line, Reason: reason, Detail: detail}
		t.skips = append(t.skips, it)
	}
	for {
		rec, err := cr.Read()
		if err == io.EOF {
			break
		}
		if err != nil {
			var pe *csv.ParseError
			if !errors.As(err, &pe) {
				return nil, readErr(err)
			}
			if pe.StartLine != pe.Line {
				return nil, fmt.Errorf("ingest: timestamps file %s has a quote opened on line %d that is not closed before line %d, so the rows between cannot be read; remove the stray quote", name, pe.StartLine, pe.Line)
			}
			t.nReadRows++
			// A row with the wrong number of fields comes back with the
			// error; its file cells, when there, still name it.
			if !errors.Is(err, csv.ErrFieldCount) {
				rec = nil
			}
			skip(pe.Line, rec, SkipBadRow, fieldError(pe, len(head)))
			continue
		}
		t.nReadRows++
		line, _ := cr.FieldPos(0)
		fr, err := strconv.Atoi(cell(rec, colFrame))
		if err != nil {
			skip(line, rec, SkipBadRow, fmt.Sprintf("frame %q is not a whole number", clip(cell(rec, colFrame))))
			continue
		}
		row := tsRow{line: line, frame: fr, files: filesOf(rec)}
		if reason, detail := t.rowTimes(&row, cell(rec, colUTC), cell(rec, colTime)); reason != "" {
			skip(line, rec, reason, detail)
			continue
		}
		t.rows = append(t.rows, row)
	}
	if t.nReadRows == 0 {
		return nil, fmt.Errorf("ingest: timestamps file %s has a header but no rows; it needs one row per frame", name)
	}
	if !t.haveTime {
		t.timesFromUTC()
	}
	return t, nil
}

// headerColumns maps each known column (frame, time_s, utc and the file
// columns) to its index in the header, -1 when absent, and checks that the
// columns needed are there.
func headerColumns(head, fileCols []string, name, hint string) (map[string]int, error) {
	col := map[string]int{colFrame: -1, colTime: -1, colUTC: -1}
	for _, c := range fileCols {
		col[c] = -1
	}
	for i, h := range head {
		h = strings.ToLower(strings.TrimSpace(strings.TrimPrefix(h, "\ufeff")))
		if j, ok := col[h]; ok && j < 0 {
			col[h] = i
		}
	}
	headText := strings.Join(head, ",")
	if len(headText) > 200 {
		headText = headText[:200] + "..."
	}
	headText = oneLineText(headText)
	for _, c := range append([]string{colFrame}, fileCols...) {
		if col[c] < 0 {
			return nil, fmt.Errorf("ingest: timestamps file %s has no %q column in its header (%s); the header must name %s", name, c, headText, hint)
		}
	}
	if col[colTime] < 0 && col[colUTC] < 0 {
		return nil, fmt.Errorf("ingest: timestamps file %s has neither a \"time_s\" nor a \"utc\" column in its header (%s); the header must name %s (or utc in place of time_s)", name, headText, hint)
	}
	return col, nil
}

// resolvePath makes a file cell absolute against base and cleans it; an
// empty cell stays empty.
func resolvePath(base, p string) string {
	p = strings.TrimSpace(p)
	if p == "" {
		return ""
	}
	if !filepath.IsAbs(p) {
		p = filepath.Join(base, p)
	}
	return filepath.Clean(p)
}

// rowTimes parses a row's utc instant and time_s cells into row, as the
// table's columns require; it returns the skip reason and detail when the
// row cannot be used, empty strings when it can.
func (t *tsTable) rowTimes(row *tsRow, utc, ts string) (reason, detail string) {
	if t.haveUTC {
		if utc != "" {
			u, err := ParseInstant(utc)
			if err != nil {
				return SkipBadRow, "utc " + err.Error()
			}
			row.utc, row.hasUTC = u, true
		} else if !t.haveTime {
			return SkipBadRow, "no utc instant"
		}
	}
	if t.haveTime {
		v, err := strconv.ParseFloat(ts, 64)
		var ne *strconv.NumError
		switch {
		case err != nil && !(errors.As(err, &ne) && ne.Err == strconv.ErrRange):
			return SkipBadRow, fmt.Sprintf("time_s %q is not a number", clip(ts))
		case math.IsNaN(v) || math.IsInf(v, 0):
			return SkipBadTime, fmt.Sprintf("time_s %s", clip(ts))
		}
		row.time = v
	}
	return "", ""
}

// timesFromUTC gives the rows times from the utc column alone: seconds
// from a provisional reference, the median instant, until the source picks
// its time 0.
func (t *tsTable) timesFromUTC() {
	if len(t.rows) > 0 {
		us := make([]time.Time, len(t.rows))
		for i, r := range t.rows {
			us[i] = r.utc
		}
		slices.SortFunc(us, func(a, b time.Time) int { return a.Compare(b) })
		t.ref = us[(len(us)-1)/2].Truncate(time.Second)
		for i := range t.rows {
			t.rows[i].time = t.rows[i].utc.Sub(t.ref).Seconds()
		}
	}
}

// fieldError describes a CSV parse error of one row in words.
func fieldError(pe *csv.ParseError, nHead int) string {
	switch {
	case errors.Is(pe.Err, csv.ErrFieldCount):
		return fmt.Sprintf("not the %d fields of the header", nHead)
	case errors.Is(pe.Err, csv.ErrBareQuote), errors.Is(pe.Err, csv.ErrQuote):
		return fmt.Sprintf("stray quote at column %d", pe.Column)
	}
	return pe.Err.Error()
}

// clip shortens a cell for a message.
func clip(s string) string {
	if len(s) > 40 {
		return s[:40] + "..."
	}
	return s
}

// oneLineText quotes s when it holds line breaks or other control
// characters, so that a message stays one line.
func oneLineText(s string) string {
	if strings.IndexFunc(s, func(r rune) bool { return r < ' ' || r == 0x7f }) >= 0 {
		return strconv.Quote(s)
	}
	return s
}

// origin returns the absolute time of time 0 the table gives when it has
// both a time_s and a utc column: the median over rows of utc − time_s,
// with its spread, the largest distance of a row's offset from it.
func (t *tsTable) origin(rows []tsRow) (TimeOrigin, bool) {
	if !t.haveUTC || !t.haveTime {
		return TimeOrigin{}, false
	}
	var offs []time.Time
	for _, r := range rows {
		if r.hasUTC {
			offs = append(offs, r.utc.Add(-secondsToDuration(r.time)))
		}
	}
	if len(offs) == 0 {
		return TimeOrigin{}, false
	}
	slices.SortFunc(offs, func(a, b time.Time) int { return a.Compare(b) })
	med := offs[(len(offs)-1)/2]
	spread := max(med.Sub(offs[0]), offs[len(offs)-1].Sub(med))
	return TimeOrigin{UTC: med, From: fmt.Sprintf("%s %s (utc − time_s, median of %d rows, spread %.3g s)", OriginUTCColumn, t.path, len(offs), spread.Seconds())}, true
}

// plausibleSpan marks the times farther than maxSpan seconds from the
// (lower) median of times; they cannot belong to one record.
func plausibleSpan(times []float64, maxSpan float64) []bool {
	ok := make([]bool, len(times))
	if len(times) == 0 {
		return ok
	}
	s := slices.Clone(times)
	slices.Sort(s)
	med := s[(len(s)-1)/2]
	for i, v := range times {
		ok[i] = math.Abs(v-med) <= maxSpan
	}
	return ok
}

// longestIncreasing marks a longest strictly increasing subsequence of
// times, the one of smallest indices (lexicographically first) among the
// longest, so that one time out of place costs that one frame and not the
// frames after it. On times already increasing it keeps every one.
// O(n log n).
func longestIncreasing(times []float64) []bool {
	n := len(times)
	keep := make([]bool, n)
	// start[i]: length of the longest strictly increasing run of the
	// sequence that starts at i, found from the end as a longest
	// strictly decreasing run ending at i in the reversed sequence
	// (patience sorting on negated values).
	start := make([]int, n)
	var tails []float64
	for i := n - 1; i >= 0; i-- {
		v := -times[i]
		k, _ := slices.BinarySearch(tails, v) // first tail >= v
		if k == len(tails) {
			tails = append(tails, v)
		} else {
			tails[k] = v
		}
		start[i] = k + 1
	}
	need := len(tails)
	last := math.Inf(-1)
	for i := 0; i < n && need > 0; i++ {
		if start[i] == need && times[i] > last {
			keep[i] = true
			last = times[i]
			need--
		}
	}
	return keep
}
