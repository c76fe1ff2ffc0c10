package tracking

// Whitecaps.
//
// A whitecap patch is a connected region of foam cells of one frame, cells
// being connected through their edges and corners (8-connectivity; Rosenfeld
// & Pfaltz 1966, J. ACM 13, "Sequential operations in digital picture
// processing"). Only foam on cells of known elevation counts, so the foam
// statistics share their denominator, the known sea surface, with the rest
// of the analysis.
//
// The active breaking front of a patch is its leading edge along θ0
// (docs/methods.md, Breaking). It is sampled on the same lattice of lines parallel to θ0
// as crests are: on each line that crosses the patch, the patch's
// membership (1 on its cells, 0 elsewhere) is interpolated bilinearly along
// the line, and the front on that line is the most advanced point where it
// falls through 1/2 — on a line through cell centres, exactly the midpoint
// between the last foam cell and the first water cell ahead of it. Where the
// cell ahead is off the grid or of unknown elevation the front on that line
// is not observed (censored): the foam may well go on beyond. The front's
// length is the number of lines with an observed front times the line
// spacing, its extent across θ0.
//
// The front is described as a Crest (NewFront) so that the crest Linker,
// with its gates, its globally optimal assignment and its path of
// line-by-line advances, links whitecaps over time exactly as it links
// crests; WhitecapLinker keeps the patch that goes with each front.

import (
	"fmt"
	"math"
)

// WhitecapOptions are the settings of whitecap patch extraction.
type WhitecapOptions struct {
	// MinArea is the smallest patch kept, m²; 0 means the area of four
	// grid cells. Smaller patches still count as foam coverage.
	MinArea float64
	// Step is the spacing of the lines parallel to θ0 on which the leading
	// edge is sampled, and of the samples along them; 0 means the smaller
	// grid spacing (as for crests).
	Step float64
}

// Patch is one whitecap patch in one frame.
type Patch struct {
	Frame int
	Time  float64 // seconds
	Cells int     // foam cells of known elevation in the patch
	Area  float64 // m²
	X, Y  float64 // centroid of the cells, metres
	// Extent of the cell centres along and across θ0, metres.
	SMin, SMax, NMin, NMax float64
	// Edge is true when a cell of the patch lies on the grid border or
	// next to a cell of unknown elevation: the patch may continue there.
	Edge bool
	// Front is the leading edge as a Crest: S and N the front on the line
	// in the middle of its longest unbroken run of observed lines, its
	// line-by-line positions kept for Advance, Length and NMin/NMax the
	// extent of that run, Width equal to Length (so that Advance measures
	// over the whole run), Elevation and Wavelength NaN. Front.Points is 0
	// when no line crossing the patch shows its leading edge.
	Front Crest
	// FrontLength is the extent of the front across θ0: the lines with an
	// observed front times the line spacing, metres.
	FrontLength float64
	// FrontLines and CensoredLines count the lines with an observed front
	// and those where the front ran into the grid border or unknown cells.
	FrontLines, CensoredLines int
	// Parent is the crest the whitecap rides on in this frame (see
	// TieToCrest); nil if none was within the gate.
	Parent *Crest
}

// PatchFinder extracts whitecap patches from the foam masks of one grid.
// Find is safe for concurrent use with a separate PatchScratch per
// goroutine.
type PatchFinder struct {
	g          Geometry
	step       float64
	minArea    float64
	cosT, sinT float64
	reachN     float64 // half-width across θ0 of a cell's bilinear footprint
	reachS     float64 // the same along θ0
}

// NewPatchFinder prepares whitecap extraction on grid g.
func NewPatchFinder(g Geometry, opt WhitecapOptions) (*PatchFinder, error) {
	switch {
	case g.Nx < 2 || g.Ny < 2:
		return nil, fmt.Errorf("tracking: a grid of %d×%d cells is too small for whitecap patches; it needs at least 2×2", g.Nx, g.Ny)
	case !(g.Dx > 0) || !(g.Dy > 0) || math.IsInf(g.Dx, 0) || math.IsInf(g.Dy, 0):
		return nil, fmt.Errorf("tracking: grid spacing dx = %g m, dy = %g m is invalid; give positive spacings", g.Dx, g.Dy)
	case math.IsNaN(g.Theta) || math.IsInf(g.Theta, 0):
		return nil, fmt.Errorf("tracking: direction θ0 = %g rad is not finite", g.Theta)
	case !(opt.MinArea >= 0) || math.IsInf(opt.MinArea, 0):
		return nil, fmt.Errorf("tracking: minimum whitecap area %g m² is invalid; give 0 (four cells) or a positive area", opt.MinArea)
	case !(opt.Step >= 0) || math.IsInf(opt.Step, 0):
		return nil, fmt.Errorf("tracking: whitecap sampling step %g m is invalid; give 0 (the grid spacing) or a positive step", opt.Step)
	}
	step := opt.Step
	if step == 0 {
		step = math.Min(g.Dx, g.Dy)
	}
	minArea := opt.MinArea
	if minArea == 0 {
		minArea = 4 * g.Dx * g.Dy
	}
	c, s := math.Cos(g.Theta), math.Sin(g.Theta)
	return &PatchFinder{
		g: g, step: step, minArea: minArea, cosT: c, sinT: s,
		reachN: g.Dx*math.Abs(s) + g.Dy*math.Abs(c),
		reachS: g.Dx*math.Abs(c) + g.Dy*math.Abs(s),
	}, nil
}

// Step returns the spacing of the front sampling lines, metres.
func (f *PatchFinder) Step() float64 { return f.step }

// MinArea returns the smallest patch area kept, m².
func (f *PatchFinder) MinArea() float64 { return f.minArea }

// PatchScratch holds the per-goroutine buffers of a PatchFinder.
type PatchScratch struct {
	label  []int32 // patch label per cell, 0 = none
	order  []int32 // cells grouped by patch (breadth-first order)
	starts []int   // start of each patch in order
	front  []float64
}

// NewScratch allocates buffers for f.
func (f *PatchFinder) NewScratch() *PatchScratch {
	return &PatchScratch{label: make([]int32, f.g.Nx*f.g.Ny)}
}

// CountFoam returns the number of foam cells of known elevation and the
// number of cells of known elevation (valid nil: every cell known).
func CountFoam(foam []uint8, valid []bool) (foamCells, validCells int) {
	for i, v := range foam {
		if valid != nil && !valid[i] {
			continue
		}
		validCells++
		if v != 0 {
			foamCells++
		}
	}
	return
}

// Find extracts the whitecap patches of one frame. foam and valid are
// row-major (index iy*Nx+ix); foam is non-zero on whitecap cells, valid
// false where the elevation is unknown (nil: all known). Patches smaller
// than the minimum area are dropped and counted in small. Patches are
// returned in order of their first cell in the grid, so the output does not
// depend on scheduling.
func (f *PatchFinder) Find(foam []uint8, valid []bool, frame int, t float64, sc *PatchScratch) (patches []Patch, small int, err error) {
	g := f.g
	nx, ny := g.Nx, g.Ny
	n := nx * ny
	if len(foam) != n || (valid != nil && len(valid) != n) {
		return nil, 0, fmt.Errorf("tracking: foam mask of %d cells and validity of %d cells do not fit the %d×%d grid", len(foam), len(valid), nx, ny)
	}
	if len(sc.label) != n {
		sc.label = make([]int32, n)
	}
	label := sc.label
	clear(label)
	isFoam := func(i int) bool { return foam[i] != 0 && (valid == nil || valid[i]) }
	order := sc.order[:0]
	starts := sc.starts[:0]
	var next int32
	for i := 0; i < n; i++ {
		if label[i] != 0 || !isFoam(i) {
			continue
		}
		next++
		starts = append(starts, len(order))
		label[i] = next
		order = append(order, int32(i))
		// breadth-first flood fill, using order itself as the queue
		for q := starts[len(starts)-1]; q < len(order); q++ {
			c := int(order[q])
			cx, cy := c%nx, c/nx
			for dy := -1; dy <= 1; dy++ {
				y := cy + dy
				if y < 0 || y >= ny {
					continue
				}
				for dx := -1; dx <= 1; dx++ {
					x := cx + dx
					if x < 0 || x >= nx || (dx == 0 && dy == 0) {
						continue
					}
					j := y*nx + x
					if label[j] == 0 && isFoam(j) {
						label[j] = next
						order = append(order, int32(j))
					}
				}
			}
		}
	}
	starts = append(starts, len(order))
	sc.order, sc.starts = order, starts

	cellArea := g.Dx * g.Dy
	for p := 0; p+1 < len(starts); p++ {
		cells := order[starts[p]:starts[p+1]]
		if float64(len(cells))*cellArea < f.minArea*(1-1e-12) {
			small++
			continue
		}
		pt := Patch{Frame: frame, Time: t, Cells: len(cells), Area: float64(len(cells)) * cellArea}
		pt.SMin, pt.NMin = math.Inf(1), math.Inf(1)
		pt.SMax, pt.NMax = math.Inf(-1), math.Inf(-1)
		var sx, sy float64
		for _, c32 := range cells {
			c := int(c32)
			cx, cy := c%nx, c/nx
			x := g.X0 + float64(cx)*g.Dx
			y := g.Y0 + float64(cy)*g.Dy
			sx += x
			sy += y
			s, nn := x*f.cosT+y*f.sinT, -x*f.sinT+y*f.cosT
			pt.SMin, pt.SMax = math.Min(pt.SMin, s), math.Max(pt.SMax, s)
			pt.NMin, pt.NMax = math.Min(pt.NMin, nn), math.Max(pt.NMax, nn)
			if !pt.Edge {
				pt.Edge = cx == 0 || cy == 0 || cx == nx-1 || cy == ny-1 || (valid != nil && touchesUnknown(valid, cx, cy, nx, ny))
			}
		}
		pt.X, pt.Y = sx/float64(len(cells)), sy/float64(len(cells))
		f.front(&pt, label, p+1, valid, sc)
		patches = append(patches, pt)
	}
	return patches, small, nil
}

func touchesUnknown(valid []bool, cx, cy, nx, ny int) bool {
	for dy := -1; dy <= 1; dy++ {
		for dx := -1; dx <= 1; dx++ {
			x, y := cx+dx, cy+dy
			if x >= 0 && y >= 0 && x < nx && y < ny && !valid[y*nx+x] {
				return true
			}
		}
	}
	return false
}

// member returns the bilinear interpolation of the membership of patch lab
// at (s, n), and whether it is known: inside the grid with every cell that
// carries weight of known elevation.
func (f *PatchFinder) member(s, n float64, label []int32, lab int32, valid []bool) (v float64, known bool) {
	g := f.g
	x, y := s*f.cosT-n*f.sinT, s*f.sinT+n*f.cosT
	fx := (x - g.X0) / g.Dx
	fy := (y - g.Y0) / g.Dy
	const tol = 1e-9
	if fx < -tol || fy < -tol || fx > float64(g.Nx-1)+tol || fy > float64(g.Ny-1)+tol {
		return 0, false
	}
	fx = math.Min(math.Max(fx, 0), float64(g.Nx-1))
	fy = math.Min(math.Max(fy, 0), float64(g.Ny-1))
	ix := min(int(fx), g.Nx-2)
	iy := min(int(fy), g.Ny-2)
	wx, wy := fx-float64(ix), fy-float64(iy)
	i := iy*g.Nx + ix
	idx := [4]int{i, i + 1, i + g.Nx, i + g.Nx + 1}
	w := [4]float64{(1 - wx) * (1 - wy), wx * (1 - wy), (1 - wx) * wy, wx * wy}
	known = true
	for k, j := range idx {
		if w[k] <= tol {
			continue
		}
		if valid != nil && !valid[j] {
			known = false
		}
		if label[j] == lab {
			v += w[k]
		}
	}
	return v, known
}

// front samples the leading edge of patch lab (see the package notes).
func (f *PatchFinder) front(pt *Patch, label []int32, lab int, valid []bool, sc *PatchScratch) {
	step := f.step
	jn0 := math.Ceil((pt.NMin - f.reachN) / step)
	jn1 := math.Floor((pt.NMax + f.reachN) / step)
	js0 := math.Floor((pt.SMin-f.reachS)/step) - 1
	js1 := math.Ceil((pt.SMax+f.reachS)/step) + 1
	fr := sc.front[:0]
	for jn := jn0; jn <= jn1; jn++ {
		n := jn * step
		pos := math.NaN()
		aheadV, aheadKnown := 0.0, false
		for js := js1; js >= js0; js-- {
			s := js * step
			v, known := f.member(s, n, label, int32(lab), valid)
			if v > 0.5 {
				if known && aheadKnown {
					pos = s + step*(v-0.5)/(v-aheadV)
					pt.FrontLines++
				} else {
					pt.CensoredLines++
				}
				break
			}
			aheadV, aheadKnown = v, known
		}
		fr = append(fr, pos)
	}
	sc.front = fr
	pt.FrontLength = float64(pt.FrontLines) * step
	if c, ok := NewFront(pt.Frame, pt.Time, f.g.Theta, jn0*step, step, fr); ok {
		pt.Front = c
	}
}

// NewFront describes a front as a Crest for the Linker: front[i] is the
// front's position along θ0 (direction theta, radians) on the line at
// cross-position n0 + i·step, NaN where it is not observed. The Crest is
// built on the longest unbroken run of observed lines (the first such run
// on ties): its tip is the run's middle line, its line-by-line positions
// are kept for Advance and SOnLine, SlopeSN is the least-squares ds/dn over
// the run, Length and Width are the run's extent across θ0 and Path starts
// at the tip. ok is false when no line is observed.
func NewFront(frame int, t float64, theta, n0, step float64, front []float64) (c Crest, ok bool) {
	best0, bestLen := -1, 0
	for i := 0; i < len(front); {
		if math.IsNaN(front[i]) {
			i++
			continue
		}
		j := i
		for j < len(front) && !math.IsNaN(front[j]) {
			j++
		}
		if j-i > bestLen {
			best0, bestLen = i, j-i
		}
		i = j
	}
	if bestLen == 0 {
		return Crest{}, false
	}
	run := front[best0 : best0+bestLen]
	poly := make([]float32, bestLen)
	var sw, sn, ss, snn, sns float64
	for k, v := range run {
		poly[k] = float32(v)
		dn := float64(k) * step
		sw++
		sn += dn
		ss += v
		snn += dn * dn
		sns += dn * v
	}
	slope := 0.0
	if den := sw*snn - sn*sn; bestLen >= 3 && den > 0 {
		slope = (sw*sns - sn*ss) / den
	}
	tip := (bestLen - 1) / 2
	s := run[tip]
	nTip := n0 + float64(best0+tip)*step
	cs, sn2 := math.Cos(theta), math.Sin(theta)
	length := float64(bestLen) * step
	return Crest{
		Tip: Tip{Frame: frame, Time: t,
			X: s*cs - nTip*sn2, Y: s*sn2 + nTip*cs, S: s, N: nTip,
			Elevation: math.NaN(), Width: length, Wavelength: math.NaN(),
			Length: length, SlopeSN: slope},
		Points: bestLen,
		NMin:   n0 + float64(best0)*step, NMax: n0 + float64(best0+bestLen-1)*step,
		Path: s,
		poly: poly, polyN0: n0 + float64(best0)*step, polyStep: step,
	}, true
}

// ParentGate bounds the search for the crest a whitecap rides on.
type ParentGate struct {
	// AlongFraction: the front may lie at most this fraction of the
	// crest's zero-crossing width w_c from the crest line along θ0; 0 means
	// one half (the front is then between the crest's up- and down-crossing
	// for a symmetric crest).
	AlongFraction float64
	// Across is how far apart, across θ0, the front's extent and the crest
	// segment's extent may be, metres; 0 means they must overlap.
	Across float64
}

// RidingCrest returns the index in crests (the crest detections of the
// front's frame) of the crest the front rides on, or -1: among the crests
// within the gate, the one whose crest line, at the front's cross-position,
// is nearest to the front along θ0 (plus the across-θ0 gap between their
// extents). Measuring to the crest line rather than to the crest's highest
// point keeps a front on a long crest tied to it wherever along the crest
// it breaks.
func RidingCrest(front Crest, crests []Crest, gate ParentGate) int {
	frac := gate.AlongFraction
	if frac <= 0 {
		frac = 0.5
	}
	best, bestD := -1, math.Inf(1)
	for i, c := range crests {
		if !(c.Width > 0) {
			continue
		}
		ds := math.Abs(front.S - c.SOnLine(front.N))
		dn := math.Max(0, math.Max(front.NMin-c.NMax, c.NMin-front.NMax))
		if ds > frac*c.Width || dn > gate.Across {
			continue
		}
		if d := ds + dn; d < bestD {
			best, bestD = i, d
		}
	}
	return best
}

// TieToCrest sets p.Parent to the crest p's front rides on (RidingCrest)
// and reports whether one was found. The parent keeps no crest-line
// samples.
func (p *Patch) TieToCrest(crests []Crest, gate ParentGate) bool {
	p.Parent = nil
	if p.Front.Points == 0 {
		return false
	}
	i := RidingCrest(p.Front, crests, gate)
	if i < 0 {
		return false
	}
	c := crests[i]
	c.poly = nil
	p.Parent = &c
	return true
}

// WhitecapTrack is a whitecap followed through time: one Patch per frame in
// which it was found, in frame order, with Front.Path the distance its front
// has travelled along θ0 (plus its first position).
type WhitecapTrack struct {
	ID      int
	Patches []Patch
}

type frontKey struct {
	frame  int
	s, n   float64
	points int
}

// WhitecapLinker links the patches of successive frames into whitecap
// tracks with a Linker working on their fronts. Patches whose front is not
// observed cannot be placed along θ0 and are not linked; they are counted.
type WhitecapLinker struct {
	l       *Linker
	patches map[frontKey]Patch
	unseen  int
	dup     int
}

// NewWhitecapLinker returns a linker; opt.Speed predicts how fast a front
// moves along θ0.
func NewWhitecapLinker(opt LinkOptions) *WhitecapLinker {
	return &WhitecapLinker{l: NewLinker(opt), patches: map[frontKey]Patch{}}
}

// Push links the patches of one frame; frames are pushed in time order.
func (w *WhitecapLinker) Push(frame int, t float64, patches []Patch) {
	fronts := make([]Crest, 0, len(patches))
	for _, p := range patches {
		if p.Front.Points == 0 {
			w.unseen++
			continue
		}
		k := frontKey{frame, p.Front.S, p.Front.N, p.Front.Points}
		if _, ok := w.patches[k]; ok {
			w.dup++ // two fronts at the same place: keep the first
			continue
		}
		fronts = append(fronts, p.Front)
		p.Front.poly = nil // the linker keeps the line of the latest front
		w.patches[k] = p
	}
	w.l.Push(frame, t, fronts)
}

// Unlinked returns the number of patches not linked: those without an
// observed front, and duplicates of a front already pushed in the frame.
func (w *WhitecapLinker) Unlinked() (frontUnseen, duplicate int) { return w.unseen, w.dup }

// Finish closes all tracks and returns them in order of ID.
func (w *WhitecapLinker) Finish() ([]WhitecapTrack, LinkStats) {
	tracks, stats := w.l.Finish()
	out := make([]WhitecapTrack, len(tracks))
	for i, tr := range tracks {
		wt := WhitecapTrack{ID: tr.ID, Patches: make([]Patch, len(tr.Crests))}
		for j, c := range tr.Crests {
			p := w.patches[frontKey{c.Frame, c.S, c.N, c.Points}]
			c.poly = nil
			p.Front = c
			wt.Patches[j] = p
		}
		out[i] = wt
	}
	w.patches = map[frontKey]Patch{}
	return out, stats
}
