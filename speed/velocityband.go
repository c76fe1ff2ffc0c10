package speed

import (
	"fmt"
	"math"
	"sync"
)

// SurfaceVelocity estimates the linear horizontal surface orbital speed of
// the waves travelling with θ0 from a sequence of elevation maps
// (docs/methods.md, Breaking): over windows of frames, η (mean removed,
// masked cells zero) is Hann-tapered in time and Fourier-transformed in
// time and space; each component that lies on the linear dispersion shell
// and travels with the waves (its direction of travel within 90° of θ0) is
// multiplied by the linear transfer function of the surface orbital speed
// in its own direction of travel, σ coth(|k|h) with σ the bin's intrinsic
// frequency (Dean & Dalrymple 1991: u = aσ coth(kh) cos(k·x − ωt) at the
// surface of a linear wave, σ the intrinsic frequency, d̂ its direction of
// travel); all others are removed. The inverse transform of each window is
// added into the output with the same Hann weights, and the frames'
// weights (which sum to one in the interior of the record for
// half-overlapping periodic Hann windows) are divided out; frames in the
// first or last half-window of the record are reported as unknown. In
// space a Tukey taper (25 %) limits the leakage of a field that is not
// periodic over the grid. The filter's response to the taper reaches some
// way into the grid, so only the central part is reported: a strip of
// 18.75 % of the grid along each edge (the tapered 12.5 % and a margin
// beyond it) is unknown. There the error stays within about 2 % for a
// regular wave with five wavelengths across the grid; within the margin it
// grows to 5–10 %.
//
// Linear kinematics underestimate the crest velocity of steep waves, and
// the spatial transform treats the grid as periodic, so values within a
// few cells of the edges are less reliable; both are limits of the
// estimate.
//
// Only the waves' band is computed. With BandHz set, frequencies above it
// are removed by the filter, and when the frame rate f_s exceeds 4·BandHz
// the frames are first low-passed in time and kept every D = ⌊f_s /
// (4·BandHz)⌋-th (Decimation): a Kaiser-windowed sinc (Kaiser 1974; 60 dB,
// cut-off at half the decimated rate, so the band is passed within 0.1 %
// and what would fold into it is 60 dB down) — the transform then works on
// D times fewer frames. Each frame's estimate is interpolated back from the
// decimated frames with an 8-point Kaiser-windowed sinc (the band lies
// below a quarter of the decimated rate, where that kernel passes it
// within 0.1 %), and only where it is asked for (VelocityFrame.At).
//
// Windows are processed in pairs: the window starting half a window later
// rides in the imaginary part of the same transform (the input is real and
// the gain, made Hermitian-symmetric, keeps a real field real), and the
// spatial transforms run only on the frequency planes where the gain is not
// zero everywhere.
//
// Memory: one window of complex frames plus one and a half windows of
// single-precision frames at the decimated rate, Window/D·nx·ny·(16 + 6)
// bytes, whatever the record length.
type SurfaceVelocity struct {
	nx, ny  int
	dec     int // decimation D
	workers int
	core    *velocityCore
	ready   func(frame int, v *VelocityFrame, ok bool)

	// decimation: low-pass FIR over frames, centred, len(fir) = 2·firHalf+1
	fir     []float64
	firHalf int
	acc     [][]float32 // sums of decimated frames accBase, accBase+1, ...
	accBase int
	pushed  int // frames pushed (at the input rate), padding included
	frames  int // frames of the record (set by Close; −1 before)
	nCoarse int // decimated frames handed to the core

	// interpolation back to every frame, from the last len(ring) decimated
	// frames
	interp [][]float64 // weights per phase r = frame mod D, 2·interpHalf each
	ring   [][]float32
	ringOK []bool // fully covered (a frame next to it may be handed out)
	// covered enough to be an outer point of the interpolation
	ringUsable []bool
	emitted    int // decimated frames the core has handed out
	next       int // next frame to hand out
	frame      VelocityFrame
}

// interpHalf is the half-width, in decimated frames, of the interpolation
// kernel.
const interpHalf = 4

// Decimation is the factor by which frames dt apart are decimated in time
// for a velocity band of bandHz (0: none): ⌊f_s/(4·bandHz)⌋, at least 1.
func Decimation(dt, bandHz float64) int {
	if !(bandHz > 0) || !(dt > 0) {
		return 1
	}
	return max(1, int(math.Floor(1/(dt*4*bandHz))))
}

// NewSurfaceVelocity prepares an estimator for frames of nx×ny cells spaced
// dx, dy, dt apart; opt.Window counts frames at that rate (it becomes
// 2·round(Window/2D) decimated frames, at least 8). ready is called once
// per frame, in order, with the velocity along θ0 (m/s) and ok = false
// (v nil) where the frame is not covered well enough.
func NewSurfaceVelocity(nx, ny int, dx, dy, dt float64, opt SurfaceVelocityOptions, ready func(frame int, v *VelocityFrame, ok bool)) (*SurfaceVelocity, error) {
	if opt.Window == 0 {
		opt.Window = 64
	}
	if opt.Window < 8 || opt.Window%2 != 0 {
		return nil, fmt.Errorf("surface-velocity window of %d frames must be even and at least 8", opt.Window)
	}
	if opt.Tolerance == 0 {
		opt.Tolerance = 0.25
	}
	if opt.Workers <= 0 {
		opt.Workers = 1
	}
	if !(opt.BandHz >= 0) {
		return nil, fmt.Errorf("surface-velocity band %g Hz must be positive or zero", opt.BandHz)
	}
	d := Decimation(dt, opt.BandHz)
	s := &SurfaceVelocity{nx: nx, ny: ny, dec: d, workers: opt.Workers, ready: ready, frames: -1}
	copt := opt
	if d > 1 {
		copt.Window = max(8, 2*int(math.Round(float64(opt.Window)/float64(2*d))))
		s.fir, s.firHalf = decimationFIR(d)
		s.interp = interpolationWeights(d)
		s.ring = make([][]float32, 2*interpHalf)
		for i := range s.ring {
			s.ring[i] = make([]float32, nx*ny)
		}
		s.ringOK = make([]bool, 2*interpHalf)
		s.ringUsable = make([]bool, 2*interpHalf)
	}
	s.core = newVelocityCore(nx, ny, dx, dy, dt*float64(d), copt, s.coarseReady)
	return s, nil
}

// WindowFrames is the length of the transform windows in frames at the
// input rate; DecimationFactor is D.
func (s *SurfaceVelocity) WindowFrames() int     { return s.core.nw * s.dec }
func (s *SurfaceVelocity) DecimationFactor() int { return s.dec }

// Push adds the next frame (row-major, NaN where unknown; mean removed by
// the caller or not — the transform ignores the zero frequency). Frames
// must be pushed at regular intervals; a dropped frame is pushed as nil.
func (s *SurfaceVelocity) Push(eta []float32) {
	if s.dec == 1 {
		s.core.Push(eta)
		return
	}
	n := s.pushed
	s.pushed++
	d, p := s.dec, s.firHalf
	hi := (n + p) / d // the last decimated frame this one reaches
	for s.accBase+len(s.acc) <= hi {
		s.acc = append(s.acc, make([]float32, s.nx*s.ny))
	}
	if eta != nil {
		lo := max(0, (n-p+d-1)/d)
		if n < p {
			lo = 0
		}
		s.addToSums(eta, n, max(lo, s.accBase), hi)
	}
	// decimated frames whose filter has seen its last input
	for len(s.acc) > 0 && s.accBase*d+p <= n {
		if s.frames < 0 || s.accBase*d <= s.frames-1 {
			s.core.Push(s.acc[0])
			s.nCoarse++
		}
		a := s.acc[0]
		clear(a)
		s.acc = append(s.acc[1:], a)
		s.accBase++
	}
}

// addToSums adds frame n, weighted by the filter, into the sums of the
// decimated frames lo..hi, the cells shared among the workers.
func (s *SurfaceVelocity) addToSums(eta []float32, n, lo, hi int) {
	cells := len(eta)
	per := (cells + s.workers - 1) / s.workers
	var wg sync.WaitGroup
	for w := 0; w < s.workers; w++ {
		a, b := w*per, min((w+1)*per, cells)
		if a >= b {
			continue
		}
		wg.Add(1)
		go func(a, b int) {
			defer wg.Done()
			for m := lo; m <= hi; m++ {
				h := float32(s.fir[n-m*s.dec+s.firHalf])
				dst := s.acc[m-s.accBase][a:b]
				for i, v := range eta[a:b] {
					if v == v { // NaN (unknown) adds nothing
						dst[i] += h * v
					}
				}
			}
		}(a, b)
	}
	wg.Wait()
}

// Close flushes the end of the record and hands out every remaining frame.
func (s *SurfaceVelocity) Close() {
	if s.dec == 1 {
		s.core.Close()
		return
	}
	if s.pushed == 0 {
		return
	}
	s.frames = s.pushed
	last := (s.frames - 1) / s.dec // the last decimated frame in the record
	for s.accBase <= last {
		s.Push(nil)
	}
	s.core.Close()
	for s.next < s.frames {
		s.handOut(s.next)
		s.next++
	}
}

// coarseReady receives the core's decimated frames and hands out every
// frame whose interpolation they complete.
func (s *SurfaceVelocity) coarseReady(m int, u []float32, ok, usable bool) {
	if s.dec == 1 {
		s.frame = VelocityFrame{nx: s.nx, ny: s.ny, planes: [][]float32{u}, w: []float64{1}}
		if ok {
			s.ready(m, &s.frame, true)
		} else {
			s.ready(m, nil, false)
		}
		return
	}
	slot := m % len(s.ring)
	copy(s.ring[slot], u)
	s.ringOK[slot], s.ringUsable[slot] = ok, usable
	s.emitted = m + 1
	// frame n needs decimated frames ⌊n/D⌋−interpHalf+1 … ⌊n/D⌋+interpHalf
	for s.next/s.dec+interpHalf <= m && (s.frames < 0 || s.next < s.frames) {
		s.handOut(s.next)
		s.next++
	}
}

// handOut interpolates frame n from the decimated frames in the ring.
func (s *SurfaceVelocity) handOut(n int) {
	d := s.dec
	j0 := n/d - interpHalf + 1
	w := s.interp[n%d]
	f := &s.frame
	f.nx, f.ny = s.nx, s.ny
	f.planes, f.w = f.planes[:0], f.w[:0]
	ok := true
	for i, wi := range w {
		j := j0 + i
		have := j >= 0 && j < s.emitted && j >= s.emitted-len(s.ring)
		// the two decimated frames either side of frame n must be fully
		// covered, the outer ones at least usable
		if inner := i == interpHalf-1 || i == interpHalf; have && inner {
			have = s.ringOK[j%len(s.ring)]
		} else if have {
			have = s.ringUsable[j%len(s.ring)]
		}
		if !have {
			if wi != 0 {
				ok = false
				break
			}
			continue
		}
		if wi != 0 {
			f.planes = append(f.planes, s.ring[j%len(s.ring)])
			f.w = append(f.w, wi)
		}
	}
	if ok {
		s.ready(n, f, true)
	} else {
		s.ready(n, nil, false)
	}
}

// VelocityFrame is the surface speed of one frame, valid during the
// ready call that hands it out.
type VelocityFrame struct {
	nx, ny int
	planes [][]float32 // decimated frames, weighted by w
	w      []float64
}

// At returns the speed (m/s) at fractional cell coordinates (fx, fy)
// (cell (0, 0) at the grid's first x and y), bilinear in space; NaN
// outside the grid or next to a cell without an estimate.
func (v *VelocityFrame) At(fx, fy float64) float64 {
	nx, ny := v.nx, v.ny
	if !(fx >= 0 && fy >= 0 && fx <= float64(nx-1) && fy <= float64(ny-1)) {
		return math.NaN()
	}
	ix, iy := min(int(fx), nx-2), min(int(fy), ny-2)
	wx, wy := fx-float64(ix), fy-float64(iy)
	i := iy*nx + ix
	var sum float64
	for k, u := range v.planes {
		b := (1-wy)*((1-wx)*float64(u[i])+wx*float64(u[i+1])) + wy*((1-wx)*float64(u[i+nx])+wx*float64(u[i+nx+1]))
		sum += v.w[k] * b
	}
	return sum
}

// Field writes the speed of every cell (NaN where unknown) into dst.
func (v *VelocityFrame) Field(dst []float32) {
	for i := range dst {
		var sum float64
		for k, u := range v.planes {
			sum += v.w[k] * float64(u[i])
		}
		dst[i] = float32(sum)
	}
}

// VelocityBand returns the frequency (Hz) below which all but the fraction
// loss of the waves' surface-speed variance lies: the spectrum of the
// surface speed of linear waves is (2πf)²·coth²(kh)·S(f) (Dean & Dalrymple
// 1991), and the elevation spectrum S is taken less its noise floor within
// the waves' band of the sea state. The answer is rounded up to the next
// bin edge plus one bin, so that the peak's leakage is inside. 0 (no
// limit) when loss is 0 or the spectrum is empty.
func VelocityBand(ss SeaState, depth, loss float64) float64 {
	if !(loss > 0) || len(ss.Freqs) < 3 {
		return 0
	}
	df := ss.Freqs[1] - ss.Freqs[0]
	sv := make([]float64, len(ss.Freqs))
	var total float64
	for i, f := range ss.Freqs {
		if f <= 0 || f > ss.BandHighHz {
			continue
		}
		e := ss.PSD[i]
		if ss.NoiseFloorFound {
			e -= ss.NoiseFloorPSD
		}
		if !(e > 0) {
			continue
		}
		w := 2 * math.Pi * f
		g := w * w
		if !isDeep(depth) {
			if k, err := WaveNumber(w, depth); err == nil {
				g /= tanhKH(k, depth) * tanhKH(k, depth)
			}
		}
		sv[i] = g * e
		total += sv[i]
	}
	if !(total > 0) {
		return 0
	}
	var cum float64
	for i, v := range sv {
		cum += v
		if cum >= (1-loss)*total {
			return ss.Freqs[i] + 1.5*df
		}
	}
	return 0
}

// decimationFIR is the low-pass filter for decimation by d: a
// Kaiser-windowed sinc (Kaiser 1974, in Oppenheim & Schafer 2010,
// Discrete-Time Signal Processing, §7.6) for 60 dB with its cut-off at
// half the decimated rate and a transition half the decimated rate wide
// (the band lies below a quarter of that rate); unit gain at zero
// frequency. It returns the taps and the half-length.
func decimationFIR(d int) ([]float64, int) {
	const atten = 60.0
	beta := 0.1102 * (atten - 8.7)
	dw := math.Pi / float64(d) // transition width, radians per frame
	half := int(math.Ceil((atten - 8) / (2.285 * dw) / 2))
	fc := 0.5 / float64(d) // cycles per frame
	h := make([]float64, 2*half+1)
	var sum float64
	for j := range h {
		x := float64(j - half)
		h[j] = 2 * fc * sinc(2*fc*x) * kaiser(x/float64(half), beta)
		sum += h[j]
	}
	for j := range h {
		h[j] /= sum
	}
	return h, half
}

// interpolationWeights are, for each phase r = 0…d−1 of a frame between
// decimated frames, the weights of the 2·interpHalf decimated frames
// around it: a sinc at the decimated rate under a Kaiser window (60 dB),
// normalised to sum to one. At r = 0 the frame is a decimated frame itself.
func interpolationWeights(d int) [][]float64 {
	beta := 0.1102 * (60 - 8.7)
	out := make([][]float64, d)
	for r := range out {
		w := make([]float64, 2*interpHalf)
		var sum float64
		for i := range w {
			// decimated frame j0+i, j0 = ⌊n/d⌋ − interpHalf + 1; distance
			// in decimated frames from frame n
			x := float64(r)/float64(d) + float64(interpHalf-1-i)
			switch {
			case r == 0: // the decimated frame itself
				w[i] = map[bool]float64{true: 1}[x == 0]
			case math.Abs(x) < interpHalf:
				w[i] = sinc(x) * kaiser(x/interpHalf, beta)
			}
			sum += w[i]
		}
		for i := range w {
			w[i] /= sum
		}
		out[r] = w
	}
	return out
}

// kaiser is the Kaiser window I0(β√(1−x²))/I0(β) on |x| ≤ 1.
func kaiser(x, beta float64) float64 {
	if math.Abs(x) > 1 {
		return 0
	}
	return besselI0(beta*math.Sqrt(1-x*x)) / besselI0(beta)
}

// besselI0 is the modified Bessel function of the first kind, order 0, by
// its power series (Abramowitz & Stegun 1964, 9.6.12).
func besselI0(x float64) float64 {
	sum, term := 1.0, 1.0
	for k := 1; k < 50; k++ {
		term *= (x / (2 * float64(k))) * (x / (2 * float64(k)))
		sum += term
		if term < 1e-17*sum {
			break
		}
	}
	return sum
}
