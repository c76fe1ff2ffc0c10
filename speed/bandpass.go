package speed

import (
	"fmt"
	"math"

	"crestspeed/internal/fftw"
)

// BandPass keeps the waves of a band of frequencies in elevation maps, for
// the analysis of the dominant waves alone: each map is filtered in
// wavenumber, the band's frequencies mapped to wavenumbers by the linear
// dispersion relation ω² = gk tanh(kh) (Dean & Dalrymple 1991), which for
// free linear waves keeps exactly the components whose frequency is in the
// band (a current Doppler-shifts the frequencies the cameras see; the band
// is then the band of intrinsic frequencies). The map is transformed with
// a two-dimensional cosine transform — the transform of its even
// extension, which has no jump at the grid's edges, so a map that is not
// periodic over the grid gives no ringing from its edges — and each
// coefficient of wavenumber |k| = π·√((i/(nx Δx))² + (j/(ny Δy))²) is
// weighted by a gain that is one inside the band, half at its edges and
// falls to zero with a raised cosine in log k over a factor bandEdge about
// each edge (a sharp edge would ring along the crests). Cells without an
// elevation enter as zero and stay unknown.
type BandPass struct {
	nx, ny   int
	fwd, inv *fftw.Plan
	gain     []float32 // per coefficient, the normalisation 1/(4 nx ny) included
	// LowHz, HighHz are the band in frequency, LowK, HighK in wavenumber
	// (rad/m) at the depth given.
	LowHz, HighHz, LowK, HighK float64
}

// bandEdge is the width (a factor in wavenumber) of each raised-cosine
// edge of a BandPass.
const bandEdge = 1.25

// NewBandPass prepares the band lowHz–highHz (fixed-frame frequencies
// taken as intrinsic; lowHz 0: no low edge, a low-pass) for maps of nx×ny cells of dx×dy metres in water
// of depth depthM (0 = deep).
func NewBandPass(nx, ny int, dx, dy, depthM, lowHz, highHz float64) (*BandPass, error) {
	if !(lowHz >= 0 && highHz > lowHz) {
		return nil, fmt.Errorf("a frequency band needs 0 ≤ low < high, got %g–%g Hz", lowHz, highHz)
	}
	kLo := 0.0 // no low edge: a low-pass
	if lowHz > 0 {
		var err error
		if kLo, err = WaveNumber(2*math.Pi*lowHz, depthM); err != nil {
			return nil, err
		}
	}
	kHi, err := WaveNumber(2*math.Pi*highHz, depthM)
	if err != nil {
		return nil, err
	}
	b := &BandPass{nx: nx, ny: ny, LowHz: lowHz, HighHz: highHz, LowK: kLo, HighK: kHi}
	if b.fwd, err = fftw.Cosine(ny, nx, false); err != nil {
		return nil, err
	}
	if b.inv, err = fftw.Cosine(ny, nx, true); err != nil {
		b.fwd.Destroy()
		return nil, err
	}
	b.gain = make([]float32, nx*ny)
	norm := 1 / float64(4*nx*ny)
	for j := 0; j < ny; j++ {
		ky := math.Pi * float64(j) / (float64(ny) * dy)
		for i := 0; i < nx; i++ {
			kx := math.Pi * float64(i) / (float64(nx) * dx)
			k := math.Hypot(kx, ky)
			b.gain[j*nx+i] = float32(bandGain(k, kLo, kHi) * norm)
		}
	}
	return b, nil
}

// bandGain is 1 inside kLo–kHi, 0.5 at the edges, with raised-cosine
// edges in log k over a factor bandEdge; kLo = 0 is no low edge.
func bandGain(k, kLo, kHi float64) float64 {
	if k <= 0 {
		return map[bool]float64{true: 1}[kLo == 0]
	}
	edge := func(x float64) float64 { // x: log(k/k_edge)/log(bandEdge), rising
		switch {
		case x <= -0.5:
			return 0
		case x >= 0.5:
			return 1
		}
		return 0.5 + 0.5*math.Sin(math.Pi*x)
	}
	l := math.Log(bandEdge)
	low := 1.0
	if kLo > 0 {
		low = edge(math.Log(k/kLo) / l)
	}
	return low * edge(-math.Log(k/kHi)/l)
}

// BandGainAt is the gain NewBandPass(…, depthM, lowHz, highHz) gives a
// wave of wavenumber k (rad/m), without making the transforms; NaN for a
// band that is not one.
func BandGainAt(k, depthM, lowHz, highHz float64) float64 {
	if !(lowHz >= 0 && highHz > lowHz) {
		return math.NaN()
	}
	kLo := 0.0
	if lowHz > 0 {
		var err error
		if kLo, err = WaveNumber(2*math.Pi*lowHz, depthM); err != nil {
			return math.NaN()
		}
	}
	kHi, err := WaveNumber(2*math.Pi*highHz, depthM)
	if err != nil {
		return math.NaN()
	}
	return bandGain(k, kLo, kHi)
}

// Gain is the filter's gain for a wave of wavenumber k (rad/m).
func (b *BandPass) Gain(k float64) float64 { return bandGain(k, b.LowK, b.HighK) }

// Apply filters one map in place, using work (nx·ny values) as scratch;
// an unknown cell enters the transform as the mean of its known
// neighbours, up to fillPasses cells deep into a hole, and then keeps its
// filtered value — scattered unknown cells are what a stereo
// reconstruction leaves, and a zero amid a crest would pull the filtered
// crest down around it; cells deeper in a hole enter as zero (the mean
// level) and stay unknown. Apply may run on several goroutines at once,
// each with its own work.
func (b *BandPass) Apply(eta, work []float32) {
	holes := false
	for i, v := range eta {
		if v == v {
			work[i] = v
		} else {
			work[i], holes = float32(math.NaN()), true
		}
	}
	var deep []int
	if holes {
		deep = fillHoles(work, b.nx, b.ny, fillPasses)
	}
	b.fwd.RunReal(work)
	for i, g := range b.gain {
		work[i] *= g
	}
	b.inv.RunReal(work)
	copy(eta, work)
	for _, i := range deep {
		eta[i] = float32(math.NaN())
	}
}

// Close releases the transforms.
func (b *BandPass) Close() {
	b.fwd.Destroy()
	b.inv.Destroy()
}

// fillPasses is how many cells deep into a hole fillHoles reaches.
const fillPasses = 3

// fillHoles gives each NaN cell of a row-major nx×ny field the mean of
// its known 4-neighbours, in passes (each pass sees the cells the last one
// filled) up to passes deep; what is left is set to zero, and returned.
func fillHoles(a []float32, nx, ny, passes int) []int {
	var todo []int
	for i, v := range a {
		if v != v {
			todo = append(todo, i)
		}
	}
	vals := make([]float32, len(todo))
	for p := 0; p < passes && len(todo) > 0; p++ {
		for k, i := range todo {
			x, y := i%nx, i/nx
			var sum float32
			n := 0
			for _, j := range [4]int{i - 1, i + 1, i - nx, i + nx} {
				if (j == i-1 && x == 0) || (j == i+1 && x == nx-1) || (j == i-nx && y == 0) || (j == i+nx && y == ny-1) {
					continue
				}
				if v := a[j]; v == v {
					sum += v
					n++
				}
			}
			vals[k] = float32(math.NaN())
			if n > 0 {
				vals[k] = sum / float32(n)
			}
		}
		rest := todo[:0]
		restVals := vals[:0]
		for k, i := range todo {
			if v := vals[k]; v == v {
				a[i] = v
			} else {
				rest = append(rest, i)
				restVals = append(restVals, v)
			}
		}
		todo, vals = rest, restVals
	}
	for _, i := range todo {
		a[i] = 0
	}
	return todo
}
