package netcdf

/*
#include <stdlib.h>
#include <netcdf.h>
#include <netcdf_mem.h>
*/
import "C"

import "unsafe"

// openUnchecked opens path with nc_open without the classic-header check,
// reads the inquiry functions a reader uses and closes it again. It exists
// for the tests that show what the check protects against (a damaged header
// can crash this call) and returns the library's status.
func openUnchecked(path string) int {
	cpath := C.CString(path)
	defer C.free(unsafe.Pointer(cpath))
	lock()
	defer unlock()
	var id C.int
	if st := C.nc_open(cpath, C.NC_NOWRITE, &id); st != C.NC_NOERR {
		return int(st)
	}
	return int(inquireAllLocked(id))
}

// openMemUnchecked does what openUnchecked does on a file image in memory
// (nc_open_mem), for the fuzz target: whatever ParseClassicHeader accepts
// must open and be inquired without harm.
func openMemUnchecked(data []byte) int {
	if len(data) == 0 {
		return int(C.NC_ENOTNC)
	}
	mem := C.CBytes(data)
	defer C.free(mem)
	name := C.CString("fuzz.nc")
	defer C.free(unsafe.Pointer(name))
	lock()
	defer unlock()
	var id C.int
	if st := C.nc_open_mem(name, C.NC_NOWRITE, C.size_t(len(data)), mem, &id); st != C.NC_NOERR {
		return int(st)
	}
	return int(inquireAllLocked(id))
}

// inquireAllLocked asks for every dimension, variable and attribute of an
// open dataset, reads the first value of each variable, and closes it.
// mu must be held.
func inquireAllLocked(id C.int) C.int {
	defer C.nc_close(id)
	var nd, nv, na, unlim C.int
	if st := C.nc_inq(id, &nd, &nv, &na, &unlim); st != C.NC_NOERR {
		return st
	}
	var name [C.NC_MAX_NAME + 1]C.char
	var n C.size_t
	for d := range nd {
		if st := C.nc_inq_dim(id, d, &name[0], &n); st != C.NC_NOERR {
			return st
		}
	}
	var dims [C.NC_MAX_VAR_DIMS]C.int
	var buf [64]byte
	for v := C.int(-1); v < nv; v++ { // -1 is NC_GLOBAL
		var natts C.int
		if v >= 0 {
			var typ C.nc_type
			var rank C.int
			if st := C.nc_inq_var(id, v, &name[0], &typ, &rank, &dims[0], &natts); st != C.NC_NOERR {
				return st
			}
			// First value, when the variable has one.
			var start, count [C.NC_MAX_VAR_DIMS]C.size_t
			empty := false
			for j := range rank {
				var l C.size_t
				C.nc_inq_dimlen(id, dims[j], &l)
				if l == 0 {
					empty = true
				}
				count[j] = 1
			}
			if !empty && typ >= C.NC_BYTE && typ <= C.NC_UINT64 {
				C.nc_get_vara(id, v, &start[0], &count[0], unsafe.Pointer(&buf[0]))
			}
		} else if st := C.nc_inq_natts(id, &natts); st != C.NC_NOERR {
			return st
		}
		for a := range natts {
			if st := C.nc_inq_attname(id, v, a, &name[0]); st != C.NC_NOERR {
				return st
			}
			var typ C.nc_type
			var l C.size_t
			if st := C.nc_inq_att(id, v, &name[0], &typ, &l); st != C.NC_NOERR {
				return st
			}
			if typ >= C.NC_BYTE && typ <= C.NC_UINT64 && l > 0 && l < 1<<20 {
				vals := C.malloc(l * 8)
				C.nc_get_att(id, v, &name[0], vals)
				C.free(vals)
			}
		}
	}
	return C.NC_NOERR
}
