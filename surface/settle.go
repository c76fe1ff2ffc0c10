package surface

import (
	"context"
	"errors"
	"fmt"
	"image"
	"io"
	"math"
	"runtime"
	"slices"
	"time"

	"crestspeed/calib"
	"crestspeed/ingest"
	"crestspeed/internal/cvshim"
)

// IndexSeeker is implemented by stereo sources that can move to a pair
// without decoding the pairs before it: after SeekIndex(i), Next delivers
// the first pair of index ≥ i that can be read. [Settle] and
// [ReconstructRange] use it when the source has it; otherwise they read
// the record from its start (Settle keeps its sampled pairs in memory,
// ReconstructRange decodes and drops the pairs before its range).
type IndexSeeker interface {
	SeekIndex(i int) error
}

// SamplePair names a pair the settle step used.
type SamplePair struct {
	Index int     `yaml:"index"`
	TimeS float64 `yaml:"time_s"`
	Left  string  `yaml:"left"`
	Right string  `yaml:"right"`
}

// SkippedPair names a pair left out, and why.
type SkippedPair struct {
	Index  int     `yaml:"index"`  // the pair's index in the source
	TimeS  float64 `yaml:"time_s"` // its time, NaN when unknown
	Left   string  `yaml:"left,omitempty"`
	Right  string  `yaml:"right,omitempty"`
	Reason string  `yaml:"reason"`
}

// Band is the disparity search settled for a record.
type Band struct {
	// Auto: the range follows from the sea plane and the sea state;
	// otherwise it is the configured one.
	Auto bool `yaml:"auto"`
	// Prewarp: the right image is sheared by the sea plane's disparity and
	// the strips' ranges are residual disparities about it.
	Prewarp bool `yaml:"prewarp"`
	// HalfWidthM is the half-width of the band of water heights about the
	// mean plane that the ranges cover, metres: min(Sigmas·σ_η + MarginM,
	// ElevationMarginM) (0 for a configured range).
	HalfWidthM float64 `yaml:"half_width_m"`
	// Strips are the rows and disparity ranges the matcher works in.
	Strips []cvshim.Strip `yaml:"strips"`
}

// Geometry is what [Settle] decides once for a record and every part of it
// is reconstructed with: the mean sea plane, the sea state it measured,
// the grid and the disparity band, with the pairs it looked at. It can be
// saved beside the rig file ([Geometry.Save]) and loaded back
// ([LoadGeometry]) bit for bit.
type Geometry struct {
	// ImageSize is the rig's image size, pixels.
	ImageSize image.Point `yaml:"-"`
	// RecordPairs is the number of pairs the source tries (its Len).
	RecordPairs int `yaml:"record_pairs"`
	// Plane is the mean sea plane in the left camera's frame; PlaneFit the
	// fit when it was fitted, nil when it came from the rig.
	Plane    calib.Plane `yaml:"-"`
	PlaneFit *PlaneFit   `yaml:"-"`
	// SeaSigmaM is the standard deviation of the sea-surface elevation
	// measured on the sampled pairs (see [SeaSigma]); SeaPoints the number
	// of points it was measured on.
	SeaSigmaM float64 `yaml:"sea_sigma_m"`
	SeaPoints int     `yaml:"sea_points"`
	// Grid is the output grid; GridAuto whether it was chosen
	// automatically; GridNote says how, in a sentence; GridChoice gives
	// the figures of an automatic choice.
	Grid       ingest.Grid `yaml:"-"`
	GridAuto   bool        `yaml:"grid_auto"`
	GridNote   string      `yaml:"grid_note"`
	GridChoice *GridChoice `yaml:"grid_choice,omitempty"`
	// Band is the disparity search.
	Band Band `yaml:"disparity"`
	// Samples are the pairs the plane, sea state and grid were measured
	// on, spread evenly over the record; Skipped the sampled pairs left
	// out (with the reasons).
	Samples []SamplePair  `yaml:"samples"`
	Skipped []SkippedPair `yaml:"skipped"`
	// SourceSkipped counts the frames the source left out when it listed
	// the record (pairs without a partner, without a time, ...), by
	// reason; they have no index in the record.
	SourceSkipped ingest.SkipCounts `yaml:"source_skipped"`
	// Pass is the wall time of each pass of the settle step.
	Pass map[string]time.Duration `yaml:"-"`
}

// threadsFor sets OpenCV's thread count for workers goroutines and returns
// it with a function that restores the previous count.
func threadsFor(workers int) (int, func(), error) {
	threads := max(1, runtime.NumCPU()/workers)
	restore := func() {}
	if prev, err := cvshim.NumThreads(); err == nil {
		restore = func() { cvshim.SetNumThreads(max(prev, 1)) }
	}
	if err := cvshim.SetNumThreads(threads); err != nil {
		return 0, restore, fmt.Errorf("surface: %v", err)
	}
	return threads, restore, nil
}

// Settle decides, once for a record, the geometry every part of it is
// reconstructed with (see the package documentation): it samples
// opt.Plane.Frames pairs evenly over the record (or its first
// opt.Plane.SpanS seconds), fits the mean sea plane to them when the rig
// has none (or a refit is asked for), measures the sea state's σ_η about
// the plane, sizes the disparity band from it, chooses the grid when none
// is configured, and plans the matcher's strips over the pixels that see
// the grid. Sampled pairs of another image size than the rig's are skipped
// and named; when the first three sampled pairs all have another size the
// rig is taken for the wrong one and Settle returns a [*SizeError].
func Settle(ctx context.Context, rig *calib.Rig, open Opener, opt Options) (*Geometry, error) {
	if open == nil {
		return nil, fmt.Errorf("surface: Settle needs a source opener")
	}
	rec, err := New(rig, opt)
	if err != nil {
		return nil, err
	}
	defer rec.Close()
	workers := max(opt.Workers, 1)
	_, restore, err := threadsFor(workers)
	defer restore()
	if err != nil {
		return nil, err
	}
	return rec.settle(ctx, open, workers)
}

func (r *Reconstructor) settle(ctx context.Context, open Opener, workers int) (*Geometry, error) {
	g := &Geometry{ImageSize: r.rig.Size, Pass: map[string]time.Duration{}}
	t0 := time.Now()
	smp, err := gatherSample(ctx, open, r.opt, r.rig.Size, g)
	if err != nil {
		return nil, err
	}
	defer smp.Close()
	g.Samples = slices.Clone(smp.pairs)
	g.Pass["sample"] = time.Since(t0)

	// Sea plane and sea state.
	t0 = time.Now()
	var pts [][3]float32
	switch {
	case r.havePlane:
		// The rig's plane: the sea state is measured about it on the
		// sampled pairs matched with the widest band.
		if pts, err = r.pointsPass(ctx, smp, smp.all(), workers, "sea state"); err != nil {
			return nil, err
		}
	default:
		fit, p, err := r.planePass(ctx, smp, workers)
		if err != nil {
			return nil, err
		}
		pts = p
		if err := r.SetSeaPlane(fit.Plane); err != nil {
			return nil, fmt.Errorf("%v (the fitted plane is probably not the sea; check the images)", err)
		}
		g.PlaneFit = &fit
		g.Pass["plane"] = time.Since(t0)
	}
	g.Plane = r.plane
	g.SeaSigmaM, g.SeaPoints = SeaSigma(pts, r.plane, r.opt.MaxAbsElevationM)
	pts = nil
	if r.autoRange {
		half := r.opt.ElevationMarginM
		if b := r.opt.Band; b.Sigmas > 0 {
			if !(g.SeaSigmaM > 0) {
				return nil, fmt.Errorf("surface: the sea state could not be measured on the %d sampled pairs (too few stereo points near the mean plane); check the images, or set band.sigmas to 0 to search ±elevation_margin_m", len(g.Samples))
			}
			half = math.Min(b.Sigmas*g.SeaSigmaM+b.MarginM, r.opt.ElevationMarginM)
		}
		if err := r.setBand(half, nil); err != nil {
			return nil, err
		}
	}
	g.Pass["sea state"] = time.Since(t0)

	// Grid, and the strips over the pixels that see it.
	t0 = time.Now()
	grid, auto, note, choice, err := r.chooseGrid(ctx, smp, workers)
	if err != nil {
		return nil, err
	}
	if err := r.SetGrid(grid); err != nil {
		return nil, err
	}
	if auto {
		g.Pass["grid"] = time.Since(t0)
	}
	if r.autoRange {
		if err := r.setBand(r.bandM, r.gridGround()); err != nil {
			return nil, err
		}
	}
	g.Grid, g.GridAuto, g.GridNote, g.GridChoice = r.grid, auto, note, choice
	g.Band = Band{Auto: r.autoRange, Prewarp: r.prewarp, Strips: slices.Clone(r.strips)}
	if r.autoRange {
		g.Band.HalfWidthM = r.bandM
	}
	return g, nil
}

// gridGround accepts the ground points within one cell of the grid.
func (r *Reconstructor) gridGround() func(x, y float64) bool {
	g := r.grid
	d := r.gd
	x0, x1 := g.X[0]-1.5*d, g.X[len(g.X)-1]+1.5*d
	y0, y1 := g.Y[0]-1.5*d, g.Y[len(g.Y)-1]+1.5*d
	return func(x, y float64) bool { return x >= x0 && x <= x1 && y >= y0 && y <= y1 }
}

// SeaSigma returns the standard deviation of the sea-surface elevation
// measured on stereo points (in the left camera's frame) about the mean
// plane p, and the number of points used. The heights above the plane of
// the points within maxAbsM of it give a first scale, 1.4826 times their
// median absolute deviation from the median (Hampel 1974, "The influence
// curve and its role in robust estimation", JASA 69; the factor makes it
// the standard deviation of a normal distribution); the result is the
// standard deviation of the heights within 3 of those scales of the
// median (sigma clipping, common practice, which drops the matcher's gross
// outliers), divided by √0.97334 for the part of a normal distribution the
// clipping removes (the variance of a standard normal truncated at ±3 is
// 1 − 6φ(3)/(2Φ(3) − 1) = 0.97334). The stereo error of the points adds to
// it in quadrature, which errs on the wide side for the disparity band.
// Over a footprint smaller than the longest waves, or pairs spanning less
// than their period, it measures only the part of the sea's variance those
// resolve. It returns 0 for fewer than 200 points.
func SeaSigma(points [][3]float32, p calib.Plane, maxAbsM float64) (float64, int) {
	hs := make([]float64, 0, len(points))
	for _, q := range points {
		h := p.Height([3]float64{float64(q[0]), float64(q[1]), float64(q[2])})
		if math.Abs(h) <= maxAbsM {
			hs = append(hs, h)
		}
	}
	if len(hs) < 200 {
		return 0, 0
	}
	slices.Sort(hs)
	med := median(hs)
	dev := make([]float64, len(hs))
	for i := range hs {
		dev[i] = math.Abs(hs[i] - med)
	}
	slices.Sort(dev)
	scale := 1.4826 * median(dev)
	var s1, s2 float64
	n := 0
	for _, h := range hs {
		if math.Abs(h-med) <= 3*scale {
			s1 += h
			s2 += h * h
			n++
		}
	}
	if n < 2 {
		return 0, 0
	}
	mean := s1 / float64(n)
	variance := (s2 - float64(n)*mean*mean) / float64(n-1)
	return math.Sqrt(math.Max(variance, 0) / 0.97334), n
}

// median of sorted values.
func median(s []float64) float64 {
	n := len(s)
	if n%2 == 1 {
		return s[n/2]
	}
	return (s[n/2-1] + s[n/2]) / 2
}

// sample holds the pairs of the settle step: either their frames in
// memory, or a source that can seek to them.
type sample struct {
	frames []ingest.StereoFrame // in memory (no seeking source)
	open   Opener               // reopened and sought per pass otherwise
	pairs  []SamplePair
	size   image.Point
}

func (s *sample) Close() {
	for i := range s.frames {
		releaseFrame(&s.frames[i])
	}
	s.frames = nil
}

// all returns the positions 0..n-1 of the sampled pairs.
func (s *sample) all() []int {
	k := make([]int, len(s.pairs))
	for i := range k {
		k[i] = i
	}
	return k
}

// source returns a stereo source over the sampled pairs at positions k.
func (s *sample) source(k []int) (ingest.StereoSource, error) {
	if s.frames != nil {
		return &memSource{s: s, k: k}, nil
	}
	src, err := s.open()
	if err != nil {
		return nil, err
	}
	return &seekSource{s: s, src: src, sk: src.(IndexSeeker), k: k}, nil
}

// memSource delivers copies of the sampled frames in memory.
type memSource struct {
	s    *sample
	k    []int
	next int
}

func (m *memSource) Next(f *ingest.StereoFrame) error {
	if m.next >= len(m.k) {
		return io.EOF
	}
	src := &m.s.frames[m.k[m.next]]
	m.next++
	releaseFrame(f)
	f.Index, f.Time, f.LeftPath, f.RightPath = src.Index, src.Time, src.LeftPath, src.RightPath
	f.Left, f.Right = src.Left.Clone(), src.Right.Clone()
	return nil
}
func (m *memSource) Skipped() ingest.SkipCounts { return ingest.SkipCounts{} }
func (m *memSource) Close() error               { return nil }
func (m *memSource) Len() int                   { return len(m.k) }

// seekSource reads the sampled pairs again from a seeking source.
type seekSource struct {
	s    *sample
	src  ingest.StereoSource
	sk   IndexSeeker
	k    []int
	next int
}

func (m *seekSource) Next(f *ingest.StereoFrame) error {
	if m.next >= len(m.k) {
		return io.EOF
	}
	want := m.s.pairs[m.k[m.next]]
	m.next++
	if err := m.sk.SeekIndex(want.Index); err != nil {
		return fmt.Errorf("surface: cannot return to pair %d (%s): %v", want.Index, want.Left, err)
	}
	if err := m.src.Next(f); err != nil || f.Index != want.Index {
		if err == nil || errors.Is(err, io.EOF) {
			err = fmt.Errorf("it is no longer readable")
		}
		return fmt.Errorf("surface: sampled pair %d (%s) cannot be read again (%v); was the record changed during the run?", want.Index, want.Left, err)
	}
	return nil
}
func (m *seekSource) Skipped() ingest.SkipCounts { return ingest.SkipCounts{} }
func (m *seekSource) Close() error               { return m.src.Close() }
func (m *seekSource) Len() int                   { return len(m.k) }

// sampleTargets returns n pair indices spread evenly over [0, last].
func sampleTargets(n, last int) []int {
	if n <= 1 || last <= 0 {
		return []int{0}
	}
	t := make([]int, 0, n)
	for k := 0; k < n; k++ {
		i := int(math.Round(float64(last) * float64(k) / float64(n-1)))
		if len(t) == 0 || i > t[len(t)-1] {
			t = append(t, i)
		}
	}
	return t
}

// sizeProbe is the number of first sampled pairs that, all of another size
// than the rig's, make Settle refuse the rig.
const sizeProbe = 3

// gatherSample picks and reads the pairs of the settle step (see Settle).
func gatherSample(ctx context.Context, open Opener, opt Options, size image.Point, g *Geometry) (*sample, error) {
	src, err := open()
	if err != nil {
		return nil, err
	}
	defer src.Close()
	g.RecordPairs = src.Len()
	g.SourceSkipped = src.Skipped()
	last := src.Len() - 1
	if span := opt.Plane.SpanS; span > 0 {
		if ts, ok := src.(interface{ Times() []float64 }); ok {
			t := ts.Times()
			for last > 0 && t[last] > t[0]+span {
				last--
			}
		}
	}
	if last < 0 {
		return nil, fmt.Errorf("surface: the record holds no image pair (%s); check the images", describeSkips(src.Skipped()))
	}
	targets := sampleTargets(opt.Plane.Frames, last)
	s := &sample{size: size}
	sk, seeks := src.(IndexSeeker)
	if seeks {
		s.open = open
	}
	var f ingest.StereoFrame
	defer releaseFrame(&f)
	wrongSize := 0
	var firstWrong *SizeError
	done := 0
	keep := func(f *ingest.StereoFrame) (bool, error) {
		if f.Left.Cols() != size.X || f.Left.Rows() != size.Y {
			g.Skipped = append(g.Skipped, SkippedPair{Index: f.Index, TimeS: f.Time, Left: f.LeftPath, Right: f.RightPath,
				Reason: fmt.Sprintf("%s (%d×%d px, the rig %d×%d px)", SkipRigSize, f.Left.Cols(), f.Left.Rows(), size.X, size.Y)})
			if firstWrong == nil {
				firstWrong = &SizeError{Path: f.LeftPath, Got: image.Pt(f.Left.Cols(), f.Left.Rows()), Want: size}
			}
			wrongSize++
			if wrongSize == sizeProbe && len(s.pairs) == 0 {
				return false, firstWrong
			}
			return false, nil
		}
		s.pairs = append(s.pairs, SamplePair{Index: f.Index, TimeS: f.Time, Left: f.LeftPath, Right: f.RightPath})
		return true, nil
	}
	report := func() {
		done++
		if opt.Progress != nil {
			opt.Progress("sample", done, len(targets))
		}
	}
	if seeks {
		err = seekTargets(ctx, src, sk, targets, &f, keep, report)
	} else {
		err = streamTargets(ctx, src, targets, &f, keep, report, s)
	}
	if err != nil {
		return nil, err
	}
	if len(s.pairs) == 0 {
		s.Close()
		if firstWrong != nil {
			return nil, firstWrong
		}
		return nil, fmt.Errorf("surface: no image pair of the record could be read (%s); check the images", describeSkips(src.Skipped()))
	}
	if !seeks {
		// Keep only the frames in memory; the source is closed.
		s.open = nil
	}
	return s, nil
}

// seekTargets reads the target pairs of a seekable source, moving to each
// in turn, into f and hands each to keep; report counts a target done.
func seekTargets(ctx context.Context, src ingest.StereoSource, sk IndexSeeker, targets []int, f *ingest.StereoFrame, keep func(*ingest.StereoFrame) (bool, error), report func()) error {
	lastIndex := -1
	for _, t := range targets {
		if err := ctx.Err(); err != nil {
			return err
		}
		report()
		if t <= lastIndex {
			continue // the pair delivered for the previous target
		}
		if err := sk.SeekIndex(t); err != nil {
			return fmt.Errorf("surface: cannot move to pair %d of the record: %v", t, err)
		}
		err := src.Next(f)
		if errors.Is(err, io.EOF) {
			return nil
		}
		if err != nil {
			return err
		}
		lastIndex = f.Index
		if _, err := keep(f); err != nil {
			return err
		}
	}
	return nil
}

// streamTargets reads a source that cannot seek from the start, hands the
// first pair at or after each target to keep and holds the kept frames in
// s; on an error it closes s.
func streamTargets(ctx context.Context, src ingest.StereoSource, targets []int, f *ingest.StereoFrame, keep func(*ingest.StereoFrame) (bool, error), report func(), s *sample) error {
	next := 0
	for next < len(targets) {
		if err := ctx.Err(); err != nil {
			s.Close()
			return err
		}
		err := src.Next(f)
		if errors.Is(err, io.EOF) {
			return nil
		}
		if err != nil {
			s.Close()
			return err
		}
		if f.Index < targets[next] {
			continue
		}
		for next < len(targets) && targets[next] <= f.Index {
			next++
			report()
		}
		ok, err := keep(f)
		if err != nil {
			s.Close()
			return err
		}
		if ok {
			s.frames = append(s.frames, *f)
			*f = ingest.StereoFrame{}
		}
	}
	return nil
}
