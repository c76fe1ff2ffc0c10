package speed

import (
	"fmt"
	"math"
	"sync"
	"sync/atomic"

	"gonum.org/v1/gonum/dsp/fourier"

	"crestspeed/internal/fftw"
)

// SurfaceVelocityOptions configure a SurfaceVelocity estimator.
type SurfaceVelocityOptions struct {
	// Window is the number of frames per 3-D transform (default 64);
	// windows overlap by half.
	Window int
	// Theta is the direction along which the velocity is wanted (radians,
	// counter-clockwise from +x): the mean direction of wave travel.
	Theta float64
	// DepthM is the water depth, 0 = deep.
	DepthM float64
	// Current is a uniform current; components are filtered on the
	// Doppler-shifted dispersion shell ω = σ(k) + k·U.
	Current Current
	// Tolerance is the relative half-width of the dispersion shell kept,
	// |ω − σ(k) − k·U| ≤ Tolerance·ω + 2Δω (default 0.25; Δω is the
	// frequency resolution of the window).
	Tolerance float64
	// Workers share the one-dimensional transforms; ≤ 0 means one.
	Workers int
	// BandHz is the highest frequency (Hz, in the cameras' frame) that
	// carries the waves' surface speed (see VelocityBand); components
	// above it are left out. 0 keeps every frequency the frames resolve.
	// When the frame rate exceeds four times BandHz the frames are also
	// low-passed and decimated in time before the transform (see
	// SurfaceVelocity).
	BandHz float64
}

// velocityCore is the transform stage of SurfaceVelocity on frames at its
// own (possibly decimated) rate; see SurfaceVelocity for the method.
type velocityCore struct {
	nx, ny, nw int
	dx, dy, dt float64
	opt        SurfaceVelocityOptions
	hann       []float64
	taper      []float32 // spatial Tukey taper, ny*nx
	valid      []bool    // cells far enough from the taper to be reported
	gain       []float32 // transfer function per (f, ky, kx), 0 where removed
	keep       []bool    // per frequency plane: some gain in it is not zero

	buf     []float32   // the pending pair of windows, [t][y][x], 1.5·Window frames
	work    []complex64 // its transform, reused from window to window
	plans   *corePlans  // FFTW plans for work (made with the first window)
	frames  int         // frames pushed so far
	filled  int         // frames in buf
	limit   int         // frames at or beyond limit are padding (set by Close)
	acc     [][]float64 // output accumulators for frames not yet complete
	wsum    []float64   // sum of weights per pending output frame
	accBase int         // frame index of acc[0]
	ready   func(frame int, u []float32, ok, usable bool)
	out     []float32
}

// newVelocityCore prepares the transform stage for frames of nx×ny cells
// spaced dx, dy, dt apart (opt checked and completed by the caller). ready
// is called once per frame, in order, with the velocity field along θ0
// (m/s, row-major), ok = false where the frame is not covered well
// enough and usable = false where it is not covered at all (its field is
// then NaN).
func newVelocityCore(nx, ny int, dx, dy, dt float64, opt SurfaceVelocityOptions, ready func(frame int, u []float32, ok, usable bool)) *velocityCore {
	nw := opt.Window
	s := &velocityCore{nx: nx, ny: ny, nw: nw, dx: dx, dy: dy, dt: dt, opt: opt, ready: ready,
		buf:   make([]float32, (nw+nw/2)*nx*ny),
		limit: -1,
		hann:  make([]float64, nw),
		out:   make([]float32, nx*ny),
	}
	for i := range s.hann { // periodic Hann: half-overlapping copies sum to one
		s.hann[i] = 0.5 - 0.5*math.Cos(2*math.Pi*float64(i)/float64(nw))
	}
	s.gain = s.transfer()
	s.keep = make([]bool, nw)
	for it := range s.keep {
		for _, g := range s.gain[it*nx*ny : (it+1)*nx*ny] {
			if g != 0 {
				s.keep[it] = true
				break
			}
		}
	}
	tx, ty := tukey(nx, 0.25), tukey(ny, 0.25)
	vx, vy := tukey(nx, 0.375), tukey(ny, 0.375)
	s.taper = make([]float32, nx*ny)
	s.valid = make([]bool, nx*ny)
	for iy := 0; iy < ny; iy++ {
		for ix := 0; ix < nx; ix++ {
			s.taper[iy*nx+ix] = float32(tx[ix] * ty[iy])
			s.valid[iy*nx+ix] = vx[ix] == 1 && vy[iy] == 1
		}
	}
	for i := 0; i < nw; i++ {
		s.acc = append(s.acc, make([]float64, nx*ny))
		s.wsum = append(s.wsum, 0)
	}
	return s
}

// transfer tabulates the filter and velocity gain for every bin.
func (s *velocityCore) transfer() []float32 {
	nw, ny, nx := s.nw, s.ny, s.nx
	g := make([]float32, nw*ny*nx)
	ft := fourier.NewCmplxFFT(nw)
	fy := fourier.NewCmplxFFT(ny)
	fx := fourier.NewCmplxFFT(nx)
	dOmega := 2 * math.Pi / (float64(nw) * s.dt)
	ct, st := math.Cos(s.opt.Theta), math.Sin(s.opt.Theta)
	for it := 0; it < nw; it++ {
		f := ft.Freq(it) / s.dt // Hz; a bin e^{i(k·x + 2πft)}
		if f == 0 {
			continue
		}
		if s.opt.BandHz > 0 && math.Abs(f) > s.opt.BandHz+2/(float64(nw)*s.dt) {
			continue // above the waves' band (see SurfaceVelocityOptions.BandHz)
		}
		omega := 2 * math.Pi * math.Abs(f)
		for iy := 0; iy < ny; iy++ {
			ky := 2 * math.Pi * fy.Freq(iy) / s.dy
			for ix := 0; ix < nx; ix++ {
				kx := 2 * math.Pi * fx.Freq(ix) / s.dx
				k := math.Hypot(kx, ky)
				if k == 0 {
					continue
				}
				// direction of travel: along +k for f < 0, along −k for f > 0
				sign := -math.Copysign(1, f)
				dx, dy := sign*kx/k, sign*ky/k
				along := dx*ct + dy*st
				if along <= 0 {
					continue
				}
				sigma := Omega(k, s.opt.DepthM)
				shell := sigma + k*(dx*s.opt.Current.U+dy*s.opt.Current.V)
				if math.Abs(omega-shell) > s.opt.Tolerance*omega+2*dOmega {
					continue
				}
				coth := 1.0
				if !isDeep(s.opt.DepthM) {
					coth = 1 / tanhKH(k, s.opt.DepthM)
				}
				// The gain uses the bin's own (Doppler-corrected) frequency
				// rather than σ(k) of the bin's wavenumber: spatial leakage
				// spreads a wave over neighbouring wavenumbers, whose σ
				// differs, while its frequency stays that of the wave.
				intrinsic := omega - k*(dx*s.opt.Current.U+dy*s.opt.Current.V)
				g[(it*ny+iy)*nx+ix] = float32(intrinsic * coth)
			}
		}
	}
	// Hermitian-symmetric part, g(b) ← (g(b) + g(−b))/2: for a real input
	// the real part of the filtered field is the same either way, and with
	// a symmetric gain the output of a real input is real, so two windows can
	// share one transform (one real, one imaginary). Only the Nyquist bins,
	// which are their own mirror, are asymmetric before this.
	for it := 0; it < nw; it++ {
		mt := (nw - it) % nw
		for iy := 0; iy < ny; iy++ {
			my := (ny - iy) % ny
			for ix := 0; ix < nx; ix++ {
				mx := (nx - ix) % nx
				b, m := (it*ny+iy)*nx+ix, (mt*ny+my)*nx+mx
				if b < m { // each pair once, in place; a bin that is its own mirror keeps its gain
					v := 0.5 * (g[b] + g[m])
					g[b], g[m] = v, v
				}
			}
		}
	}
	return g
}

// Push adds the next frame (row-major, NaN where unknown; mean already
// removed by the caller or not — the transform ignores the zero frequency).
// Frames must be pushed at regular intervals; a dropped frame is pushed as
// nil (all unknown).
func (s *velocityCore) Push(eta []float32) {
	n := s.nx * s.ny
	plane := s.buf[s.filled*n : (s.filled+1)*n]
	for i := range plane {
		v := float32(0)
		if eta != nil && !math.IsNaN(float64(eta[i])) {
			v = eta[i]
		}
		plane[i] = v
	}
	s.filled++
	s.frames++
	half := s.nw / 2
	if s.filled == s.nw+half {
		s.window(s.frames-s.filled, true)
		// the last half becomes the first half of the next pair
		copy(s.buf[:half*n], s.buf[s.nw*n:])
		s.filled = half
	}
}

// window transforms, filters and adds the window starting at frame start
// and, if pair, the one starting half a window later (in the imaginary
// part).
func (s *velocityCore) window(start int, pair bool) {
	nw, ny, nx := s.nw, s.ny, s.nx
	if s.work == nil {
		s.work = make([]complex64, nw*nx*ny)
		s.plans = newCorePlans(nw, ny, nx, s.work)
	}
	work := s.work
	n, half := nx*ny, nw/2
	s.eachPlane(func(t int) {
		a := s.buf[t*n : (t+1)*n]
		w := work[t*n : (t+1)*n]
		ht := float32(s.hann[t])
		if pair {
			b := s.buf[(t+half)*n : (t+half+1)*n]
			for i := range w {
				h := ht * s.taper[i]
				w[i] = complex(a[i]*h, b[i]*h)
			}
		} else {
			for i := range w {
				w[i] = complex(a[i]*ht*s.taper[i], 0)
			}
		}
	})
	s.fft3(work, false)
	s.eachPlane(func(t int) {
		if !s.keep[t] {
			return // zeroed by the spatial step (see fft3)
		}
		w, g := work[t*n:(t+1)*n], s.gain[t*n:(t+1)*n]
		for i := range w {
			w[i] = complex(real(w[i])*g[i], imag(w[i])*g[i])
		}
	})
	s.fft3(work, true)
	norm := 1 / float64(nw*nx*ny)
	for t := 0; t < nw; t++ {
		s.accum(start + t)
		if pair {
			s.accum(start + half + t)
		}
	}
	s.eachPlane(func(t int) {
		w := work[t*n : (t+1)*n]
		a := s.acc[start+t-s.accBase]
		for i := range a {
			a[i] += float64(real(w[i])) * norm
		}
	})
	for t := 0; t < nw; t++ {
		s.wsum[start+t-s.accBase] += s.hann[t]
	}
	if pair {
		s.eachPlane(func(t int) {
			w := work[t*n : (t+1)*n]
			a := s.acc[start+half+t-s.accBase]
			for i := range a {
				a[i] += float64(imag(w[i])) * norm
			}
		})
		for t := 0; t < nw; t++ {
			s.wsum[start+half+t-s.accBase] += s.hann[t]
		}
		start += half
	}
	// frames before start + nw/2 receive no more windows
	s.emit(start + half)
}

// eachPlane runs f for every frame t of the window, the frames shared
// among the workers (each frame's work is its own, so the result does not
// depend on how they are shared).
func (s *velocityCore) eachPlane(f func(t int)) {
	parallel(s.opt.Workers, s.nw, f)
}

// parallel runs f(0…n−1) on up to workers goroutines, each taking the
// next index as it finishes one.
func parallel(workers, n int, f func(i int)) {
	if workers <= 1 || n <= 1 {
		for i := 0; i < n; i++ {
			f(i)
		}
		return
	}
	var next atomic.Int64
	var wg sync.WaitGroup
	for w := 0; w < min(workers, n); w++ {
		wg.Add(1)
		go func() {
			defer wg.Done()
			for i := int(next.Add(1) - 1); i < n; i = int(next.Add(1) - 1) {
				f(i)
			}
		}()
	}
	wg.Wait()
}

// accum returns the output accumulator of frame fr, growing the list.
func (s *velocityCore) accum(fr int) []float64 {
	k := fr - s.accBase
	for k >= len(s.acc) {
		s.acc = append(s.acc, make([]float64, s.nx*s.ny))
		s.wsum = append(s.wsum, 0)
	}
	return s.acc[k]
}

// emit hands out every pending frame before frame `upto`.
func (s *velocityCore) emit(upto int) {
	if s.limit >= 0 {
		upto = min(upto, s.limit)
	}
	for s.accBase < upto && len(s.acc) > 0 {
		a, w := s.acc[0], s.wsum[0]
		// the first and last half-window of the record are covered by one
		// tapered window only (at the end, padded with unknowns), where the
		// filter's response to the taper is not negligible
		ok := w >= 0.999 && s.accBase >= s.nw/2 && (s.limit < 0 || s.accBase < s.limit-s.nw/2)
		// a frame covered by one window only, with at least a quarter of
		// its weight, still serves as an outer point of the interpolation
		// between decimated frames (SurfaceVelocity.handOut)
		usable := ok || w > 0.25
		for i := range s.out {
			if usable && s.valid[i] {
				s.out[i] = float32(a[i] / w)
			} else {
				s.out[i] = float32(math.NaN())
			}
		}
		s.ready(s.accBase, s.out, ok, usable)
		clear(a)
		s.acc = append(s.acc[1:], a)
		s.wsum = append(s.wsum[1:], 0)
		s.accBase++
	}
}

// Close flushes the end of the record: the last partial window is padded
// with unknown frames, and every remaining frame is handed out.
func (s *velocityCore) Close() {
	if s.frames == 0 {
		return
	}
	total := s.frames
	half := s.nw / 2
	// the last window covering frame total−1 starts at a multiple of half
	lastStart := ((total - 1) / half) * half
	s.limit = total
	for s.frames < lastStart+s.nw {
		s.Push(nil)
	}
	if start := s.frames - s.filled; start <= lastStart {
		s.window(start, false) // a last window without a partner
	}
	s.emit(total)
	s.acc, s.wsum, s.work = nil, nil, nil
	if s.plans != nil {
		s.plans.destroy()
		s.plans = nil
	}
}

// lineBlock is the number of neighbouring cells whose lines in time one
// FFTW call transforms: the blocks are fixed by cell index, so every line
// goes through the same plan whatever the number of workers.
const lineBlock = 64

// corePlans are the FFTW plans of the 3-D transform of a window: its lines
// in time in blocks of lineBlock cells (and the last, shorter block), and
// its frequency planes in space, forward and inverse.
type corePlans struct {
	lineF, lineI, restF, restI *fftw.Plan
	planeF, planeI             *fftw.Plan
	blocks, rest               int
}

func newCorePlans(nw, ny, nx int, work []complex64) *corePlans {
	n := nx * ny
	blk := min(lineBlock, n)
	p := &corePlans{blocks: n / blk, rest: n % blk}
	// every block and plane starts aligned when the work array does and
	// both steps are multiples of four values (32 bytes)
	aligned := fftw.Aligned(work) && blk%4 == 0 && n%4 == 0
	must := func(pl *fftw.Plan, err error) *fftw.Plan {
		if err != nil {
			panic(fmt.Sprintf("surface velocity: %v", err)) // sizes are valid here; only memory can fail
		}
		return pl
	}
	p.lineF = must(fftw.Lines(nw, blk, n, 1, false, aligned))
	p.lineI = must(fftw.Lines(nw, blk, n, 1, true, aligned))
	if p.rest > 0 {
		p.restF = must(fftw.Lines(nw, p.rest, n, 1, false, aligned))
		p.restI = must(fftw.Lines(nw, p.rest, n, 1, true, aligned))
	}
	p.planeF = must(fftw.Plane(ny, nx, false, aligned))
	p.planeI = must(fftw.Plane(ny, nx, true, aligned))
	return p
}

func (p *corePlans) destroy() {
	for _, pl := range []*fftw.Plan{p.lineF, p.lineI, p.restF, p.restI, p.planeF, p.planeI} {
		if pl != nil {
			pl.Destroy()
		}
	}
}

// fft3 runs the 3-D transform of the window in place (single precision,
// FFTW), sharing blocks of lines and planes among the workers. Only the
// frequency planes whose gain is not zero everywhere are transformed in
// space; the others are zeroed (the gain would zero them): time first
// going forward, last going back.
func (s *velocityCore) fft3(a []complex64, inverse bool) {
	n := s.nx * s.ny
	p := s.plans
	lines := func() {
		line, rest := p.lineF, p.restF
		if inverse {
			line, rest = p.lineI, p.restI
		}
		blk := min(lineBlock, n)
		parallel(s.opt.Workers, p.blocks+min(p.rest, 1), func(b int) {
			if b < p.blocks {
				line.Run(a[b*blk:])
			} else {
				rest.Run(a[b*blk:])
			}
		})
	}
	planes := func() {
		plane := p.planeF
		if inverse {
			plane = p.planeI
		}
		parallel(s.opt.Workers, s.nw, func(t int) {
			w := a[t*n : (t+1)*n]
			if s.keep[t] {
				plane.Run(w)
			} else if !inverse {
				clear(w)
			}
		})
	}
	if !inverse {
		lines()
		planes()
	} else {
		planes()
		lines()
	}
}

// tukey returns a Tukey (tapered cosine) window of n points whose tapered
// part covers the fraction alpha of the length (Harris 1978, Proc. IEEE 66).
func tukey(n int, alpha float64) []float64 {
	w := make([]float64, n)
	edge := alpha * float64(n-1) / 2
	for i := range w {
		x := float64(i)
		switch {
		case x < edge:
			w[i] = 0.5 * (1 - math.Cos(math.Pi*x/edge))
		case x > float64(n-1)-edge:
			w[i] = 0.5 * (1 - math.Cos(math.Pi*(float64(n-1)-x)/edge))
		default:
			w[i] = 1
		}
	}
	return w
}

// The speed is not projected on θ0 (docs/methods.md writes the factor
// k̂·θ̂0): on a finite grid a single wave leaks into wavenumbers of
// neighbouring directions, and projecting those biases the speed low by a
// few per cent even for a wave travelling exactly along θ0; and the
// breaking index compares the speed with the crest speed normal to the
// crest, for which the speed in the direction of travel is the consistent
// numerator (see BreakingIndex).
