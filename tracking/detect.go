// Package tracking finds wave crests in gridded sea-surface elevation and
// follows them through time.
//
// # Model
//
// Crests are sought along lines parallel to the mean direction of wave
// travel θ0. In the rotated frame (s along θ0, n across it) each line is
// sampled at a regular step by bilinear interpolation of the grid. With the
// mean level at zero (the per-cell temporal mean removed), a crest point is
// the highest sample between a zero up-crossing and the next zero
// down-crossing along s, refined to sub-sample position and elevation by a
// parabola through the three highest samples. Its zero-crossing width w_c is
// the distance between those two crossings (linear interpolation), and the
// local wavelength the distance from the down-crossing before the crest to
// the one after it. Crest points on neighbouring lines that lie within a
// fraction of a crest width of each other along s are joined into crest
// segments: short-crested seas have short crests. A segment is reported by
// its tip, its highest point, with the tip's elevation a_c, width w_c and
// local wavelength, and the segment's length across θ0.
//
// Tracks are built by Linker: each active track's tip is predicted forward
// by a speed the caller supplies (this package does not choose the reference
// phase speed), detections are gated around the prediction, and each frame's
// detections are assigned to tracks by a globally optimal assignment
// (Hungarian method) rather than greedily. Tracks survive a configurable
// number of missing frames.
//
// The steepness S_c = a_c·k_c with k_c = π/w_c is exactly a·k for a sinusoid
// (see speed for its use).
package tracking

import (
	"math"
	"sort"
)

// Geometry is a regular analysis grid and the direction of wave travel.
type Geometry struct {
	Nx, Ny int
	X0, Y0 float64 // centre of the first cell, metres
	Dx, Dy float64 // spacing, metres
	Theta  float64 // direction of travel, radians counter-clockwise from +x
}

// DetectOptions are the crest-detection settings.
type DetectOptions struct {
	// MinElevation is the smallest crest elevation a_c kept, metres.
	MinElevation float64
	// MinLength is the shortest crest segment kept, metres across θ0.
	MinLength float64
	// Step is the sample spacing along and across θ0; 0 means the smaller
	// grid spacing.
	Step float64
	// EdgeCrests also takes crests whose stretch of positive elevation
	// runs into the end of a sampling line (the grid's edge or an unknown
	// cell), when their highest point is a true maximum inside the line:
	// on grids shorter than about one and a half wavelengths along θ0 a
	// crest is seldom enclosed by both zero crossings. Such a crest has no
	// zero-crossing width (Width and so S_c unknown).
	EdgeCrests bool
}

// Tip is a crest segment's tip and measures in one frame: what a crest
// row keeps of its crest (speed.CrestRow), without the segment's extent
// and crest line that only linking needs.
type Tip struct {
	Frame      int     // frame index in the record
	Time       float64 // seconds
	X, Y       float64 // tip position, metres
	S, N       float64 // tip position along and across θ0, metres
	Elevation  float64 // a_c, metres above the mean level
	Width      float64 // zero-crossing width w_c at the tip, metres; NaN at the grid's edge (DetectOptions.EdgeCrests)
	Wavelength float64 // down-crossing to down-crossing at the tip, metres; NaN if not enclosed
	Length     float64 // segment length across θ0, metres
	// SlopeSN is ds/dn of the crest line near the tip (least squares over
	// the crest points within one crest width of the tip across θ0): the
	// crest is oblique to the θ0 lines when it is non-zero.
	SlopeSN float64
}

// Crest is one crest segment in one frame, described by its tip.
type Crest struct {
	Tip
	Points     int     // crest points in the segment
	NMin, NMax float64 // extent of the segment across θ0, metres
	// Path is the distance the crest has travelled along θ0 since its track
	// began, plus the along-θ0 position of its first tip: the running sum of
	// the frame-to-frame advances measured on the crest line at the new
	// tip's cross-position (set by Linker). Sideways motion of the tip along
	// the crest is therefore not counted as propagation.
	Path float64
	// poly holds the along-θ0 position of the segment's crest point on
	// each sampling line, from cross-position polyN0 in steps of polyStep.
	// It is kept only while the crest is the latest of its track.
	poly             []float32
	polyN0, polyStep float64
}

// Advance returns how far the crest line moved along θ0 from prev to c:
// the mean, over the sampling lines both segments cover within reach of c's
// tip across θ0, of the difference of their crest points on each line. Both
// ends of every difference are ordinary crest points (not the selected
// highest one), so the sub-sample interpolation error does not accumulate
// along a track. Without common lines it falls back to c's tip against
// prev's crest line extrapolated to the tip.
func Advance(prev, c Crest, reach float64) float64 {
	if len(prev.poly) > 0 && len(c.poly) > 0 && prev.polyStep == c.polyStep {
		off := int(math.Round((c.polyN0 - prev.polyN0) / c.polyStep)) // prev index of c's first line
		for _, r := range []float64{reach, math.Inf(1)} {             // near the tip, else all common lines
			var sum float64
			var n int
			for i, v := range c.poly {
				j := i + off
				if j < 0 || j >= len(prev.poly) {
					continue
				}
				if math.Abs(c.polyN0+float64(i)*c.polyStep-c.N) > r {
					continue
				}
				sum += float64(v) - float64(prev.poly[j])
				n++
			}
			if n > 0 {
				return sum / float64(n)
			}
		}
	}
	return c.S - prev.SOnLine(c.N)
}

// AdvanceAtTip returns how far the crest line moved along θ0 from prev to
// c at c's tip: the mean, over the two sampling lines either side of the
// tip (one step across θ0 away), of the difference of the two segments'
// crest points on each line. The tip's own line is left out: its crest
// point is the selected highest one, whose sub-sample interpolation error
// is not that of an ordinary point, and taking it would add that error to
// every step of a track. The pair is symmetric about the tip, so the
// slope of the advance along a curved crest cancels. A crest line moving
// at one speed normal to itself advances along θ0 by that speed times
// √(1+m²), m = ds/dn its local slope, so on a curved crest the neighbour
// lines, more oblique than the tip's, advance further: each neighbour's
// advance is scaled to the tip's slope, √((1+m_tip²)/(1+m_i²)), the slopes
// by central differences of c's crest line (on short-crested seas this
// took the median over the exact crest speed from 1.040 to 1.030 at
// spreading s = 4, with regular waves unchanged). Without both neighbours
// it falls back to Advance on the tip's line alone.
func AdvanceAtTip(prev, c Crest) float64 {
	if len(prev.poly) > 0 && len(c.poly) > 0 && prev.polyStep == c.polyStep {
		off := int(math.Round((c.polyN0 - prev.polyN0) / c.polyStep))
		it := int(math.Round((c.N - c.polyN0) / c.polyStep)) // the tip's line in c
		// slope ds/dn of c's crest line at line i (central difference)
		slope := func(i int) (float64, bool) {
			if i < 1 || i+1 >= len(c.poly) {
				return 0, false
			}
			return float64(c.poly[i+1]-c.poly[i-1]) / (2 * c.polyStep), true
		}
		var sum float64
		n := 0
		mt, okT := slope(it)
		for _, i := range []int{it - 1, it + 1} {
			j := i + off
			if i < 0 || i >= len(c.poly) || j < 0 || j >= len(prev.poly) {
				continue
			}
			a := float64(c.poly[i]) - float64(prev.poly[j])
			// A crest line moving at one speed normal to itself advances
			// along θ0 by that speed times √(1+m²), m its local slope: on a
			// curved crest the neighbour lines, more oblique than the
			// tip's, advance further. Their advance is taken at the tip's
			// slope instead.
			if mi, ok := slope(i); ok && okT {
				a *= math.Sqrt((1 + mt*mt) / (1 + mi*mi))
			}
			sum += a
			n++
		}
		if n == 2 {
			return sum / 2
		}
	}
	return Advance(prev, c, 0.5*c.polyStep)
}

// SOnLine returns the along-θ0 position of the crest line at the
// cross-position n: interpolated between the segment's crest points, or
// extrapolated from its nearest end with SlopeSN outside it.
func (c Crest) SOnLine(n float64) float64 {
	if len(c.poly) == 0 {
		return c.SAt(n)
	}
	u := (n - c.polyN0) / c.polyStep
	last := float64(len(c.poly) - 1)
	switch {
	case u <= 0:
		return float64(c.poly[0]) + c.SlopeSN*(n-c.polyN0)
	case u >= last:
		return float64(c.poly[len(c.poly)-1]) + c.SlopeSN*(n-(c.polyN0+last*c.polyStep))
	}
	i := int(u)
	f := u - float64(i)
	return (1-f)*float64(c.poly[i]) + f*float64(c.poly[i+1])
}

// SAt returns the crest's position along θ0 extrapolated along its crest
// line to the cross-position n (first order, from SlopeSN).
func (c Crest) SAt(n float64) float64 { return c.S + c.SlopeSN*(n-c.N) }

// Steepness returns S_c = a_c·π/w_c (docs/methods.md, Crests; for a sinusoid a·k).
func (c Crest) Steepness() float64 { return c.Elevation * math.Pi / c.Width }

// Detector finds crests on frames of one grid. Its sampling lines and
// interpolation weights are computed once; Detect is safe for concurrent
// use with a separate Scratch per goroutine.
type Detector struct {
	g          Geometry
	opt        DetectOptions
	step       float64
	lines      []line
	nSamples   int
	cosT, sinT float64
}

// line is one sampling line parallel to θ0: samples at s = S0 + i·step.
type line struct {
	n     float64
	s0    float64
	first int // index of the first sample in the detector's sample tables
	count int
}

// sample tables (structure of arrays, shared by all lines)
type bilinear struct {
	idx []int32   // index of the lower-left cell
	wx  []float32 // weight of the right neighbour
	wy  []float32 // weight of the upper neighbour
}

// NewDetector prepares detection on grid g.
func NewDetector(g Geometry, opt DetectOptions) *Detector {
	step := opt.Step
	if step <= 0 {
		step = math.Min(g.Dx, g.Dy)
	}
	d := &Detector{g: g, opt: opt, step: step, cosT: math.Cos(g.Theta), sinT: math.Sin(g.Theta)}
	// extent of the grid in (s, n)
	x1 := g.X0 + float64(g.Nx-1)*g.Dx
	y1 := g.Y0 + float64(g.Ny-1)*g.Dy
	smin, smax := math.Inf(1), math.Inf(-1)
	nmin, nmax := math.Inf(1), math.Inf(-1)
	for _, p := range [][2]float64{{g.X0, g.Y0}, {x1, g.Y0}, {g.X0, y1}, {x1, y1}} {
		s, n := d.toSN(p[0], p[1])
		smin, smax = math.Min(smin, s), math.Max(smax, s)
		nmin, nmax = math.Min(nmin, n), math.Max(nmax, n)
	}
	// Sample positions are on a lattice anchored at (0, 0) so that they do
	// not depend on rounding of the extent.
	for jn := math.Ceil(nmin / step); jn*step <= nmax; jn++ {
		n := jn * step
		ln := line{n: n, first: -1}
		for js := math.Ceil(smin / step); js*step <= smax; js++ {
			s := js * step
			x, y := d.toXY(s, n)
			fx := (x - g.X0) / g.Dx
			fy := (y - g.Y0) / g.Dy
			if fx < 0 || fy < 0 || fx > float64(g.Nx-1) || fy > float64(g.Ny-1) {
				if ln.first >= 0 {
					break // left the grid: lines cross a convex region once
				}
				continue
			}
			if ln.first < 0 {
				ln.first = d.nSamples
				ln.s0 = s
			}
			d.nSamples++
			ln.count++
		}
		if ln.count >= 3 {
			d.lines = append(d.lines, ln)
		} else {
			d.nSamples -= ln.count
		}
	}
	return d
}

func (d *Detector) toSN(x, y float64) (s, n float64) {
	return x*d.cosT + y*d.sinT, -x*d.sinT + y*d.cosT
}

func (d *Detector) toXY(s, n float64) (x, y float64) {
	return s*d.cosT - n*d.sinT, s*d.sinT + n*d.cosT
}

// Step returns the sampling step along and across θ0, metres.
func (d *Detector) Step() float64 { return d.step }

// Samples returns the number of line samples per frame (a cost measure).
func (d *Detector) Samples() int { return d.nSamples }

// Scratch holds per-goroutine buffers of a Detector.
type Scratch struct {
	tab    bilinear
	vals   []float64
	points []crestPoint
	parent []int
}

// NewScratch allocates buffers for d.
func (d *Detector) NewScratch() *Scratch {
	sc := &Scratch{
		tab: bilinear{
			idx: make([]int32, d.nSamples),
			wx:  make([]float32, d.nSamples),
			wy:  make([]float32, d.nSamples),
		},
		vals: make([]float64, 0, 1024),
	}
	// Interpolation tables (kept per scratch so they stay hot in that
	// goroutine's cache; they are cheap to build).
	g := d.g
	k := 0
	for _, ln := range d.lines {
		for i := 0; i < ln.count; i++ {
			x, y := d.toXY(ln.s0+float64(i)*d.step, ln.n)
			fx := (x - g.X0) / g.Dx
			fy := (y - g.Y0) / g.Dy
			ix := min(int(fx), g.Nx-2)
			iy := min(int(fy), g.Ny-2)
			sc.tab.idx[k] = int32(iy*g.Nx + ix)
			sc.tab.wx[k] = float32(fx - float64(ix))
			sc.tab.wy[k] = float32(fy - float64(iy))
			k++
		}
	}
	return sc
}

type crestPoint struct {
	line       int
	s, n       float64
	a          float64
	width      float64
	wavelength float64
}

// Detect finds the crest segments of one frame. eta is row-major
// (eta[iy*Nx+ix]), NaN where unknown; mean, if not nil, is subtracted cell by
// cell first. Crests are returned sorted by tip position (s, then n), so the
// output does not depend on scheduling.
func (d *Detector) Detect(eta, mean []float32, frame int, t float64, sc *Scratch) []Crest {
	nx := d.g.Nx
	sc.points = sc.points[:0]
	at := func(i int) float64 {
		v := float64(eta[i])
		if mean != nil {
			v -= float64(mean[i])
		}
		return v
	}
	for li, ln := range d.lines {
		vals := sc.vals[:0]
		gaps := false
		for k := ln.first; k < ln.first+ln.count; k++ {
			i := int(sc.tab.idx[k])
			wx, wy := float64(sc.tab.wx[k]), float64(sc.tab.wy[k])
			v00, v10, v01, v11 := at(i), at(i+1), at(i+nx), at(i+nx+1)
			v := (1-wy)*((1-wx)*v00+wx*v10) + wy*((1-wx)*v01+wx*v11)
			if v != v { // an unknown corner: the known ones, if they carry most of the weight
				v = knownCorners([4]float64{v00, v10, v01, v11}, [4]float64{(1 - wx) * (1 - wy), wx * (1 - wy), (1 - wx) * wy, wx * wy})
				gaps = gaps || v != v
			}
			vals = append(vals, v)
		}
		if gaps {
			bridgeGaps(vals, maxBridge)
		}
		sc.vals = vals
		d.scanLine(li, ln, vals, sc)
	}
	return d.segments(frame, t, sc)
}

// scanLine finds crest points on one line of samples.
func (d *Detector) scanLine(li int, ln line, v []float64, sc *Scratch) {
	step := d.step
	cross := func(i int) float64 { // zero crossing between samples i-1 and i, as a sample coordinate
		return float64(i-1) + v[i-1]/(v[i-1]-v[i])
	}
	// crest takes the highest sample between up and down (sample
	// coordinates); a virtual end (the end of the stretch of known
	// samples, with EdgeCrests) has no crossing, so the maximum must be a
	// true one inside the stretch and the width is unknown.
	crest := func(up, down, prevDown float64, upEnd, downEnd bool) {
		lo, hi := int(math.Ceil(up)), int(math.Floor(down))
		im := lo
		for j := lo; j <= hi; j++ {
			if v[j] > v[im] {
				im = j
			}
		}
		if (upEnd && im == lo) || (downEnd && im == hi) {
			return // the highest point is the end of the stretch: no maximum seen
		}
		pos, amp := float64(im), v[im]
		if im > 0 && im < len(v)-1 && !math.IsNaN(v[im-1]) && !math.IsNaN(v[im+1]) {
			den := v[im-1] - 2*v[im] + v[im+1]
			if den < 0 {
				off := 0.5 * (v[im-1] - v[im+1]) / den
				if math.Abs(off) <= 1 {
					pos += off
					amp = v[im] - 0.25*(v[im-1]-v[im+1])*off
				}
			}
		}
		if amp < d.opt.MinElevation {
			return
		}
		wl, width := math.NaN(), math.NaN()
		if !upEnd && !downEnd {
			width = (down - up) * step
		}
		if !math.IsNaN(prevDown) && !downEnd {
			wl = (down - prevDown) * step
		}
		sc.points = append(sc.points, crestPoint{
			line: li, s: ln.s0 + pos*step, n: ln.n, a: amp,
			width: width, wavelength: wl,
		})
	}
	edges := d.opt.EdgeCrests
	prevDown := math.NaN()
	up, upEnd := math.NaN(), false
	if edges && len(v) > 0 && v[0] >= 0 {
		up, upEnd = 0, true
	}
	for i := 1; i < len(v); i++ {
		a, b := v[i-1], v[i]
		if math.IsNaN(a) || math.IsNaN(b) {
			if edges && !math.IsNaN(up) && !math.IsNaN(a) {
				crest(up, float64(i-1), prevDown, upEnd, true) // the stretch ends positive at an unknown cell
			}
			prevDown, up, upEnd = math.NaN(), math.NaN(), false
			if edges && math.IsNaN(a) && !math.IsNaN(b) && b >= 0 {
				up, upEnd = float64(i), true // a stretch starting positive after an unknown cell
			}
			continue
		}
		if a < 0 && b >= 0 {
			up, upEnd = cross(i), false
			continue
		}
		if a >= 0 && b < 0 {
			down := cross(i)
			if !math.IsNaN(up) {
				crest(up, down, prevDown, upEnd, false)
			}
			prevDown = down
			up, upEnd = math.NaN(), false
		}
	}
	if edges && !math.IsNaN(up) && len(v) > 0 && !math.IsNaN(v[len(v)-1]) {
		crest(up, float64(len(v)-1), prevDown, upEnd, true) // the line ends positive
	}
}

// segments joins crest points of neighbouring lines into crest segments.
func (d *Detector) segments(frame int, t float64, sc *Scratch) []Crest {
	pts := sc.points
	n := len(pts)
	if cap(sc.parent) < n {
		sc.parent = make([]int, n)
	}
	parent := sc.parent[:n]
	for i := range parent {
		parent[i] = i
	}
	var find func(int) int
	find = func(i int) int {
		for parent[i] != i {
			parent[i] = parent[parent[i]]
			i = parent[i]
		}
		return i
	}
	// Points are appended line by line and, within a line, by s. Join each
	// point to its mutual nearest neighbour on the previous line.
	start := 0
	prevStart, prevEnd := -1, -1
	for start < n {
		end := start
		for end < n && pts[end].line == pts[start].line {
			end++
		}
		if prevStart >= 0 && pts[prevStart].line == pts[start].line-1 {
			for i := start; i < end; i++ {
				j := nearest(pts, prevStart, prevEnd, pts[i].s)
				if j < 0 {
					continue
				}
				if back := nearest(pts, start, end, pts[j].s); back != i {
					continue
				}
				tol := math.Max(1.5*d.step, 0.3*knownMin(pts[i].width, pts[j].width))
				if math.Abs(pts[i].s-pts[j].s) <= tol {
					ri, rj := find(i), find(j)
					if ri != rj {
						if ri < rj {
							parent[rj] = ri
						} else {
							parent[ri] = rj
						}
					}
				}
			}
		}
		prevStart, prevEnd = start, end
		start = end
	}
	// Gather segments.
	type seg struct {
		tip        int
		nmin, nmax float64
		count      int
		members    []int
	}
	segs := map[int]*seg{}
	var roots []int
	for i := 0; i < n; i++ {
		r := find(i)
		s, ok := segs[r]
		if !ok {
			s = &seg{tip: i, nmin: pts[i].n, nmax: pts[i].n}
			segs[r] = s
			roots = append(roots, r)
		}
		s.count++
		s.members = append(s.members, i)
		if pts[i].a > pts[s.tip].a {
			s.tip = i
		}
		s.nmin = math.Min(s.nmin, pts[i].n)
		s.nmax = math.Max(s.nmax, pts[i].n)
	}
	out := make([]Crest, 0, len(roots))
	for _, r := range roots {
		s := segs[r]
		length := s.nmax - s.nmin + d.step
		if length < d.opt.MinLength {
			continue
		}
		p := pts[s.tip]
		x, y := d.toXY(p.s, p.n)
		// local slope of the crest line around the tip
		reach := 3 * d.step
		if p.width > reach { // (an edge crest has no width)
			reach = p.width
		}
		var sw, sn, ss, snn, sns float64
		for _, m := range s.members {
			dn := pts[m].n - p.n
			if math.Abs(dn) > reach {
				continue
			}
			ds := pts[m].s - p.s
			sw++
			sn += dn
			ss += ds
			snn += dn * dn
			sns += dn * ds
		}
		slope := 0.0
		if den := sw*snn - sn*sn; sw >= 3 && den > 0 {
			slope = (sw*sns - sn*ss) / den
		}
		poly := make([]float32, len(s.members))
		for k, m := range s.members {
			poly[k] = float32(pts[m].s)
		}
		out = append(out, Crest{
			Tip: Tip{Frame: frame, Time: t, X: x, Y: y, S: p.s, N: p.n,
				Elevation: p.a, Width: p.width, Wavelength: p.wavelength, Length: length, SlopeSN: slope},
			Points: s.count, NMin: s.nmin, NMax: s.nmax,
			Path: p.s, poly: poly, polyN0: pts[s.members[0]].n, polyStep: d.step,
		})
	}
	sort.Slice(out, func(i, j int) bool {
		if out[i].S != out[j].S {
			return out[i].S < out[j].S
		}
		return out[i].N < out[j].N
	})
	return out
}

// nearest returns the index in pts[lo:hi] (sorted by s) closest to s, or -1.
func nearest(pts []crestPoint, lo, hi int, s float64) int {
	if lo >= hi {
		return -1
	}
	k := sort.Search(hi-lo, func(i int) bool { return pts[lo+i].s >= s }) + lo
	best := -1
	for _, j := range []int{k - 1, k} {
		if j >= lo && j < hi && (best < 0 || math.Abs(pts[j].s-s) < math.Abs(pts[best].s-s)) {
			best = j
		}
	}
	return best
}

// ToSN converts a grid position to coordinates along and across θ0.
func (g Geometry) ToSN(x, y float64) (s, n float64) {
	c, si := math.Cos(g.Theta), math.Sin(g.Theta)
	return x*c + y*si, -x*si + y*c
}

// knownMin is the smaller of two widths where both are known, the known
// one where one is (crests at the grid's edge have none), else 0.
func knownMin(a, b float64) float64 {
	switch {
	case math.IsNaN(a) && math.IsNaN(b):
		return 0
	case math.IsNaN(a):
		return b
	case math.IsNaN(b):
		return a
	}
	return math.Min(a, b)
}

// maxBridge is the longest run of unknown samples along a sampling line
// that Detect bridges by linear interpolation: isolated unknown cells, as
// a stereo reconstruction leaves them scattered over its maps, then do not
// cut a crest's stretch of positive elevation in two; longer holes do.
const maxBridge = 2

// knownCorners is the bilinear sample from the known corners alone, their
// weights renormalised, when they carry at least half the weight; NaN
// otherwise.
func knownCorners(v, w [4]float64) float64 {
	var sum, ws float64
	for k := range v {
		if v[k] == v[k] {
			sum += w[k] * v[k]
			ws += w[k]
		}
	}
	if ws < 0.5 {
		return math.NaN()
	}
	return sum / ws
}

// bridgeGaps fills runs of at most n unknown samples between known ones by
// linear interpolation, in place.
func bridgeGaps(v []float64, n int) {
	last := -1 // last known sample
	for i := 0; i < len(v); i++ {
		if v[i] != v[i] {
			continue
		}
		if gap := i - last - 1; last >= 0 && gap > 0 && gap <= n {
			for j := last + 1; j < i; j++ {
				f := float64(j-last) / float64(i-last)
				v[j] = (1-f)*v[last] + f*v[i]
			}
		}
		last = i
	}
}
