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

// The cosine transform against the definition of FFTW's REDFT10,
// X_k = 2 Σ_n x_n cos(πk(2n+1)/2N) along each axis, and the inverse
// (REDFT01) of the forward transform 4·nx·ny times the input.
func TestCosineAgainstDefinition(t *testing.T) {
	const ny, nx = 6, 10
	r := rand.New(rand.NewPCG(5, 6))
	a := make([]float32, nx*ny)
	for i := range a {
		a[i] = float32(r.NormFloat64())
	}
	f, err := Cosine(ny, nx, false)
	if err != nil {
		t.Fatal(err)
	}
	defer f.Destroy()
	inv, err := Cosine(ny, nx, true)
	if err != nil {
		t.Fatal(err)
	}
	defer inv.Destroy()
	b := append([]float32(nil), a...)
	f.RunReal(b)
	var worst, scale float64
	for ky := 0; ky < ny; ky++ {
		for kx := 0; kx < nx; kx++ {
			var want float64
			for y := 0; y < ny; y++ {
				for x := 0; x < nx; x++ {
					want += 4 * float64(a[y*nx+x]) * math.Cos(math.Pi*float64(kx*(2*x+1))/(2*nx)) * math.Cos(math.Pi*float64(ky*(2*y+1))/(2*ny))
				}
			}
			worst = math.Max(worst, math.Abs(float64(b[ky*nx+kx])-want))
			scale = math.Max(scale, math.Abs(want))
		}
	}
	if !(worst < 2e-6*scale) {
		t.Errorf("cosine transform: largest error %.3g of %.3g", worst, scale)
	}
	inv.RunReal(b)
	for i := range a {
		if d := math.Abs(float64(b[i])/(4*nx*ny) - float64(a[i])); !(d < 1e-5) {
			t.Fatalf("inverse of the forward transform at %d: %g, want %g", i, b[i]/(4*nx*ny), a[i])
		}
	}
}
