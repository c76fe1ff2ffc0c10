// Package netcdf is a thin cgo binding of the reference NetCDF C library
// (libnetcdf, as packaged by Debian) with just what crestspeed needs: open a
// file, inspect dimensions, variables and attributes, read whole variables or
// hyperslabs into caller-provided buffers, and write NetCDF-4 files atomically.
//
// # Model
//
// A NetCDF dataset holds named dimensions, named variables defined over an
// ordered list of dimensions, and attributes attached to a variable or to the
// dataset itself ("global" attributes, addressed here with the variable name
// ""). Only the root group is used.
//
// Reading goes through [Open] and a [File]. Whole coordinate variables are read
// with [File.ReadFloat64] (the library converts from the stored type); bulk data
// is read a hyperslab at a time with [File.ReadFloat32Slab] and
// [File.ReadUint8Slab], which fill a buffer the caller owns, so a loop over the
// records of a long file does not allocate.
//
// Writing goes through [Create] and a [Writer]. The dataset is written under a
// temporary name next to the final one ("<path>.part-<random>"); [Writer.Commit]
// closes it and renames it into place, [Writer.Abort] closes and removes it.
// A reader therefore never sees a half-written file under the final name.
// Calling Abort after Commit does nothing, so
//
//	w, err := netcdf.Create(path)
//	if err != nil { ... }
//	defer w.Abort()
//	... define, EndDef, put ...
//	return w.Commit()
//
// is the intended pattern.
//
// # Errors and concurrency
//
// Every error reported by libnetcdf becomes an [*Error] that names the file,
// the variable, dimension or attribute involved, and the library's own message
// (nc_strerror), for example
//
//	netcdf: /data/run1.nc: variable "eta": NetCDF: HDF error
//
// Buffer sizes and argument counts are checked in Go before any C call, so bad
// input yields an error, never a crash.
//
// libnetcdf (and the HDF5 library under it) is not thread-safe. Every call into
// it is made while holding one package-level mutex, so values of this package
// may be used from several goroutines, but calls are serialised. A single
// [File] or [Writer] must not be used concurrently with its own Close, Commit
// or Abort.
package netcdf

/*
#cgo pkg-config: netcdf hdf5
#include <stdlib.h>
#include <netcdf.h>
#include <H5Epublic.h>

// HDF5 is built thread-safe on Debian, which makes its "print the error
// stack" switch a per-thread setting: libnetcdf turns printing off only on
// the thread that first initialised it. cs_quiet_hdf5 turns it off on the
// calling thread, once per thread.
static __thread int cs_quiet;
static void cs_quiet_hdf5(void) {
	if (!cs_quiet) {
		H5Eset_auto2(H5E_DEFAULT, NULL, NULL);
		cs_quiet = 1;
	}
}
*/
import "C"

import (
	"crypto/rand"
	"encoding/hex"
	"errors"
	"fmt"
	"io/fs"
	"math"
	"os"
	"path/filepath"
	"runtime"
	"strings"
	"sync"
	"unsafe"
)

// mu serialises every call into libnetcdf, which is not thread-safe.
var mu sync.Mutex

// lock takes mu and pins the goroutine to its OS thread for the duration, so
// that the C calls of one operation run on one thread, whose HDF5 error
// printing is switched off (errors are reported as Go errors instead).
func lock() {
	mu.Lock()
	runtime.LockOSThread()
	C.cs_quiet_hdf5()
}

// unlock undoes lock.
func unlock() {
	runtime.UnlockOSThread()
	mu.Unlock()
}

// Type is a NetCDF external data type.
type Type int

// NetCDF external types. Int8 is NetCDF's NC_BYTE (signed); Uint8 is NC_UBYTE.
const (
	Int8    Type = 1  // NC_BYTE
	Char    Type = 2  // NC_CHAR
	Int16   Type = 3  // NC_SHORT
	Int32   Type = 4  // NC_INT
	Float32 Type = 5  // NC_FLOAT
	Float64 Type = 6  // NC_DOUBLE
	Uint8   Type = 7  // NC_UBYTE
	Uint16  Type = 8  // NC_USHORT
	Uint32  Type = 9  // NC_UINT
	Int64   Type = 10 // NC_INT64
	Uint64  Type = 11 // NC_UINT64
	String  Type = 12 // NC_STRING
)

// The type values above are those of netcdf.h; a mismatch fails to compile.
func _() {
	var x [1]struct{}
	_ = x[Int8-C.NC_BYTE]
	_ = x[Char-C.NC_CHAR]
	_ = x[Int16-C.NC_SHORT]
	_ = x[Int32-C.NC_INT]
	_ = x[Float32-C.NC_FLOAT]
	_ = x[Float64-C.NC_DOUBLE]
	_ = x[Uint8-C.NC_UBYTE]
	_ = x[Uint16-C.NC_USHORT]
	_ = x[Uint32-C.NC_UINT]
	_ = x[Int64-C.NC_INT64]
	_ = x[Uint64-C.NC_UINT64]
	_ = x[String-C.NC_STRING]
}

// String returns the CDL name of the type ("float", "ubyte", ...).
func (t Type) String() string {
	switch t {
	case Int8:
		return "byte"
	case Char:
		return "char"
	case Int16:
		return "short"
	case Int32:
		return "int"
	case Float32:
		return "float"
	case Float64:
		return "double"
	case Uint8:
		return "ubyte"
	case Uint16:
		return "ushort"
	case Uint32:
		return "uint"
	case Int64:
		return "int64"
	case Uint64:
		return "uint64"
	case String:
		return "string"
	}
	return fmt.Sprintf("type(%d)", int(t))
}

// numeric reports whether t is one of the numeric atomic types.
func (t Type) numeric() bool {
	switch t {
	case Int8, Int16, Int32, Float32, Float64, Uint8, Uint16, Uint32, Int64, Uint64:
		return true
	}
	return false
}

// ErrNotNetCDF is wrapped by the error [Open] returns when the file exists but
// libnetcdf cannot read it as a NetCDF dataset (wrong format, truncated or
// otherwise damaged).
var ErrNotNetCDF = errors.New("not a NetCDF file or damaged")

// Error is an error reported by libnetcdf, with the context it arose in.
type Error struct {
	Path string // file the operation was on
	Var  string // variable name, "" when none or for global attributes
	Dim  string // dimension name, "" when none
	Att  string // attribute name, "" when none
	Op   string // what was being done, "" when the library message says enough
	Code int    // libnetcdf status code (negative), or a positive errno
}

// Error formats the error as
// `netcdf: <path>: variable "<var>": attribute "<att>": <op>: <library message>`,
// leaving out the parts that are empty.
func (e *Error) Error() string {
	var b strings.Builder
	b.WriteString("netcdf: ")
	b.WriteString(e.Path)
	if e.Var != "" {
		fmt.Fprintf(&b, ": variable %q", e.Var)
	}
	if e.Dim != "" {
		fmt.Fprintf(&b, ": dimension %q", e.Dim)
	}
	if e.Att != "" {
		fmt.Fprintf(&b, ": attribute %q", e.Att)
	}
	if e.Op != "" {
		b.WriteString(": ")
		b.WriteString(e.Op)
	}
	b.WriteString(": ")
	b.WriteString(strerror(e.Code))
	return b.String()
}

// NotFound reports whether the error says that a variable, dimension or
// attribute does not exist.
func (e *Error) NotFound() bool {
	switch e.Code {
	case C.NC_ENOTVAR, C.NC_EBADDIM, C.NC_ENOTATT:
		return true
	}
	return false
}

// IsNotFound reports whether err is an [*Error] saying that a variable,
// dimension or attribute does not exist.
func IsNotFound(err error) bool {
	var e *Error
	return errors.As(err, &e) && e.NotFound()
}

// strerror returns the library's message for a status code. nc_strerror
// returns pointers to static strings, so nothing is freed. It takes no lock:
// it only reads constant tables.
func strerror(code int) string {
	return C.GoString(C.nc_strerror(C.int(code)))
}

// handle is the part shared by File and Writer: an open dataset and a cache
// of variable ids and a scratch area for start/count vectors, so that slab
// calls in a loop do not allocate. All fields are used under mu.
type handle struct {
	path    string // path the dataset was opened or created under
	name    string // path shown in errors (the final path for a Writer)
	ncid    C.int
	open    bool
	vars    map[string]varInfo
	scratch []C.size_t
}

type varInfo struct {
	id    C.int
	ndims int
	typ   Type
}

func (h *handle) err(code C.int, varName, op string) error {
	return &Error{Path: h.name, Var: varName, Op: op, Code: int(code)}
}

func (h *handle) closedErr(varName string) error {
	e := fmt.Errorf("netcdf: %s: dataset already closed", h.name)
	if varName != "" {
		e = fmt.Errorf("netcdf: %s: variable %q: dataset already closed", h.name, varName)
	}
	return e
}

// varLocked returns the id, rank and type of a variable, from the cache when
// possible. Name "" is NC_GLOBAL with rank 0. mu must be held.
func (h *handle) varLocked(name string) (varInfo, error) {
	if !h.open {
		return varInfo{}, h.closedErr(name)
	}
	if name == "" {
		return varInfo{id: C.NC_GLOBAL}, nil
	}
	if v, ok := h.vars[name]; ok {
		return v, nil
	}
	cname := C.CString(name)
	defer C.free(unsafe.Pointer(cname))
	var id C.int
	if st := C.nc_inq_varid(h.ncid, cname, &id); st != C.NC_NOERR {
		return varInfo{}, h.err(st, name, "")
	}
	var nd C.int
	var typ C.nc_type
	if st := C.nc_inq_varndims(h.ncid, id, &nd); st != C.NC_NOERR {
		return varInfo{}, h.err(st, name, "")
	}
	if st := C.nc_inq_vartype(h.ncid, id, &typ); st != C.NC_NOERR {
		return varInfo{}, h.err(st, name, "")
	}
	v := varInfo{id: id, ndims: int(nd), typ: Type(typ)}
	if h.vars == nil {
		h.vars = make(map[string]varInfo)
	}
	h.vars[name] = v
	return v, nil
}

// startCount converts start and count to C size_t vectors in the scratch
// area, checking them against the variable's rank. It returns the number of
// values the hyperslab holds. mu must be held.
func (h *handle) startCount(name string, v varInfo, start, count []int) (st, ct *C.size_t, n int, err error) {
	if len(start) != v.ndims || len(count) != v.ndims {
		return nil, nil, 0, fmt.Errorf("netcdf: %s: variable %q has %d dimensions but the hyperslab has start of length %d and count of length %d; give one entry per dimension",
			h.name, name, v.ndims, len(start), len(count))
	}
	if cap(h.scratch) < 2*v.ndims {
		h.scratch = make([]C.size_t, 2*v.ndims)
	}
	s := h.scratch[:2*v.ndims]
	n = 1
	for i := range v.ndims {
		if start[i] < 0 || count[i] < 0 {
			return nil, nil, 0, fmt.Errorf("netcdf: %s: variable %q: hyperslab start %v and count %v must not be negative", h.name, name, start, count)
		}
		s[i] = C.size_t(start[i])
		s[v.ndims+i] = C.size_t(count[i])
		if n > 0 && count[i] > math.MaxInt/n {
			return nil, nil, 0, fmt.Errorf("netcdf: %s: variable %q: hyperslab count %v is too large", h.name, name, count)
		}
		n *= count[i]
	}
	if v.ndims == 0 {
		return nil, nil, 1, nil
	}
	return &s[0], &s[v.ndims], n, nil
}

// File is a NetCDF dataset open for reading. Create it with [Open] and release
// it with [File.Close].
type File struct {
	h       handle
	classic *ClassicHeader // nil unless classic format
}

// Open opens an existing NetCDF file (any format libnetcdf reads: classic,
// 64-bit offset, CDF-5, NetCDF-4/HDF5) read-only.
//
// A missing path gives an error wrapping [fs.ErrNotExist]; a file libnetcdf
// cannot read gives an error wrapping [ErrNotNetCDF] that says "<path> is not
// a NetCDF file or is damaged".
func Open(path string) (*File, error) {
	fi, err := os.Stat(path)
	switch {
	case errors.Is(err, fs.ErrNotExist):
		return nil, fmt.Errorf("netcdf: %s does not exist; check the path: %w", path, fs.ErrNotExist)
	case err != nil:
		return nil, fmt.Errorf("netcdf: cannot open %s: %w", path, err)
	case fi.IsDir():
		return nil, fmt.Errorf("netcdf: %s is a directory, not a NetCDF file; give the path of a .nc file", path)
	}
	// A classic-format header is checked in Go first: libnetcdf trusts its
	// counts and can crash or loop on a damaged one, and it reads a file
	// cut short after the header as if the rest were zeros.
	classic, err := CheckClassic(path)
	if err != nil {
		return nil, err
	}
	cpath := C.CString(path)
	defer C.free(unsafe.Pointer(cpath))
	lock()
	defer unlock()
	var id C.int
	if st := C.nc_open(cpath, C.NC_NOWRITE, &id); st != C.NC_NOERR {
		if st > 0 { // a system errno such as EACCES
			return nil, fmt.Errorf("netcdf: cannot open %s: %s", path, strerror(int(st)))
		}
		return nil, fmt.Errorf("netcdf: %s is not a NetCDF file or is damaged (%s); check that it is NetCDF and was copied completely: %w",
			path, strerror(int(st)), ErrNotNetCDF)
	}
	return &File{h: handle{path: path, name: path, ncid: id, open: true}, classic: classic}, nil
}

// Classic returns the checked header of a classic-format file, or nil for a
// NetCDF-4 file.
func (f *File) Classic() *ClassicHeader { return f.classic }

// Path returns the path the file was opened with.
func (f *File) Path() string { return f.h.path }

// Close closes the file. Closing an already closed file does nothing.
func (f *File) Close() error {
	lock()
	defer unlock()
	if !f.h.open {
		return nil
	}
	f.h.open = false
	if st := C.nc_close(f.h.ncid); st != C.NC_NOERR {
		return f.h.err(st, "", "close")
	}
	return nil
}

// Format returns the on-disk format: "classic", "64-bit offset", "cdf5",
// "netcdf4" or "netcdf4-classic".
func (f *File) Format() (string, error) {
	lock()
	defer unlock()
	if !f.h.open {
		return "", f.h.closedErr("")
	}
	var fm C.int
	if st := C.nc_inq_format(f.h.ncid, &fm); st != C.NC_NOERR {
		return "", f.h.err(st, "", "")
	}
	switch fm {
	case C.NC_FORMAT_CLASSIC:
		return "classic", nil
	case C.NC_FORMAT_64BIT_OFFSET:
		return "64-bit offset", nil
	case C.NC_FORMAT_CDF5:
		return "cdf5", nil
	case C.NC_FORMAT_NETCDF4:
		return "netcdf4", nil
	case C.NC_FORMAT_NETCDF4_CLASSIC:
		return "netcdf4-classic", nil
	}
	return fmt.Sprintf("format(%d)", int(fm)), nil
}

// Dim returns the length of a dimension (the current number of records for an
// unlimited dimension).
func (f *File) Dim(name string) (int, error) {
	lock()
	defer unlock()
	return f.h.dimLocked(name)
}

func (h *handle) dimLocked(name string) (int, error) {
	if !h.open {
		return 0, h.closedErr("")
	}
	cname := C.CString(name)
	defer C.free(unsafe.Pointer(cname))
	var id C.int
	if st := C.nc_inq_dimid(h.ncid, cname, &id); st != C.NC_NOERR {
		return 0, &Error{Path: h.name, Dim: name, Code: int(st)}
	}
	var n C.size_t
	if st := C.nc_inq_dimlen(h.ncid, id, &n); st != C.NC_NOERR {
		return 0, &Error{Path: h.name, Dim: name, Code: int(st)}
	}
	return int(n), nil
}

// HasDim reports whether the file has a dimension of that name.
func (f *File) HasDim(name string) bool {
	_, err := f.Dim(name)
	return err == nil
}

// HasVar reports whether the file has a variable of that name.
func (f *File) HasVar(name string) bool {
	if name == "" {
		return false
	}
	lock()
	defer unlock()
	_, err := f.h.varLocked(name)
	return err == nil
}

// Vars returns the names of all variables, in file order.
func (f *File) Vars() ([]string, error) {
	lock()
	defer unlock()
	if !f.h.open {
		return nil, f.h.closedErr("")
	}
	var n C.int
	if st := C.nc_inq_nvars(f.h.ncid, &n); st != C.NC_NOERR {
		return nil, f.h.err(st, "", "")
	}
	names := make([]string, 0, int(n))
	var buf [C.NC_MAX_NAME + 1]C.char
	for id := range C.int(n) {
		if st := C.nc_inq_varname(f.h.ncid, id, &buf[0]); st != C.NC_NOERR {
			return nil, f.h.err(st, "", "")
		}
		names = append(names, C.GoString(&buf[0]))
	}
	return names, nil
}

// VarType returns the stored type of a variable.
func (f *File) VarType(varName string) (Type, error) {
	lock()
	defer unlock()
	v, err := f.h.varLocked(varName)
	if err != nil {
		return 0, err
	}
	if varName == "" {
		return 0, fmt.Errorf("netcdf: %s: VarType needs a variable name", f.h.name)
	}
	return v.typ, nil
}

// VarDims returns the names of a variable's dimensions, slowest-varying first
// (the order of the CDL declaration).
func (f *File) VarDims(varName string) ([]string, error) {
	lock()
	defer unlock()
	names, _, err := f.h.varShapeLocked(varName)
	return names, err
}

// VarShape returns the lengths of a variable's dimensions, in the order of
// [File.VarDims].
func (f *File) VarShape(varName string) ([]int, error) {
	lock()
	defer unlock()
	_, shape, err := f.h.varShapeLocked(varName)
	return shape, err
}

func (h *handle) varShapeLocked(varName string) ([]string, []int, error) {
	if varName == "" {
		return nil, nil, fmt.Errorf("netcdf: %s: a variable name is needed", h.name)
	}
	v, err := h.varLocked(varName)
	if err != nil {
		return nil, nil, err
	}
	if v.ndims == 0 {
		return []string{}, []int{}, nil
	}
	ids := make([]C.int, v.ndims)
	if st := C.nc_inq_vardimid(h.ncid, v.id, &ids[0]); st != C.NC_NOERR {
		return nil, nil, h.err(st, varName, "")
	}
	names := make([]string, v.ndims)
	shape := make([]int, v.ndims)
	var buf [C.NC_MAX_NAME + 1]C.char
	for i, id := range ids {
		var n C.size_t
		if st := C.nc_inq_dim(h.ncid, id, &buf[0], &n); st != C.NC_NOERR {
			return nil, nil, h.err(st, varName, "")
		}
		names[i] = C.GoString(&buf[0])
		shape[i] = int(n)
	}
	return names, shape, nil
}

// ReadFloat64 reads a whole variable, converted to float64 by the library
// (nc_get_var_double). It is meant for coordinate variables and other small
// arrays; use the slab readers for bulk data.
func (f *File) ReadFloat64(varName string) ([]float64, error) {
	lock()
	defer unlock()
	_, shape, err := f.h.varShapeLocked(varName)
	if err != nil {
		return nil, err
	}
	v, _ := f.h.varLocked(varName)
	if !v.typ.numeric() {
		return nil, fmt.Errorf("netcdf: %s: variable %q has type %s; expected a numeric variable", f.h.name, varName, v.typ)
	}
	n := 1
	for _, s := range shape {
		n *= s
	}
	out := make([]float64, n)
	if n == 0 {
		return out, nil
	}
	if st := C.nc_get_var_double(f.h.ncid, v.id, (*C.double)(unsafe.Pointer(&out[0]))); st != C.NC_NOERR {
		return nil, f.h.err(st, varName, "read")
	}
	return out, nil
}

// ReadFloat32Slab reads the hyperslab start..start+count of a variable into
// dst, converted to float32 by the library (nc_get_vara_float). dst must hold
// at least the product of count; values are stored row-major (last dimension
// fastest). It does not allocate in steady state.
func (f *File) ReadFloat32Slab(varName string, start, count []int, dst []float32) error {
	lock()
	defer unlock()
	v, err := f.h.varLocked(varName)
	if err != nil {
		return err
	}
	if varName == "" {
		return fmt.Errorf("netcdf: %s: a variable name is needed", f.h.name)
	}
	if !v.typ.numeric() {
		return fmt.Errorf("netcdf: %s: variable %q has type %s; expected a numeric variable", f.h.name, varName, v.typ)
	}
	sp, cp, n, err := f.h.startCount(varName, v, start, count)
	if err != nil {
		return err
	}
	if len(dst) < n {
		return fmt.Errorf("netcdf: %s: variable %q: buffer holds %d values but the hyperslab has %d; pass a larger buffer", f.h.name, varName, len(dst), n)
	}
	if n == 0 {
		return nil
	}
	if st := C.nc_get_vara_float(f.h.ncid, v.id, sp, cp, (*C.float)(unsafe.Pointer(&dst[0]))); st != C.NC_NOERR {
		return f.h.err(st, varName, fmt.Sprintf("read start %v count %v", start, count))
	}
	return nil
}

// ReadUint8Slab reads a hyperslab of a variable into dst as unsigned bytes.
// Byte and ubyte variables are copied without conversion (a signed byte -1
// reads as 255); other numeric types are converted by the library
// (nc_get_vara_uchar) and values out of 0..255 give a range error.
func (f *File) ReadUint8Slab(varName string, start, count []int, dst []uint8) error {
	lock()
	defer unlock()
	v, err := f.h.varLocked(varName)
	if err != nil {
		return err
	}
	if varName == "" {
		return fmt.Errorf("netcdf: %s: a variable name is needed", f.h.name)
	}
	if !v.typ.numeric() {
		return fmt.Errorf("netcdf: %s: variable %q has type %s; expected a numeric variable", f.h.name, varName, v.typ)
	}
	sp, cp, n, err := f.h.startCount(varName, v, start, count)
	if err != nil {
		return err
	}
	if len(dst) < n {
		return fmt.Errorf("netcdf: %s: variable %q: buffer holds %d values but the hyperslab has %d; pass a larger buffer", f.h.name, varName, len(dst), n)
	}
	if n == 0 {
		return nil
	}
	var st C.int
	if v.typ == Int8 || v.typ == Uint8 {
		st = C.nc_get_vara(f.h.ncid, v.id, sp, cp, unsafe.Pointer(&dst[0]))
	} else {
		st = C.nc_get_vara_uchar(f.h.ncid, v.id, sp, cp, (*C.uchar)(unsafe.Pointer(&dst[0])))
	}
	if st != C.NC_NOERR {
		return f.h.err(st, varName, fmt.Sprintf("read start %v count %v", start, count))
	}
	return nil
}

// attLocked returns the type and length of an attribute; ok is false when it
// does not exist. mu must be held.
func (h *handle) attLocked(varName, attName string) (v varInfo, cname *C.char, typ Type, n int, ok bool, err error) {
	v, err = h.varLocked(varName)
	if err != nil {
		return v, nil, 0, 0, false, err
	}
	cname = C.CString(attName)
	var t C.nc_type
	var l C.size_t
	st := C.nc_inq_att(h.ncid, v.id, cname, &t, &l)
	if st == C.NC_ENOTATT {
		C.free(unsafe.Pointer(cname))
		return v, nil, 0, 0, false, nil
	}
	if st != C.NC_NOERR {
		C.free(unsafe.Pointer(cname))
		return v, nil, 0, 0, false, &Error{Path: h.name, Var: varName, Att: attName, Code: int(st)}
	}
	return v, cname, Type(t), int(l), true, nil
}

// AttText returns a text attribute of a variable (varName "" for a global
// attribute). ok is false, with a nil error, when the attribute is absent.
// Both char and string attributes are read; a string attribute with several
// values is returned joined by newlines. A numeric attribute is an error.
func (f *File) AttText(varName, attName string) (value string, ok bool, err error) {
	lock()
	defer unlock()
	return f.h.attTextLocked(varName, attName)
}

func (h *handle) attTextLocked(varName, attName string) (string, bool, error) {
	v, cname, typ, n, ok, err := h.attLocked(varName, attName)
	if err != nil || !ok {
		return "", false, err
	}
	defer C.free(unsafe.Pointer(cname))
	switch typ {
	case Char:
		if n == 0 {
			return "", true, nil
		}
		buf := C.malloc(C.size_t(n) + 1)
		defer C.free(buf)
		if st := C.nc_get_att_text(h.ncid, v.id, cname, (*C.char)(buf)); st != C.NC_NOERR {
			return "", false, &Error{Path: h.name, Var: varName, Att: attName, Code: int(st)}
		}
		s := C.GoStringN((*C.char)(buf), C.int(n))
		return strings.TrimRight(s, "\x00"), true, nil
	case String:
		if n == 0 {
			return "", true, nil
		}
		arr := (**C.char)(C.calloc(C.size_t(n), C.size_t(unsafe.Sizeof(uintptr(0)))))
		defer C.free(unsafe.Pointer(arr))
		if st := C.nc_get_att_string(h.ncid, v.id, cname, arr); st != C.NC_NOERR {
			return "", false, &Error{Path: h.name, Var: varName, Att: attName, Code: int(st)}
		}
		ptrs := unsafe.Slice(arr, n)
		parts := make([]string, n)
		for i, p := range ptrs {
			if p != nil {
				parts[i] = C.GoString(p)
			}
		}
		C.nc_free_string(C.size_t(n), arr)
		return strings.Join(parts, "\n"), true, nil
	}
	return "", false, fmt.Errorf("netcdf: %s: %sattribute %q has type %s; expected text", h.name, varPrefix(varName), attName, typ)
}

func varPrefix(varName string) string {
	if varName == "" {
		return "global "
	}
	return fmt.Sprintf("variable %q: ", varName)
}

// AttFloat64s returns all values of a numeric attribute, converted to
// float64. ok is false, with a nil error, when the attribute is absent.
// A text attribute is an error.
func (f *File) AttFloat64s(varName, attName string) (values []float64, ok bool, err error) {
	lock()
	defer unlock()
	v, cname, typ, n, ok, err := f.h.attLocked(varName, attName)
	if err != nil || !ok {
		return nil, false, err
	}
	defer C.free(unsafe.Pointer(cname))
	if !typ.numeric() {
		return nil, false, fmt.Errorf("netcdf: %s: %sattribute %q has type %s; expected a number", f.h.name, varPrefix(varName), attName, typ)
	}
	out := make([]float64, n)
	if n == 0 {
		return out, true, nil
	}
	if st := C.nc_get_att_double(f.h.ncid, v.id, cname, (*C.double)(unsafe.Pointer(&out[0]))); st != C.NC_NOERR {
		return nil, false, &Error{Path: f.h.name, Var: varName, Att: attName, Code: int(st)}
	}
	return out, true, nil
}

// AttFloat64 returns the first value of a numeric attribute, converted to
// float64. ok is false, with a nil error, when the attribute is absent or has
// no values. A text attribute is an error.
func (f *File) AttFloat64(varName, attName string) (value float64, ok bool, err error) {
	vs, ok, err := f.AttFloat64s(varName, attName)
	if err != nil || !ok || len(vs) == 0 {
		return 0, false, err
	}
	return vs[0], true, nil
}

// Atts returns the names of the attributes of a variable ("" for global
// attributes), in file order.
func (f *File) Atts(varName string) ([]string, error) {
	lock()
	defer unlock()
	v, err := f.h.varLocked(varName)
	if err != nil {
		return nil, err
	}
	var n C.int
	if st := C.nc_inq_varnatts(f.h.ncid, v.id, &n); st != C.NC_NOERR {
		return nil, f.h.err(st, varName, "")
	}
	names := make([]string, 0, int(n))
	var buf [C.NC_MAX_NAME + 1]C.char
	for i := range C.int(n) {
		if st := C.nc_inq_attname(f.h.ncid, v.id, i, &buf[0]); st != C.NC_NOERR {
			return nil, f.h.err(st, varName, "")
		}
		names = append(names, C.GoString(&buf[0]))
	}
	return names, nil
}

// TextAtts returns all text attributes of a variable ("" for global
// attributes) as a map. Numeric attributes are left out.
func (f *File) TextAtts(varName string) (map[string]string, error) {
	names, err := f.Atts(varName)
	if err != nil {
		return nil, err
	}
	lock()
	defer unlock()
	out := make(map[string]string, len(names))
	for _, a := range names {
		_, cname, typ, _, ok, err := f.h.attLocked(varName, a)
		if err != nil {
			return nil, err
		}
		if !ok {
			continue
		}
		C.free(unsafe.Pointer(cname))
		if typ != Char && typ != String {
			continue
		}
		s, _, err := f.h.attTextLocked(varName, a)
		if err != nil {
			return nil, err
		}
		out[a] = s
	}
	return out, nil
}

// FillValue returns the fill value of a numeric variable as float64: the
// value of its _FillValue attribute when there is one (explicit true), else
// the library's default fill for the type (explicit false). ok is false when
// the variable is stored without fill (NC_NOFILL) and has no _FillValue.
func (f *File) FillValue(varName string) (value float64, explicit, ok bool, err error) {
	lock()
	defer unlock()
	if varName == "" {
		return 0, false, false, fmt.Errorf("netcdf: %s: a variable name is needed", f.h.name)
	}
	v, err := f.h.varLocked(varName)
	if err != nil {
		return 0, false, false, err
	}
	if !v.typ.numeric() {
		return 0, false, false, fmt.Errorf("netcdf: %s: variable %q has type %s; expected a numeric variable", f.h.name, varName, v.typ)
	}
	cname := C.CString("_FillValue")
	defer C.free(unsafe.Pointer(cname))
	var t C.nc_type
	var l C.size_t
	st := C.nc_inq_att(f.h.ncid, v.id, cname, &t, &l)
	if st == C.NC_NOERR && l >= 1 {
		// Read via a buffer of the attribute's own length; nc_get_att_double
		// converts, so a fill of another type than the variable still reads.
		vals := make([]float64, int(l))
		if st := C.nc_get_att_double(f.h.ncid, v.id, cname, (*C.double)(unsafe.Pointer(&vals[0]))); st != C.NC_NOERR {
			return 0, false, false, &Error{Path: f.h.name, Var: varName, Att: "_FillValue", Code: int(st)}
		}
		return vals[0], true, true, nil
	}
	if st != C.NC_NOERR && st != C.NC_ENOTATT {
		return 0, false, false, &Error{Path: f.h.name, Var: varName, Att: "_FillValue", Code: int(st)}
	}
	// No attribute: ask the library (default fill, or no-fill mode).
	var noFill C.int
	var buf [8]uint64 // large enough for any numeric type
	if st := C.nc_inq_var_fill(f.h.ncid, v.id, &noFill, unsafe.Pointer(&buf[0])); st != C.NC_NOERR {
		return 0, false, false, f.h.err(st, varName, "inquire fill")
	}
	if noFill != 0 {
		return 0, false, false, nil
	}
	return decode(v.typ, unsafe.Pointer(&buf[0])), false, true, nil
}

// decode converts one value of type t at p to float64.
func decode(t Type, p unsafe.Pointer) float64 {
	switch t {
	case Int8:
		return float64(*(*int8)(p))
	case Uint8:
		return float64(*(*uint8)(p))
	case Int16:
		return float64(*(*int16)(p))
	case Uint16:
		return float64(*(*uint16)(p))
	case Int32:
		return float64(*(*int32)(p))
	case Uint32:
		return float64(*(*uint32)(p))
	case Int64:
		return float64(*(*int64)(p))
	case Uint64:
		return float64(*(*uint64)(p))
	case Float32:
		return float64(*(*float32)(p))
	case Float64:
		return *(*float64)(p)
	}
	return math.NaN()
}

// encode stores v converted to type t at p (which must have room for 8 bytes).
func encode(t Type, v float64, p unsafe.Pointer) error {
	inRange := func(lo, hi float64) bool { return v >= lo && v <= hi && v == math.Trunc(v) }
	switch t {
	case Float32:
		*(*float32)(p) = float32(v)
	case Float64:
		*(*float64)(p) = v
	case Int8:
		if !inRange(math.MinInt8, math.MaxInt8) {
			return fmt.Errorf("value %v does not fit type byte", v)
		}
		*(*int8)(p) = int8(v)
	case Uint8:
		if !inRange(0, math.MaxUint8) {
			return fmt.Errorf("value %v does not fit type ubyte", v)
		}
		*(*uint8)(p) = uint8(v)
	case Int16:
		if !inRange(math.MinInt16, math.MaxInt16) {
			return fmt.Errorf("value %v does not fit type short", v)
		}
		*(*int16)(p) = int16(v)
	case Uint16:
		if !inRange(0, math.MaxUint16) {
			return fmt.Errorf("value %v does not fit type ushort", v)
		}
		*(*uint16)(p) = uint16(v)
	case Int32:
		if !inRange(math.MinInt32, math.MaxInt32) {
			return fmt.Errorf("value %v does not fit type int", v)
		}
		*(*int32)(p) = int32(v)
	case Uint32:
		if !inRange(0, math.MaxUint32) {
			return fmt.Errorf("value %v does not fit type uint", v)
		}
		*(*uint32)(p) = uint32(v)
	case Int64:
		if !inRange(-(1 << 63), (1<<63)-1024) {
			return fmt.Errorf("value %v does not fit type int64", v)
		}
		*(*int64)(p) = int64(v)
	case Uint64:
		if !inRange(0, (1<<64)-2048) {
			return fmt.Errorf("value %v does not fit type uint64", v)
		}
		*(*uint64)(p) = uint64(v)
	default:
		return fmt.Errorf("type %s has no numeric fill value", t)
	}
	return nil
}

// randomSuffix returns 8 random bytes in hex, for temporary file names.
func randomSuffix() string {
	var b [8]byte
	_, _ = rand.Read(b[:]) // crypto/rand.Read never returns an error
	return hex.EncodeToString(b[:])
}

// tempPath returns the temporary name for path: same directory, so that the
// final rename does not cross file systems.
func tempPath(path string) string {
	return filepath.Join(filepath.Dir(path), filepath.Base(path)+".part-"+randomSuffix())
}

// Storage describes how a variable is laid out on disk.
type Storage struct {
	// Chunks holds the chunk shape, one entry per dimension, when the
	// variable is chunked (NetCDF-4); nil when it is stored contiguously
	// (every classic-format variable, and NetCDF-4 contiguous or compact
	// ones).
	Chunks []int
	// Deflate is the zlib level (0 when not compressed); Shuffle reports
	// the shuffle filter.
	Deflate int
	Shuffle bool
}

// VarStorage returns the storage layout of a variable (nc_inq_var_chunking,
// nc_inq_var_deflate). Classic-format files report contiguous storage.
func (f *File) VarStorage(varName string) (Storage, error) {
	lock()
	defer unlock()
	if varName == "" {
		return Storage{}, fmt.Errorf("netcdf: %s: a variable name is needed", f.h.name)
	}
	v, err := f.h.varLocked(varName)
	if err != nil {
		return Storage{}, err
	}
	var s Storage
	if f.classic != nil || v.ndims == 0 {
		return s, nil
	}
	var storage C.int
	sizes := make([]C.size_t, v.ndims)
	if st := C.nc_inq_var_chunking(f.h.ncid, v.id, &storage, &sizes[0]); st != C.NC_NOERR {
		return Storage{}, f.h.err(st, varName, "inquire chunking")
	}
	if storage == C.NC_CHUNKED {
		s.Chunks = make([]int, v.ndims)
		for i, c := range sizes {
			s.Chunks[i] = int(c)
		}
	}
	var shuffle, deflate, level C.int
	if st := C.nc_inq_var_deflate(f.h.ncid, v.id, &shuffle, &deflate, &level); st != C.NC_NOERR {
		return Storage{}, f.h.err(st, varName, "inquire compression")
	}
	if deflate != 0 {
		s.Deflate = int(level)
	}
	s.Shuffle = shuffle != 0
	return s, nil
}

// SetChunkCache sets the size in bytes of the chunk cache of one variable
// (nc_set_var_chunk_cache), with room for nslots chunks and the library's
// default preemption. It has no effect on classic-format files.
func (f *File) SetChunkCache(varName string, bytes, nslots int) error {
	lock()
	defer unlock()
	v, err := f.h.varLocked(varName)
	if err != nil {
		return err
	}
	if f.classic != nil || varName == "" {
		return nil
	}
	if bytes < 0 || nslots < 0 {
		return fmt.Errorf("netcdf: %s: variable %q: chunk cache of %d bytes and %d slots is invalid", f.h.name, varName, bytes, nslots)
	}
	if st := C.nc_set_var_chunk_cache(f.h.ncid, v.id, C.size_t(bytes), C.size_t(nslots), 0.75); st != C.NC_NOERR {
		return f.h.err(st, varName, "set chunk cache")
	}
	return nil
}

// ReadFloat64Slab reads a hyperslab of a variable into dst converted to
// float64 by the library (nc_get_vara_double); see [File.ReadFloat32Slab].
// Every value of the 8-, 16- and 32-bit integer types is exact in float64.
func (f *File) ReadFloat64Slab(varName string, start, count []int, dst []float64) error {
	lock()
	defer unlock()
	v, err := f.h.varLocked(varName)
	if err != nil {
		return err
	}
	if varName == "" {
		return fmt.Errorf("netcdf: %s: a variable name is needed", f.h.name)
	}
	if !v.typ.numeric() {
		return fmt.Errorf("netcdf: %s: variable %q has type %s; expected a numeric variable", f.h.name, varName, v.typ)
	}
	sp, cp, n, err := f.h.startCount(varName, v, start, count)
	if err != nil {
		return err
	}
	if len(dst) < n {
		return fmt.Errorf("netcdf: %s: variable %q: buffer holds %d values but the hyperslab has %d; pass a larger buffer", f.h.name, varName, len(dst), n)
	}
	if n == 0 {
		return nil
	}
	if st := C.nc_get_vara_double(f.h.ncid, v.id, sp, cp, (*C.double)(unsafe.Pointer(&dst[0]))); st != C.NC_NOERR {
		return f.h.err(st, varName, fmt.Sprintf("read start %v count %v", start, count))
	}
	return nil
}

// AttInfo returns the type and number of values of an attribute of a
// variable ("" for a global attribute); ok is false when it is absent.
func (f *File) AttInfo(varName, attName string) (typ Type, n int, ok bool, err error) {
	lock()
	defer unlock()
	_, cname, typ, n, ok, err := f.h.attLocked(varName, attName)
	if cname != nil {
		C.free(unsafe.Pointer(cname))
	}
	return typ, n, ok, err
}

// Numeric reports whether t is a numeric atomic type.
func (t Type) Numeric() bool { return t.numeric() }

// Integer reports whether t is one of the integer types.
func (t Type) Integer() bool { return t.numeric() && t != Float32 && t != Float64 }
