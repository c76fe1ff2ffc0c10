// Package fftw binds the single-precision complex transforms of FFTW 3
// (Frigo & Johnson 2005, Proc. IEEE 93(2)) — Debian's libfftw3-dev — for
// batches of one-dimensional transforms and two-dimensional planes.
//
// Plans are made once, under one lock (FFTW's planner is not thread-safe),
// with FFTW_ESTIMATE, which never reads or writes the arrays and makes the
// same plan for the same sizes every time, so a transform gives the same
// bits on every run. Executing a plan is thread-safe: workers may run one
// plan on different arrays at once. Transforms are in place and
// unnormalised (the inverse of the forward transform is n times the
// input), with FFTW's sign convention: forward e^{−2πi jk/n}.
package fftw

/*
#cgo pkg-config: fftw3f
#include <fftw3.h>

static fftwf_plan plan_lines(int n, int howmany, int stride, int dist, fftwf_complex *a, int sign, unsigned flags) {
	return fftwf_plan_many_dft(1, &n, howmany, a, NULL, stride, dist, a, NULL, stride, dist, sign, flags);
}
static fftwf_plan plan_plane(int ny, int nx, fftwf_complex *a, int sign, unsigned flags) {
	return fftwf_plan_dft_2d(ny, nx, a, a, sign, flags);
}
static fftwf_plan plan_cosine(int ny, int nx, float *a, int inverse, unsigned flags) {
	fftw_r2r_kind k = inverse ? FFTW_REDFT01 : FFTW_REDFT10;
	return fftwf_plan_r2r_2d(ny, nx, a, a, k, k, flags);
}
*/
import "C"

import (
	"errors"
	"sync"
	"unsafe"
)

var planner sync.Mutex

// Plan is a transform that can be run on any array laid out like the one
// it was made for.
type Plan struct {
	p    C.fftwf_plan
	span int  // values the transform reaches from its start
	real bool // a transform of real values (RunReal)
}

func flags(aligned bool) C.uint {
	f := C.uint(C.FFTW_ESTIMATE)
	if !aligned {
		f |= C.FFTW_UNALIGNED
	}
	return f
}

func sign(inverse bool) C.int {
	if inverse {
		return C.FFTW_BACKWARD
	}
	return C.FFTW_FORWARD
}

// scratch runs plan on fftwf_malloc'd memory of n values, never touched
// (FFTW_ESTIMATE does not read or write the arrays, so the pages are not
// even committed), so that no plan keeps a pointer into Go memory.
func scratch(n int, plan func(a *C.fftwf_complex) C.fftwf_plan) (C.fftwf_plan, error) {
	mem := C.fftwf_malloc(C.size_t(n) * 8)
	if mem == nil {
		return nil, errors.New("fftw: out of memory while planning")
	}
	defer C.fftwf_free(mem)
	planner.Lock()
	defer planner.Unlock()
	p := plan((*C.fftwf_complex)(mem))
	if p == nil {
		return nil, errors.New("fftw: no plan for this transform")
	}
	return p, nil
}

// Lines plans howmany in-place transforms of length n, the j-th value of
// line l at a[l·dist + j·stride] of the array it will run on. aligned
// says every such array starts at the alignment FFTW's SIMD code wants
// (Aligned); otherwise the plan accepts any.
func Lines(n, howmany, stride, dist int, inverse, aligned bool) (*Plan, error) {
	if n < 1 || howmany < 1 || stride < 1 || dist < 1 {
		return nil, errors.New("fftw: a plan needs positive sizes")
	}
	span := (howmany-1)*dist + (n-1)*stride + 1
	p, err := scratch(span, func(a *C.fftwf_complex) C.fftwf_plan {
		return C.plan_lines(C.int(n), C.int(howmany), C.int(stride), C.int(dist), a, sign(inverse), flags(aligned))
	})
	if err != nil {
		return nil, err
	}
	return &Plan{p: p, span: span}, nil
}

// Plane plans the in-place two-dimensional transform of an ny×nx
// row-major plane.
func Plane(ny, nx int, inverse, aligned bool) (*Plan, error) {
	if ny < 1 || nx < 1 {
		return nil, errors.New("fftw: a plan needs positive sizes")
	}
	p, err := scratch(nx*ny, func(a *C.fftwf_complex) C.fftwf_plan {
		return C.plan_plane(C.int(ny), C.int(nx), a, sign(inverse), flags(aligned))
	})
	if err != nil {
		return nil, err
	}
	return &Plan{p: p, span: nx * ny}, nil
}

// Cosine plans the in-place two-dimensional discrete cosine transform of
// an ny×nx row-major plane of real values: DCT-II forward (FFTW_REDFT10,
// the transform of the plane's even extension to 2ny×2nx, which has no
// jump at the edges) and DCT-III inverse (FFTW_REDFT01); the inverse of
// the forward transform is 4·nx·ny times the input.
func Cosine(ny, nx int, inverse bool) (*Plan, error) {
	if ny < 1 || nx < 1 {
		return nil, errors.New("fftw: a plan needs positive sizes")
	}
	inv := C.int(0)
	if inverse {
		inv = 1
	}
	p, err := scratch(nx*ny, func(a *C.fftwf_complex) C.fftwf_plan {
		return C.plan_cosine(C.int(ny), C.int(nx), (*C.float)(unsafe.Pointer(a)), inv, flags(false))
	})
	if err != nil {
		return nil, err
	}
	return &Plan{p: p, span: nx * ny, real: true}, nil
}

// RunReal executes a cosine plan in place on a.
func (p *Plan) RunReal(a []float32) {
	if !p.real || len(a) < p.span {
		panic("fftw: not a real plan, or an array shorter than its reach")
	}
	ptr := (*C.float)(unsafe.Pointer(&a[0]))
	C.fftwf_execute_r2r(p.p, ptr, ptr)
}

// Run executes the plan in place on a, which must hold the plan's whole
// reach (and be aligned if the plan was made for aligned arrays). The
// pointer is passed for the call only.
func (p *Plan) Run(a []complex64) {
	if p.real || len(a) < p.span {
		panic("fftw: array shorter than the plan's reach")
	}
	ptr := (*C.fftwf_complex)(unsafe.Pointer(&a[0]))
	C.fftwf_execute_dft(p.p, ptr, ptr)
}

// Destroy releases the plan.
func (p *Plan) Destroy() {
	if p.p != nil {
		planner.Lock()
		C.fftwf_destroy_plan(p.p)
		planner.Unlock()
		p.p = nil
	}
}

// Aligned reports whether a starts at the alignment FFTW's SIMD code
// wants (fftwf_alignment_of is zero).
func Aligned(a []complex64) bool {
	return len(a) > 0 && C.fftwf_alignment_of((*C.float)(unsafe.Pointer(&a[0]))) == 0
}
