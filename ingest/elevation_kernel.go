package ingest

/*
#cgo CFLAGS: -O3
#pragma GCC optimize("fp-contract=off")
#include <math.h>
#include <stdint.h>
#include <string.h>

// The per-cell loop of elevation masking, in C so that the compiler can
// vectorise it: for each stored value r (loaded and converted by LOAD),
// the cell is known when lo <= r <= hi and r is neither the fill nor the
// missing value; eta gets r (or r*scale + offset, rounded apart, in
// double) as float, or NaN, and valid gets 1 or 0. The count of known
// cells is returned. W is the type the tests are done in. Each loop is
// built twice, for AVX2 (where byte swaps vectorise) and for any x86-64,
// and the loader picks one for the processor.
#define CS_MASK(NAME, IN, W, LOAD)                                            \
__attribute__((target_clones("avx2", "default")))                             \
static long NAME(const IN* raw, float* eta, unsigned char* valid, long n,     \
		W lo, W hi, int hasFill, W fill, int hasMiss, W miss,                \
		int identity, double scale, double offset) {                        \
	long cnt = 0;                                                             \
	const float nan = NAN;                                                    \
	if (identity) {                                                           \
		for (long i = 0; i < n; i++) {                                        \
			W r = LOAD;                                                       \
			int ok = (r >= lo) & (r <= hi) & ((!hasFill) | (r != fill)) &     \
				((!hasMiss) | (r != miss));                                   \
			valid[i] = (unsigned char)ok;                                     \
			eta[i] = ok ? (float)r : nan;                                     \
			cnt += ok;                                                        \
		}                                                                     \
	} else {                                                                  \
		for (long i = 0; i < n; i++) {                                        \
			W r = LOAD;                                                       \
			int ok = (r >= lo) & (r <= hi) & ((!hasFill) | (r != fill)) &     \
				((!hasMiss) | (r != miss));                                   \
			double p = (double)r * scale;                                     \
			valid[i] = (unsigned char)ok;                                     \
			eta[i] = ok ? (float)(p + offset) : nan;                          \
			cnt += ok;                                                        \
		}                                                                     \
	}                                                                         \
	return cnt;                                                               \
}

static inline float cs_be_f32(const uint32_t* p) {
	uint32_t b = __builtin_bswap32(*p);
	float f;
	memcpy(&f, &b, 4);
	return f;
}
static inline double cs_be_f64(const uint64_t* p) {
	uint64_t b = __builtin_bswap64(*p);
	double f;
	memcpy(&f, &b, 8);
	return f;
}

// Native values as the library converts them.
CS_MASK(cs_mask_f32, float, float, raw[i])
CS_MASK(cs_mask_f64, double, double, raw[i])
// Big-endian values as stored in classic-format files.
CS_MASK(cs_mask_be_f32, uint32_t, float, cs_be_f32(&raw[i]))
CS_MASK(cs_mask_be_f64_as_f32, uint64_t, float, (float)cs_be_f64(&raw[i]))
CS_MASK(cs_mask_be_f64, uint64_t, double, cs_be_f64(&raw[i]))
CS_MASK(cs_mask_be_i16, uint16_t, float, (float)(int16_t)__builtin_bswap16(raw[i]))
CS_MASK(cs_mask_i8, int8_t, float, (float)raw[i])
CS_MASK(cs_mask_be_i32, uint32_t, double, (double)(int32_t)__builtin_bswap32(raw[i]))
*/
import "C"

import (
	"encoding/binary"
	"math"
	"unsafe"
)

// rawKind says how the stored values of a block are held.
type rawKind int

const (
	rawF32       rawKind = iota // native float32, converted by the library
	rawF64                      // native float64, converted by the library
	rawBEF32                    // classic-format bytes: big-endian float
	rawBEF64As32                // big-endian double, tested as float (unpacked doubles)
	rawBEF64                    // big-endian double
	rawBEI16                    // big-endian short
	rawI8                       // byte
	rawBEI32                    // big-endian int
)

// size returns the bytes per stored value of a kind held as bytes.
func (k rawKind) size() int {
	switch k {
	case rawBEF64As32, rawBEF64:
		return 8
	case rawBEI16:
		return 2
	case rawI8:
		return 1
	}
	return 4
}

// wide reports whether the tests of a kind are done in float64.
func (k rawKind) wide() bool { return k == rawF64 || k == rawBEF64 || k == rawBEI32 }

// at returns stored value i of a frame as float64, converted as the
// kernel converts it (for sampling and for counting the rejected cells).
func (k rawKind) at(b []byte, f32 []float32, f64 []float64, i int) float64 {
	switch k {
	case rawF32:
		return float64(f32[i])
	case rawF64:
		return f64[i]
	case rawBEF32:
		return float64(math.Float32frombits(binary.BigEndian.Uint32(b[4*i:])))
	case rawBEF64As32:
		return float64(float32(math.Float64frombits(binary.BigEndian.Uint64(b[8*i:]))))
	case rawBEF64:
		return math.Float64frombits(binary.BigEndian.Uint64(b[8*i:]))
	case rawBEI16:
		return float64(int16(binary.BigEndian.Uint16(b[2*i:])))
	case rawI8:
		return float64(int8(b[i]))
	case rawBEI32:
		return float64(int32(binary.BigEndian.Uint32(b[4*i:])))
	}
	return math.NaN()
}

// kernel runs the C loop for one frame. lo, hi, fill and miss are in
// stored units, already rounded inward (see inward) for float tests.
func kernel(k rawKind, b []byte, f32 []float32, f64 []float64, eta []float32, valid []bool,
	lo, hi float64, hasFill bool, fill float64, hasMiss bool, miss float64, identity bool, scale, offset float64) int {
	n := len(eta)
	if n == 0 {
		return 0
	}
	e := (*C.float)(unsafe.Pointer(&eta[0]))
	v := (*C.uchar)(unsafe.Pointer(&valid[0]))
	hf, hm, id := cbool(hasFill), cbool(hasMiss), cbool(identity)
	sc, of := C.double(scale), C.double(offset)
	nn := C.long(n)
	lf, hf32, ff, mf := C.float(lo), C.float(hi), C.float(fill), C.float(miss)
	ld, hd, fd, md := C.double(lo), C.double(hi), C.double(fill), C.double(miss)
	var c C.long
	switch k {
	case rawF32:
		c = C.cs_mask_f32((*C.float)(unsafe.Pointer(&f32[0])), e, v, nn, lf, hf32, hf, ff, hm, mf, id, sc, of)
	case rawF64:
		c = C.cs_mask_f64((*C.double)(unsafe.Pointer(&f64[0])), e, v, nn, ld, hd, hf, fd, hm, md, id, sc, of)
	case rawBEF32:
		c = C.cs_mask_be_f32((*C.uint32_t)(unsafe.Pointer(&b[0])), e, v, nn, lf, hf32, hf, ff, hm, mf, id, sc, of)
	case rawBEF64As32:
		c = C.cs_mask_be_f64_as_f32((*C.uint64_t)(unsafe.Pointer(&b[0])), e, v, nn, lf, hf32, hf, ff, hm, mf, id, sc, of)
	case rawBEF64:
		c = C.cs_mask_be_f64((*C.uint64_t)(unsafe.Pointer(&b[0])), e, v, nn, ld, hd, hf, fd, hm, md, id, sc, of)
	case rawBEI16:
		c = C.cs_mask_be_i16((*C.uint16_t)(unsafe.Pointer(&b[0])), e, v, nn, lf, hf32, hf, ff, hm, mf, id, sc, of)
	case rawI8:
		c = C.cs_mask_i8((*C.int8_t)(unsafe.Pointer(&b[0])), e, v, nn, lf, hf32, hf, ff, hm, mf, id, sc, of)
	case rawBEI32:
		c = C.cs_mask_be_i32((*C.uint32_t)(unsafe.Pointer(&b[0])), e, v, nn, ld, hd, hf, fd, hm, md, id, sc, of)
	}
	return int(c)
}

func cbool(b bool) C.int {
	if b {
		return 1
	}
	return 0
}
