package tracking

import (
	"math"
	"sort"
)

// LinkOptions are the settings of crest linking.
type LinkOptions struct {
	// MaxGapFrames is how many consecutive frames a track may miss and
	// still continue.
	MaxGapFrames int
	// GateS and GateN bound the distance, along and across θ0, between a
	// track's predicted tip and a detection it may take, metres.
	GateS, GateN float64
	// Speed predicts how fast a crest moves along θ0 (m/s). The caller
	// chooses the reference (typically the local linear phase speed).
	Speed func(c Crest) float64
	// Step, when set, judges each frame-to-frame step of a track before it
	// is taken: prev the track's last crest, next the detection assigned
	// to it, advance the crest line's measured advance along θ0 (metres).
	// A non-empty reason refuses the step: the track ends there (it is
	// split) and the detection starts a new track, so that a change of
	// crest segment never enters a crest's path.
	Step func(prev, next Crest, advance float64) (reason string)
	// OnEnd, when set, receives every track as it ends (lost, split or
	// at the end of the record), in the order tracks end; the linker then
	// keeps no ended track and Finish returns none, so that what it holds
	// does not grow with the record. The track is the caller's to keep.
	OnEnd func(Track)
}

// End reasons of tracks that are not refused steps.
const (
	// EndLost: no detection within the gates for more than MaxGapFrames.
	EndLost = "lost (no detection within the gates)"
	// EndRecord: the record ended.
	EndRecord = "end of record"
)

// Track is a crest followed through time: one Crest per frame in which it
// was found, in frame order.
type Track struct {
	ID     int
	Crests []Crest
}

// LinkStats counts what the linker did.
type LinkStats struct {
	Births      int // tracks started
	Deaths      int // tracks ended (lost for more than MaxGapFrames, split by a refused step, or at the end of the record)
	Gated       int // detections that had no track within the gates
	GapsBridged int // times a track continued after missing at least one frame
	// Ended counts the tracks ended, by reason: EndLost, EndRecord, or
	// the reason LinkOptions.Step gave for refusing a step (a split).
	Ended map[string]int
	// Steps counts the frame-to-frame steps taken; Residuals holds each
	// one's measured advance minus its predicted advance (Speed × Δt),
	// metres, in the order taken.
	Steps     int
	Residuals []float64
}

// Linker assigns each frame's crests to tracks. Push frames in time order;
// the result depends only on the detections, not on timing or workers.
type Linker struct {
	opt      LinkOptions
	active   []*Track
	done     []Track
	nextID   int
	stats    LinkStats
	lastSeen map[*Track]int // frame of the last detection
	cost     []float64
}

// NewLinker returns a linker with the given options.
func NewLinker(opt LinkOptions) *Linker {
	return &Linker{opt: opt, lastSeen: map[*Track]int{}, nextID: 1, stats: LinkStats{Ended: map[string]int{}}}
}

// Push links the crests of one frame. Frames missing from the record are
// simply not pushed; tracks older than MaxGapFrames are closed.
func (l *Linker) Push(frame int, t float64, crests []Crest) {
	// Close tracks whose gap is now too long.
	keep := l.active[:0]
	for _, tr := range l.active {
		if frame-l.lastSeen[tr]-1 > l.opt.MaxGapFrames {
			l.finish(tr, EndLost)
			continue
		}
		keep = append(keep, tr)
	}
	l.active = keep
	nt := len(l.active)
	assigned := l.assign(t, crests)
	split := map[*Track]string{}
	refused := map[int]bool{}
	for j, c := range crests {
		if i := assigned[j]; i >= 0 {
			tr := l.active[i]
			prev := &tr.Crests[len(tr.Crests)-1]
			// The advance is measured at the new tip's cross-position (see
			// AdvanceAtTip): the crest line's motion there, the definition
			// of c_cr along θ0. Lines farther along the crest move at their
			// own speeds and are not averaged in.
			adv := AdvanceAtTip(*prev, c)
			if l.opt.Step != nil {
				if why := l.opt.Step(*prev, c, adv); why != "" {
					split[tr] = why
					assigned[j] = -1
					refused[j] = true
					continue
				}
			}
			if frame-l.lastSeen[tr] > 1 {
				l.stats.GapsBridged++
			}
			l.stats.Steps++
			l.stats.Residuals = append(l.stats.Residuals, adv-l.opt.Speed(*prev)*(c.Time-prev.Time))
			c.Path = prev.Path + adv
			prev.poly = nil // only the latest crest of a track keeps its line
			tr.Crests = append(tr.Crests, c)
			l.lastSeen[tr] = frame
		}
	}
	if len(split) > 0 {
		keep := l.active[:0]
		for _, tr := range l.active {
			if why, ok := split[tr]; ok {
				l.finish(tr, why)
				continue
			}
			keep = append(keep, tr)
		}
		l.active = keep
	}
	for j, c := range crests {
		if assigned[j] >= 0 {
			continue
		}
		if nt > 0 && !refused[j] {
			l.stats.Gated++
		}
		tr := &Track{ID: l.nextID, Crests: []Crest{c}}
		l.nextID++
		l.stats.Births++
		l.active = append(l.active, tr)
		l.lastSeen[tr] = frame
	}
}

// assign matches the active tracks to the frame's crests by the Hungarian
// method inside the gates; it returns the track index of every crest, or
// -1 for a crest no track may take.
func (l *Linker) assign(t float64, crests []Crest) []int {
	nt, nc := len(l.active), len(crests)
	assigned := make([]int, nc) // track index per crest, or -1
	for i := range assigned {
		assigned[i] = -1
	}
	if nt > 0 && nc > 0 {
		n := max(nt, nc)
		if cap(l.cost) < n*n {
			l.cost = make([]float64, n*n)
		}
		cost := l.cost[:n*n]
		// Costs inside the gates are at most 8; an assignment outside them
		// costs more than any set of n gated ones, so the optimum first
		// maximises the number of gated matches, then minimises their cost,
		// without the loss of precision a huge constant would bring.
		forbidden := 16*float64(n) + 1000
		for i := range cost {
			cost[i] = forbidden
		}
		sigS, sigN := l.opt.GateS/2, l.opt.GateN/2
		for i, tr := range l.active {
			last := tr.Crests[len(tr.Crests)-1]
			adv := l.opt.Speed(last) * (t - last.Time)
			for j, c := range crests {
				// along θ0: the detection's tip against the track's crest
				// line at the same cross-position, advanced by the speed;
				// across: the gap between the two segments' extents (the
				// tip of a long crest may move along it from frame to frame).
				ds := c.S - (last.SOnLine(c.N) + adv)
				dn := math.Max(0, math.Max(c.NMin-last.NMax, last.NMin-c.NMax))
				if math.Abs(ds) > l.opt.GateS || dn > l.opt.GateN {
					continue
				}
				cost[i*n+j] = (ds/sigS)*(ds/sigS) + (dn/sigN)*(dn/sigN)
			}
		}
		rowToCol := hungarian(cost, n)
		for i := 0; i < nt; i++ {
			j := rowToCol[i]
			if j < nc && cost[i*n+j] < forbidden {
				assigned[j] = i
			}
		}
	}
	return assigned
}

func (l *Linker) finish(tr *Track, why string) {
	tr.Crests[len(tr.Crests)-1].poly = nil
	l.stats.Deaths++
	l.stats.Ended[why]++
	delete(l.lastSeen, tr)
	if l.opt.OnEnd != nil {
		l.opt.OnEnd(*tr)
		return
	}
	l.done = append(l.done, *tr)
}

// Finish closes all tracks and returns every track in order of ID (none
// when LinkOptions.OnEnd is set: the tracks still active are handed to it,
// in order of ID).
func (l *Linker) Finish() ([]Track, LinkStats) {
	for _, tr := range l.active {
		l.finish(tr, EndRecord)
	}
	l.active = nil
	out := l.done
	// tracks were closed in varying order; sort by ID (births are ordered)
	sortTracks(out)
	return out, l.stats
}

func sortTracks(ts []Track) {
	sort.Slice(ts, func(i, j int) bool { return ts[i].ID < ts[j].ID })
}

// hungarian solves the square assignment problem of the n×n cost matrix
// (row-major) by the Hungarian method in its O(n³) shortest augmenting path
// form (Kuhn 1955; Munkres 1957; potentials as in Jonker & Volgenant 1987).
// It returns, for every row, the column assigned to it.
func hungarian(cost []float64, n int) []int {
	const inf = math.MaxFloat64
	u := make([]float64, n+1)
	v := make([]float64, n+1)
	p := make([]int, n+1) // p[j]: row matched to column j (1-based), 0 = none
	way := make([]int, n+1)
	minv := make([]float64, n+1)
	used := make([]bool, n+1)
	for i := 1; i <= n; i++ {
		p[0] = i
		j0 := 0
		for j := range minv {
			minv[j] = inf
			used[j] = false
		}
		for {
			used[j0] = true
			i0 := p[j0]
			delta := inf
			j1 := 0
			for j := 1; j <= n; j++ {
				if used[j] {
					continue
				}
				cur := cost[(i0-1)*n+(j-1)] - u[i0] - v[j]
				if cur < minv[j] {
					minv[j] = cur
					way[j] = j0
				}
				if minv[j] < delta {
					delta = minv[j]
					j1 = j
				}
			}
			for j := 0; j <= n; j++ {
				if used[j] {
					u[p[j]] += delta
					v[j] -= delta
				} else {
					minv[j] -= delta
				}
			}
			j0 = j1
			if p[j0] == 0 {
				break
			}
		}
		for {
			j1 := way[j0]
			p[j0] = p[j1]
			j0 = j1
			if j0 == 0 {
				break
			}
		}
	}
	rowToCol := make([]int, n)
	for j := 1; j <= n; j++ {
		if p[j] > 0 {
			rowToCol[p[j]-1] = j - 1
		}
	}
	return rowToCol
}
