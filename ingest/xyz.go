package ingest

import (
	"bufio"
	"bytes"
	"errors"
	"fmt"
	"io"
	"strconv"
	"strings"
)

// XYZOptions say how to read a point file of text columns (XYZ, CSV,
// TSV). The zero value reads the columns named x, y and z in a header (the
// header may be a comment line, as numpy.savetxt writes it), or the first
// three columns when the file has no header, split at the delimiter found
// in the first data line.
type XYZOptions struct {
	// Delimiter between columns: "" to find it (a comma, else a semicolon,
	// else a tab, else runs of blanks, in the first data line), or one of
	// ",", ";", "tab", "space" (runs of blanks and tabs). Default "".
	Delimiter string `yaml:"delimiter"`
	// Columns are the header names of the x, y and z columns, matched
	// without regard to case. Default ["x", "y", "z"].
	Columns []string `yaml:"columns"`
	// Indexes, when given, are the 0-based positions of the x, y and z
	// columns; a header, if any, is then only skipped. Default none.
	Indexes []int `yaml:"column_indexes"`
}

// maxXYZLine is the longest line of a point text file read, bytes.
const maxXYZLine = 64 << 10

// XYZReader reads points from a text file of columns. Lines that are
// empty or begin with '#' (after blanks) are skipped, except a '#' line
// before the data that names the columns, which is the header.
type XYZReader struct {
	r       *bufio.Reader
	name    string
	opt     XYZOptions
	delim   string // "," ";" "\t" or " " (runs of blanks); "" until found
	idx     [3]int
	need    int // fields a row needs
	line    int
	dropped int
	pending string // a first data line read while looking for the header
	havePen bool
	err     error
	fields  []string
	lineBuf []byte
}

func (x *XYZReader) fail(format string, args ...any) error {
	x.err = fmt.Errorf("ingest: point file %s line %d: %s", oneLineText(x.name), x.line, fmt.Sprintf(format, args...))
	return x.err
}

// NewXYZReader reads the header (if any) of a point text file; name labels
// it in errors.
func NewXYZReader(r io.Reader, name string, opt XYZOptions) (*XYZReader, error) {
	x := &XYZReader{r: bufio.NewReaderSize(r, 64<<10), name: name, opt: opt}
	cols := opt.Columns
	if len(cols) == 0 {
		cols = []string{"x", "y", "z"}
	}
	if len(cols) != 3 {
		return nil, fmt.Errorf("ingest: the point columns setting names %d columns; give the names of the x, y and z columns", len(cols))
	}
	if len(opt.Indexes) != 0 {
		if len(opt.Indexes) != 3 {
			return nil, fmt.Errorf("ingest: the point column_indexes setting has %d values; give the 0-based positions of the x, y and z columns", len(opt.Indexes))
		}
		for i, v := range opt.Indexes {
			if v < 0 || v > 1023 {
				return nil, fmt.Errorf("ingest: the point column_indexes setting has the position %d; give 0-based positions from 0 to 1023", v)
			}
			x.idx[i] = v
		}
	}
	switch opt.Delimiter {
	case "":
	case ",", ";":
		x.delim = opt.Delimiter
	case "tab", "\t":
		x.delim = "\t"
	case "space", " ":
		x.delim = " "
	default:
		return nil, fmt.Errorf("ingest: the point delimiter setting %q is not one of \",\", \";\", \"tab\" or \"space\" (or empty, to find it)", opt.Delimiter)
	}
	// Find the first line that is not empty: a header (commented or
	// not) or the first data line. A header is split at its own
	// delimiter; the data's is found in the first data line.
	for {
		l, err := x.readLine()
		if err == io.EOF {
			x.setNeed()
			return x, nil // no points
		}
		if err != nil {
			return nil, err
		}
		t := strings.TrimSpace(l)
		if t == "" {
			continue
		}
		commented := strings.HasPrefix(t, "#")
		if commented {
			t = strings.TrimSpace(strings.TrimLeft(t, "#"))
		}
		f := x.splitWith(t, x.delimFor(t))
		if !commented && allNumbers(f) {
			// No header: this is data.
			if len(opt.Indexes) == 0 {
				x.idx = [3]int{0, 1, 2}
			}
			x.pending, x.havePen = l, true
			x.setNeed()
			return x, nil
		}
		if commented && (len(opt.Indexes) != 0 || !namesAll(f, cols)) {
			continue // a plain comment
		}
		if len(opt.Indexes) == 0 {
			for i, c := range cols {
				j := indexFold(f, c)
				if j < 0 {
					return nil, x.fail("the header (%s) has no column %q; name the columns x, y and z, or set the column names or column_indexes", clip(oneLineText(t)), c)
				}
				x.idx[i] = j
			}
		}
		x.setNeed()
		return x, nil
	}
}

func (x *XYZReader) setNeed() { x.need = max(x.idx[0], x.idx[1], x.idx[2]) + 1 }

// delimFor is the delimiter to split line l at: the one set, or the one
// found in l.
func (x *XYZReader) delimFor(l string) string {
	if x.delim != "" {
		return x.delim
	}
	return findDelimiter(l)
}

// findDelimiter picks the delimiter of a line.
func findDelimiter(l string) string {
	for _, d := range []string{",", ";", "\t"} {
		if strings.Contains(l, d) {
			return d
		}
	}
	return " "
}

// splitWith splits l into x.fields (reused) at delim, or at runs of
// blanks when delim is " ".
func (x *XYZReader) splitWith(l, delim string) []string {
	x.fields = x.fields[:0]
	if delim == " " {
		for {
			l = strings.TrimLeft(l, " \t")
			if l == "" {
				return x.fields
			}
			i := strings.IndexAny(l, " \t")
			if i < 0 {
				x.fields = append(x.fields, l)
				return x.fields
			}
			x.fields = append(x.fields, l[:i])
			l = l[i:]
		}
	}
	for {
		f, rest, found := strings.Cut(l, delim)
		x.fields = append(x.fields, strings.TrimSpace(f))
		if !found {
			return x.fields
		}
		l = rest
	}
}

func isNumber(s string) bool {
	_, err := strconv.ParseFloat(s, 64)
	return err == nil || isRangeErr(err)
}

func allNumbers(f []string) bool {
	if len(f) == 0 {
		return false
	}
	for _, s := range f {
		if !isNumber(s) {
			return false
		}
	}
	return true
}

func indexFold(f []string, name string) int {
	for i, s := range f {
		if strings.EqualFold(strings.Trim(s, `"'`), name) {
			return i
		}
	}
	return -1
}

func namesAll(f []string, cols []string) bool {
	for _, c := range cols {
		if indexFold(f, c) < 0 {
			return false
		}
	}
	return true
}

// readLine reads one line without its end, bounded in length. The line
// buffer is reused; the string returned is the only allocation.
func (x *XYZReader) readLine() (string, error) {
	b := x.lineBuf[:0]
	for {
		chunk, err := x.r.ReadSlice('\n')
		if err == nil && len(b) == 0 {
			// The whole line in one piece: no copy before the string.
			x.line++
			if len(chunk) > maxXYZLine {
				return "", x.fail("the line is longer than %d bytes; this is not a point text file", maxXYZLine)
			}
			return string(bytes.TrimRight(chunk, "\r\n")), nil
		}
		b = append(b, chunk...)
		x.lineBuf = b[:0]
		if len(b) > maxXYZLine {
			x.line++
			return "", x.fail("the line is longer than %d bytes; this is not a point text file", maxXYZLine)
		}
		switch {
		case err == nil:
			x.line++
			return string(bytes.TrimRight(b, "\r\n")), nil
		case errors.Is(err, bufio.ErrBufferFull):
			continue
		case err == io.EOF:
			if len(b) == 0 {
				return "", io.EOF
			}
			x.line++
			return string(bytes.TrimRight(b, "\r\n")), nil
		default:
			x.line++
			return "", x.fail("cannot be read (%v)", err)
		}
	}
}

// Dropped returns the number of rows left out so far because a
// coordinate is not finite (nan, inf).
func (x *XYZReader) Dropped() int { return x.dropped }

// Read fills pts with the next points; see [PointReader]. A row with
// fewer columns than needed, or a value that is not a number, is an error
// naming the line.
func (x *XYZReader) Read(pts []Point) (int, error) {
	if x.err != nil {
		return 0, x.err
	}
	n := 0
	for n < len(pts) {
		var l string
		if x.havePen {
			l, x.havePen = x.pending, false
		} else {
			var err error
			l, err = x.readLine()
			if err == io.EOF {
				if n == 0 {
					return 0, io.EOF
				}
				return n, nil
			}
			if err != nil {
				return n, err
			}
		}
		t := strings.TrimSpace(l)
		if t == "" || strings.HasPrefix(t, "#") {
			continue
		}
		if x.delim == "" {
			x.delim = findDelimiter(t)
		}
		f := x.splitWith(t, x.delim)
		if len(f) < x.need {
			return n, x.fail("has %d columns but the x, y and z columns need %d; every row needs the same columns", len(f), x.need)
		}
		var v [3]float64
		for i := range v {
			s := f[x.idx[i]]
			var err error
			v[i], err = strconv.ParseFloat(s, 64)
			if err != nil && !isRangeErr(err) {
				return n, x.fail("column %d holds %q, which is not a number", x.idx[i]+1, clip(oneLineText(s)))
			}
		}
		if !finite(v[0]) || !finite(v[1]) || !finite(v[2]) {
			x.dropped++
			continue
		}
		pts[n] = Point{v[0], v[1], v[2]}
		n++
	}
	return n, nil
}
