package speed

import (
	"context"
	"errors"
	"fmt"
	"io"
	"math"
	"sync"
	"time"

	"crestspeed/ingest"
	"crestspeed/tracking"
)

// RecordOptions configure AnalyseRecord.
type RecordOptions struct {
	// DepthM overrides the file's water_depth_m; 0 = deep water, nil = the
	// file's value (deep water when it has none).
	DepthM *float64
	// DirectionDeg overrides the estimated mean direction of travel
	// (degrees counter-clockwise from +x).
	DirectionDeg *float64
	// Current is the uniform current (x, y components, m/s).
	Current Current
	// Vorticity is dU/dz of a linear shear current, 1/s (see
	// VorticityPhaseSpeed for the sign convention).
	Vorticity float64
	// MinCrestFraction is the smallest crest elevation kept, as a fraction
	// of Hm0; MinCrestLengthM the shortest crest segment kept.
	MinCrestFraction, MinCrestLengthM float64
	// MaxGapFrames is how many frames a track may miss and continue.
	MaxGapFrames int
	// SpeedWindowS is the full width of the crest-speed fit window in
	// seconds; 0 means Tp/4.
	SpeedWindowS float64
	// Workers run crest detection on frames in parallel; ≤ 0 means one.
	Workers int
	// BreakingIndex turns on the third pass: the linear surface speed from
	// a dispersion-filtered 3-D FFT (SurfaceVelocity) and B_x = u_s/c_cr at
	// every crest tip.
	BreakingIndex bool
	// VelocityWindowS is the length of the 3-D FFT windows in seconds;
	// 0 means 3 Tp (capped so two windows of the grid fit in 1.5 GiB).
	VelocityWindowS float64
	// BxThreshold is the B_x at which a crest is flagged (default 0.855).
	BxThreshold float64
	// Whitecaps turns on whitecap analysis for records with a foam mask,
	// with the settings in Breaking (SpeedWindowS and MaxGapFrames are
	// taken from this record's).
	Whitecaps bool
	Breaking  BreakingOptions
	// Progress, if set, is told how far each pass has got.
	Progress func(pass string, done, total int)
}

// Validate reports the first absurd setting.
func (o RecordOptions) Validate() error {
	switch {
	case o.DepthM != nil && (*o.DepthM < 0 || math.IsNaN(*o.DepthM)):
		return fmt.Errorf("water depth %g m is negative; use 0 for deep water", *o.DepthM)
	case o.DirectionDeg != nil && (math.IsNaN(*o.DirectionDeg) || math.Abs(*o.DirectionDeg) > 360):
		return fmt.Errorf("direction %g° is outside ±360°", *o.DirectionDeg)
	case math.IsNaN(o.Current.U) || math.IsNaN(o.Current.V) || math.Hypot(o.Current.U, o.Current.V) > 10:
		return fmt.Errorf("current of %g m/s is outside 0–10 m/s", math.Hypot(o.Current.U, o.Current.V))
	case math.IsNaN(o.Vorticity) || math.Abs(o.Vorticity) > 5:
		return fmt.Errorf("vorticity %g 1/s is outside ±5 1/s", o.Vorticity)
	case !(o.MinCrestFraction >= 0 && o.MinCrestFraction < 2):
		return fmt.Errorf("minimum crest fraction of Hm0 %g is outside 0–2", o.MinCrestFraction)
	case !(o.MinCrestLengthM >= 0):
		return fmt.Errorf("minimum crest length %g m is negative", o.MinCrestLengthM)
	case o.MaxGapFrames < 0 || o.MaxGapFrames > 100:
		return fmt.Errorf("maximum gap of %d frames is outside 0–100", o.MaxGapFrames)
	case !(o.SpeedWindowS >= 0):
		return fmt.Errorf("crest-speed window %g s is negative", o.SpeedWindowS)
	case !(o.BxThreshold >= 0 && o.BxThreshold < 5):
		return fmt.Errorf("breaking-index threshold %g is outside (0, 5)", o.BxThreshold)
	case !(o.VelocityWindowS >= 0):
		return fmt.Errorf("surface-velocity window %g s is negative", o.VelocityWindowS)
	}
	return nil
}

// Record is the result of AnalyseRecord.
type Record struct {
	Meta           ingest.ElevationMeta
	FramesRead     int
	Skipped        ingest.SkipCounts
	Gaps           []ingest.Gap
	FrameInterval  float64
	SeaState       SeaState
	DirectionGiven bool
	DepthFromFile  bool
	Refs           References
	SpeedWindowS   float64
	MaskedFraction float64 // fraction of grid cells unknown, over the frames read
	Detections     int
	Tracks         []tracking.Track
	Link           tracking.LinkStats
	Rows           []CrestRow
	// VelocityWindowFrames is the 3-D FFT window of the breaking-index
	// pass (0 when the pass did not run); RowsWithBx counts rows with B_x.
	VelocityWindowFrames, RowsWithBx int
	// RowsWithoutSpeed counts crest rows whose speed window was incomplete
	// (track ends, tracks shorter than the window).
	RowsWithoutSpeed int
	Timings          map[string]time.Duration
	// Whitecaps is the whitecap analysis (nil without a foam mask), and
	// Inception the breaking-inception flags (nil without B_x).
	Whitecaps *WhitecapResult
	Inception *Inception
	// Warnings say where the record is too short, too coarse or too small
	// for the estimates to be trusted; they are reported, not fatal.
	Warnings []string
}

// checkRecord lists the ways the record limits the estimates.
func (rec *Record) checkRecord() {
	ss := rec.SeaState
	meta := rec.Meta
	dur := meta.Times[len(meta.Times)-1] - meta.Times[0]
	lp := rec.Refs.PeakPhaseSpeed * ss.Tp
	dx := math.Max(meta.Grid.Dx(), meta.Grid.Dy())
	extent := math.Min(float64(meta.Grid.Nx()-1)*meta.Grid.Dx(), float64(meta.Grid.Ny()-1)*meta.Grid.Dy())
	if dur < 20*ss.Tp {
		rec.Warnings = append(rec.Warnings, fmt.Sprintf(
			"the record spans %.0f s, only %.0f peak periods; Hm0, Tp and c_p are uncertain below about 20 periods (common practice: 100 or more for a stable spectrum)", dur, dur/ss.Tp))
	}
	if ss.Tp < 4*rec.FrameInterval {
		rec.Warnings = append(rec.Warnings, fmt.Sprintf(
			"the peak period %.2f s is less than four frame intervals (%.3f s); crest tracking and the direction estimate need a higher frame rate", ss.Tp, rec.FrameInterval))
	}
	if lp < 8*dx {
		rec.Warnings = append(rec.Warnings, fmt.Sprintf(
			"the peak wavelength %.1f m spans fewer than 8 grid cells of %.2f m; crest positions and widths are coarse", lp, dx))
	}
	if extent < 1.5*lp {
		rec.Warnings = append(rec.Warnings, fmt.Sprintf(
			"the grid (%.0f m across at its narrowest) is shorter than 1.5 peak wavelengths (%.0f m); few crests are enclosed by zero crossings and tracks are short", extent, lp))
	}
	if rec.MaskedFraction > 0.5 {
		rec.Warnings = append(rec.Warnings, fmt.Sprintf("%.0f %% of the grid cells are unknown over the record", 100*rec.MaskedFraction))
	}
}

// AnalyseRecord runs the crest analysis of an elevation-map record in two
// streaming passes: the first estimates the sea state (Hm0, Tp, mean
// direction), the per-cell temporal mean and the masked fraction; the second
// detects crests on every frame (in parallel), links them into tracks, and
// the crest speeds and ratios are computed per track. Memory does not grow
// with the record beyond the crest rows themselves and a few numbers per
// frame. The result is identical for any number of workers.
func AnalyseRecord(ctx context.Context, src *ingest.ElevationSource, opt RecordOptions) (*Record, error) {
	if err := opt.Validate(); err != nil {
		return nil, err
	}
	meta := src.Meta()
	nx, ny := meta.Grid.Nx(), meta.Grid.Ny()
	dt := src.FrameInterval()
	rec := &Record{Meta: meta, FrameInterval: dt, Timings: map[string]time.Duration{}, Gaps: src.Gaps()}
	total := len(meta.Times)
	progress := func(pass string, done int) {
		if opt.Progress != nil {
			opt.Progress(pass, done, total)
		}
	}

	// Pass 1: sea state, temporal mean, masked fraction.
	t0 := time.Now()
	est := NewSeaStateEstimator(nx, ny, meta.Grid.Dx(), meta.Grid.Dy(), dt, SeaStateOptions{ExpectedFrames: total})
	sum := make([]float64, nx*ny)
	cnt := make([]int32, nx*ny)
	var f ingest.Frame
	var masked, cells int64
	prevT := math.NaN()
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
		if !math.IsNaN(prevT) {
			if miss := int(math.Round((f.Time-prevT)/dt)) - 1; miss > 0 {
				est.AddGap(miss)
			}
		}
		prevT = f.Time
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
		rec.FramesRead++
		progress("sea state", f.Index+1)
	}
	if rec.FramesRead < 8 {
		return nil, fmt.Errorf("%s has only %d usable frames; the analysis needs at least 8", src.Path(), rec.FramesRead)
	}
	ss, err := est.Result()
	if err != nil {
		return nil, fmt.Errorf("%s: sea state cannot be estimated: %v", src.Path(), err)
	}
	rec.SeaState = ss
	rec.MaskedFraction = float64(masked) / float64(cells)
	mean := make([]float32, nx*ny)
	for i := range mean {
		if cnt[i] > 0 {
			mean[i] = float32(sum[i] / float64(cnt[i]))
		}
	}
	sum, cnt = nil, nil

	// References.
	ref := References{DepthM: meta.DepthM, Current: opt.Current, Vorticity: opt.Vorticity}
	rec.DepthFromFile = opt.DepthM == nil
	if opt.DepthM != nil {
		ref.DepthM = *opt.DepthM
	}
	ref.Theta = ss.MeanDirectionRad
	if opt.DirectionDeg != nil {
		ref.Theta = *opt.DirectionDeg * math.Pi / 180
		rec.DirectionGiven = true
	}
	cp, err := PhaseSpeedFromPeriod(ss.Tp, ref.DepthM, ref.Current, ref.Theta, ref.Vorticity)
	if err != nil {
		return nil, fmt.Errorf("peak phase speed cannot be computed for Tp = %.3g s: %v", ss.Tp, err)
	}
	ref.PeakPhaseSpeed = cp
	// The interval of c_p from that of Tp, kept with the sea state.
	if err := rec.SeaState.SetPeakPhaseSpeed(ref.DepthM, ref.Current, ref.Theta, ref.Vorticity); err != nil {
		return nil, fmt.Errorf("peak phase speed cannot be computed for Tp = %.3g s: %v", ss.Tp, err)
	}
	rec.Refs = ref
	rec.SpeedWindowS = opt.SpeedWindowS
	if rec.SpeedWindowS == 0 {
		rec.SpeedWindowS = ss.Tp / 4
	}
	rec.Timings["sea state"] = time.Since(t0)

	// Pass 2: detection in parallel, linking in frame order.
	t0 = time.Now()
	src.Rewind()
	g := tracking.Geometry{
		Nx: nx, Ny: ny, X0: meta.Grid.X[0], Y0: meta.Grid.Y[0],
		Dx: meta.Grid.Dx(), Dy: meta.Grid.Dy(), Theta: ref.Theta,
	}
	det := tracking.NewDetector(g, tracking.DetectOptions{
		MinElevation: opt.MinCrestFraction * ss.Hm0,
		MinLength:    opt.MinCrestLengthM,
	})
	lambdaP := cp * ss.Tp
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
	})
	t00 := meta.Times[0]
	frameNo := func(t float64) int { return int(math.Round((t - t00) / dt)) }
	var wa *WhitecapAnalyser
	var waErr error
	if opt.Whitecaps && meta.HasFoam {
		bo := opt.Breaking
		bo.SpeedWindowS = rec.SpeedWindowS
		bo.MaxGapFrames = opt.MaxGapFrames
		wa, err = NewWhitecapAnalyser(g, ref, bo)
		if err != nil {
			return nil, err
		}
	}
	err = detectParallel(ctx, src, det, mean, max(opt.Workers, 1), func(fr frameResult) {
		rec.Detections += len(fr.crests)
		if wa != nil && waErr == nil && fr.foam != nil {
			waErr = wa.Add(frameNo(fr.time), fr.time, fr.foam, fr.valid, fr.crests)
		}
		linker.Push(frameNo(fr.time), fr.time, fr.crests)
		progress("crests", fr.index+1)
	}, frameNo)
	if err != nil {
		return nil, err
	}
	if waErr != nil {
		return nil, fmt.Errorf("%s: whitecaps: %v", src.Path(), waErr)
	}
	rec.Tracks, rec.Link = linker.Finish()
	rec.Skipped = src.Skipped()
	rec.Timings["crest detection and linking"] = time.Since(t0)

	// Speeds per track.
	t0 = time.Now()
	half := rec.SpeedWindowS / 2
	for _, tr := range rec.Tracks {
		rec.Rows = TrackRows(tr, ref, half, rec.Rows)
	}
	for _, r := range rec.Rows {
		if math.IsNaN(r.CrestSpeed) {
			rec.RowsWithoutSpeed++
		}
	}
	rec.Timings["crest speeds"] = time.Since(t0)
	if opt.BreakingIndex {
		t0 = time.Now()
		if err := rec.breakingIndex(ctx, src, mean, opt); err != nil {
			return nil, err
		}
		rec.Timings["breaking index"] = time.Since(t0)
	}
	if wa != nil {
		t0 = time.Now()
		rec.Whitecaps, err = wa.Finish(rec.Rows)
		if err != nil {
			return nil, fmt.Errorf("%s: whitecaps: %v", src.Path(), err)
		}
		rec.markFoam()
		rec.Timings["whitecaps"] = time.Since(t0)
	}
	if opt.BreakingIndex {
		rec.Inception = InceptionOf(rec.Rows, rec.Whitecaps, opt.BxThreshold)
	}
	rec.checkRecord()
	return rec, nil
}

type frameResult struct {
	index  int
	time   float64
	crests []tracking.Crest
	foam   []uint8 // the frame's foam mask (nil without one); valid only during the sink call
	valid  []bool
}

// detectParallel reads frames in order on the calling goroutine, detects
// crests on workers, and hands results to sink strictly in frame order.
// The number of frames in flight is bounded, so memory stays flat.
func detectParallel(ctx context.Context, src *ingest.ElevationSource, det *tracking.Detector, mean []float32,
	workers int, sink func(frameResult), frameNo func(float64) int) error {
	type job struct {
		seq int
		f   *ingest.Frame
	}
	type result struct {
		seq int
		frameResult
		f *ingest.Frame
	}
	inflight := 2 * workers
	pool := make(chan *ingest.Frame, inflight)
	for i := 0; i < inflight; i++ {
		pool <- &ingest.Frame{}
	}
	jobs := make(chan job)
	results := make(chan result, inflight)
	var wg sync.WaitGroup
	for w := 0; w < workers; w++ {
		wg.Add(1)
		go func() {
			defer wg.Done()
			sc := det.NewScratch()
			for j := range jobs {
				cr := det.Detect(j.f.Eta, mean, frameNo(j.f.Time), j.f.Time, sc)
				results <- result{seq: j.seq, frameResult: frameResult{index: j.f.Index, time: j.f.Time, crests: cr, foam: j.f.Foam, valid: j.f.Valid}, f: j.f}
			}
		}()
	}
	// collector
	var collectWG sync.WaitGroup
	collectWG.Add(1)
	go func() {
		defer collectWG.Done()
		pending := map[int]result{}
		next := 0
		for r := range results {
			pending[r.seq] = r
			for {
				p, ok := pending[next]
				if !ok {
					break
				}
				delete(pending, next)
				sink(p.frameResult)
				pool <- p.f
				next++
			}
		}
	}()
	var readErr error
	seq := 0
	for {
		if err := ctx.Err(); err != nil {
			readErr = err
			break
		}
		f := <-pool
		err := src.Next(f)
		if errors.Is(err, io.EOF) {
			break
		}
		if err != nil {
			readErr = err
			break
		}
		jobs <- job{seq: seq, f: f}
		seq++
	}
	close(jobs)
	wg.Wait()
	close(results)
	collectWG.Wait()
	return readErr
}

// maxVelocityBytes bounds the memory of the surface-velocity windows.
const maxVelocityBytes = 1.5 * (1 << 30)

// breakingIndex streams the record a third time through SurfaceVelocity
// and sets SurfaceSpeed and BreakingIndex on every row whose frame and
// position the velocity estimate covers.
func (rec *Record) breakingIndex(ctx context.Context, src *ingest.ElevationSource, mean []float32, opt RecordOptions) error {
	meta := rec.Meta
	nx, ny := meta.Grid.Nx(), meta.Grid.Ny()
	dt := rec.FrameInterval
	winS := opt.VelocityWindowS
	if winS == 0 {
		winS = 3 * rec.SeaState.Tp
	}
	nw := int(math.Round(winS/dt/2)) * 2
	capFrames := int(maxVelocityBytes/(2*16*float64(nx*ny))) / 2 * 2
	nw = max(min(nw, capFrames), 8)
	rec.VelocityWindowFrames = nw
	byFrame := map[int][]int{}
	for i, r := range rec.Rows {
		byFrame[r.Frame] = append(byFrame[r.Frame], i)
	}
	g := meta.Grid
	sv, err := NewSurfaceVelocity(nx, ny, g.Dx(), g.Dy(), dt, SurfaceVelocityOptions{
		Window: nw, Theta: rec.Refs.Theta, DepthM: rec.Refs.DepthM, Current: rec.Refs.Current, Workers: opt.Workers,
	}, func(frame int, u []float32, ok bool) {
		if !ok {
			return
		}
		for _, i := range byFrame[frame] {
			r := &rec.Rows[i]
			us := bilinearAt(u, nx, ny, (r.X-g.X[0])/g.Dx(), (r.Y-g.Y[0])/g.Dy())
			if math.IsNaN(us) {
				continue
			}
			r.SurfaceSpeed = us
			// crest speed normal to the crest: the crest line makes the
			// angle atan(ds/dn) with the lines across θ0
			cn := r.CrestSpeed * math.Cos(math.Atan(r.SlopeSN))
			r.BreakingIndex = us / cn
			if !math.IsNaN(r.BreakingIndex) {
				rec.RowsWithBx++
			}
		}
	})
	if err != nil {
		return err
	}
	src.Rewind()
	var f ingest.Frame
	t00 := meta.Times[0]
	next := 0
	buf := make([]float32, nx*ny)
	for {
		if err := ctx.Err(); err != nil {
			return err
		}
		err := src.Next(&f)
		if errors.Is(err, io.EOF) {
			break
		}
		if err != nil {
			return err
		}
		fn := int(math.Round((f.Time - t00) / dt))
		for ; next < fn; next++ {
			sv.Push(nil) // dropped or skipped frame
		}
		for i, v := range f.Eta {
			buf[i] = v - mean[i]
		}
		sv.Push(buf)
		next++
		if opt.Progress != nil {
			opt.Progress("breaking index", f.Index+1, len(meta.Times))
		}
	}
	sv.Close()
	return nil
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
