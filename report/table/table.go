// Package table holds the CSV tables of a tracking run — crests.csv,
// tracks.csv, spectrum.csv, whitecaps.csv, lambda.csv and coverage.csv.
// Each table's schema is written once, in this package: its columns by
// name, with their units, meaning, what a field may hold and the precision
// it is written with. Tables are read and written with encoding/csv.
//
// # Model
//
// A Table is held column by column, every column as []float64 in the
// order of its Schema: whole numbers (counts, identifiers, 0/1 flags) as
// whole float64 values, a column of named levels (whitecaps.csv's
// speed_fit) as the index of the level, an unknown value as NaN (an empty
// field in the file). A column of free text (the site names and UTC
// times of deployments.csv) is held in Table.Text, its []float64 all NaN.
//
// # Precision
//
// Each column is written with the precision its values carry, stated in
// its Precision: a number of decimals (positions to 1 mm, elevations to
// 0.1 mm, speeds to 1 mm/s, times to 1 µs) or of significant digits
// (dimensionless ratios, steepness and B_x to 4). Reading a file and
// writing it again gives the same file: a value read is a decimal the
// format can write, and formatting it again gives that decimal back (for
// fixed decimals d this holds while the spacing of float64 at the value is
// below 10^−d: for times to 1 µs, below 2^33 s ≈ 272 years). A table made in
// memory is rounded to that precision (Table.Round) before anything is
// computed from it, so that what is computed from memory and from the
// files is the same to the last bit.
//
// # Bad input
//
// A file that cannot be used is refused with an *Error: one sentence that
// names the file, the line and the column where there is one, and what is
// wrong. A file that ends in the middle of a line (no newline after its
// last row) is taken as truncated and refused.
package table

import (
	"math"
	"strconv"
)

// Kind says what a column holds.
type Kind uint8

// Kinds of column.
const (
	Number Kind = iota // a number
	Count              // a whole number from 0 to 2147483647
	Flag               // 0 or 1
	Level              // one of the column's Levels, held as its index
	Text               // free text, held in Table.Text
)

// Precision is how a number is written: Sig significant digits when Sig
// is positive, otherwise Decimals digits after the decimal point (trailing
// zeros left out).
type Precision struct {
	Decimals, Sig int
}

// Fixed is the precision of d decimals.
func Fixed(d int) Precision { return Precision{Decimals: d} }

// Significant is the precision of n significant digits.
func Significant(n int) Precision { return Precision{Sig: n} }

// String describes the precision ("3 decimals", "4 significant digits").
func (p Precision) String() string {
	if p.Sig > 0 {
		return strconv.Itoa(p.Sig) + " significant digits"
	}
	return strconv.Itoa(p.Decimals) + " decimals"
}

// Column describes one column of a table.
type Column struct {
	// Name is the CSV header.
	Name string
	// Units are in the UDUNITS form CF uses ("m", "m s-1", "1").
	Units string
	// Long says what the column holds (the CF long_name).
	Long string
	Kind Kind
	// Prec is the precision of a Number column.
	Prec Precision
	// Required columns may not be empty (Count, Flag and Level columns
	// always are required; a Text column may be empty unless Required).
	Required bool
	// Min and Max bound a known value.
	Min, Max float64
	// Levels name the values of a Level column.
	Levels []string
	// NC and Standard are the NetCDF variable and CF standard name of the
	// column where the table is also written as CF (crest_tracks.nc).
	NC, Standard string
}

// number is a Number column, unbounded and optional.
func number(name, units string, p Precision, long string) Column {
	return Column{Name: name, Units: units, Long: long, Kind: Number, Prec: p, Min: math.Inf(-1), Max: math.Inf(1)}
}

// count is a Count column.
func count(name, long string) Column {
	return Column{Name: name, Units: "1", Long: long, Kind: Count, Required: true, Min: 0, Max: 1<<31 - 1}
}

// text is an optional Text column.
func text(name, long string) Column {
	return Column{Name: name, Units: "1", Long: long, Kind: Text}
}

func (c Column) required() Column         { c.Required = true; return c }
func (c Column) atLeast(v float64) Column { c.Min = v; return c }
func (c Column) atMost(v float64) Column  { c.Max = v; return c }
func (c Column) cf(nc, std string) Column { c.NC, c.Standard = nc, std; return c }

// Append appends the text of v as the column writes it: empty for an
// unknown value, a whole number, a level name, or a number at the
// column's precision (never "-0"). A Text column's text is in
// Table.Text, not in v: Append writes nothing for it.
func (c *Column) Append(dst []byte, v float64) []byte {
	if math.IsNaN(v) || math.IsInf(v, 0) || c.Kind == Text {
		return dst
	}
	switch c.Kind {
	case Count, Flag:
		return strconv.AppendInt(dst, int64(v), 10)
	case Level:
		if i := int(v); i >= 0 && i < len(c.Levels) {
			return append(dst, c.Levels[i]...)
		}
		return dst
	}
	n := len(dst)
	if c.Prec.Sig > 0 {
		dst = strconv.AppendFloat(dst, v, 'g', c.Prec.Sig, 64)
	} else {
		dst = strconv.AppendFloat(dst, v, 'f', c.Prec.Decimals, 64)
		if c.Prec.Decimals > 0 {
			for dst[len(dst)-1] == '0' {
				dst = dst[:len(dst)-1]
			}
			if dst[len(dst)-1] == '.' {
				dst = dst[:len(dst)-1]
			}
		}
	}
	if s := dst[n:]; len(s) > 1 && s[0] == '-' && isZero(s[1:]) {
		dst = append(dst[:n], '0')
	}
	return dst
}

// isZero reports whether a formatted number is zero ("0", "0.000",
// "0e+00").
func isZero(s []byte) bool {
	for _, b := range s {
		if b == 'e' {
			return true
		}
		if b != '0' && b != '.' {
			return false
		}
	}
	return true
}

// Round returns v as the column writes and reads it back: rounded to the
// column's precision, NaN for an unknown (or infinite) value.
func (c *Column) Round(v float64) float64 {
	if math.IsNaN(v) || math.IsInf(v, 0) {
		return math.NaN()
	}
	if c.Kind != Number {
		return v
	}
	var buf [40]byte
	x, err := strconv.ParseFloat(string(c.Append(buf[:0], v)), 64)
	if err != nil {
		return math.NaN() // not reached: Append writes a number
	}
	return x
}

// Schema is the layout of one table file.
type Schema struct {
	// File is the file's name ("crests.csv"); Rows names its rows in
	// messages ("crest rows").
	File, Rows string
	Columns    []Column
	// MinRows is the fewest rows the file may hold.
	MinRows int
	// Check tests what single fields cannot (order, relations between
	// columns) and may put the rows in their canonical order; it returns
	// the 0-based row of a defect and a predicate saying what the row has
	// wrong ("has 5 foam cells, more than ..."), or −1 and "".
	Check func(t *Table) (row int, msg string)
	index map[string]int
}

func newSchema(file, rows string, minRows int, cols ...Column) *Schema {
	s := &Schema{File: file, Rows: rows, Columns: cols, MinRows: minRows, index: map[string]int{}}
	for i, c := range cols {
		if _, dup := s.index[c.Name]; dup {
			panic("table: column " + c.Name + " twice in " + file)
		}
		s.index[c.Name] = i
	}
	return s
}

// Index returns the position of the named column, −1 if there is none.
func (s *Schema) Index(name string) int {
	if i, ok := s.index[name]; ok {
		return i
	}
	return -1
}

// must returns the position of the named column; the name is one of this
// package's own, so a miss is a programming error.
func (s *Schema) must(name string) int {
	i := s.Index(name)
	if i < 0 {
		panic("table: " + s.File + " has no column " + name)
	}
	return i
}

// Names lists the column names in order.
func (s *Schema) Names() []string {
	out := make([]string, len(s.Columns))
	for i, c := range s.Columns {
		out[i] = c.Name
	}
	return out
}

// Table is a table held column by column (see the package documentation).
type Table struct {
	Schema *Schema
	Cols   [][]float64
	// Text holds the Text columns, Text[k] for column k (nil for the
	// other columns, and nil altogether when the schema has none).
	Text [][]string
}

// New returns a table of n rows, every value unknown (NaN, or empty
// text).
func New(s *Schema, n int) *Table {
	t := &Table{Schema: s, Cols: make([][]float64, len(s.Columns))}
	for k := range t.Cols {
		col := make([]float64, n)
		for i := range col {
			col[i] = math.NaN()
		}
		t.Cols[k] = col
		if s.Columns[k].Kind == Text {
			if t.Text == nil {
				t.Text = make([][]string, len(s.Columns))
			}
			t.Text[k] = make([]string, n)
		}
	}
	return t
}

// TextCol returns the named Text column, nil if the schema has none.
func (t *Table) TextCol(name string) []string {
	if i := t.Schema.Index(name); i >= 0 && t.Text != nil {
		return t.Text[i]
	}
	return nil
}

// Len is the number of rows.
func (t *Table) Len() int {
	if len(t.Cols) == 0 {
		return 0
	}
	return len(t.Cols[0])
}

// Col returns the named column, nil if the schema has none.
func (t *Table) Col(name string) []float64 {
	if i := t.Schema.Index(name); i >= 0 {
		return t.Cols[i]
	}
	return nil
}

// Round rounds every value to the precision of its column, as writing and
// reading the table back would.
func (t *Table) Round() {
	for k := range t.Cols {
		c := &t.Schema.Columns[k]
		col := t.Cols[k]
		for i, v := range col {
			col[i] = c.Round(v)
		}
	}
}

// Permute puts the rows in the order perm gives: row i becomes old row
// perm[i].
func (t *Table) Permute(perm []int) {
	tmp := make([]float64, len(perm))
	for _, col := range t.Cols {
		for i, p := range perm {
			tmp[i] = col[p]
		}
		copy(col, tmp)
	}
	for _, col := range t.Text {
		if col == nil {
			continue
		}
		txt := make([]string, len(perm))
		for i, p := range perm {
			txt[i] = col[p]
		}
		copy(col, txt)
	}
}

// FlagValue is the number a yes/no column holds: 1 for true, 0 for false.
func FlagValue(b bool) float64 {
	if b {
		return 1
	}
	return 0
}
