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
	DefaultMaxPairs = 100
	// DefaultDirectionCells is the default largest number of cells per side
	// of the grid the direction estimate transforms (see
	// SeaStateOptions.DirectionCells).
	DefaultDirectionCells = 128
	// maxMissingFraction is the largest fraction of missing samples a
	// probe series may have and still be used (after linear filling).
	maxMissingFraction = 0.2
	// minSegment is the shortest default Welch segment, in samples.
	minSegment = 16
	// minPeriodsPerSegment is the fewest peak periods a default Welch
	// segment holds: with fewer, a wave's spectral line overlaps its image
	// at negative frequency and the segment-mean removal takes part of its
	// variance.
	minPeriodsPerSegment = 4
	// peakSamplesPerPeriod sets the zero-padding of the spectrum from
	// which the peak frequency is computed: its grid is at least this many
	// times finer than the peak frequency (Δf ≤ F_p/64).
	peakSamplesPerPeriod = 64
	// bandLowFraction: the waves' band starts at this fraction of F_p.
	bandLowFraction = 0.25
	// noiseSearchFactor: the noise floor is looked for above this
	// multiple of F_p.
	noiseSearchFactor = 2
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
	// 8 half-overlapping segments over the record, at least 16 samples,
	// lengthened to hold at least 4 peak periods when the record is short.
	SegmentSeconds float64
	// PairStride thins the direction estimate for speed: the pair of
	// frames (n−1, n) is used only when the time index n (frames plus
	// declared gaps, from 0) is a multiple of PairStride. Default 1 (every
	// pair), or, when ExpectedFrames is set, the stride that leaves about
	// DefaultMaxPairs pairs. The thinning depends only on frame indices, so
	// results are deterministic.
	PairStride int
	// ExpectedFrames is the record length in frames when known in advance
	// (frames plus gaps); it only sets the default PairStride and the
	// capacity of the probe series.
	ExpectedFrames int
	// DirectionCells is the largest number of cells per side of the grid
	// the direction estimate transforms: larger grids are averaged over
	// blocks of D×D cells first, D the smallest whole number that brings
	// both sides to DirectionCells or fewer. Default DefaultDirectionCells
	// (128); −1 transforms the full grid.
	DirectionCells int
}

// SeaState is the sea state of a record of elevation maps.
type SeaState struct {
	// Hm0 is the significant wave height 4√m0 in metres of the waves'
	// band (BandLowHz ≤ f < BandHighHz) with the noise floor removed: m0
	// is the variance of the probe series (equally weighted over the
	// record), less the spectral variance outside the band, less the
	// floor NoiseFloorPSD times the band's width.
	Hm0 float64
	// Hm0Total is 4√ of the whole variance of the probe series, noise and
	// out-of-band variance included (what Hm0 was before the band and the
	// noise correction).
	Hm0Total float64
	// BandLowHz, BandHighHz bound the waves' band: from a quarter of Fp to
	// the start of the noise floor (or above the last bin when no floor
	// was found).
	BandLowHz, BandHighHz float64
	// NoiseFloorPSD is the white noise floor in m²/Hz found at the top of
	// the spectrum, NoiseRMS = √(NoiseFloorPSD·f_Nyquist) the RMS in
	// metres of white noise at that level; NoiseFloorFound is false (and
	// both zero, nothing subtracted) when the spectrum still falls at the
	// Nyquist frequency.
	NoiseFloorPSD, NoiseRMS float64
	NoiseFloorFound         bool
	// Fp is the peak frequency in Hz: F_p = ∫ f S⁴ df / ∫ S⁴ df (Young
	// 1995, Ocean Eng. 22, 669–686) over the waves' band of the
	// probe-averaged spectrum less its noise floor, zero-padded to a grid
	// finer than Fp/64 (FpWelch), with the shift the window's smoothing
	// gives it removed: Fp = 2·FpWelch − FpSmoothed. Tp = 1/Fp is the peak
	// period in seconds. Both are absolute (fixed-camera) values.
	Tp, Fp float64
	// FpStd and TpStd are their standard uncertainties: the delta-method
	// sampling term for the degrees of freedom DOF with the Hann window's
	// resolution (youngStd), and the smoothing correction FpWelch −
	// FpSmoothed as the resolution term, in quadrature; and
	// [FpLow, FpHigh], [TpLow, TpHigh] their IntervalLevel (90 %)
	// intervals, Fp ± 1.645 FpStd and its reciprocal.
	FpStd, TpStd  float64
	FpLow, FpHigh float64
	TpLow, TpHigh float64
	// FpWelch is F_p of the Welch spectrum itself, FpSmoothed that of the
	// spectrum smoothed once more by the window (see Fp).
	FpWelch, FpSmoothed float64
	FpParabola          float64 // the largest bin refined by PeakParabola, for comparison
	DOF                 float64 // equivalent degrees of freedom of the spectrum at the peak
	EffectiveProbes     float64 // independent probes those DOF count (1 to NProbes)
	// PeakPhaseSpeed (c_p, m/s) and its interval [PeakPhaseSpeedLow,
	// PeakPhaseSpeedHigh] and standard uncertainty PeakPhaseSpeedStd are
	// zero until SetPeakPhaseSpeed gives the depth, current and direction.
	PeakPhaseSpeed, PeakPhaseSpeedLow, PeakPhaseSpeedHigh, PeakPhaseSpeedStd float64
	// MeanDirectionRad is the energy-weighted mean direction of wave travel
	// in radians, counter-clockwise from +x, in (−π, π].
	MeanDirectionRad float64
	// DirectionSpread is the circular spread √(2(1−R)) in radians, R the
	// mean resultant length of the energy-weighted directions (the
	// directional width of Kuik, van Vledder & Holthuijsen 1988, J. Phys.
	// Oceanogr. 18 — from memory).
	DirectionSpread float64
	// Freqs (Hz) and PSD (m²/Hz) are the Welch spectrum averaged over the
	// probes used (noise floor included).
	Freqs, PSD []float64
	// NProbes is the number of probe series used; DroppedProbes the number
	// left out for having more than 20 % missing samples.
	NProbes, DroppedProbes int
	// Frames is the number of frames added, GapFrames the number declared
	// missing with AddGap, FilledSamples the number of probe samples
	// (masked or in gaps) filled by linear interpolation in the probes used.
	Frames, GapFrames, FilledSamples int
	// SegmentSamples is the Welch segment length used, in samples,
	// Segments the number of segments averaged, PadFactor the
	// zero-padding of the spectrum Fp is computed on.
	SegmentSamples, Segments, PadFactor int
	// Pairs is the number of consecutive frame pairs in the direction
	// estimate, DirectionBlock the side D of the blocks of cells averaged
	// before its transforms (1: full grid).
	Pairs, DirectionBlock int
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
// probes. The segment holds at least 4 peak periods (it is lengthened,
// and the spectrum recomputed, when the default 8 segments would hold
// fewer), and each segment is zero-padded so that the spectrum is sampled
// at least 64 times per Fp.
//
// Noise and band: the white floor of the reconstruction noise is found at
// the top of the spectrum (findNoisePlateau); the waves' band runs from
// Fp/4 to the start of that floor. Hm0 = 4√m0 (common practice) with m0 the
// variance of the probe series, less the Welch variance outside the band,
// less the floor over the band: the record's own variance, equally weighted
// in time, is the part of the estimate that does not depend on the window.
//
// Peak: Fp is Young's (1995) weighted-spectrum peak frequency of the
// padded spectrum in the band, less its floor, with the shift that the
// window's smoothing gives it removed by comparing it with the same
// spectrum smoothed once more (SeaState.Fp). Its uncertainty combines the
// delta-method sampling term (youngStd) for the equivalent degrees of
// freedom ν = welchDOF(segments) × effective probes (effectiveProbes: from
// the scatter between segments, or between probes for a single segment)
// with the size of that smoothing correction.
//
// Measured on synthetic Gaussian seas (JONSWAP γ = 3.3, random amplitudes,
// 8×8 probes, 40 seeds each): against the spectrum's own 1/F_p, records of
// 6, 12, 24 and 360 peak periods give biases of −7 … −2.5 %, −2.5 … −1.1 %,
// −1.7 … −0.5 % and about +0.2 %, and the 90 % intervals hold the
// reference in 75–88 % of records up to 24 periods (the S⁴ weighting of
// ordinates with few degrees of freedom pulls F_p up on short records of a
// random sea); on a steady wave of 8 periods the error is below 0.2 %.
//
// Direction: each frame, with its mean removed, masked cells set to zero,
// averaged over blocks of D×D cells (D = 1 unless the grid has more than
// DirectionCells cells per side) and a Hann taper in x and y, is Fourier
// transformed in two dimensions. For consecutive frames with transforms F1,
// F2 the cross-spectrum C(k) += F2·conj(F1) is accumulated on the half plane
// kx >= 0 (a real frame's transform is Hermitian). A linear component
// exp(i(k·x − ωt)) with ω > 0 makes arg C(k) = −ωΔt < 0, so at the end the
// energy |C(k)| of each wavenumber is assigned to the direction of k when
// Im C(k) < 0 and of −k otherwise (common practice: the sign of the phase
// lag between frames resolves the 180° ambiguity of a single frame's
// spectrum), and the mean direction is the energy-weighted circular mean
// (Mardia & Jupp, Directional Statistics, 2000). The energy is divided by
// the block average's power response H(kx)²H(ky)², H(k) = sin(kDΔ/2) /
// (D sin(kΔ/2)), so that it weighs directions as the full grid would. The
// kx = 0 column counts half, as both k and −k appear in it; k = 0 and the
// Nyquist row and column are ignored. This resolves the direction of travel,
// not just the axis, as long as |ω|Δt < π, that is the frame rate is above
// twice the wave frequency. Memory: three complex arrays of my·(mx/2+1) for
// the block grid of mx×my. Cost: one pass over the frame and one 2-D FFT of
// the block grid per frame of a pair (thinned by PairStride); frames in no
// pair cost only their probe samples.
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
	block     int // D
	mx, my    int // block grid
	nkx       int
	wx, wy    []float64
	bsum      []float64
	bcnt      []int32
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
	case opt.DirectionCells < -1 || (opt.DirectionCells > 0 && opt.DirectionCells < 4):
		e.err = fmt.Errorf("speed: sea-state option DirectionCells = %d; use 4 or more cells, 0 for the default (%d) or −1 for the full grid", opt.DirectionCells, DefaultDirectionCells)
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

	cells := opt.DirectionCells
	if cells == 0 {
		cells = DefaultDirectionCells
	}
	e.block = 1
	if cells > 0 {
		e.block = max(1, (max(nx, ny)+cells-1)/cells)
	}
	// Both sides keep at least 4 blocks.
	for e.block > 1 && (nx/e.block < 4 || ny/e.block < 4) {
		e.block--
	}
	e.mx, e.my = nx/e.block, ny/e.block
	e.nkx = e.mx/2 + 1
	e.wx = hann(e.mx)
	e.wy = hann(e.my)
	e.bsum = make([]float64, e.mx*e.my)
	e.bcnt = make([]int32, e.mx*e.my)
	e.rowFFT = fourier.NewFFT(e.mx)
	e.colFFT = fourier.NewCmplxFFT(e.my)
	e.row = make([]float64, e.mx)
	e.rowCoef = make([]complex128, e.nkx)
	e.col = make([]complex128, e.my)
	e.prev = make([]complex128, e.my*e.nkx)
	e.cur = make([]complex128, e.my*e.nkx)
	e.acc = make([]complex128, e.my*e.nkx)
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
	if c := e.opt.ExpectedFrames; c > 0 && c <= 1<<24 {
		for p := range e.series {
			e.series[p] = make([]float32, 0, c)
		}
	}
}

// Add hands the estimator the next frame in time order: eta holds ny·nx
// elevations in metres, row-major (x fastest); valid, if not nil, marks the
// cells to use (NaN cells are never used). The caller removes nothing (no
// mean, no trend). Add neither keeps nor changes eta and valid.
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
			p := e.prev[i]
			// c·conj(p), written out
			e.acc[i] += complex(real(c)*real(p)+imag(c)*imag(p), imag(c)*real(p)-real(c)*imag(p))
		}
		e.pairs++
	}
	e.prev, e.cur = e.cur, e.prev
	e.havePrev = true
	e.prevIndex = t
}

// blockSums adds the valid, finite elevations of the frame into the block
// sums and counts (blocks of D×D cells; cells beyond the last whole block
// are not used). A block row of D cells is first summed without tests;
// only when that sum is NaN or the mask has a hole in it is it summed again
// cell by cell.
func (e *SeaStateEstimator) blockSums(eta []float32, valid []bool) {
	clear(e.bsum)
	clear(e.bcnt)
	d := e.block
	w := e.mx * d
	for j := 0; j < e.my*d; j++ {
		row := eta[j*e.nx : j*e.nx+w]
		var ok []bool
		if valid != nil {
			ok = valid[j*e.nx : j*e.nx+w]
		}
		bs := e.bsum[(j/d)*e.mx : (j/d+1)*e.mx]
		bc := e.bcnt[(j/d)*e.mx : (j/d+1)*e.mx]
		for b := range bs {
			cells := row[b*d : b*d+d : b*d+d]
			var s float64
			full := true
			if d == 4 { // the common case, unrolled
				s = float64(cells[0]) + float64(cells[1]) + float64(cells[2]) + float64(cells[3])
				if ok != nil {
					m := ok[b*4 : b*4+4 : b*4+4]
					full = m[0] && m[1] && m[2] && m[3]
				}
			} else {
				for _, v := range cells {
					s += float64(v)
				}
				if ok != nil {
					for _, m := range ok[b*d : b*d+d] {
						full = full && m
					}
				}
			}
			full = full && s == s
			if full {
				bs[b] += s
				bc[b] += int32(d)
				continue
			}
			s = 0
			var c int32
			for i, v := range cells {
				if v == v && (ok == nil || ok[b*d+i]) {
					s += float64(v)
					c++
				}
			}
			bs[b] += s
			bc[b] += c
		}
	}
}

// spectrum2D writes the half-plane 2-D Fourier transform of the frame on
// the block grid, mean removed, masked cells and empty blocks zero,
// Hann-tapered in x and y, into dst as dst[jy*nkx + jx].
func (e *SeaStateEstimator) spectrum2D(eta []float32, valid []bool, dst []complex128) {
	e.blockSums(eta, valid)
	var sum float64
	var cnt int64
	for i, s := range e.bsum {
		sum += s
		cnt += int64(e.bcnt[i])
	}
	mean := 0.0
	if cnt > 0 {
		mean = sum / float64(cnt)
	}
	for j := 0; j < e.my; j++ {
		base := j * e.mx
		for i := 0; i < e.mx; i++ {
			c := e.bcnt[base+i]
			if c == 0 {
				e.row[i] = 0
				continue
			}
			e.row[i] = (e.bsum[base+i]/float64(c) - mean) * e.wx[i] * e.wy[j]
		}
		e.rowFFT.Coefficients(e.rowCoef, e.row)
		copy(dst[j*e.nkx:(j+1)*e.nkx], e.rowCoef)
	}
	for jx := 0; jx < e.nkx; jx++ {
		for j := 0; j < e.my; j++ {
			e.col[j] = dst[j*e.nkx+jx]
		}
		e.colFFT.Coefficients(e.col, e.col)
		for j := 0; j < e.my; j++ {
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

// probeSpectra is the Welch spectrum of the probe series for one segment
// length and padding.
type probeSpectra struct {
	plan *welchPlan
	nseg int
	// psd is the probe- and segment-averaged density on the padded grid
	// (plan.nf bins, k·fs/nfft); native the same at the unpadded bins.
	psd, native []float64
	// seg[k·nfn + i] is the probe-averaged density of segment k at unpadded
	// bin i (nfn = nper/2 + 1).
	seg []float64
	// probe[p·nfn + i] is the density of the p-th probe used at unpadded bin
	// i, kept only when there is a single segment.
	probe []float64
	// variance is the probe-averaged variance of the filled series.
	variance float64
}

// spectra computes the probe spectra with segments of nper samples padded
// pad times, from the probes marked in use; x is scratch of the record's
// length.
func (e *SeaStateEstimator) spectra(use []bool, x []float64, nper, pad int) *probeSpectra {
	plan := newWelchPlan(nper, pad, 1/e.dt)
	nseg := plan.segments(len(x))
	nfn := nper/2 + 1
	ps := &probeSpectra{plan: plan, nseg: nseg, psd: make([]float64, plan.nf), native: make([]float64, nfn), seg: make([]float64, nseg*nfn)}
	if nseg == 1 {
		nu := 0
		for _, u := range use {
			if u {
				nu++
			}
		}
		ps.probe = make([]float64, nu*nfn)
	}
	np := 0
	for p, s := range e.series {
		if !use[p] {
			continue
		}
		fillLinear(x, s)
		var mean float64
		for _, v := range x {
			mean += v
		}
		mean /= float64(len(x))
		var v2 float64
		for i := range x {
			x[i] -= mean
			v2 += x[i] * x[i]
		}
		ps.variance += v2 / float64(len(x))
		for k := 0; k < nseg; k++ {
			plan.transform(x[k*plan.step : k*plan.step+nper])
			for i, c := range plan.coef {
				ps.psd[i] += real(c)*real(c) + imag(c)*imag(c)
			}
			sg := ps.seg[k*nfn : (k+1)*nfn]
			for i := range sg {
				c := plan.coef[i*pad]
				v := real(c)*real(c) + imag(c)*imag(c)
				sg[i] += v
				if ps.probe != nil {
					ps.probe[np*nfn+i] = v * plan.binScale(i*pad)
				}
			}
		}
		np++
	}
	ps.variance /= float64(np)
	for i := range ps.psd {
		ps.psd[i] *= plan.binScale(i) / float64(nseg*np)
	}
	for i := range ps.native {
		ps.native[i] = ps.psd[i*pad]
	}
	for k := 0; k < nseg; k++ {
		for i := 0; i < nfn; i++ {
			ps.seg[k*nfn+i] *= plan.binScale(i*pad) / float64(np)
		}
	}
	return ps
}

// smoothLength returns the smallest length ≥ m whose prime factors are 2,
// 3 and 5 (fast transforms), or the largest such length ≤ limit when that
// one exceeds limit.
func smoothLength(m, limit int) int {
	smooth := func(v int) bool {
		for _, p := range []int{2, 3, 5} {
			for v%p == 0 {
				v /= p
			}
		}
		return v == 1
	}
	for v := m; v <= limit; v++ {
		if smooth(v) {
			return v
		}
	}
	for v := limit; v > 1; v-- {
		if smooth(v) {
			return v
		}
	}
	return limit
}

// Result returns the sea state of the frames added so far. It can be called
// more than once; it does not change the estimator.
func (e *SeaStateEstimator) Result() (SeaState, error) {
	if e.err != nil {
		return SeaState{}, e.err
	}
	st, err := e.frequencySpectrum()
	if err != nil {
		return st, err
	}
	if e.pairs == 0 {
		return st, errors.New("speed: no pair of consecutive frames was available for the wave direction; check for gaps between every frame")
	}
	if err := e.direction(&st); err != nil {
		return st, err
	}
	return st, nil
}

// SeriesSeaState estimates the sea state of one elevation time series — a
// wave gauge, a buoy's heave, a pressure record converted to elevation, or
// a virtual probe of the maps — by the same frequency-spectrum estimator
// as the maps' (Hm0 in the waves' band less the noise floor, Young's F_p
// and its uncertainty), so that the two can be compared. series is sampled
// every dt seconds; NaN samples (gaps) are filled linearly, and at most a
// fifth may be missing. No direction is estimated.
func SeriesSeaState(series []float32, dt float64) (SeaState, error) {
	if !(dt > 0) || math.IsInf(dt, 0) {
		return SeaState{}, fmt.Errorf("speed: sampling interval %g s of the series is invalid; give a positive interval", dt)
	}
	e := &SeaStateEstimator{dt: dt, series: [][]float32{series}, n: len(series)}
	for _, v := range series {
		if v == v {
			e.frames++
		}
	}
	return e.frequencySpectrum()
}

// errNoEnergy is the error of a spectrum with no energy above zero
// frequency.
var errNoEnergy = errors.New("speed: spectrum has no energy above zero frequency; check that the elevation record is not constant")

// frequencySpectrum is the part of Result that needs only the probes'
// series: spectrum, noise floor, band, Hm0 and F_p with its uncertainty.
func (e *SeaStateEstimator) frequencySpectrum() (SeaState, error) {
	st := SeaState{Frames: e.frames, GapFrames: e.gapFrames, Pairs: e.pairs, DirectionBlock: e.block}
	n := e.n
	if n < minSegment {
		return st, fmt.Errorf("speed: sea-state record has %d frames; at least %d are needed for a spectrum", n, minSegment)
	}
	auto := e.opt.SegmentSeconds == 0
	nper := smoothLength(max(minSegment, 2*n/9), n)
	if !auto {
		nper = int(math.Round(e.opt.SegmentSeconds / e.dt))
		if nper < 4 || nper > n {
			return st, fmt.Errorf("speed: Welch segment of %g s is %d frames, outside 4..%d for this record; choose a segment length between %g s and %g s", e.opt.SegmentSeconds, nper, n, 4*e.dt, float64(n)*e.dt)
		}
	}

	use, err := e.chooseProbes(&st)
	if err != nil {
		return st, err
	}
	x := make([]float64, n)
	fs := 1 / e.dt

	nper, fp, err := e.segmentLength(use, x, nper, auto)
	if err != nil {
		return st, err
	}
	pad := min(64, max(1, int(math.Ceil(peakSamplesPerPeriod/(float64(nper)*e.dt*fp)))))
	for pad > 1 && pad*nper > 1<<22 {
		pad--
	}
	ps := e.spectra(use, x, nper, pad)
	st.SegmentSamples, st.Segments, st.PadFactor = nper, ps.nseg, pad
	st.Freqs = welchFreqs(nper, fs, 1)
	st.PSD = ps.native
	nf := len(st.PSD)
	df := st.Freqs[1] - st.Freqs[0]
	fpad := welchFreqs(nper, fs, pad)
	if fp, _ = youngPeak(fpad, ps.psd, pad, len(fpad)); !(fp > 0) {
		return st, errNoEnergy
	}
	if st.FpParabola, err = PeakParabola(st.Freqs, st.PSD); err != nil {
		return st, err
	}

	// Noise floor and the waves' band.
	nuWelch := welchDOF(ps.nseg)
	pl := findNoisePlateau(st.PSD, min(nf-1, int(math.Ceil(noiseSearchFactor*fp/df))), nuWelch*float64(st.NProbes))
	hi := nf
	if pl.found {
		hi = pl.first
		st.NoiseFloorFound = true
		st.NoiseFloorPSD = pl.level
		st.NoiseRMS = math.Sqrt(pl.level * fs / 2)
	}
	lo := max(1, int(math.Ceil(bandLowFraction*fp/df-1e-9)))
	if lo >= hi {
		return st, fmt.Errorf("speed: the waves' band from %.3g Hz is empty: the spectrum is white noise from %.3g Hz up; check that the elevation maps carry waves", float64(lo)*df, float64(hi)*df)
	}
	st.BandLowHz, st.BandHighHz = float64(lo)*df, float64(hi)*df
	m0 := ps.variance - st.NoiseFloorPSD*float64(hi-lo)*df
	for i := range st.PSD {
		if i < lo || i >= hi {
			m0 -= st.PSD[i] * df
		}
	}
	st.Hm0 = 4 * math.Sqrt(math.Max(m0, 0))
	st.Hm0Total = 4 * math.Sqrt(ps.variance)

	if err := st.peakFrequency(ps, fpad, lo, hi, pad, nuWelch); err != nil {
		return st, err
	}
	return st, nil
}

// chooseProbes marks the probes whose series miss at most
// maxMissingFraction of the samples, counting used and dropped probes and
// the samples to fill in st.
func (e *SeaStateEstimator) chooseProbes(st *SeaState) ([]bool, error) {
	n := e.n
	use := make([]bool, len(e.series))
	for p, s := range e.series {
		missing := 0
		for _, v := range s {
			if v != v {
				missing++
			}
		}
		if float64(missing) > maxMissingFraction*float64(n) {
			st.DroppedProbes++
			continue
		}
		use[p] = true
		st.NProbes++
		st.FilledSamples += missing
	}
	if st.NProbes == 0 {
		return nil, fmt.Errorf("speed: all %d elevation probes have more than %.0f %% missing samples; check the validity mask or the reconstruction coverage", st.DroppedProbes, 100*maxMissingFraction)
	}
	return use, nil
}

// segmentLength chooses the Welch segment length, starting from nper:
// automatically, at least minPeriodsPerSegment periods of the peak
// found with the current length (a few rounds at most: the peak of a
// spectrum with too short segments is itself rough).
// It returns the length and the peak frequency found with it.
func (e *SeaStateEstimator) segmentLength(use []bool, x []float64, nper int, auto bool) (int, float64, error) {
	n := e.n
	var fp float64
	fs := 1 / e.dt
	for round := 0; ; round++ {
		ps := e.spectra(use, x, nper, 1)
		freqs := welchFreqs(nper, fs, 1)
		var ok bool
		if fp, ok = youngPeak(freqs, ps.native, 1, len(freqs)); !ok {
			return 0, 0, errNoEnergy
		}
		need := int(math.Ceil(minPeriodsPerSegment / (fp * e.dt)))
		if !auto || round == 3 || need <= nper || nper == n {
			break
		}
		nper = smoothLength(min(need, n), n)
	}
	return nper, fp, nil
}

// peakFrequency estimates F_p in the band lo–hi (native bins) of the
// floor-removed padded spectrum, with its Richardson correction,
// uncertainty and interval, and T_p from it.
func (st *SeaState) peakFrequency(ps *probeSpectra, fpad []float64, lo, hi, pad int, nuWelch float64) error {
	// Peak frequency of the band, floor removed, on the padded grid.
	clean := make([]float64, len(ps.psd))
	for i, v := range ps.psd {
		clean[i] = v - st.NoiseFloorPSD
	}
	plo, phi := lo*pad, min(len(clean), (hi-1)*pad+1)
	if hi == len(st.PSD) {
		phi = len(clean)
	}
	fw, ok := youngPeak(fpad, clean, plo, phi)
	if !ok {
		return errNoEnergy
	}
	st.FpWelch = fw
	st.FpSmoothed, _ = youngPeak(fpad, smoothWithWindow(clean, plo, phi, pad), plo, phi)
	// The Welch estimate is the true spectrum smoothed by the window's power
	// response; smoothing once more doubles that kernel's second moment, and
	// to first order the shift of F_p with it, so 2F − F_smoothed removes
	// the shift (Richardson extrapolation to zero kernel width).
	st.Fp = 2*fw - st.FpSmoothed
	if !(st.Fp > 0) {
		st.Fp = fw
	}
	st.Tp = 1 / st.Fp
	st.EffectiveProbes = effectiveProbes(ps, lo, hi, st.NoiseFloorPSD, st.NProbes)
	st.DOF = nuWelch * st.EffectiveProbes
	// Sampling (degrees of freedom) and resolution (the correction's size)
	// in quadrature.
	st.FpStd = math.Hypot(youngStd(fpad, clean, plo, phi, fw, pad, st.DOF), fw-st.FpSmoothed)
	st.FpLow = math.Max(0, st.Fp-zInterval*st.FpStd)
	st.FpHigh = st.Fp + zInterval*st.FpStd
	st.TpStd = st.FpStd / (st.Fp * st.Fp)
	st.TpLow = 1 / st.FpHigh
	st.TpHigh = math.Inf(1)
	if st.FpLow > 0 {
		st.TpHigh = 1 / st.FpLow
	}
	return nil
}

// welchFreqs returns the frequencies k·fs/(pad·nper), k = 0 … pad·nper/2.
func welchFreqs(nper int, fs float64, pad int) []float64 {
	nfft := nper * pad
	f := make([]float64, nfft/2+1)
	for i := range f {
		f[i] = float64(i) * fs / float64(nfft)
	}
	return f
}

// effectiveProbes returns the number of independent probes the spectrum's
// scatter shows near the peak, over the unpadded bins of the band whose
// density (less the floor) is at least half the band's largest, held to
// [1, nprobes]:
//
//   - with two segments or more, from the scatter between segments: r =
//     sample variance / mean² of the segments' probe-averaged densities; a
//     χ² ordinate of ν₁ degrees of freedom has r = 2/ν₁, and ν₁ = 2 per
//     independent probe, so the count is 1/r̄. This measures the variability
//     of the record itself (a steady wave has none, whatever the probes).
//   - with one segment, from the scatter between probes: each probe's
//     ordinate is χ²₂ (relative variance 1), and for probes whose ordinates
//     are correlated ρ̄ on average the scatter between them is (1 − ρ̄) of
//     that, so ρ̄ = 1 − s²/m̄² and the count is P/(1 + (P−1)ρ̄) (the
//     effective sample size of equicorrelated variables; common practice).
func effectiveProbes(ps *probeSpectra, lo, hi int, floor float64, nprobes int) float64 {
	nfn := len(ps.native)
	var smax float64
	for i := lo; i < hi; i++ {
		smax = math.Max(smax, ps.native[i]-floor)
	}
	// rows are segments, or probes when there is a single segment
	rows, data := ps.nseg, ps.seg
	if ps.nseg < 2 {
		rows, data = nprobes, ps.probe
	}
	if rows < 2 || data == nil {
		return 1
	}
	var rsum float64
	var nr int
	for i := lo; i < hi; i++ {
		if ps.native[i]-floor < smax/2 {
			continue
		}
		var m, m2 float64
		for k := 0; k < rows; k++ {
			v := data[k*nfn+i] - floor
			m += v
			m2 += v * v
		}
		m /= float64(rows)
		vr := (m2 - float64(rows)*m*m) / float64(rows-1)
		if m > 0 {
			rsum += math.Max(vr, 0) / (m * m)
			nr++
		}
	}
	if nr == 0 {
		return 1
	}
	r := rsum / float64(nr)
	if ps.nseg < 2 {
		rho := math.Min(1, math.Max(0, 1-r))
		return math.Max(1, float64(nprobes)/(1+float64(nprobes-1)*rho))
	}
	if r <= 1/float64(nprobes) {
		return float64(nprobes)
	}
	return math.Max(1, 1/r)
}

// direction sets the mean direction and spread from the accumulated
// cross-spectrum.
func (e *SeaStateEstimator) direction(st *SeaState) error {
	var se, ce, sum float64
	d := float64(e.block)
	bdx, bdy := d*e.dx, d*e.dy
	dkx := 2 * math.Pi / (float64(e.mx) * bdx)
	dky := 2 * math.Pi / (float64(e.my) * bdy)
	// Power response of the D-cell block average at wavenumber k along a
	// side of cell spacing h: (sin(kDh/2) / (D sin(kh/2)))².
	resp := func(k, h float64) float64 {
		if e.block == 1 || k == 0 {
			return 1
		}
		r := math.Sin(k*d*h/2) / (d * math.Sin(k*h/2))
		return r * r
	}
	ry := make([]float64, e.my)
	for jy := range ry {
		ky := float64(jy) * dky
		if jy > e.my/2 {
			ky = float64(jy-e.my) * dky
		}
		ry[jy] = resp(ky, e.dy)
	}
	rx := make([]float64, e.nkx)
	for jx := range rx {
		rx[jx] = resp(float64(jx)*dkx, e.dx)
	}
	for jy := 0; jy < e.my; jy++ {
		if e.my%2 == 0 && jy == e.my/2 {
			continue // Nyquist row
		}
		ky := float64(jy) * dky
		if jy > e.my/2 {
			ky = float64(jy-e.my) * dky
		}
		for jx := 0; jx < e.nkx; jx++ {
			if (jx == 0 && jy == 0) || (e.mx%2 == 0 && jx == e.mx/2) {
				continue // mean and Nyquist column
			}
			c := e.acc[jy*e.nkx+jx]
			en := cmplx.Abs(c) / (rx[jx] * ry[jy])
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
		return errors.New("speed: elevation maps carry no wave energy for a direction estimate; check that the frames are not constant")
	}
	st.MeanDirectionRad = math.Atan2(se, ce)
	r := math.Hypot(se, ce) / sum
	st.DirectionSpread = math.Sqrt(2 * math.Max(0, 1-r))
	return nil
}

// SetPeakPhaseSpeed sets PeakPhaseSpeed, its interval and its standard
// uncertainty from Tp and its interval, through PhaseSpeedFromPeriod with
// the depth (0 = deep), uniform current, direction of travel (radians) and
// vorticity of the references. The interval is the range of c over
// [TpLow, TpHigh] evaluated at its ends and at Tp (c is monotonic in T for
// the currents PhaseSpeedFromPeriod accepts; the estimate itself is always
// inside). A TpHigh of +Inf (a peak frequency interval reaching zero) gives
// the deep- or shallow-water limit of c there: the interval is then only
// bounded by the dispersion relation.
func (s *SeaState) SetPeakPhaseSpeed(depth float64, cur Current, theta, vorticity float64) error {
	c, err := PhaseSpeedFromPeriod(s.Tp, depth, cur, theta, vorticity)
	if err != nil {
		return err
	}
	lo, hi := c, c
	for _, t := range []float64{s.TpLow, s.TpHigh} {
		if !(t > 0) || math.IsInf(t, 0) {
			continue
		}
		if v, err := PhaseSpeedFromPeriod(t, depth, cur, theta, vorticity); err == nil {
			lo, hi = math.Min(lo, v), math.Max(hi, v)
		}
	}
	if math.IsInf(s.TpHigh, 1) {
		hi = math.Inf(1)
		if depth > 0 {
			// no faster free wave than the shallow-water speed √(gh) plus the current
			hi = math.Sqrt(G*depth) + cur.U*math.Cos(theta) + cur.V*math.Sin(theta)
		}
	}
	s.PeakPhaseSpeed, s.PeakPhaseSpeedLow, s.PeakPhaseSpeedHigh = c, lo, hi
	// Standard uncertainty by the derivative dc/dT (central difference).
	h := 1e-4 * s.Tp
	c1, err1 := PhaseSpeedFromPeriod(s.Tp-h, depth, cur, theta, vorticity)
	c2, err2 := PhaseSpeedFromPeriod(s.Tp+h, depth, cur, theta, vorticity)
	if err1 == nil && err2 == nil {
		s.PeakPhaseSpeedStd = math.Abs(c2-c1) / (2 * h) * s.TpStd
	} else {
		s.PeakPhaseSpeedStd = math.NaN()
	}
	return nil
}

// RatioInterval returns the interval of a statistic r of c_cr/c_p (a
// median, mean, mode or percentile: any statistic that scales as 1/c_p),
// whose sampling interval is [lo, hi], once the uncertainty of c_p is added.
// Every ratio of a record shares its c_p, so the reference's uncertainty
// moves them all together and does not average out: relative half-widths
// are combined in quadrature (independent errors, ISO Guide to the
// Expression of Uncertainty in Measurement, 1995), the reference's being
// c_p/c_low − 1 upwards and 1 − c_p/c_high downwards. Pass lo = hi = r for
// the reference's share alone. The interval contains r whenever [lo, hi]
// does. Before SetPeakPhaseSpeed it returns [lo, hi].
func (s SeaState) RatioInterval(r, lo, hi float64) (float64, float64) {
	if !(s.PeakPhaseSpeed > 0) || !(r > 0) {
		return lo, hi
	}
	up := s.PeakPhaseSpeed/s.PeakPhaseSpeedLow - 1
	down := 1 - s.PeakPhaseSpeed/s.PeakPhaseSpeedHigh
	su := math.Max(hi-r, 0) / r
	sd := math.Max(r-lo, 0) / r
	return r * (1 - math.Hypot(sd, down)), r * (1 + math.Hypot(su, up))
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
