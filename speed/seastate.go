package speed

import (
	"errors"
	"fmt"
	"math"
	"math/cmplx"

	"gonum.org/v1/gonum/dsp/fourier"
)

// Defaults of SeaStateOptions.
const (
	// DefaultProbes is the default number of grid points whose time series
	// feed the frequency spectrum.
	DefaultProbes = 64
	// DefaultMaxPairs is the number of frame pairs the direction estimate
	// is thinned to when the record length is known in advance.
	DefaultMaxPairs = 200
	// maxMissingFraction is the largest fraction of missing samples a
	// probe series may have and still be used (after linear filling).
	maxMissingFraction = 0.2
	// minSegment is the shortest default Welch segment, in samples.
	minSegment = 16
)

// SeaStateOptions tunes a SeaStateEstimator. The zero value gives the
// defaults.
type SeaStateOptions struct {
	// Probes is the approximate number of grid points, spread on a regular
	// sub-grid, whose elevation series are sampled for the Welch frequency
	// spectrum. Default DefaultProbes (64); all grid points if the grid is
	// smaller.
	Probes int
	// SegmentSeconds is the Welch segment length in seconds. Default: about
	// 8 half-overlapping segments over the record, at least 16 samples.
	SegmentSeconds float64
	// PairStride thins the direction estimate for speed: the pair of
	// frames (n−1, n) is used only when the time index n (frames plus
	// declared gaps, from 0) is a multiple of PairStride. Default 1 (every
	// pair), or, when ExpectedFrames is set, the stride that leaves about
	// DefaultMaxPairs pairs. The thinning depends only on frame indices, so
	// results are deterministic.
	PairStride int
	// ExpectedFrames is the record length in frames when known in advance
	// (frames plus gaps); it only sets the default PairStride.
	ExpectedFrames int
}

// SeaState is the sea state of a record of elevation maps.
type SeaState struct {
	// Hm0 is the spectral significant wave height 4√m0 in metres of the
	// probe-averaged frequency spectrum.
	Hm0 float64
	// Tp = 1/Fp is the peak period in seconds and Fp the peak frequency in
	// Hz, refined by PeakParabola. Both are absolute (fixed-camera) values.
	Tp, Fp float64
	// MeanDirectionRad is the energy-weighted mean direction of wave travel
	// in radians, counter-clockwise from +x, in (−π, π].
	MeanDirectionRad float64
	// DirectionSpread is the circular spread √(2(1−R)) in radians, R the
	// mean resultant length of the energy-weighted directions (the
	// directional width of Kuik, van Vledder & Holthuijsen 1988, J. Phys.
	// Oceanogr. 18 — from memory).
	DirectionSpread float64
	// Freqs (Hz) and PSD (m²/Hz) are the Welch spectrum averaged over the
	// probes used.
	Freqs, PSD []float64
	// NProbes is the number of probe series used; DroppedProbes the number
	// left out for having more than 20 % missing samples.
	NProbes, DroppedProbes int
	// Frames is the number of frames added, GapFrames the number declared
	// missing with AddGap, FilledSamples the number of probe samples
	// (masked or in gaps) filled by linear interpolation in the probes used.
	Frames, GapFrames, FilledSamples int
	// SegmentSamples is the Welch segment length used, in samples.
	SegmentSamples int
	// Pairs is the number of consecutive frame pairs in the direction
	// estimate.
	Pairs int
}

// SeaStateEstimator estimates the sea state of a record of gridded elevation
// maps η(t, y, x) handed to it one frame at a time.
//
// Frequency spectrum: the elevation series at about Probes grid points
// (a regular sub-grid) are kept as float32, 4 bytes per probe per frame,
// the only memory that grows with the record. At the end each series has
// its missing samples filled by linear interpolation (held constant beyond
// the first and last valid sample), series with more than 20 % missing are
// dropped, the mean is removed and Welch spectra are averaged over the
// probes. Hm0 = 4√m0 (common practice) and Tp = 1/Fp with Fp from
// PeakParabola.
//
// Direction: each frame, with its mean removed, masked cells set to zero and
// a Hann taper in x and y, is Fourier transformed in two dimensions. For
// consecutive frames with transforms F1, F2 the cross-spectrum
// C(k) += F2·conj(F1) is accumulated on the half plane kx >= 0 (a real
// frame's transform is Hermitian). A linear component exp(i(k·x − ωt)) with
// ω > 0 makes arg C(k) = −ωΔt < 0, so at the end the energy |C(k)| of each
// wavenumber is assigned to the direction of k when Im C(k) < 0 and of −k
// otherwise (common practice: the sign of the phase lag between frames
// resolves the 180° ambiguity of a single frame's spectrum), and the mean
// direction is the energy-weighted circular mean (Mardia & Jupp,
// Directional Statistics, 2000). The kx = 0 column counts half, as both k
// and −k appear in it; k = 0 and the Nyquist row and column are ignored. This resolves the direction of
// travel, not just the axis, as long as |ω|Δt < π, that is the frame rate is
// above twice the wave frequency. Memory: three complex arrays of
// ny·(nx/2+1). Cost: one 2-D FFT per frame (two per pair when thinned by
// PairStride).
//
// Add, AddGap and Result must be called from one goroutine. Errors in the
// input are remembered and returned by Result (as bufio.Scanner does).
type SeaStateEstimator struct {
	nx, ny     int
	dx, dy, dt float64
	opt        SeaStateOptions
	err        error

	probeIdx []int
	series   [][]float32

	n         int // time index of the next frame (frames + gap samples)
	frames    int
	gapFrames int

	stride    int
	nkx       int
	wx, wy    []float64
	rowFFT    *fourier.FFT
	colFFT    *fourier.CmplxFFT
	row       []float64
	rowCoef   []complex128
	col       []complex128
	prev, cur []complex128
	acc       []complex128
	havePrev  bool
	prevIndex int
	pairs     int
}

// NewSeaStateEstimator returns an estimator for frames of ny rows of nx
// cells (row-major, x fastest) with grid spacings dx, dy in metres and frame
// interval dt in seconds. Invalid arguments are reported by Result.
func NewSeaStateEstimator(nx, ny int, dx, dy, dt float64, opt SeaStateOptions) *SeaStateEstimator {
	e := &SeaStateEstimator{nx: nx, ny: ny, dx: dx, dy: dy, dt: dt, opt: opt}
	switch {
	case nx < 4 || ny < 4:
		e.err = fmt.Errorf("speed: sea-state grid of %d×%d cells is too small; give elevation maps of at least 4×4 cells", nx, ny)
	case !(dx > 0) || !(dy > 0) || math.IsInf(dx, 0) || math.IsInf(dy, 0):
		e.err = fmt.Errorf("speed: sea-state grid spacing dx = %g m, dy = %g m is not positive; check the x and y coordinates of the elevation maps", dx, dy)
	case !(dt > 0) || math.IsInf(dt, 0):
		e.err = fmt.Errorf("speed: frame interval dt = %g s is not positive; check the time coordinate of the record", dt)
	case opt.Probes < 0 || opt.PairStride < 0 || opt.ExpectedFrames < 0 || opt.SegmentSeconds < 0 || math.IsNaN(opt.SegmentSeconds):
		e.err = errors.New("speed: sea-state options Probes, SegmentSeconds, PairStride and ExpectedFrames must not be negative; use 0 for the defaults")
	}
	if e.err != nil {
		return e
	}
	if e.opt.Probes == 0 {
		e.opt.Probes = DefaultProbes
	}
	e.placeProbes()

	e.stride = opt.PairStride
	if e.stride == 0 {
		e.stride = 1
		if opt.ExpectedFrames > DefaultMaxPairs+1 {
			e.stride = (opt.ExpectedFrames - 1 + DefaultMaxPairs - 1) / DefaultMaxPairs
		}
	}

	e.nkx = nx/2 + 1
	e.wx = hann(nx)
	e.wy = hann(ny)
	e.rowFFT = fourier.NewFFT(nx)
	e.colFFT = fourier.NewCmplxFFT(ny)
	e.row = make([]float64, nx)
	e.rowCoef = make([]complex128, e.nkx)
	e.col = make([]complex128, ny)
	e.prev = make([]complex128, ny*e.nkx)
	e.cur = make([]complex128, ny*e.nkx)
	e.acc = make([]complex128, ny*e.nkx)
	return e
}

// placeProbes spreads about opt.Probes probes on a regular sub-grid with
// the aspect ratio of the grid, each at the centre of its block.
func (e *SeaStateEstimator) placeProbes() {
	p := e.opt.Probes
	// Of the two column counts around √(p·nx/ny), take the one whose
	// sub-grid has the number of probes closest to p.
	px0 := math.Sqrt(float64(p) * float64(e.nx) / float64(e.ny))
	px, py, best := 0, 0, math.MaxInt
	for _, c := range []int{int(math.Floor(px0)), int(math.Ceil(px0))} {
		cx := min(max(c, 1), e.nx)
		cy := min(max(int(math.Round(float64(p)/float64(cx))), 1), e.ny)
		if d := absInt(cx*cy - p); d < best {
			px, py, best = cx, cy, d
		}
	}
	for b := 0; b < py; b++ {
		j := (2*b + 1) * e.ny / (2 * py)
		for a := 0; a < px; a++ {
			i := (2*a + 1) * e.nx / (2 * px)
			e.probeIdx = append(e.probeIdx, j*e.nx+i)
		}
	}
	e.series = make([][]float32, len(e.probeIdx))
}

// Add hands the estimator the next frame in time order: eta holds ny·nx
// elevations in metres, row-major (x fastest); valid, if not nil, marks the
// cells to use (NaN cells are never used). The caller removes nothing (no
// mean, no trend).
func (e *SeaStateEstimator) Add(eta []float32, valid []bool) {
	if e.err != nil {
		return
	}
	if len(eta) != e.nx*e.ny {
		e.err = fmt.Errorf("speed: frame %d has %d elevations, want %d×%d = %d; pass frames of the grid the estimator was made for", e.frames, len(eta), e.nx, e.ny, e.nx*e.ny)
		return
	}
	if valid != nil && len(valid) != len(eta) {
		e.err = fmt.Errorf("speed: frame %d has a validity mask of %d cells for %d elevations; pass a mask of the frame's size or nil", e.frames, len(valid), len(eta))
		return
	}
	t := e.n
	e.n++
	e.frames++
	nan := float32(math.NaN())
	for p, idx := range e.probeIdx {
		v := eta[idx]
		if valid != nil && !valid[idx] {
			v = nan
		}
		e.series[p] = append(e.series[p], v)
	}

	pair := t%e.stride == 0 && e.havePrev && e.prevIndex == t-1
	if !pair && (t+1)%e.stride != 0 {
		return
	}
	e.spectrum2D(eta, valid, e.cur)
	if pair {
		for i, c := range e.cur {
			e.acc[i] += c * cmplx.Conj(e.prev[i])
		}
		e.pairs++
	}
	e.prev, e.cur = e.cur, e.prev
	e.havePrev = true
	e.prevIndex = t
}

// spectrum2D writes the half-plane 2-D Fourier transform of the frame, mean
// removed, masked cells zero, Hann-tapered in x and y, into dst as
// dst[jy*nkx + jx].
func (e *SeaStateEstimator) spectrum2D(eta []float32, valid []bool, dst []complex128) {
	var sum float64
	var cnt int
	for i, v := range eta {
		if (valid == nil || valid[i]) && !math.IsNaN(float64(v)) {
			sum += float64(v)
			cnt++
		}
	}
	mean := 0.0
	if cnt > 0 {
		mean = sum / float64(cnt)
	}
	for j := 0; j < e.ny; j++ {
		base := j * e.nx
		for i := 0; i < e.nx; i++ {
			v := float64(eta[base+i])
			if (valid != nil && !valid[base+i]) || math.IsNaN(v) {
				e.row[i] = 0
				continue
			}
			e.row[i] = (v - mean) * e.wx[i] * e.wy[j]
		}
		e.rowFFT.Coefficients(e.rowCoef, e.row)
		copy(dst[j*e.nkx:(j+1)*e.nkx], e.rowCoef)
	}
	for jx := 0; jx < e.nkx; jx++ {
		for j := 0; j < e.ny; j++ {
			e.col[j] = dst[j*e.nkx+jx]
		}
		e.colFFT.Coefficients(e.col, e.col)
		for j := 0; j < e.ny; j++ {
			dst[j*e.nkx+jx] = e.col[j]
		}
	}
}

// AddGap records that missing frames were dropped at this point of the
// record. Their probe samples are filled by linear interpolation in Result
// (and counted); no direction pair spans a gap.
func (e *SeaStateEstimator) AddGap(missing int) {
	if e.err != nil {
		return
	}
	if missing < 0 {
		e.err = fmt.Errorf("speed: AddGap called with %d missing frames; pass the number of dropped frames, 0 or more", missing)
		return
	}
	nan := float32(math.NaN())
	for p := range e.series {
		for i := 0; i < missing; i++ {
			e.series[p] = append(e.series[p], nan)
		}
	}
	e.n += missing
	e.gapFrames += missing
}

// Result returns the sea state of the frames added so far. It can be called
// more than once; it does not change the estimator.
func (e *SeaStateEstimator) Result() (SeaState, error) {
	if e.err != nil {
		return SeaState{}, e.err
	}
	st := SeaState{Frames: e.frames, GapFrames: e.gapFrames, Pairs: e.pairs}
	n := e.n
	if n < minSegment {
		return st, fmt.Errorf("speed: sea-state record has %d frames; at least %d are needed for a spectrum", n, minSegment)
	}
	nper := max(minSegment, 2*n/9)
	if e.opt.SegmentSeconds > 0 {
		nper = int(math.Round(e.opt.SegmentSeconds / e.dt))
		if nper < 4 || nper > n {
			return st, fmt.Errorf("speed: Welch segment of %g s is %d frames, outside 4..%d for this record; choose a segment length between %g s and %g s", e.opt.SegmentSeconds, nper, n, 4*e.dt, float64(n)*e.dt)
		}
	}
	st.SegmentSamples = nper

	x := make([]float64, n)
	for _, s := range e.series {
		missing := 0
		for _, v := range s {
			if math.IsNaN(float64(v)) {
				missing++
			}
		}
		if float64(missing) > maxMissingFraction*float64(n) {
			st.DroppedProbes++
			continue
		}
		fillLinear(x, s)
		var mean float64
		for _, v := range x {
			mean += v
		}
		mean /= float64(n)
		for i := range x {
			x[i] -= mean
		}
		f, p, err := Welch(x, 1/e.dt, nper)
		if err != nil {
			return st, err
		}
		if st.PSD == nil {
			st.Freqs = f
			st.PSD = p
		} else {
			for i, v := range p {
				st.PSD[i] += v
			}
		}
		st.NProbes++
		st.FilledSamples += missing
	}
	if st.NProbes == 0 {
		return st, fmt.Errorf("speed: all %d elevation probes have more than %.0f %% missing samples; check the validity mask or the reconstruction coverage", st.DroppedProbes, 100*maxMissingFraction)
	}
	for i := range st.PSD {
		st.PSD[i] /= float64(st.NProbes)
	}
	var err error
	if st.Hm0, err = Hm0(st.Freqs, st.PSD); err != nil {
		return st, err
	}
	if st.Fp, err = PeakParabola(st.Freqs, st.PSD); err != nil {
		return st, err
	}
	st.Tp = 1 / st.Fp

	if e.pairs == 0 {
		return st, errors.New("speed: no pair of consecutive frames was available for the wave direction; check for gaps between every frame")
	}
	var se, ce, sum float64
	dkx := 2 * math.Pi / (float64(e.nx) * e.dx)
	dky := 2 * math.Pi / (float64(e.ny) * e.dy)
	for jy := 0; jy < e.ny; jy++ {
		if e.ny%2 == 0 && jy == e.ny/2 {
			continue // Nyquist row
		}
		ky := float64(jy) * dky
		if jy > e.ny/2 {
			ky = float64(jy-e.ny) * dky
		}
		for jx := 0; jx < e.nkx; jx++ {
			if (jx == 0 && jy == 0) || (e.nx%2 == 0 && jx == e.nx/2) {
				continue // mean and Nyquist column
			}
			c := e.acc[jy*e.nkx+jx]
			en := cmplx.Abs(c)
			if jx == 0 {
				en *= 0.5
			}
			kx := float64(jx) * dkx
			theta := math.Atan2(ky, kx)
			if !(imag(c) < 0) {
				theta = math.Atan2(-ky, -kx)
			}
			se += en * math.Sin(theta)
			ce += en * math.Cos(theta)
			sum += en
		}
	}
	if !(sum > 0) {
		return st, errors.New("speed: elevation maps carry no wave energy for a direction estimate; check that the frames are not constant")
	}
	st.MeanDirectionRad = math.Atan2(se, ce)
	r := math.Hypot(se, ce) / sum
	st.DirectionSpread = math.Sqrt(2 * math.Max(0, 1-r))
	return st, nil
}

// fillLinear writes s into dst with NaN samples filled by linear
// interpolation between the nearest valid samples and held constant beyond
// the first and last valid one. s must have at least one valid sample.
func fillLinear(dst []float64, s []float32) {
	last := -1
	for i, v := range s {
		if math.IsNaN(float64(v)) {
			continue
		}
		dst[i] = float64(v)
		switch {
		case last < 0:
			for j := 0; j < i; j++ {
				dst[j] = dst[i]
			}
		case last < i-1:
			a, b := dst[last], dst[i]
			for j := last + 1; j < i; j++ {
				f := float64(j-last) / float64(i-last)
				dst[j] = a + f*(b-a)
			}
		}
		last = i
	}
	for j := last + 1; j < len(s); j++ {
		dst[j] = dst[last]
	}
}

func absInt(i int) int {
	if i < 0 {
		return -i
	}
	return i
}
