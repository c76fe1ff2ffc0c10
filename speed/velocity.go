package speed

import (
	"math"
	"sync"

	"gonum.org/v1/gonum/dsp/fourier"
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
	taper      []float64 // spatial Tukey taper, ny*nx
	valid      []bool    // cells far enough from the taper to be reported
	gain       []float64 // transfer function per (f, ky, kx), 0 where removed
	keep       []bool    // per frequency plane: some gain in it is not zero

	buf     []float32    // the pending pair of windows, [t][y][x], 1.5·Window frames
	work    []complex128 // its transform, reused from window to window
	frames  int          // frames pushed so far
	filled  int          // frames in buf
	limit   int          // frames at or beyond limit are padding (set by Close)
	acc     [][]float64  // output accumulators for frames not yet complete
	wsum    []float64    // sum of weights per pending output frame
	accBase int          // frame index of acc[0]
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
	s.taper = make([]float64, nx*ny)
	s.valid = make([]bool, nx*ny)
	for iy := 0; iy < ny; iy++ {
		for ix := 0; ix < nx; ix++ {
			s.taper[iy*nx+ix] = tx[ix] * ty[iy]
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
func (s *velocityCore) transfer() []float64 {
	nw, ny, nx := s.nw, s.ny, s.nx
	g := make([]float64, nw*ny*nx)
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
				g[(it*ny+iy)*nx+ix] = intrinsic * coth
			}
		}
	}
	// Hermitian-symmetric part, g(b) ← (g(b) + g(−b))/2: for a real input
	// the real part of the filtered field is the same either way, and with
	// a symmetric gain the output of a real input is real, so two windows can
	// share one transform (one real, one imaginary). Only the Nyquist bins,
	// which are their own mirror, are asymmetric before this.
	sym := make([]float64, len(g))
	for it := 0; it < nw; it++ {
		mt := (nw - it) % nw
		for iy := 0; iy < ny; iy++ {
			my := (ny - iy) % ny
			for ix := 0; ix < nx; ix++ {
				mx := (nx - ix) % nx
				sym[(it*ny+iy)*nx+ix] = 0.5 * (g[(it*ny+iy)*nx+ix] + g[(mt*ny+my)*nx+mx])
			}
		}
	}
	return sym
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
		s.work = make([]complex128, nw*nx*ny)
	}
	work := s.work
	n, half := nx*ny, nw/2
	for t := 0; t < nw; t++ {
		a := s.buf[t*n : (t+1)*n]
		w := work[t*n : (t+1)*n]
		if pair {
			b := s.buf[(t+half)*n : (t+half+1)*n]
			for i := range w {
				h := s.hann[t] * s.taper[i]
				w[i] = complex(float64(a[i])*h, float64(b[i])*h)
			}
		} else {
			for i := range w {
				w[i] = complex(float64(a[i])*s.hann[t]*s.taper[i], 0)
			}
		}
	}
	s.fft3(work, false)
	for i := range work {
		work[i] *= complex(s.gain[i], 0)
	}
	s.fft3(work, true)
	norm := 1 / float64(nw*nx*ny)
	for t := 0; t < nw; t++ {
		a := s.accum(start + t)
		for i := range a {
			a[i] += real(work[t*n+i]) * norm
		}
		s.wsum[start+t-s.accBase] += s.hann[t]
	}
	if pair {
		for t := 0; t < nw; t++ {
			a := s.accum(start + half + t)
			for i := range a {
				a[i] += imag(work[t*n+i]) * norm
			}
			s.wsum[start+half+t-s.accBase] += s.hann[t]
		}
		start += half
	}
	// frames before start + nw/2 receive no more windows
	s.emit(start + half)
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
	s.acc, s.wsum = nil, nil
}

// fft3 runs the 3-D transform in place, sharing lines among workers.
func (s *velocityCore) fft3(a []complex128, inverse bool) {
	nw, ny, nx := s.nw, s.ny, s.nx
	// lines along x: for each (t, y); along y: for each (t, x); along t: for each (y, x)
	run := func(n int, lines int, base func(l int) int, stride int) {
		var wg sync.WaitGroup
		per := (lines + s.opt.Workers - 1) / s.opt.Workers
		for w := 0; w < s.opt.Workers; w++ {
			lo, hi := w*per, min((w+1)*per, lines)
			if lo >= hi {
				continue
			}
			wg.Add(1)
			go func(lo, hi int) {
				defer wg.Done()
				f := fourier.NewCmplxFFT(n)
				line := make([]complex128, n)
				for l := lo; l < hi; l++ {
					b := base(l)
					for i := 0; i < n; i++ {
						line[i] = a[b+i*stride]
					}
					if inverse {
						f.Sequence(line, line)
					} else {
						f.Coefficients(line, line)
					}
					for i := 0; i < n; i++ {
						a[b+i*stride] = line[i]
					}
				}
			}(lo, hi)
		}
		wg.Wait()
	}
	// the spatial transforms only on the frequency planes that are kept
	// (the others are zeroed by the gain): time first going forward, last
	// going back
	var planes []int
	for it, k := range s.keep {
		if k {
			planes = append(planes, it)
		}
	}
	np := len(planes)
	spatial := func() {
		run(nx, np*ny, func(l int) int { return planes[l/ny]*nx*ny + (l%ny)*nx }, 1)
		run(ny, np*nx, func(l int) int { return planes[l/nx]*nx*ny + l%nx }, nx)
	}
	if !inverse {
		run(nw, ny*nx, func(l int) int { return l }, nx*ny)
		spatial()
	} else {
		spatial()
		run(nw, ny*nx, func(l int) int { return l }, nx*ny)
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
