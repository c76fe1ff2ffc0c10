// Package analysis owns the analysis of one record of elevation maps: the
// streaming passes over it, and how their results are put together.
//
// # Passes
//
//  1. Sea state: the frequency spectrum at probe points and the
//     cross-spectra of successive frames (speed.SeaStateEstimator) give Hm0,
//     Tp and the mean direction θ0; the per-cell temporal mean (the mean
//     level removed before crest detection) and the masked fraction are
//     accumulated on the way. The reference phase speeds follow from Tp,
//     depth, current and vorticity.
//  2. Crests: every frame's crests are detected on the workers
//     (tracking.Detector) — on the maps as they are, band-passed to the
//     dominant waves when asked (Options.DominantBandFp), or low-passed
//     where the spectrum falls below twice its noise floor when it has one
//     (Options.NoiseLowPass) — handed back in frame order (internal/workpool),
//     linked into tracks (tracking.Linker) and, when the record has a foam
//     mask, its whitecaps extracted and linked (speed.WhitecapAnalyser).
//     Crest speeds, references and ratios are then computed per track
//     (speed.TrackRows).
//  3. Breaking index (optional): the record is streamed once more through
//     the surface-velocity estimator (speed.SurfaceVelocity) and B_x is
//     evaluated at every crest row its windows cover.
//
// Memory does not grow with the record beyond the crest rows themselves
// (one speed.CrestRow per crest per frame, Record.Rows), one link residual
// per step and a few numbers per frame; the result is identical for any number of
// workers.
package analysis

import (
	"cmp"
	"context"
	"errors"
	"fmt"
	"io"
	"math"
	"runtime"
	"runtime/debug"
	"slices"
	"time"

	"crestspeed/ingest"
	"crestspeed/internal/workpool"
	"crestspeed/speed"
	"crestspeed/tracking"
)

// minFrames is the fewest usable frames a record must have.
const minFrames = 8

// Run analyses the record src with the settings opt.
func Run(ctx context.Context, src Source, opt Options) (*Record, error) {
	if err := opt.Validate(); err != nil {
		return nil, err
	}
	meta := src.Meta()
	if len(meta.Times) == 0 {
		return nil, fmt.Errorf("%s has no frames", src.Path())
	}
	rec := &Record{Meta: meta, FrameInterval: src.FrameInterval(), Timings: map[string]time.Duration{}, Gaps: src.Gaps()}
	t0 := time.Now()
	mean, err := rec.seaStatePass(ctx, src, opt)
	if err != nil {
		return nil, err
	}
	if err := rec.setReferences(opt); err != nil {
		return nil, err
	}
	rec.Timings["sea state"] = time.Since(t0)

	t0 = time.Now()
	rec.Timings["crest speeds"] = 0 // spent inside the crest pass, as tracks end
	crestSrc, crestMean := src, mean
	band, lowPass := [2]float64{}, false
	switch ss := rec.SeaState; {
	case opt.dominant():
		band = [2]float64{opt.DominantBandFp[0], opt.DominantBandFp[1]}
	case opt.NoiseLowPass && ss.NoiseFloorFound && ss.Fp > 0:
		// where the spectrum is less than twice its noise floor the maps
		// hold more noise than waves: crests are found on the maps
		// low-passed there
		if f := signalTop(ss); f > 0 {
			band, lowPass = [2]float64{0, f / ss.Fp}, true
		}
	}
	if band[1] > 0 {
		bs, b, err := newBandSource(src, mean, rec, band)
		if err != nil {
			return nil, err
		}
		defer bs.Close()
		crestSrc, crestMean = bs, make([]float32, len(mean))
		if lowPass {
			rec.NoiseLowPassHz = b.HighHz
		} else {
			rec.Band = b
		}
	}
	wa, err := rec.crestPass(ctx, crestSrc, crestMean, opt)
	if err != nil {
		return nil, err
	}
	rec.Skipped = src.Skipped()
	if rr, ok := src.(readerReport); ok {
		rec.MaskedCells = rr.MaskedCells()
		rec.Warnings = append(rec.Warnings, rr.Warnings()...)
	}
	rec.Timings["crest detection and linking"] = time.Since(t0)

	for _, r := range rec.Rows {
		if math.IsNaN(r.CrestSpeed) {
			rec.RowsWithoutSpeed++
		}
	}
	if opt.BreakingIndex {
		t0 = time.Now()
		// The crest pass ends with its garbage (the last tracks, the row
		// blocks beside the joined rows) still on the heap. Collect it
		// first: the collector sets its next goal at twice what survives a
		// collection, and through the long breaking-index pass that goal
		// would otherwise follow whatever the end of the crest pass held.
		runtime.GC()
		if err := rec.breakingIndexPass(ctx, src, mean, opt); err != nil {
			return nil, err
		}
		// The pass's windows (hundreds of MB on a large grid) are free
		// now: give their pages back, or the tables and the report made
		// next sit on top of them in the process's resident memory (peak
		// RSS of track on 18 000 frames of 512²: 1 094 MB without, 939 MB
		// with).
		debug.FreeOSMemory()
		rec.Timings["breaking index"] = time.Since(t0)
	}
	if wa != nil {
		t0 = time.Now()
		rec.Whitecaps, err = wa.Finish(rec.Rows)
		if err != nil {
			return nil, fmt.Errorf("%s: whitecaps: %w", src.Path(), err)
		}
		rec.markFoam()
		rec.Timings["whitecaps"] = time.Since(t0)
	}
	if opt.BreakingIndex {
		rec.Inception = speed.InceptionOf(rec.Rows, rec.Whitecaps, opt.BxThreshold)
		rec.Inception.SurfaceSpeedWindowS = float64(rec.VelocityWindowFrames) * rec.FrameInterval
		rec.Inception.SurfaceSpeedBandHz, rec.Inception.SurfaceSpeedDecimation = rec.VelocityBandHz, rec.VelocityDecimation
	}
	rec.checkRecord()
	return rec, nil
}

// frameCounter maps frame times to frame numbers on the record's regular
// time base (so dropped frames leave gaps in the numbering).
type frameCounter struct{ t0, dt float64 }

func (fc frameCounter) number(t float64) int { return int(math.Round((t - fc.t0) / fc.dt)) }

func (rec *Record) frames() frameCounter {
	return frameCounter{t0: rec.Meta.Times[0], dt: rec.FrameInterval}
}

// seaStatePass streams the record once for the sea state, the per-cell
// temporal mean (returned) and the masked fraction.
func (rec *Record) seaStatePass(ctx context.Context, src Source, opt Options) ([]float32, error) {
	meta := rec.Meta
	nx, ny := meta.Grid.Nx(), meta.Grid.Ny()
	total := len(meta.Times)
	est := speed.NewSeaStateEstimator(nx, ny, meta.Grid.Dx(), meta.Grid.Dy(), rec.FrameInterval, speed.SeaStateOptions{ExpectedFrames: total})
	sum := make([]float64, nx*ny)
	cnt := make([]int32, nx*ny)
	var f ingest.Frame
	var masked, cells int64
	prev := -1
	fc := rec.frames()
	probe, err := newProbe(opt.Probe, meta, fc)
	if err != nil {
		return nil, err
	}
	src.Rewind()
	for {
		if err := ctx.Err(); err != nil {
			return nil, err
		}
		err := src.Next(&f)
		if errors.Is(err, io.EOF) {
			break
		}
		if err != nil {
			return nil, err
		}
		n := fc.number(f.Time)
		if prev >= 0 && n-prev > 1 {
			// A record whose time axis jumps by more than its own length is
			// two records (or a corrupt time axis), not a dropped frame.
			if miss := float64(n - prev - 1); miss > float64(total) || miss < 0 {
				return nil, fmt.Errorf("%s: the time axis jumps by %.6g s after %.6g s, longer than the rest of the record; split the record there or correct its times", src.Path(), f.Time-fc.t0-float64(prev)*fc.dt, fc.t0+float64(prev)*fc.dt)
			}
			est.AddGap(n - prev - 1)
		}
		prev = n
		est.Add(f.Eta, f.Valid)
		for i, v := range f.Eta {
			if f.Valid[i] {
				sum[i] += float64(v)
				cnt[i]++
			} else {
				masked++
			}
		}
		cells += int64(len(f.Eta))
		if probe != nil {
			probe.sample(n, f.Eta)
		}
		rec.FramesRead++
		if opt.Progress != nil {
			opt.Progress("sea state", f.Index+1, total)
		}
	}
	if rec.FramesRead < minFrames {
		return nil, fmt.Errorf("%s has only %d usable frames; the analysis needs at least %d", src.Path(), rec.FramesRead, minFrames)
	}
	ss, err := est.Result()
	if err != nil {
		return nil, fmt.Errorf("%s: sea state cannot be estimated: %w", src.Path(), err)
	}
	rec.SeaState = ss
	rec.MaskedFraction = float64(masked) / float64(cells)
	if probe != nil {
		rec.Probe = probe.series
	}
	mean := make([]float32, nx*ny)
	for i := range mean {
		if cnt[i] > 0 {
			mean[i] = float32(sum[i] / float64(cnt[i]))
		}
	}
	return mean, nil
}

// setReferences settles θ0, depth and the reference phase speeds.
func (rec *Record) setReferences(opt Options) error {
	ss := rec.SeaState
	ref := speed.References{DepthM: rec.Meta.DepthM, Current: opt.current(), Vorticity: opt.VorticityPerS}
	rec.DepthFromFile = opt.DepthM == nil
	if opt.DepthM != nil {
		ref.DepthM = *opt.DepthM
	}
	ref.Theta = ss.MeanDirectionRad
	if opt.DirectionDeg != nil {
		ref.Theta = *opt.DirectionDeg * math.Pi / 180
		rec.DirectionGiven = true
	}
	cp, err := speed.PhaseSpeedFromPeriod(ss.Tp, ref.DepthM, ref.Current, ref.Theta, ref.Vorticity)
	if err != nil {
		return fmt.Errorf("peak phase speed cannot be computed for Tp = %.3g s: %w", ss.Tp, err)
	}
	ref.PeakPhaseSpeed = cp
	if err := rec.SeaState.SetPeakPhaseSpeed(ref.DepthM, ref.Current, ref.Theta, ref.Vorticity); err != nil {
		return fmt.Errorf("peak phase speed interval cannot be computed: %w", err)
	}
	rec.Refs = ref
	rec.SpeedWindowS = opt.SpeedWindowS
	if rec.SpeedWindowS == 0 {
		rec.SpeedWindowS = DefaultSpeedWindow(ss.Tp, rec.FrameInterval)
	}
	return nil
}

// DefaultSpeedWindow is the crest-speed window used when none is set:
// Tp/8, and at least two and a half frame intervals, so that it holds a
// frame either side of the tip even when the frame times jitter about
// their median step (frameInterval). A crest's speed varies along its life (it is slowest
// where its group peaks, which is where tips are found), so the fitted slope
// is biased by the speed's curvature over the window, in proportion to the
// window's square: on directional seas a Tp/4 window read the crest speed
// 3 % high against the exact value at the tip, Tp/8 2 %
// (TestShortCrestedCrestSpeedExact).
func DefaultSpeedWindow(tp, frameInterval float64) float64 {
	return max(tp/8, 2.5*frameInterval)
}

// whitecapSpeedWindow is the front-speed window of the whitecaps: the
// crest-speed window when one is set, else Tp/4. Foam fronts are ragged
// from frame to frame and need the longer fit.
func whitecapSpeedWindow(opt Options, tp float64) float64 {
	if opt.SpeedWindowS > 0 {
		return opt.SpeedWindowS
	}
	return tp / 4
}

// geometry is the analysis grid with the record's direction of travel.
func (rec *Record) geometry() tracking.Geometry {
	g := rec.Meta.Grid
	return tracking.Geometry{
		Nx: g.Nx(), Ny: g.Ny(), X0: g.X[0], Y0: g.Y[0],
		Dx: g.Dx(), Dy: g.Dy(), Theta: rec.Refs.Theta,
	}
}

// detected is one frame's crests, with the frame they came from (its foam
// mask is used, in frame order, by the whitecap analysis).
type detected struct {
	f      *ingest.Frame
	frame  int
	crests []tracking.Crest
}

// crestPass streams the record a second time: crest detection on the
// workers, then, in frame order, linking and whitecap patches. It returns
// the whitecap analyser (nil without a foam mask) to be finished once the
// crest speeds are known.
func (rec *Record) crestPass(ctx context.Context, src Source, mean []float32, opt Options) (*speed.WhitecapAnalyser, error) {
	ss, ref := rec.SeaState, rec.Refs
	g := rec.geometry()
	lambdaP := ref.PeakPhaseSpeed * ss.Tp
	// On a grid shorter than one and a half peak wavelengths along θ0 a
	// crest is seldom enclosed by both zero crossings: crests that run
	// into the grid's edge are kept for their speed (without a width).
	rec.EdgeCrests = alongTheta(g) < 1.5*lambdaP
	det := tracking.NewDetector(g, tracking.DetectOptions{
		MinElevation: opt.MinCrestFraction * ss.Hm0,
		MinLength:    opt.MinCrestLengthM,
		EdgeCrests:   rec.EdgeCrests,
	})
	linker := tracking.NewLinker(tracking.LinkOptions{
		MaxGapFrames: opt.MaxGapFrames,
		// Along θ0 a crest moves about c·Δt between frames; the gate allows
		// a tenth of a peak wavelength of error, far less than the spacing
		// of successive crests. Across θ0 the new segment must overlap the
		// old one (within two sampling steps): in 1/10 s a crest does not
		// jump sideways, and a looser gate lets tracks hop between the short
		// crests of a short-crested sea.
		GateS: math.Max(0.1*lambdaP, 4*det.Step()),
		GateN: 2 * det.Step(),
		Speed: ref.Predict,
		Step:  stepGate(ref, ss.Hm0, ss.Tp, det.Step()),
		OnEnd: rec.endTrack(ss.Hm0),
	})
	var wa *speed.WhitecapAnalyser
	if opt.Whitecaps && rec.Meta.HasFoam {
		bo := opt.Breaking
		bo.SpeedWindowS = whitecapSpeedWindow(opt, rec.SeaState.Tp)
		bo.MaxGapFrames = opt.MaxGapFrames
		var err error
		if wa, err = speed.NewWhitecapAnalyser(g, ref, bo); err != nil {
			return nil, err
		}
	}
	fc := rec.frames()
	workers := max(opt.Workers, 1)
	free := newFramePool(2 * workers)
	scratch := make([]*tracking.Scratch, workers)
	for i := range scratch {
		scratch[i] = det.NewScratch()
	}
	total := len(rec.Meta.Times)
	src.Rewind()
	pool := workpool.Pool[*ingest.Frame, detected]{
		Workers:  workers,
		InFlight: 2 * workers,
		Next:     func() (*ingest.Frame, error) { return free.next(ctx, src) },
		Work: func(w int, f *ingest.Frame) (detected, error) {
			n := fc.number(f.Time)
			return detected{f: f, frame: n, crests: det.Detect(f.Eta, mean, n, f.Time, scratch[w])}, nil
		},
		Sink: func(f *ingest.Frame, d detected) error {
			defer free.put(f)
			rec.Detections += len(d.crests)
			if wa != nil && f.Foam != nil {
				if err := wa.Add(d.frame, f.Time, f.Foam, f.Valid, d.crests); err != nil {
					return fmt.Errorf("%s: whitecaps: %w", src.Path(), err)
				}
			}
			linker.Push(d.frame, f.Time, d.crests)
			if opt.Progress != nil {
				opt.Progress("crests", f.Index+1, total)
			}
			return nil
		},
		Release: func(f *ingest.Frame, _ detected) { free.put(f) },
	}
	if err := pool.Run(ctx); err != nil {
		return nil, err
	}
	_, rec.Link = linker.Finish()
	rec.Rows = rec.rows.join()
	// Tracks end in no particular order; their rows go in order of track
	// (IDs are given at birth, in frame order), each track's in frame order.
	slices.SortStableFunc(rec.Rows, func(a, b speed.CrestRow) int { return cmp.Compare(a.TrackID, b.TrackID) })
	if rec.elevationSteps > 0 {
		rec.ElevationJumpShare = float64(rec.elevationJumps) / float64(rec.elevationSteps)
	}
	return wa, nil
}

// endTrack returns the handler of ended tracks: it makes the track's crest
// rows (speed.TrackRows), counts the track, and counts its frame-to-frame
// steps whose crest elevation changed by more than 0.3 Hm0; the track is
// then dropped.
func (rec *Record) endTrack(hm0 float64) func(tracking.Track) {
	half := rec.SpeedWindowS / 2
	lim := 0.3 * hm0
	return func(tr tracking.Track) {
		t0 := time.Now()
		rec.TrackCount++
		for i := 1; i < len(tr.Crests); i++ {
			rec.elevationSteps++
			if math.Abs(tr.Crests[i].Elevation-tr.Crests[i-1].Elevation) > lim {
				rec.elevationJumps++
			}
		}
		rec.rows.add(len(tr.Crests), func(dst []speed.CrestRow) []speed.CrestRow {
			return speed.TrackRows(tr, rec.Refs, half, dst)
		})
		rec.Timings["crest speeds"] += time.Since(t0)
	}
}

// rowChunks gathers crest rows in blocks of fixed capacity while the crest
// pass runs. One slice grown by append would be copied into a larger new
// array at every growth, each too large for the space the last one freed,
// so the heap would touch several times the rows' final size.
type rowChunks struct{ chunks [][]speed.CrestRow }

// rowChunk is the capacity of a block of rows (about 0.7 MB).
const rowChunk = 4096

// add appends n rows made by fill (which appends them to its argument).
func (c *rowChunks) add(n int, fill func([]speed.CrestRow) []speed.CrestRow) {
	k := len(c.chunks) - 1
	if k < 0 || len(c.chunks[k])+n > cap(c.chunks[k]) {
		c.chunks = append(c.chunks, make([]speed.CrestRow, 0, max(rowChunk, n)))
		k++
	}
	c.chunks[k] = fill(c.chunks[k])
}

// join returns all rows in one slice of exactly their number and lets the
// blocks go.
func (c *rowChunks) join() []speed.CrestRow {
	n := 0
	for _, ch := range c.chunks {
		n += len(ch)
	}
	rows := make([]speed.CrestRow, 0, n)
	for i, ch := range c.chunks {
		rows = append(rows, ch...)
		c.chunks[i] = nil
	}
	c.chunks = nil
	return rows
}

// framePool recycles frame buffers between the reader and the workers.
type framePool struct{ free chan *ingest.Frame }

func newFramePool(n int) *framePool {
	p := &framePool{free: make(chan *ingest.Frame, n)}
	for i := 0; i < n; i++ {
		p.free <- &ingest.Frame{}
	}
	return p
}

// next reads the next frame of src into a free buffer.
func (p *framePool) next(ctx context.Context, src Source) (*ingest.Frame, error) {
	var f *ingest.Frame
	select {
	case f = <-p.free:
	case <-ctx.Done():
		return nil, ctx.Err()
	}
	if err := src.Next(f); err != nil {
		p.put(f)
		return nil, err
	}
	return f, nil
}

func (p *framePool) put(f *ingest.Frame) { p.free <- f }

// probe samples the maps at one point, frame by frame.
type probe struct {
	series []float32
	nx, ny int
	fx, fy float64
}

// newProbe prepares the probe at pt (nil for none); a point outside the
// grid is refused.
func newProbe(pt *ProbePoint, meta ingest.ElevationMeta, fc frameCounter) (*probe, error) {
	if pt == nil {
		return nil, nil
	}
	g := meta.Grid
	fx, fy := (pt.X-g.X[0])/g.Dx(), (pt.Y-g.Y[0])/g.Dy()
	if !(fx >= 0 && fy >= 0 && fx <= float64(g.Nx()-1) && fy <= float64(g.Ny()-1)) {
		return nil, fmt.Errorf("%w: the gauge position (%g, %g) m is outside the grid (x %g–%g m, y %g–%g m)",
			ErrSetting, pt.X, pt.Y, g.X[0], g.X[g.Nx()-1], g.Y[0], g.Y[g.Ny()-1])
	}
	n := fc.number(meta.Times[len(meta.Times)-1]) + 1
	p := &probe{series: make([]float32, n), nx: g.Nx(), ny: g.Ny(), fx: fx, fy: fy}
	for i := range p.series {
		p.series[i] = float32(math.NaN())
	}
	return p, nil
}

// sample records frame number k.
func (p *probe) sample(k int, eta []float32) {
	if k >= 0 && k < len(p.series) {
		p.series[k] = float32(bilinearAt(eta, p.nx, p.ny, p.fx, p.fy))
	}
}

// bilinearAt interpolates a row-major field at fractional cell
// coordinates; NaN outside the grid or next to an unknown cell.
func bilinearAt(u []float32, nx, ny int, fx, fy float64) float64 {
	if fx < 0 || fy < 0 || fx > float64(nx-1) || fy > float64(ny-1) {
		return math.NaN()
	}
	ix, iy := min(int(fx), nx-2), min(int(fy), ny-2)
	wx, wy := fx-float64(ix), fy-float64(iy)
	i := iy*nx + ix
	return (1-wy)*((1-wx)*float64(u[i])+wx*float64(u[i+1])) + wy*((1-wx)*float64(u[i+nx])+wx*float64(u[i+nx+1]))
}

// alongTheta is the length of the longest line along θ0 across the grid,
// metres.
func alongTheta(g tracking.Geometry) float64 {
	lx, ly := float64(g.Nx-1)*g.Dx, float64(g.Ny-1)*g.Dy
	c, s := math.Abs(math.Cos(g.Theta)), math.Abs(math.Sin(g.Theta))
	l := math.Inf(1)
	if c > 1e-9 {
		l = lx / c
	}
	if s > 1e-9 {
		l = math.Min(l, ly/s)
	}
	return l
}

// signalTop is one bin above the highest frequency at which the
// sea-state spectrum exceeds twice its noise floor (the waves' part at
// least as large as the noise's); 0 when there is no spectrum.
func signalTop(ss speed.SeaState) float64 {
	top := 0.0
	for i, f := range ss.Freqs {
		if ss.PSD[i] > 2*ss.NoiseFloorPSD {
			top = f
		}
	}
	if top == 0 || len(ss.Freqs) < 2 {
		return 0
	}
	return top + (ss.Freqs[1] - ss.Freqs[0])
}
