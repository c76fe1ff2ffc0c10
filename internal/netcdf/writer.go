package netcdf

/*
#include <stdlib.h>
#include <netcdf.h>
*/
import "C"

import (
	"errors"
	"fmt"
	"os"
	"path/filepath"
	"syscall"
	"unsafe"
)

// Writer is a NetCDF-4 dataset being written under a temporary name. Define
// dimensions, variables and attributes, call [Writer.EndDef], put data, then
// [Writer.Commit]. Create it with [Create].
type Writer struct {
	h         handle
	final     string
	committed bool
	aborted   bool
}

// Create starts a NetCDF-4 (HDF5-based) dataset that will end up at path.
// The data go to "<path>.part-<random>" in the same directory until
// [Writer.Commit] renames the finished file to path (replacing any file
// there). The caller must end with Commit or [Writer.Abort].
func Create(path string) (*Writer, error) {
	if path == "" {
		return nil, errors.New("netcdf: output path is empty; give a file name")
	}
	if fi, err := os.Stat(path); err == nil && fi.IsDir() {
		return nil, fmt.Errorf("netcdf: %s is a directory; give a file name for the output", path)
	}
	lock()
	defer unlock()
	for range 8 {
		tmp := tempPath(path)
		ctmp := C.CString(tmp)
		var id C.int
		st := C.nc_create(ctmp, C.NC_NETCDF4|C.NC_NOCLOBBER, &id)
		C.free(unsafe.Pointer(ctmp))
		if st == C.NC_EEXIST {
			continue // name collision with another writer: draw again
		}
		if st != C.NC_NOERR {
			return nil, fmt.Errorf("netcdf: cannot create %s (as %s): %s; check that the directory exists and is writable",
				path, tmp, strerror(int(st)))
		}
		return &Writer{h: handle{path: tmp, name: path, ncid: id, open: true}, final: path}, nil
	}
	return nil, fmt.Errorf("netcdf: cannot create a temporary file for %s: too many name collisions", path)
}

// Path returns the final path the dataset is committed to.
func (w *Writer) Path() string { return w.final }

// TempPath returns the temporary path the dataset is written to.
func (w *Writer) TempPath() string { return w.h.path }

// DefDim defines a dimension; length 0 makes it unlimited (a record
// dimension that grows as data are put).
func (w *Writer) DefDim(name string, length int) error {
	if length < 0 {
		return fmt.Errorf("netcdf: %s: dimension %q: length %d is negative", w.final, name, length)
	}
	cname := C.CString(name)
	defer C.free(unsafe.Pointer(cname))
	n := C.size_t(length)
	if length == 0 {
		n = C.NC_UNLIMITED
	}
	lock()
	defer unlock()
	if !w.h.open {
		return w.h.closedErr("")
	}
	var id C.int
	if st := C.nc_def_dim(w.h.ncid, cname, n, &id); st != C.NC_NOERR {
		return &Error{Path: w.final, Dim: name, Op: "define", Code: int(st)}
	}
	return nil
}

// DefVar defines a variable of the given type over the named dimensions
// (slowest-varying first; none for a scalar).
func (w *Writer) DefVar(name string, typ Type, dims []string) error {
	if name == "" {
		return fmt.Errorf("netcdf: %s: a variable needs a name", w.final)
	}
	cname := C.CString(name)
	defer C.free(unsafe.Pointer(cname))
	lock()
	defer unlock()
	if !w.h.open {
		return w.h.closedErr(name)
	}
	ids := make([]C.int, len(dims)+1)
	for i, d := range dims {
		cd := C.CString(d)
		st := C.nc_inq_dimid(w.h.ncid, cd, &ids[i])
		C.free(unsafe.Pointer(cd))
		if st != C.NC_NOERR {
			return &Error{Path: w.final, Var: name, Dim: d, Op: "define variable", Code: int(st)}
		}
	}
	var id C.int
	if st := C.nc_def_var(w.h.ncid, cname, C.nc_type(typ), C.int(len(dims)), &ids[0], &id); st != C.NC_NOERR {
		return w.h.err(st, name, "define")
	}
	return nil
}

// SetDeflate turns on zlib compression at level 0-9 (0 leaves the data
// uncompressed), with the shuffle filter when shuffle is true.
func (w *Writer) SetDeflate(varName string, level int, shuffle bool) error {
	if level < 0 || level > 9 {
		return fmt.Errorf("netcdf: %s: variable %q: deflate level %d is outside 0-9", w.final, varName, level)
	}
	lock()
	defer unlock()
	v, err := w.h.varLocked(varName)
	if err != nil {
		return err
	}
	sh, on := C.int(0), C.int(0)
	if shuffle {
		sh = 1
	}
	if level > 0 {
		on = 1
	}
	if st := C.nc_def_var_deflate(w.h.ncid, v.id, sh, on, C.int(level)); st != C.NC_NOERR {
		return w.h.err(st, varName, "set deflate")
	}
	return nil
}

// SetChunks stores a variable in chunks of the given shape (one entry per
// dimension, each at least 1).
func (w *Writer) SetChunks(varName string, chunks []int) error {
	lock()
	defer unlock()
	v, err := w.h.varLocked(varName)
	if err != nil {
		return err
	}
	if len(chunks) != v.ndims || v.ndims == 0 {
		return fmt.Errorf("netcdf: %s: variable %q has %d dimensions but %d chunk sizes were given", w.final, varName, v.ndims, len(chunks))
	}
	cs := make([]C.size_t, len(chunks))
	for i, c := range chunks {
		if c < 1 {
			return fmt.Errorf("netcdf: %s: variable %q: chunk sizes %v must be at least 1", w.final, varName, chunks)
		}
		cs[i] = C.size_t(c)
	}
	if st := C.nc_def_var_chunking(w.h.ncid, v.id, C.NC_CHUNKED, &cs[0]); st != C.NC_NOERR {
		return w.h.err(st, varName, "set chunks")
	}
	return nil
}

// SetFill sets the _FillValue of a numeric variable, converted to the
// variable's type (NaN is allowed for float and double).
func (w *Writer) SetFill(varName string, value float64) error {
	lock()
	defer unlock()
	v, err := w.h.varLocked(varName)
	if err != nil {
		return err
	}
	var buf [1]uint64
	if err := encode(v.typ, value, unsafe.Pointer(&buf[0])); err != nil {
		return fmt.Errorf("netcdf: %s: variable %q: fill %w", w.final, varName, err)
	}
	if st := C.nc_def_var_fill(w.h.ncid, v.id, 0, unsafe.Pointer(&buf[0])); st != C.NC_NOERR {
		return w.h.err(st, varName, "set fill")
	}
	return nil
}

// PutAttText sets a text attribute of a variable ("" for global).
func (w *Writer) PutAttText(varName, name, value string) error {
	cname := C.CString(name)
	defer C.free(unsafe.Pointer(cname))
	lock()
	defer unlock()
	v, err := w.h.varLocked(varName)
	if err != nil {
		return err
	}
	var p *C.char
	if len(value) > 0 {
		cv := C.CString(value)
		defer C.free(unsafe.Pointer(cv))
		p = cv
	}
	if st := C.nc_put_att_text(w.h.ncid, v.id, cname, C.size_t(len(value)), p); st != C.NC_NOERR {
		return &Error{Path: w.final, Var: varName, Att: name, Op: "write", Code: int(st)}
	}
	return nil
}

// PutAtt sets a numeric attribute of the given type from float64 values
// (converted by the library; a value out of the type's range is an error).
func (w *Writer) PutAtt(varName, name string, typ Type, values ...float64) error {
	if !typ.numeric() {
		return fmt.Errorf("netcdf: %s: %sattribute %q: type %s is not numeric", w.final, varPrefix(varName), name, typ)
	}
	if len(values) == 0 {
		return fmt.Errorf("netcdf: %s: %sattribute %q needs at least one value", w.final, varPrefix(varName), name)
	}
	cname := C.CString(name)
	defer C.free(unsafe.Pointer(cname))
	lock()
	defer unlock()
	v, err := w.h.varLocked(varName)
	if err != nil {
		return err
	}
	st := C.nc_put_att_double(w.h.ncid, v.id, cname, C.nc_type(typ), C.size_t(len(values)), (*C.double)(unsafe.Pointer(&values[0])))
	if st != C.NC_NOERR {
		return &Error{Path: w.final, Var: varName, Att: name, Op: "write", Code: int(st)}
	}
	return nil
}

// PutAttFloat64 sets a double attribute.
func (w *Writer) PutAttFloat64(varName, name string, values ...float64) error {
	return w.PutAtt(varName, name, Float64, values...)
}

// PutAttInt sets an int (32-bit) attribute.
func (w *Writer) PutAttInt(varName, name string, values ...int) error {
	fs := make([]float64, len(values))
	for i, v := range values {
		fs[i] = float64(v)
	}
	return w.PutAtt(varName, name, Int32, fs...)
}

// EndDef leaves define mode; data can be put afterwards.
func (w *Writer) EndDef() error {
	lock()
	defer unlock()
	if !w.h.open {
		return w.h.closedErr("")
	}
	if st, errno := C.nc_enddef(w.h.ncid); st != C.NC_NOERR {
		return w.writeErr(st, errno, "", "end define mode")
	}
	return nil
}

// ReDef re-enters define mode after EndDef, so that attributes known only
// once the data are written (a time coverage, say) can be added; end it
// with EndDef again.
func (w *Writer) ReDef() error {
	lock()
	defer unlock()
	if !w.h.open {
		return w.h.closedErr("")
	}
	if st, errno := C.nc_redef(w.h.ncid); st != C.NC_NOERR {
		return w.writeErr(st, errno, "", "re-enter define mode")
	}
	return nil
}

// Dim returns the current length of a dimension.
func (w *Writer) Dim(name string) (int, error) {
	lock()
	defer unlock()
	return w.h.dimLocked(name)
}

// PutFloat64 writes a whole fixed-size variable from data, converted by the
// library to the variable's type. len(data) must equal the variable's size.
func (w *Writer) PutFloat64(varName string, data []float64) error {
	lock()
	defer unlock()
	_, shape, err := w.h.varShapeLocked(varName)
	if err != nil {
		return err
	}
	v, _ := w.h.varLocked(varName)
	n := 1
	for _, s := range shape {
		n *= s
	}
	if len(data) != n {
		return fmt.Errorf("netcdf: %s: variable %q has %d values (shape %v) but %d were given", w.final, varName, n, shape, len(data))
	}
	if n == 0 {
		return nil
	}
	if st, errno := C.nc_put_var_double(w.h.ncid, v.id, (*C.double)(unsafe.Pointer(&data[0]))); st != C.NC_NOERR {
		return w.writeErr(st, errno, varName, "write")
	}
	return nil
}

// putSlab checks the hyperslab and hands the C call the start, count and
// element count. mu must be held.
func (w *Writer) putSlab(varName string, start, count []int, have int, call func(v varInfo, sp, cp *C.size_t) (C.int, error)) error {
	if varName == "" {
		return fmt.Errorf("netcdf: %s: a variable name is needed", w.final)
	}
	v, err := w.h.varLocked(varName)
	if err != nil {
		return err
	}
	sp, cp, n, err := w.h.startCount(varName, v, start, count)
	if err != nil {
		return err
	}
	if have != n {
		return fmt.Errorf("netcdf: %s: variable %q: the hyperslab %v has %d values but %d were given", w.final, varName, count, n, have)
	}
	if n == 0 {
		return nil
	}
	if st, errno := call(v, sp, cp); st != C.NC_NOERR {
		return w.writeErr(st, errno, varName, fmt.Sprintf("write start %v count %v", start, count))
	}
	return nil
}

// PutFloat32Slab writes data (row-major, len = product of count) into the
// hyperslab start..start+count; an unlimited dimension grows as needed.
func (w *Writer) PutFloat32Slab(varName string, start, count []int, data []float32) error {
	lock()
	defer unlock()
	return w.putSlab(varName, start, count, len(data), func(v varInfo, sp, cp *C.size_t) (C.int, error) {
		st, errno := C.nc_put_vara_float(w.h.ncid, v.id, sp, cp, (*C.float)(unsafe.Pointer(&data[0])))
		return st, errno
	})
}

// PutFloat64Slab writes float64 data into a hyperslab; see [Writer.PutFloat32Slab].
func (w *Writer) PutFloat64Slab(varName string, start, count []int, data []float64) error {
	lock()
	defer unlock()
	return w.putSlab(varName, start, count, len(data), func(v varInfo, sp, cp *C.size_t) (C.int, error) {
		st, errno := C.nc_put_vara_double(w.h.ncid, v.id, sp, cp, (*C.double)(unsafe.Pointer(&data[0])))
		return st, errno
	})
}

// PutUint8Slab writes unsigned bytes into a hyperslab; see [Writer.PutFloat32Slab].
func (w *Writer) PutUint8Slab(varName string, start, count []int, data []uint8) error {
	lock()
	defer unlock()
	return w.putSlab(varName, start, count, len(data), func(v varInfo, sp, cp *C.size_t) (C.int, error) {
		st, errno := C.nc_put_vara_uchar(w.h.ncid, v.id, sp, cp, (*C.uchar)(unsafe.Pointer(&data[0])))
		return st, errno
	})
}

// PutInt32Slab writes int32 data into a hyperslab; see [Writer.PutFloat32Slab].
func (w *Writer) PutInt32Slab(varName string, start, count []int, data []int32) error {
	lock()
	defer unlock()
	return w.putSlab(varName, start, count, len(data), func(v varInfo, sp, cp *C.size_t) (C.int, error) {
		st, errno := C.nc_put_vara_int(w.h.ncid, v.id, sp, cp, (*C.int)(unsafe.Pointer(&data[0])))
		return st, errno
	})
}

// PutInt64Slab writes int64 data into a hyperslab; see [Writer.PutFloat32Slab].
func (w *Writer) PutInt64Slab(varName string, start, count []int, data []int64) error {
	lock()
	defer unlock()
	return w.putSlab(varName, start, count, len(data), func(v varInfo, sp, cp *C.size_t) (C.int, error) {
		st, errno := C.nc_put_vara_longlong(w.h.ncid, v.id, sp, cp, (*C.longlong)(unsafe.Pointer(&data[0])))
		return st, errno
	})
}

// Commit closes the dataset, flushes it to disk, gives it the permissions
// of the tool's other outputs (0644), renames it to its final path and
// flushes the directory, so that after a crash the final name holds either
// the complete new file or what was there before. After a failed Commit
// the temporary file is removed. Commit after Abort, or a second Commit, is
// an error.
func (w *Writer) Commit() error {
	lock()
	if w.committed || w.aborted {
		unlock()
		return fmt.Errorf("netcdf: %s: dataset already committed or aborted", w.final)
	}
	var closeErr error
	if w.h.open {
		w.h.open = false
		if st, errno := C.nc_close(w.h.ncid); st != C.NC_NOERR {
			closeErr = w.writeErr(st, errno, "", "close")
		}
	}
	unlock()
	fail := func(err error) error {
		w.aborted = true
		os.Remove(w.h.path)
		return err
	}
	if closeErr != nil {
		return fail(closeErr)
	}
	if err := syncFile(w.h.path); err != nil {
		return fail(w.osErr("flushing to disk", err))
	}
	if err := os.Chmod(w.h.path, 0o644); err != nil {
		return fail(fmt.Errorf("netcdf: %s: cannot set the permissions of the finished file: %w", w.final, err))
	}
	if err := os.Rename(w.h.path, w.final); err != nil {
		return fail(fmt.Errorf("netcdf: %s: cannot move the finished file into place: %w", w.final, err))
	}
	w.committed = true
	if err := syncDir(filepath.Dir(w.final)); err != nil {
		return w.osErr("flushing the directory to disk", err)
	}
	return nil
}

func syncFile(path string) error {
	f, err := os.OpenFile(path, os.O_RDWR, 0)
	if err != nil {
		return err
	}
	if err := f.Sync(); err != nil {
		f.Close()
		return err
	}
	return f.Close()
}

// syncDir flushes a directory, making a rename in it durable.
func syncDir(dir string) error {
	d, err := os.Open(dir)
	if err != nil {
		return err
	}
	err = d.Sync()
	if cerr := d.Close(); err == nil {
		err = cerr
	}
	if errors.Is(err, syscall.EINVAL) || errors.Is(err, syscall.ENOTSUP) {
		return nil // file systems that cannot sync a directory
	}
	return err
}

// ErrDiskFull is wrapped by write errors caused by a full file system (or
// an exhausted disk quota) under the output.
var ErrDiskFull = errors.New("no space left on the disk")

// lowSpace is the free space below which a failed write is put down to a
// full disk even when the library did not keep the system's error code.
const lowSpace = 1 << 20

// writeErr reports a failed library call while writing. libnetcdf reports
// most system failures under HDF5 as "NetCDF: HDF error"; the errno of the
// call and the free space of the file system tell a full disk and an I/O
// error apart, and the message then says so and names the file.
func (w *Writer) writeErr(st C.int, errno error, varName, op string) error {
	lib := &Error{Path: w.final, Var: varName, Op: op, Code: int(st)}
	if st > 0 { // a system errno returned as the status
		errno = syscall.Errno(st)
	}
	systemLevel := st > 0 || st == C.NC_EHDFERR || st == C.NC_EIO || st == C.NC_EFILEMETA
	if !systemLevel {
		return lib
	}
	if cause := w.diskCause(errno); cause != nil {
		return fmt.Errorf("%w (library: %s)", cause, strerror(int(st)))
	}
	return lib
}

// osErr reports a failed system call on the output.
func (w *Writer) osErr(op string, err error) error {
	var errno syscall.Errno
	errors.As(err, &errno)
	if cause := w.diskCause(errno); cause != nil {
		return cause
	}
	return fmt.Errorf("netcdf: %s: %s: %w", w.final, op, err)
}

// diskCause names the system-level cause of a failed write, or nil when
// there is none to name.
func (w *Writer) diskCause(errno error) error {
	dir := filepath.Dir(w.final)
	var free uint64
	var st syscall.Statfs_t
	haveFree := syscall.Statfs(dir, &st) == nil
	if haveFree {
		free = st.Bavail * uint64(st.Bsize)
	}
	switch {
	case errors.Is(errno, syscall.ENOSPC) || errors.Is(errno, syscall.EDQUOT) || (haveFree && free < lowSpace):
		return fmt.Errorf("netcdf: cannot write %s: the disk holding %s is full (%d KiB free); free space there or write the output to another disk, nothing was kept: %w",
			w.final, dir, free>>10, ErrDiskFull)
	case errors.Is(errno, syscall.EFBIG):
		return fmt.Errorf("netcdf: cannot write %s: the file exceeds the largest size allowed here (file system or ulimit -f); write to another disk or raise the limit, nothing was kept", w.final)
	case errors.Is(errno, syscall.EIO):
		return fmt.Errorf("netcdf: cannot write %s: the disk reported an input/output error; check the disk, nothing was kept", w.final)
	}
	return nil
}

// Abort closes the dataset and removes the temporary file. It does nothing
// after Commit or a previous Abort, so it is safe to defer.
func (w *Writer) Abort() {
	lock()
	if w.committed || w.aborted {
		unlock()
		return
	}
	w.aborted = true
	if w.h.open {
		w.h.open = false
		C.nc_close(w.h.ncid)
	}
	unlock()
	os.Remove(w.h.path)
}
