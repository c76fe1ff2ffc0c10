package netcdf

import (
	"encoding/binary"
	"errors"
	"fmt"
	"io"
	"math"
	"math/bits"
	"os"
	"strings"
	"unicode/utf8"
)

// This file checks the header of a NetCDF classic-family file (CDF-1
// "classic", CDF-2 "64-bit offset" and CDF-5 "64-bit data") in Go, before
// the C library sees it. libnetcdf 4.9 trusts the header's counts and
// lengths: a damaged header can make nc_open read far past the file, loop
// for minutes or crash the process (a name length with the sign bit set is
// enough), and a file cut short after its header is read as if the missing
// data were zeros. The check below follows the grammar of the NetCDF Classic
// Format Specification (NetCDF User's Guide, appendix "File Format
// Specifications"; CDF-5 as described there: 8-byte counts, lengths, sizes and
// offsets and five more atomic types) and refuses anything it does not
// describe, with a sentence that says what is wrong.

// Limits of netcdf.h, which libnetcdf enforces on files it writes; a header
// beyond them was not written by it and is refused.
const (
	classicMaxName    = 256  // NC_MAX_NAME
	classicMaxVarDims = 1024 // NC_MAX_VAR_DIMS
)

// Header list tags and sentinels of the classic format.
const (
	tagAbsent    = 0x00
	tagDimension = 0x0A
	tagVariable  = 0x0B
	tagAttribute = 0x0C
)

// ErrTruncated is wrapped by the error [Open] and [CheckClassic] return when
// a classic-format file is shorter than its header says: a copy that stopped
// early.
var ErrTruncated = errors.New("file is truncated")

// ClassicDim is a dimension of a classic-format header. Len is 0 for the
// record (unlimited) dimension.
type ClassicDim struct {
	Name string
	Len  int64
}

// ClassicAttr is an attribute of a classic-format header: its name, type and
// number of values (the values themselves are not kept).
type ClassicAttr struct {
	Name string
	Type Type
	N    int64
}

// ClassicVar is a variable of a classic-format header.
type ClassicVar struct {
	Name   string
	DimIDs []int
	Attrs  []ClassicAttr
	Type   Type
	// Size is the number of bytes of the variable's data, or of one record
	// of it for a record variable, computed from its shape and type (the
	// header's own vsize field is not trusted).
	Size  int64
	Begin int64 // file offset of the first byte of data
	// Record is true when the first dimension is the record dimension.
	Record bool
}

// ClassicHeader is the checked header of a classic-format file.
type ClassicHeader struct {
	Version    int   // 1 classic, 2 64-bit offset, 5 64-bit data (CDF-5)
	NumRecs    int64 // length of the record dimension
	Dims       []ClassicDim
	Attrs      []ClassicAttr // global attributes
	Vars       []ClassicVar
	HeaderSize int64 // bytes of the header
	// RecSize is the number of bytes of one record: the sum of the record
	// variables' sizes, each padded to 4 bytes except when there is a
	// single record variable.
	RecSize int64
	// DataEnd is the smallest file size that holds all the data the header
	// describes.
	DataEnd int64
}

// IsClassicMagic reports whether b starts with the magic number of a
// classic-family NetCDF file ("CDF" and a version byte 1, 2 or 5).
func IsClassicMagic(b []byte) bool {
	return len(b) >= 4 && b[0] == 'C' && b[1] == 'D' && b[2] == 'F' && (b[3] == 1 || b[3] == 2 || b[3] == 5)
}

// CheckClassic checks the classic-format file at path: its header against
// the format and its size against the header. A file that is not of the
// classic family (NetCDF-4/HDF5, or not NetCDF at all) gives (nil, nil).
// A damaged header gives an error wrapping [ErrNotNetCDF], a short file one
// wrapping [ErrTruncated]; both name the file and say what is wrong.
func CheckClassic(path string) (*ClassicHeader, error) {
	f, err := os.Open(path)
	if err != nil {
		return nil, fmt.Errorf("netcdf: cannot open %s: %w", path, err)
	}
	defer f.Close()
	fi, err := f.Stat()
	if err != nil {
		return nil, fmt.Errorf("netcdf: cannot open %s: %w", path, err)
	}
	var magic [4]byte
	if n, _ := f.ReadAt(magic[:], 0); n < 4 || !IsClassicMagic(magic[:]) {
		return nil, nil
	}
	h, err := ParseClassicHeader(f, fi.Size())
	if err != nil {
		return nil, classicError(path, err)
	}
	return h, nil
}

// classicError turns a header error into the sentence Open reports.
func classicError(path string, err error) error {
	if errors.Is(err, ErrTruncated) {
		return &sentenceError{kind: ErrTruncated,
			msg: fmt.Sprintf("netcdf: %s is truncated: %v; copy the complete file again", path, unwrapText(err))}
	}
	return &sentenceError{kind: ErrNotNetCDF,
		msg: fmt.Sprintf("netcdf: %s is not a NetCDF file or is damaged (classic-format header: %v); check that it is NetCDF and was copied completely", path, err)}
}

// sentenceError is a one-sentence error that wraps a sentinel without
// repeating the sentinel's words.
type sentenceError struct {
	msg  string
	kind error
}

func (e *sentenceError) Error() string { return e.msg }
func (e *sentenceError) Unwrap() error { return e.kind }

// unwrapText returns the message of a "...: ErrTruncated" error without the
// sentinel's own text.
func unwrapText(err error) string {
	return strings.TrimSuffix(err.Error(), ": "+ErrTruncated.Error())
}

// headerError is a fault of a classic header at a byte offset.
type headerError struct {
	off int64
	msg string
}

func (e *headerError) Error() string { return fmt.Sprintf("%s (at byte %d)", e.msg, e.off) }

// cursor reads big-endian fields of a header through an io.ReaderAt, a
// block at a time, never past size.
type cursor struct {
	r    io.ReaderAt
	size int64
	off  int64  // offset of the next field
	buf  []byte // file bytes [bufAt, bufAt+len(buf))
	at   int64
	wide bool // CDF-5: counts and lengths are 8 bytes
}

const cursorBlock = 64 << 10

func (c *cursor) fail(format string, a ...any) error {
	return &headerError{off: c.off, msg: fmt.Sprintf(format, a...)}
}

// remaining returns the bytes left in the file after the cursor.
func (c *cursor) remaining() int64 { return c.size - c.off }

// bytes returns the next n bytes (a view valid until the next call).
func (c *cursor) bytes(n int64, what string) ([]byte, error) {
	if n < 0 || n > c.remaining() {
		return nil, c.fail("the header ends inside %s (the file has %d bytes)", what, c.size)
	}
	if c.off < c.at || c.off+n > c.at+int64(len(c.buf)) {
		want := max(n, cursorBlock)
		want = min(want, c.size-c.off)
		if int64(cap(c.buf)) < want {
			c.buf = make([]byte, want)
		}
		c.buf = c.buf[:want]
		m, err := c.r.ReadAt(c.buf, c.off)
		if int64(m) < n {
			if err == nil {
				err = io.ErrUnexpectedEOF
			}
			return nil, c.fail("cannot read %s: %v", what, err)
		}
		c.buf = c.buf[:m]
		c.at = c.off
	}
	i := c.off - c.at
	c.off += n
	return c.buf[i : i+n], nil
}

// u32 reads a 4-byte unsigned field.
func (c *cursor) u32(what string) (uint32, error) {
	b, err := c.bytes(4, what)
	if err != nil {
		return 0, err
	}
	return binary.BigEndian.Uint32(b), nil
}

// nonNeg reads a NON_NEG field: a 4-byte non-negative INT, or an 8-byte one
// in CDF-5.
func (c *cursor) nonNeg(what string) (int64, error) {
	at := c.off
	v, err := c.int4or8(what, c.wide)
	if err != nil {
		return 0, err
	}
	if v < 0 {
		return 0, &headerError{off: at, msg: fmt.Sprintf("%s is negative (%d)", what, v)}
	}
	return v, nil
}

// offset reads an OFFSET field: 4 bytes in CDF-1, 8 bytes in CDF-2 and CDF-5.
func (c *cursor) offset(version int, what string) (int64, error) {
	at := c.off
	v, err := c.int4or8(what, version != 1)
	if err != nil {
		return 0, err
	}
	if v < 0 {
		if version == 1 {
			return 0, &headerError{off: at, msg: fmt.Sprintf("%s is negative (%d)", what, v)}
		}
		return 0, &headerError{off: at, msg: fmt.Sprintf("%s is negative", what)}
	}
	return v, nil
}

// int4or8 reads a big-endian signed integer field of 8 bytes when wide,
// of 4 otherwise.
func (c *cursor) int4or8(what string, wide bool) (int64, error) {
	if wide {
		b, err := c.bytes(8, what)
		if err != nil {
			return 0, err
		}
		return int64(binary.BigEndian.Uint64(b)), nil
	}
	v, err := c.u32(what)
	if err != nil {
		return 0, err
	}
	return int64(int32(v)), nil
}

// pad4 rounds n up to a multiple of 4.
func pad4(n int64) int64 { return (n + 3) &^ 3 }

// name reads a name: its length, the bytes, and padding to 4 bytes.
func (c *cursor) name(what string) (string, error) {
	at := c.off
	n, err := c.nonNeg("the length of " + what)
	if err != nil {
		return "", err
	}
	if n == 0 || n > classicMaxName {
		return "", &headerError{off: at, msg: fmt.Sprintf("the name of %s has length %d; names have 1 to %d bytes", what, n, classicMaxName)}
	}
	b, err := c.bytes(pad4(n), "the name of "+what)
	if err != nil {
		return "", err
	}
	s := string(b[:n])
	if err := checkName(s); err != nil {
		return "", &headerError{off: at, msg: fmt.Sprintf("the name of %s %v", what, err)}
	}
	return s, nil
}

// checkName applies the name rules of the format: UTF-8, no control
// characters, no '/', no trailing space.
func checkName(s string) error {
	if !utf8.ValidString(s) {
		return errors.New("is not valid UTF-8")
	}
	for _, r := range s {
		if r < 0x20 || r == 0x7f || r == '/' {
			return fmt.Errorf("%q holds a character (%U) that names may not contain", s, r)
		}
	}
	if strings.HasSuffix(s, " ") {
		return fmt.Errorf("%q ends in a space", s)
	}
	return nil
}

// typeSize returns the external size of a classic type, or 0 when the code
// is not a type of that format version.
func typeSize(t Type, version int) int64 {
	switch t {
	case Int8, Char:
		return 1
	case Int16:
		return 2
	case Int32, Float32:
		return 4
	case Float64:
		return 8
	}
	if version == 5 {
		switch t {
		case Uint8:
			return 1
		case Uint16:
			return 2
		case Uint32:
			return 4
		case Int64, Uint64:
			return 8
		}
	}
	return 0
}

// listHeader reads the tag and count of a list; a list of kind tag may be
// ABSENT (both zero).
func (c *cursor) listHeader(tag uint32, what string) (int64, error) {
	at := c.off
	t, err := c.u32("the tag of the " + what + " list")
	if err != nil {
		return 0, err
	}
	n, err := c.nonNeg("the number of " + what + "s")
	if err != nil {
		return 0, err
	}
	switch t {
	case tagAbsent:
		if n != 0 {
			return 0, &headerError{off: at, msg: fmt.Sprintf("the %s list is marked absent but counts %d entries", what, n)}
		}
		return 0, nil
	case tag:
		return n, nil
	}
	return 0, &headerError{off: at, msg: fmt.Sprintf("the %s list has tag 0x%x; expected 0x%x or 0 (absent)", what, t, tag)}
}

// uniqueName reads the name of what and checks that seen, the names of
// its list so far, does not hold it yet; kinds names the list's items, and
// owner, when not empty, what the list belongs to.
func (c *cursor) uniqueName(what, kinds, owner string, seen map[string]bool) (string, error) {
	name, err := c.name(what)
	if err != nil {
		return "", err
	}
	if seen[name] {
		if owner != "" {
			return "", c.fail("%s has two %s named %q", owner, kinds, name)
		}
		return "", c.fail("two %s are named %q", kinds, name)
	}
	seen[name] = true
	return name, nil
}

// attrs reads an attribute list.
func (c *cursor) attrs(version int, owner string) ([]ClassicAttr, error) {
	n, err := c.listHeader(tagAttribute, "attribute")
	if err != nil {
		return nil, err
	}
	// Each attribute takes at least 16 bytes (a name of 1 to 4 bytes, its
	// length, a type and a count), so a count beyond that cannot be right.
	if n > c.remaining()/16 {
		return nil, c.fail("%s has %d attributes, more than the %d bytes left could hold", owner, n, c.remaining())
	}
	out := make([]ClassicAttr, 0, n)
	seen := make(map[string]bool, n)
	for i := range n {
		what := fmt.Sprintf("attribute %d of %s", i, owner)
		name, err := c.uniqueName(what, "attributes", owner, seen)
		if err != nil {
			return nil, err
		}
		at := c.off
		tc, err := c.u32("the type of attribute " + name)
		if err != nil {
			return nil, err
		}
		t := Type(int32(tc))
		size := typeSize(t, version)
		if size == 0 {
			return nil, &headerError{off: at, msg: fmt.Sprintf("attribute %q of %s has type code %d, which is not a type of this format", name, owner, int32(tc))}
		}
		cnt, err := c.nonNeg("the number of values of attribute " + name)
		if err != nil {
			return nil, err
		}
		if cnt > c.remaining()/size {
			return nil, c.fail("attribute %q of %s has %d values, more than the %d bytes left could hold", name, owner, cnt, c.remaining())
		}
		if _, err := c.bytes(pad4(cnt*size), "the values of attribute "+name); err != nil {
			return nil, err
		}
		out = append(out, ClassicAttr{Name: name, Type: t, N: cnt})
	}
	return out, nil
}

// ParseClassicHeader reads and checks the header of a classic-family file
// of the given size from r, and checks that the file is long enough for
// the data the header describes (a shorter file gives an error wrapping
// [ErrTruncated]). It never reads outside [0, size) and allocates in
// proportion to what the header describes, never to a count it claims.
func ParseClassicHeader(r io.ReaderAt, size int64) (*ClassicHeader, error) {
	c := &cursor{r: r, size: size}
	magic, err := c.bytes(4, "the magic number")
	if err != nil {
		return nil, err
	}
	if !IsClassicMagic(magic) {
		return nil, c.fail("the file does not start with CDF and a version byte of 1, 2 or 5")
	}
	h := &ClassicHeader{Version: int(magic[3])}
	c.wide = h.Version == 5
	at := c.off
	if c.wide {
		b, err := c.bytes(8, "the number of records")
		if err != nil {
			return nil, err
		}
		h.NumRecs = int64(binary.BigEndian.Uint64(b))
	} else {
		v, err := c.u32("the number of records")
		if err != nil {
			return nil, err
		}
		h.NumRecs = int64(int32(v))
	}
	if h.NumRecs < 0 {
		// Includes STREAMING (all bits set), which libnetcdf does not
		// implement either.
		return nil, &headerError{off: at, msg: fmt.Sprintf("the number of records is %d (negative or \"streaming\")", h.NumRecs)}
	}

	// Dimensions: each takes at least 8 bytes (12 in practice).
	nd, err := c.listHeader(tagDimension, "dimension")
	if err != nil {
		return nil, err
	}
	if nd > c.remaining()/8 {
		return nil, c.fail("the header lists %d dimensions, more than the %d bytes left could hold", nd, c.remaining())
	}
	h.Dims = make([]ClassicDim, 0, nd)
	recDim := -1
	seen := map[string]bool{}
	for i := range nd {
		name, err := c.uniqueName(fmt.Sprintf("dimension %d", i), "dimensions", "", seen)
		if err != nil {
			return nil, err
		}
		n, err := c.nonNeg("the length of dimension " + name)
		if err != nil {
			return nil, err
		}
		if n == 0 {
			if recDim >= 0 {
				return nil, c.fail("dimensions %q and %q are both unlimited; a classic file has at most one", h.Dims[recDim].Name, name)
			}
			recDim = int(i)
		}
		h.Dims = append(h.Dims, ClassicDim{Name: name, Len: n})
	}

	if h.Attrs, err = c.attrs(h.Version, "the file (global)"); err != nil {
		return nil, err
	}

	// Variables: each takes at least 28 bytes.
	nv, err := c.listHeader(tagVariable, "variable")
	if err != nil {
		return nil, err
	}
	if nv > c.remaining()/28 {
		return nil, c.fail("the header lists %d variables, more than the %d bytes left could hold", nv, c.remaining())
	}
	h.Vars = make([]ClassicVar, 0, nv)
	seen = map[string]bool{}
	for i := range nv {
		name, err := c.uniqueName(fmt.Sprintf("variable %d", i), "variables", "", seen)
		if err != nil {
			return nil, err
		}
		v := ClassicVar{Name: name}
		at := c.off
		rank, err := c.nonNeg("the rank of variable " + name)
		if err != nil {
			return nil, err
		}
		if rank > classicMaxVarDims {
			return nil, &headerError{off: at, msg: fmt.Sprintf("variable %q has %d dimensions; at most %d are allowed", name, rank, classicMaxVarDims)}
		}
		v.DimIDs = make([]int, rank)
		for j := range rank {
			at := c.off
			id, err := c.nonNeg("a dimension id of variable " + name)
			if err != nil {
				return nil, err
			}
			if id >= int64(len(h.Dims)) {
				return nil, &headerError{off: at, msg: fmt.Sprintf("variable %q refers to dimension %d but the file has %d", name, id, len(h.Dims))}
			}
			if int(id) == recDim && j != 0 {
				return nil, &headerError{off: at, msg: fmt.Sprintf("variable %q has the unlimited dimension %q in place %d; it may only be first", name, h.Dims[id].Name, j)}
			}
			v.DimIDs[j] = int(id)
		}
		v.Record = rank > 0 && v.DimIDs[0] == recDim
		if v.Attrs, err = c.attrs(h.Version, fmt.Sprintf("variable %q", name)); err != nil {
			return nil, err
		}
		at = c.off
		tc, err := c.u32("the type of variable " + name)
		if err != nil {
			return nil, err
		}
		v.Type = Type(int32(tc))
		es := typeSize(v.Type, h.Version)
		if es == 0 {
			return nil, &headerError{off: at, msg: fmt.Sprintf("variable %q has type code %d, which is not a type of this format", name, int32(tc))}
		}
		if _, err := c.nonNeg("the size of variable " + name); err != nil { // vsize: recomputed below
			return nil, err
		}
		if v.Begin, err = c.offset(h.Version, "the data offset of variable "+name); err != nil {
			return nil, err
		}
		// Size from the shape, skipping the record dimension.
		n := uint64(es)
		for j, id := range v.DimIDs {
			if j == 0 && v.Record {
				continue
			}
			hi, lo := bits.Mul64(n, uint64(h.Dims[id].Len))
			if hi != 0 || lo > math.MaxInt64/2 {
				return nil, c.fail("variable %q is too large (%v)", name, v.DimIDs)
			}
			n = lo
		}
		v.Size = int64(n)
		h.Vars = append(h.Vars, v)
	}
	h.HeaderSize = c.off

	// Record size: padded sizes, except a single record variable.
	var nrec int
	for _, v := range h.Vars {
		if v.Record {
			nrec++
		}
	}
	for _, v := range h.Vars {
		if !v.Record {
			continue
		}
		s := v.Size
		if nrec > 1 {
			s = pad4(s)
		}
		if h.RecSize > math.MaxInt64/4-s {
			return nil, errors.New("the record size overflows")
		}
		h.RecSize += s
	}

	// Every variable's data must lie after the header and inside the file.
	h.DataEnd = h.HeaderSize
	var last *ClassicVar
	for i := range h.Vars {
		v := &h.Vars[i]
		if v.Begin < h.HeaderSize {
			return nil, fmt.Errorf("the data of variable %q starts at byte %d, inside the header of %d bytes", v.Name, v.Begin, h.HeaderSize)
		}
		end := v.Begin
		switch {
		case !v.Record:
			end += v.Size
		case h.NumRecs > 0:
			hi, lo := bits.Mul64(uint64(h.NumRecs-1), uint64(h.RecSize))
			if hi != 0 || lo > math.MaxInt64/2 {
				return nil, fmt.Errorf("%d records of %d bytes do not fit any file", h.NumRecs, h.RecSize)
			}
			end += int64(lo) + v.Size
		}
		if end < v.Begin {
			return nil, fmt.Errorf("the data of variable %q overflows", v.Name)
		}
		if end > h.DataEnd {
			h.DataEnd = end
			last = v
		}
	}
	if h.DataEnd > size {
		what := "the header"
		if last != nil {
			what = fmt.Sprintf("variable %q", last.Name)
			if last.Record {
				what += fmt.Sprintf(", %d records of %d bytes from byte %d,", h.NumRecs, h.RecSize, last.Begin)
			}
		}
		return nil, fmt.Errorf("the header describes %d bytes of data (%s ending at byte %d) but the file has only %d bytes (%.1f %%): %w",
			h.DataEnd, what, h.DataEnd, size, 100*float64(size)/float64(h.DataEnd), ErrTruncated)
	}
	return h, nil
}
