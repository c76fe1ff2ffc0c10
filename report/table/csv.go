package table

import (
	"encoding/csv"
	"errors"
	"fmt"
	"io"
	"math"
	"os"
	"strconv"
	"strings"
)

// Advice closes every message about a damaged table: the files of a
// tracking run are rewritten from the record they came from.
const Advice = "write the track folder again from its record"

// Error is a table file that cannot be used: File, and Line and Column
// where the defect is on one line (Line 0 otherwise), and Msg, a clause
// saying what is wrong. Err is the underlying error where there is one
// (os.ErrNotExist for a missing file).
type Error struct {
	File   string
	Line   int
	Column string
	Msg    string
	Err    error
}

func (e *Error) Error() string {
	var b strings.Builder
	b.WriteString(e.File)
	switch {
	case e.Line > 0 && e.Column != "":
		fmt.Fprintf(&b, " line %d, column %s: ", e.Line, e.Column)
	case e.Line > 0:
		fmt.Fprintf(&b, " line %d ", e.Line)
	default:
		b.WriteByte(' ')
	}
	b.WriteString(e.Msg)
	if !errors.Is(e.Err, os.ErrNotExist) {
		b.WriteString("; " + Advice)
	}
	return b.String()
}

func (e *Error) Unwrap() error { return e.Err }

// Write writes the table as CSV: the header, then one line per row, every
// field as its column's Append writes it.
func (t *Table) Write(w io.Writer) error {
	bw := NewBlockWriter(w, t.Schema)
	if err := bw.Write(t); err != nil {
		return err
	}
	return bw.Close()
}

// BlockWriter writes one table file from tables of the same schema given
// in turn (blocks of its rows): the file is the one Write makes of all the
// blocks' rows in one table, so a long table need not be held whole.
type BlockWriter struct {
	cw     *csv.Writer
	s      *Schema
	header bool
	rec    []string
	buf    []byte
	ends   []int
}

// NewBlockWriter returns a BlockWriter of schema s writing to w.
func NewBlockWriter(w io.Writer, s *Schema) *BlockWriter {
	return &BlockWriter{cw: csv.NewWriter(w), s: s, rec: make([]string, len(s.Columns))}
}

// Write appends the rows of t, whose schema must be the writer's.
func (b *BlockWriter) Write(t *Table) error {
	if t.Schema != b.s {
		return fmt.Errorf("a block of %s given to the writer of %s", t.Schema.File, b.s.File)
	}
	if err := b.writeHeader(); err != nil {
		return err
	}
	for i := 0; i < t.Len(); i++ {
		b.buf, b.ends = b.buf[:0], b.ends[:0]
		for k := range t.Cols {
			if t.Schema.Columns[k].Kind == Text {
				b.buf = append(b.buf, t.Text[k][i]...)
			} else {
				b.buf = t.Schema.Columns[k].Append(b.buf, t.Cols[k][i])
			}
			b.ends = append(b.ends, len(b.buf))
		}
		s := string(b.buf) // one string per row; the fields share it
		start := 0
		for k, e := range b.ends {
			b.rec[k] = s[start:e]
			start = e
		}
		if err := b.cw.Write(b.rec); err != nil {
			return err
		}
	}
	return nil
}

func (b *BlockWriter) writeHeader() error {
	if b.header {
		return nil
	}
	b.header = true
	return b.cw.Write(b.s.Names())
}

// Close writes the header when no block came and flushes the file.
func (b *BlockWriter) Close() error {
	if err := b.writeHeader(); err != nil {
		return err
	}
	b.cw.Flush()
	return b.cw.Error()
}

// ReadFile reads a table file; see Read.
func ReadFile(path string, s *Schema) (*Table, error) {
	f, err := os.Open(path)
	if err != nil {
		if errors.Is(err, os.ErrNotExist) {
			return nil, &Error{File: path, Msg: "does not exist", Err: err}
		}
		return nil, &Error{File: path, Msg: "cannot be read (" + err.Error() + ")", Err: err}
	}
	defer f.Close()
	var size int64
	if fi, err := f.Stat(); err == nil {
		size = fi.Size()
	}
	return read(f, s, path, size)
}

// Read reads a table as Write writes it; name is used in messages. The
// header must name every column of the schema, in any order (other
// columns are ignored); every row has as many fields as the header; each
// field holds what its column allows; the rows pass the schema's Check;
// the file ends with a newline. Any defect is an *Error.
func Read(r io.Reader, s *Schema, name string) (*Table, error) { return read(r, s, name, 0) }

// read reads a table; size, when known, sizes the columns once.
func read(r io.Reader, s *Schema, name string, size int64) (*Table, error) {
	tail := &tailReader{r: r}
	cr := csv.NewReader(tail)
	cr.ReuseRecord = true
	header, err := cr.Read()
	if err == io.EOF {
		return nil, &Error{File: name, Msg: "is empty; it should start with the header " + strings.Join(s.Names(), ",")}
	}
	if err != nil {
		return nil, csvError(name, err, len(header), len(s.Columns))
	}
	pos, err := headerPositions(name, header, s)
	if err != nil {
		return nil, err
	}
	cr.FieldsPerRecord = len(header)
	t := &Table{Schema: s, Cols: make([][]float64, len(s.Columns))}
	for k, c := range s.Columns {
		if c.Kind == Text {
			if t.Text == nil {
				t.Text = make([][]string, len(s.Columns))
			}
			t.Text[k] = []string{}
		}
	}
	if size > 0 {
		est := int(size/int64(8*len(header)+1)) + 16 // a field is rarely shorter than 7 characters
		for k := range t.Cols {
			t.Cols[k] = make([]float64, 0, est)
		}
	}
	for {
		rec, err := cr.Read()
		if err == io.EOF {
			break
		}
		if err != nil {
			if e := csvError(name, err, len(rec), len(header)); !truncated(cr, tail) {
				return nil, e
			}
			return nil, truncation(name)
		}
		for i, f := range rec {
			k := pos[i]
			if k < 0 {
				continue
			}
			v, msg := parseField(&s.Columns[k], f)
			if msg != "" {
				line, _ := cr.FieldPos(i)
				return nil, &Error{File: name, Line: line, Column: s.Columns[k].Name, Msg: msg}
			}
			t.Cols[k] = append(t.Cols[k], v)
			if s.Columns[k].Kind == Text {
				t.Text[k] = append(t.Text[k], f) // the record slice is reused, its strings are not
			}
		}
	}
	if tail.n > 0 && tail.last != '\n' {
		return nil, truncation(name)
	}
	return t, t.check(name)
}

func truncation(name string) error {
	return &Error{File: name, Msg: "ends in the middle of a line (no newline after its last row), so it is truncated"}
}

// truncated reports, after a defective line, whether it was the last and
// the file ends without a newline: the defect is then the truncation.
func truncated(cr *csv.Reader, tail *tailReader) bool {
	_, err := cr.Read()
	return err == io.EOF && tail.n > 0 && tail.last != '\n'
}

// check applies the row count and the schema's Check.
func (t *Table) check(name string) error {
	s := t.Schema
	if t.Len() < s.MinRows {
		msg := fmt.Sprintf("holds %d %s; it needs at least %d", t.Len(), s.Rows, s.MinRows)
		if t.Len() == 0 {
			msg = "has a header but no " + s.Rows
		}
		return &Error{File: name, Msg: msg}
	}
	if s.Check != nil {
		if row, msg := s.Check(t); msg != "" {
			return &Error{File: name, Line: row + 2, Msg: msg}
		}
	}
	return nil
}

// headerPositions maps each field of the header to its column (−1 for
// columns the schema does not have).
func headerPositions(name string, header []string, s *Schema) ([]int, error) {
	pos := make([]int, len(header))
	seen := make([]bool, len(s.Columns))
	for i, h := range header {
		h = strings.TrimSpace(h)
		if i == 0 {
			h = strings.TrimPrefix(h, "\ufeff")
		}
		pos[i] = s.Index(h)
		if k := pos[i]; k >= 0 {
			if seen[k] {
				return nil, &Error{File: name, Msg: fmt.Sprintf("names column %q twice in its header", h)}
			}
			seen[k] = true
		}
	}
	var missing []string
	for k, c := range s.Columns {
		if !seen[k] {
			missing = append(missing, c.Name)
		}
	}
	if len(missing) > 0 {
		return nil, &Error{File: name, Msg: fmt.Sprintf("lacks the column(s) %s of the header %s", strings.Join(missing, ", "), strings.Join(s.Names(), ","))}
	}
	return pos, nil
}

// csvError turns an encoding/csv error into one sentence.
func csvError(name string, err error, got, want int) error {
	var pe *csv.ParseError
	if errors.As(err, &pe) {
		e := &Error{File: name, Line: pe.StartLine, Err: err}
		switch {
		case errors.Is(pe.Err, csv.ErrFieldCount):
			e.Line = pe.Line
			e.Msg = fmt.Sprintf("has %d fields but its header has %d columns", got, want)
		case errors.Is(pe.Err, csv.ErrQuote), errors.Is(pe.Err, csv.ErrBareQuote):
			e.Msg = "has a stray quote"
		default:
			e.Msg = "cannot be parsed (" + pe.Err.Error() + ")"
		}
		return e
	}
	return &Error{File: name, Msg: "cannot be read (" + err.Error() + ")", Err: err}
}

// parseField reads one field of column c; msg says why it cannot be used.
func parseField(c *Column, f string) (v float64, msg string) {
	if c.Kind == Text {
		if c.Required && f == "" {
			return 0, "the field is empty but a value is needed"
		}
		return math.NaN(), ""
	}
	f = strings.TrimSpace(f)
	if c.Kind == Level {
		for i, l := range c.Levels {
			if f == l {
				return float64(i), ""
			}
		}
		return 0, fmt.Sprintf("%q is not one of %s", f, strings.Join(c.Levels, ", "))
	}
	if f == "" {
		if c.Required || c.Kind != Number {
			return 0, "the field is empty but a value is needed"
		}
		return math.NaN(), ""
	}
	x, err := strconv.ParseFloat(f, 64)
	switch {
	case err != nil && !errors.Is(err, strconv.ErrRange):
		return 0, fmt.Sprintf("%q is not a number", f)
	case err != nil || math.IsInf(x, 0) || (math.IsNaN(x) && (c.Required || c.Kind != Number)):
		return 0, fmt.Sprintf("%q is not a finite number", f)
	case math.IsNaN(x):
		return x, ""
	}
	switch c.Kind {
	case Count:
		if x != math.Trunc(x) || x < c.Min || x > c.Max {
			return 0, fmt.Sprintf("%q is not a whole number from 0 to 2147483647", f)
		}
	case Flag:
		if x != 0 && x != 1 {
			return 0, fmt.Sprintf("%q is neither 0 nor 1", f)
		}
	default:
		if x < c.Min {
			if c.Min == 0 {
				return 0, fmt.Sprintf("%q is negative", f)
			}
			return 0, fmt.Sprintf("%q is below %g", f, c.Min)
		}
		if x > c.Max {
			return 0, fmt.Sprintf("%q is above %g", f, c.Max)
		}
	}
	return x, ""
}

// tailReader passes reads through and remembers the last byte and the
// number of bytes read.
type tailReader struct {
	r    io.Reader
	n    int64
	last byte
}

func (t *tailReader) Read(p []byte) (int, error) {
	n, err := t.r.Read(p)
	if n > 0 {
		t.n += int64(n)
		t.last = p[n-1]
	}
	return n, err
}
