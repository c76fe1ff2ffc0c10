package ingest

import (
	"bufio"
	"encoding/binary"
	"errors"
	"fmt"
	"io"
	"math"
	"strconv"
	"strings"
)

// Point is one point of a cloud: coordinates in metres in the world frame
// of the record, z up.
type Point struct{ X, Y, Z float64 }

// PointReader streams the points of one file. Read fills p with up to
// len(p) points and returns how many, and io.EOF (with 0 points) after the
// last one; any other error names the file and the place of the fault.
// Points with a coordinate that is not finite are left out and counted by
// Dropped.
type PointReader interface {
	Read(p []Point) (int, error)
	Dropped() int
}

// Limits of the PLY header reader.
const (
	plyMaxHeader   = 64 << 10 // bytes of header
	plyMaxElements = 64
	plyMaxProps    = 256 // properties of one element
	plyMaxList     = 1 << 16
)

// plyType is a PLY scalar type.
type plyType struct {
	name string
	size int
}

// plyTypes are the scalar types of the PLY format, by both of their names
// (Turk's PLY format, as documented by Bourke, "PLY - Polygon File
// Format").
var plyTypes = map[string]plyType{
	"char": {"int8", 1}, "int8": {"int8", 1},
	"uchar": {"uint8", 1}, "uint8": {"uint8", 1},
	"short": {"int16", 2}, "int16": {"int16", 2},
	"ushort": {"uint16", 2}, "uint16": {"uint16", 2},
	"int": {"int32", 4}, "int32": {"int32", 4},
	"uint": {"uint32", 4}, "uint32": {"uint32", 4},
	"float": {"float32", 4}, "float32": {"float32", 4},
	"double": {"float64", 8}, "float64": {"float64", 8},
}

type plyProp struct {
	name      string
	typ       plyType
	list      bool
	countType plyType // of a list
}

type plyElement struct {
	name  string
	count int64
	props []plyProp
}

// PLYReader reads the vertices of a PLY file, ASCII or binary of either
// byte order: the x, y and z properties of the "vertex" element, of any
// scalar type; other properties and other elements are skipped. It reads
// no further than the last vertex and holds no more than one vertex in
// memory beyond the caller's buffer.
type PLYReader struct {
	r       *bufio.Reader
	name    string
	format  string // "ascii", "binary_little_endian", "binary_big_endian"
	order   binary.ByteOrder
	elems   []plyElement
	vert    int    // index of the vertex element
	xyz     [3]int // property indexes of x, y, z in the vertex element
	left    int64  // vertices still to read
	offset  int64  // bytes read so far (binary), for messages
	line    int    // current line (ASCII), for messages
	dropped int
	started bool
	err     error
	buf     []byte
	vals    []float64
	tok     asciiTokens
}

// plyError is a malformed-PLY error naming the file and the place.
func (p *PLYReader) fail(format string, args ...any) error {
	where := ""
	switch {
	case p.format == "" || p.format == "ascii":
		where = fmt.Sprintf(" line %d", p.line)
	default:
		where = fmt.Sprintf(" at byte %d", p.offset)
	}
	p.err = fmt.Errorf("ingest: PLY file %s%s: %s", oneLineText(p.name), where, fmt.Sprintf(format, args...))
	return p.err
}

// NewPLYReader reads the header of a PLY stream; name labels it in
// errors. The header must be of the PLY format (magic "ply", a format
// line, elements with their properties, "end_header") with a vertex
// element that has x, y and z properties.
func NewPLYReader(r io.Reader, name string) (*PLYReader, error) {
	p := &PLYReader{r: bufio.NewReaderSize(r, 64<<10), name: name, vert: -1}
	if err := p.header(); err != nil {
		return nil, err
	}
	return p, nil
}

// headerLine reads one header line, without its line end.
func (p *PLYReader) headerLine() (string, error) {
	var b []byte
	for {
		c, err := p.r.ReadByte()
		if err != nil {
			if err == io.EOF {
				return "", p.fail("the header ends before end_header; the file is truncated or not a PLY file")
			}
			return "", p.fail("cannot be read (%v)", err)
		}
		p.offset++
		if p.offset > plyMaxHeader {
			return "", p.fail("the header is longer than %d bytes; this is not a PLY file this reader takes", plyMaxHeader)
		}
		if c == '\n' {
			p.line++
			return strings.TrimSuffix(string(b), "\r"), nil
		}
		b = append(b, c)
	}
}

func (p *PLYReader) header() error {
	p.line = 0
	magic, err := p.headerLine()
	if err != nil {
		return err
	}
	if strings.TrimSpace(magic) != "ply" {
		return p.fail("does not begin with the line \"ply\", so it is not a PLY file")
	}
	for {
		l, err := p.headerLine()
		if err != nil {
			return err
		}
		f := strings.Fields(l)
		if len(f) == 0 {
			continue
		}
		switch f[0] {
		case "comment", "obj_info":
		case "format":
			if len(f) != 3 || f[2] != "1.0" {
				return p.fail("has the format line %q; it must be \"format ascii 1.0\", \"format binary_little_endian 1.0\" or \"format binary_big_endian 1.0\"", oneLineText(l))
			}
			switch f[1] {
			case "ascii":
			case "binary_little_endian":
				p.order = binary.LittleEndian
			case "binary_big_endian":
				p.order = binary.BigEndian
			default:
				return p.fail("has the unknown format %q; write it as ascii or binary_little_endian", oneLineText(f[1]))
			}
			p.format = f[1]
		case "element":
			if len(f) != 3 {
				return p.fail("has the element line %q; it must be \"element NAME COUNT\"", oneLineText(l))
			}
			n, err := strconv.ParseInt(f[2], 10, 64)
			if err != nil || n < 0 {
				return p.fail("gives element %s the count %q, which is not a whole number of at least 0", oneLineText(f[1]), oneLineText(f[2]))
			}
			if len(p.elems) >= plyMaxElements {
				return p.fail("has more than %d elements", plyMaxElements)
			}
			p.elems = append(p.elems, plyElement{name: f[1], count: n})
		case "property":
			if len(p.elems) == 0 {
				return p.fail("has a property before any element")
			}
			e := &p.elems[len(p.elems)-1]
			if len(e.props) >= plyMaxProps {
				return p.fail("element %s has more than %d properties", oneLineText(e.name), plyMaxProps)
			}
			var prop plyProp
			switch {
			case len(f) == 3:
				t, ok := plyTypes[f[1]]
				if !ok {
					return p.fail("property %s has the unknown type %q", oneLineText(f[2]), oneLineText(f[1]))
				}
				prop = plyProp{name: f[2], typ: t}
			case len(f) == 5 && f[1] == "list":
				ct, ok1 := plyTypes[f[2]]
				it, ok2 := plyTypes[f[3]]
				if !ok1 || !ok2 || strings.HasPrefix(ct.name, "float") {
					return p.fail("list property %s has the types %q %q; the count must be an integer type and both known", oneLineText(f[4]), oneLineText(f[2]), oneLineText(f[3]))
				}
				prop = plyProp{name: f[4], typ: it, list: true, countType: ct}
			default:
				return p.fail("has the property line %q; it must be \"property TYPE NAME\" or \"property list COUNT_TYPE ITEM_TYPE NAME\"", oneLineText(l))
			}
			e.props = append(e.props, prop)
		case "end_header":
			return p.checkHeader()
		default:
			return p.fail("has the header line %q, which is not of the PLY format", oneLineText(l))
		}
	}
}

func (p *PLYReader) checkHeader() error {
	if p.format == "" {
		return p.fail("has no format line before end_header")
	}
	for i, e := range p.elems {
		if e.name == "vertex" {
			p.vert = i
			break
		}
	}
	if p.vert < 0 {
		return p.fail("has no vertex element, so it holds no points")
	}
	e := p.elems[p.vert]
	for k, axis := range []string{"x", "y", "z"} {
		p.xyz[k] = -1
		for j, prop := range e.props {
			if prop.name == axis {
				if prop.list {
					return p.fail("vertex property %s is a list; it must be a single number", axis)
				}
				p.xyz[k] = j
				break
			}
		}
		if p.xyz[k] < 0 {
			return p.fail("vertex element has no %q property; points need x, y and z", axis)
		}
	}
	p.left = e.count
	p.vals = make([]float64, len(e.props))
	p.tok = asciiTokens{r: p.r}
	p.tok.line = p.line + 1
	return nil
}

// Dropped returns the number of vertices left out so far because a
// coordinate is not finite.
func (p *PLYReader) Dropped() int { return p.dropped }

// Count returns the number of vertices the header announces.
func (p *PLYReader) Count() int64 { return p.elems[p.vert].count }

// Read fills pts with the next vertices; see [PointReader].
func (p *PLYReader) Read(pts []Point) (int, error) {
	if p.err != nil {
		return 0, p.err
	}
	if !p.started {
		p.started = true
		// Skip the elements before the vertices.
		for i := 0; i < p.vert; i++ {
			e := p.elems[i]
			if len(e.props) == 0 {
				continue // instances of no bytes: nothing to skip
			}
			for k := int64(0); k < e.count; k++ {
				if err := p.element(e, nil); err != nil {
					return 0, err
				}
			}
		}
	}
	n := 0
	e := p.elems[p.vert]
	for n < len(pts) && p.left > 0 {
		if err := p.element(e, p.vals); err != nil {
			return n, err
		}
		p.left--
		x, y, z := p.vals[p.xyz[0]], p.vals[p.xyz[1]], p.vals[p.xyz[2]]
		if !finite(x) || !finite(y) || !finite(z) {
			p.dropped++
			continue
		}
		pts[n] = Point{x, y, z}
		n++
	}
	if n == 0 && p.left == 0 {
		return 0, io.EOF
	}
	return n, nil
}

func finite(v float64) bool { return !math.IsNaN(v) && !math.IsInf(v, 0) }

// element reads one instance of e, storing its scalar values in vals when
// vals is not nil.
func (p *PLYReader) element(e plyElement, vals []float64) error {
	if p.format == "ascii" {
		return p.elementASCII(e, vals)
	}
	for j, prop := range e.props {
		if prop.list {
			c, err := p.binScalar(prop.countType)
			if err != nil {
				return err
			}
			if c < 0 || c > plyMaxList || c != math.Trunc(c) {
				return p.fail("element %s has a list of %g items", oneLineText(e.name), c)
			}
			if err := p.discard(int(c) * prop.typ.size); err != nil {
				return err
			}
			continue
		}
		v, err := p.binScalar(prop.typ)
		if err != nil {
			return err
		}
		if vals != nil {
			vals[j] = v
		}
	}
	return nil
}

func (p *PLYReader) truncated() error {
	return p.fail("the data end early, with %d of %d vertices unread; the file is truncated", p.left, p.elems[p.vert].count)
}

func (p *PLYReader) discard(n int) error {
	k, err := p.r.Discard(n)
	p.offset += int64(k)
	if err != nil {
		return p.truncated()
	}
	return nil
}

func (p *PLYReader) binScalar(t plyType) (float64, error) {
	if cap(p.buf) < 8 {
		p.buf = make([]byte, 8)
	}
	b := p.buf[:t.size]
	k, err := io.ReadFull(p.r, b)
	p.offset += int64(k)
	if err != nil {
		if errors.Is(err, io.EOF) || errors.Is(err, io.ErrUnexpectedEOF) {
			return 0, p.truncated()
		}
		return 0, p.fail("cannot be read (%v)", err)
	}
	o := p.order
	switch t.name {
	case "int8":
		return float64(int8(b[0])), nil
	case "uint8":
		return float64(b[0]), nil
	case "int16":
		return float64(int16(o.Uint16(b))), nil
	case "uint16":
		return float64(o.Uint16(b)), nil
	case "int32":
		return float64(int32(o.Uint32(b))), nil
	case "uint32":
		return float64(o.Uint32(b)), nil
	case "float32":
		return float64(math.Float32frombits(o.Uint32(b))), nil
	default:
		return math.Float64frombits(o.Uint64(b)), nil
	}
}

func (p *PLYReader) elementASCII(e plyElement, vals []float64) error {
	num := func(what string) (float64, error) {
		tok, err := p.tok.next()
		p.line = p.tok.line
		if err != nil {
			if err == io.EOF {
				return 0, p.truncated()
			}
			return 0, p.fail("%v", err)
		}
		v, err := strconv.ParseFloat(tok, 64)
		if err != nil && !isRangeErr(err) {
			return 0, p.fail("%s %q is not a number", what, clip(tok))
		}
		return v, nil
	}
	for j, prop := range e.props {
		if prop.list {
			c, err := num("the list length of " + oneLineText(prop.name))
			if err != nil {
				return err
			}
			if c < 0 || c > plyMaxList || c != math.Trunc(c) {
				return p.fail("element %s has a list of %g items", oneLineText(e.name), c)
			}
			for k := 0; k < int(c); k++ {
				if _, err := num("a list item of " + oneLineText(prop.name)); err != nil {
					return err
				}
			}
			continue
		}
		v, err := num("property " + oneLineText(prop.name))
		if err != nil {
			return err
		}
		if vals != nil {
			vals[j] = v
		}
	}
	return nil
}

func isRangeErr(err error) bool {
	var ne *strconv.NumError
	return errors.As(err, &ne) && ne.Err == strconv.ErrRange
}

// asciiTokens splits a text stream into blank-separated tokens, counting
// lines, with a bound on the length of a token.
type asciiTokens struct {
	r    *bufio.Reader
	line int
	b    []byte
}

const maxToken = 256

func (t *asciiTokens) next() (string, error) {
	t.b = t.b[:0]
	for {
		c, err := t.r.ReadByte()
		if err != nil {
			if err == io.EOF && len(t.b) > 0 {
				return string(t.b), nil
			}
			return "", err
		}
		switch c {
		case ' ', '\t', '\r', '\n', '\f', '\v':
			if len(t.b) > 0 {
				if c == '\n' {
					_ = t.r.UnreadByte()
				}
				return string(t.b), nil
			}
			if c == '\n' {
				t.line++
			}
			continue
		}
		if len(t.b) >= maxToken {
			return "", fmt.Errorf("a value longer than %d characters", maxToken)
		}
		t.b = append(t.b, c)
	}
}
