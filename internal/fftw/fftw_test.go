package fftw

import (
	"math"
	"math/cmplx"
	"math/rand/v2"
	"testing"
)

// dft is the discrete Fourier transform by its definition,
// X_k = Σ_j x_j e^{∓2πi jk/n} (forward −), in double precision: the
// reference for the single-precision transforms.
func dft(x []complex128, inverse bool) []complex128 {
	n := len(x)
	s := -1.0
	if inverse {
		s = 1
	}
	out := make([]complex128, n)
	for k := range out {
		for j, v := range x {
			out[k] += v * cmplx.Exp(complex(0, s*2*math.Pi*float64(j*k)/float64(n)))
		}
	}
	return out
}

func maxRelErr(got []complex64, want []complex128) float64 {
	var e, m float64
	for i, w := range want {
		e = math.Max(e, cmplx.Abs(complex128(got[i])-w))
		m = math.Max(m, cmplx.Abs(w))
	}
	return e / m
}

// Strided batches of lines of a length that is not a power of two (as the
// transform windows are), both directions, against the definition: single
// precision holds to about 1e-6 of the largest coefficient.
func TestLinesAgainstDefinition(t *testing.T) {
	const n, lines, stride = 42, 10, 12 // line l at a[l + j·12]: two lines left out
	r := rand.New(rand.NewPCG(1, 2))
	a := make([]complex64, n*stride)
	for i := range a {
		a[i] = complex(float32(r.NormFloat64()), float32(r.NormFloat64()))
	}
	for _, inverse := range []bool{false, true} {
		b := append([]complex64(nil), a...)
		p, err := Lines(n, lines, stride, 1, inverse, Aligned(b))
		if err != nil {
			t.Fatal(err)
		}
		p.Run(b)
		p.Destroy()
		for l := 0; l < stride; l++ {
			x := make([]complex128, n)
			got := make([]complex64, n)
			for j := range x {
				x[j], got[j] = complex128(a[l+j*stride]), b[l+j*stride]
			}
			want := x
			if l < lines {
				want = dft(x, inverse)
			}
			if e := maxRelErr(got, want); !(e < 2e-6) {
				t.Errorf("inverse %v, line %d: relative error %.2g", inverse, l, e)
			}
		}
	}
}

// A 2-D plane equals the transform along x of the transforms along y.
func TestPlaneAgainstDefinition(t *testing.T) {
	const ny, nx = 12, 20
	r := rand.New(rand.NewPCG(3, 4))
	a := make([]complex64, nx*ny)
	for i := range a {
		a[i] = complex(float32(r.NormFloat64()), 0)
	}
	p, err := Plane(ny, nx, false, false)
	if err != nil {
		t.Fatal(err)
	}
	defer p.Destroy()
	b := append([]complex64(nil), a...)
	p.Run(b)
	rows := make([][]complex128, ny)
	for y := range rows {
		x := make([]complex128, nx)
		for i := range x {
			x[i] = complex128(a[y*nx+i])
		}
		rows[y] = dft(x, false)
	}
	want := make([]complex128, nx*ny)
	for i := 0; i < nx; i++ {
		col := make([]complex128, ny)
		for y := range col {
			col[y] = rows[y][i]
		}
		for y, v := range dft(col, false) {
			want[y*nx+i] = v
		}
	}
	if e := maxRelErr(b, want); !(e < 2e-6) {
		t.Errorf("2-D transform: relative error %.2g", e)
	}
}

// A plan refuses an array too short for its reach rather than writing
// past it.
func TestRunRefusesShortArray(t *testing.T) {
	p, err := Lines(8, 4, 4, 1, false, false)
	if err != nil {
		t.Fatal(err)
	}
	defer p.Destroy()
	defer func() {
		if recover() == nil {
			t.Error("no panic for an array shorter than the plan's reach")
		}
	}()
	p.Run(make([]complex64, 16))
}
