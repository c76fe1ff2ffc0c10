package stats

import (
	"math"
	"math/rand/v2"
	"sort"
	"sync"
)

// DefaultResamples is the number of bootstrap resamples used when none is
// given: Efron & Tibshirani (1993, An Introduction to the Bootstrap,
// §19.3) advise about 1000 for percentile intervals.
const DefaultResamples = 1000

// BootstrapOptions configure the bootstrap intervals.
type BootstrapOptions struct {
	// Resamples is the number of bootstrap resamples B; ≤ 0 means
	// DefaultResamples.
	Resamples int `yaml:"bootstrap_resamples"`
	// Seed makes the resampling reproducible: the same data, seed and
	// number of resamples give the same intervals for any worker count.
	Seed uint64 `yaml:"bootstrap_seed"`
	// Workers run resamples in parallel; ≤ 0 means one.
	Workers int `yaml:"-"`
}

// Resample counts: maxBins caps the cells of a group's grid; fracOne is
// the unit in which the position of a value within its cell is held, so
// that binned weights are whole multiples of 1/fracOne and their sums do
// not depend on the order they are added in.
const (
	maxBins = 1 << 16
	fracOne = 1 << 16
)

// The three statistics a resample estimates, in the order of their
// replicates.
const (
	statMean = iota
	statMedian
	statMode
	nStats
)

// grid is the cell grid of one group: cells of width delta from lo. The
// width is a quarter of the group's Silverman bandwidth (linear binning as
// in Wand 1994, J. Comput. Graph. Stat. 3, 433), capped at maxBins cells.
type grid struct {
	lo, delta float64
	nbins     int
}

func newGrid(sorted []float64) grid {
	if len(sorted) == 0 {
		return grid{delta: 1, nbins: 2}
	}
	lo, hi := sorted[0], sorted[len(sorted)-1]
	g := grid{lo: lo}
	switch h := SilvermanBandwidth(sorted); {
	case hi == lo:
		g.delta = 1
	case math.IsNaN(h):
		g.delta = (hi - lo) / 1000
	default:
		g.delta = h / 4
	}
	g.nbins = int((hi-lo)/g.delta) + 2
	if g.nbins > maxBins {
		g.nbins = maxBins
		g.delta = (hi - lo) / float64(maxBins-2)
	}
	return g
}

// cell returns the cell of v and its position within it in units of
// 1/fracOne.
func (g grid) cell(v float64) (int, uint64) {
	u := (v - g.lo) / g.delta
	b := min(max(int(u), 0), g.nbins-2)
	f := min(max((u-float64(b))*fracOne, 0), fracOne-1)
	return b, uint64(f)
}

// group is one output group of a bootSample: its values sorted, the unit
// of each, where each cell's values start, the occupied cells.
type group struct {
	grid
	sorted       []float64
	unit         []int32
	binStart     []int32
	binLo, binHi int
	units        int
	centre       float64
}

// bootSample is a Sample prepared for resampling. Output groups 0..K−1
// are the classes, group K all values. A resample is the number of times
// each unit is drawn, so no resampled data are built: the mean and
// standard deviation come from per-unit sums, order statistics from
// weighted counts per cell followed by an exact weighted scan inside one
// cell, and the mode from the linearly binned kernel density estimate,
// with the bandwidth re-estimated on the resample by Silverman's rule.
// The point estimate of the mode is the same computation with every unit
// drawn once.
type bootSample struct {
	nUnits int
	groups []group
	// entries of unit u are unitStart[u]..unitStart[u+1]; an entry is
	// group<<56 | cell<<16 | position in the cell.
	unitStart []int32
	entry     []uint64
	// usum[(u·G + g)·3 + 0,1,2]: count, sum and sum of squares of
	// value − centre of unit u in group g.
	usum []float64
}

func newBootSample(s Sample) *bootSample {
	K := len(s.Bounds)
	bs := &bootSample{nUnits: s.Units, groups: make([]group, K+1)}
	members := make([][]int32, K+1)
	for i, v := range s.Values {
		if math.IsNaN(v) || math.IsInf(v, 0) {
			continue
		}
		if c := int(s.Class[i]); c >= 0 && c < K {
			members[c] = append(members[c], int32(i))
		}
		members[K] = append(members[K], int32(i))
	}
	for g, ix := range members {
		bs.groups[g] = newGroup(s, ix)
	}
	bs.fillEntries(s, members)
	return bs
}

// newGroup sorts the members of a group and lays out its grid.
func newGroup(s Sample, ix []int32) group {
	sort.Slice(ix, func(a, b int) bool { return s.Values[ix[a]] < s.Values[ix[b]] })
	g := group{sorted: make([]float64, len(ix)), unit: make([]int32, len(ix))}
	seen := map[int32]bool{}
	var sum float64
	for k, i := range ix {
		g.sorted[k], g.unit[k] = s.Values[i], s.Unit[i]
		seen[s.Unit[i]] = true
		sum += s.Values[i]
	}
	g.units = len(seen)
	if len(ix) > 0 {
		g.centre = sum / float64(len(ix))
	}
	g.grid = newGrid(g.sorted)
	g.binStart = make([]int32, g.nbins+1)
	k := 0
	for b := 0; b <= g.nbins; b++ {
		for k < len(g.sorted) {
			if c, _ := g.cell(g.sorted[k]); c >= b {
				break
			}
			k++
		}
		g.binStart[b] = int32(k)
	}
	if n := len(g.sorted); n > 0 {
		b0, _ := g.cell(g.sorted[0])
		b1, _ := g.cell(g.sorted[n-1])
		g.binLo, g.binHi = b0, b1+1
	}
	return g
}

// fillEntries lays out the entries of every group's members in unit
// order and the per-unit sums.
func (bs *bootSample) fillEntries(s Sample, members [][]int32) {
	G := len(bs.groups)
	bs.unitStart = make([]int32, bs.nUnits+1)
	for _, ix := range members {
		for _, i := range ix {
			bs.unitStart[s.Unit[i]+1]++
		}
	}
	for u := 0; u < bs.nUnits; u++ {
		bs.unitStart[u+1] += bs.unitStart[u]
	}
	fill := append([]int32(nil), bs.unitStart[:bs.nUnits]...)
	bs.entry = make([]uint64, bs.unitStart[bs.nUnits])
	bs.usum = make([]float64, bs.nUnits*G*3)
	for g, ix := range members {
		gr := &bs.groups[g]
		for _, i := range ix {
			u := s.Unit[i]
			c, f := gr.cell(s.Values[i])
			bs.entry[fill[u]] = uint64(g)<<56 | uint64(c)<<16 | f
			fill[u]++
			d := s.Values[i] - gr.centre
			k := (int(u)*G + g) * 3
			bs.usum[k]++
			bs.usum[k+1] += d
			bs.usum[k+2] += d * d
		}
	}
}

// scratch is one worker's state.
type scratch struct {
	w []int32
	// cells[g][2b] is the weighted count of group g in cell b,
	// cells[g][2b+1] its linearly binned weight (in units of 1/fracOne).
	cells [][]float64
	sums  [][3]float64
	cum   []float64
	kern  []float64
	dens  []float64
	mass  []float64
}

func (bs *bootSample) newScratch() *scratch {
	sc := &scratch{w: make([]int32, bs.nUnits), cells: make([][]float64, len(bs.groups)), sums: make([][3]float64, len(bs.groups))}
	for g := range bs.groups {
		sc.cells[g] = make([]float64, 2*bs.groups[g].nbins+2)
	}
	return sc
}

// resample draws the unit multiplicities and bins the drawn values.
func (bs *bootSample) resample(sc *scratch, rng *rand.Rand) {
	clear(sc.w)
	for range bs.nUnits {
		sc.w[rng.IntN(bs.nUnits)]++
	}
	bs.accumulate(sc)
}

// identity takes every unit once: the sample itself.
func (bs *bootSample) identity(sc *scratch) {
	for u := range sc.w {
		sc.w[u] = 1
	}
	bs.accumulate(sc)
}

// accumulate bins the values of the units drawn (multiplicities sc.w)
// and sums their moments per group. The binned weights are whole numbers
// of 1/fracOne, so their sums are exact.
func (bs *bootSample) accumulate(sc *scratch) {
	G := len(bs.groups)
	for g := range sc.cells {
		clear(sc.cells[g])
	}
	clear(sc.sums)
	for u := 0; u < bs.nUnits; u++ {
		w := sc.w[u]
		if w == 0 {
			continue
		}
		fw := float64(w)
		us := bs.usum[u*G*3 : (u+1)*G*3]
		for g := range sc.sums {
			sc.sums[g][0] += fw * us[3*g]
			sc.sums[g][1] += fw * us[3*g+1]
			sc.sums[g][2] += fw * us[3*g+2]
		}
		for p := bs.unitStart[u]; p < bs.unitStart[u+1]; p++ {
			e := bs.entry[p]
			cells := sc.cells[e>>56]
			b := 2 * int(e>>16&0xffffffff)
			f := float64(e & 0xffff)
			cells[b] += fw
			cells[b+1] += fw * (fracOne - f)
			cells[b+3] += fw * f
		}
	}
}

// stats returns the mean, median and mode of group g in the current
// resample (NaN when the group is empty).
func (bs *bootSample) stats(sc *scratch, g int) [nStats]float64 {
	nan := math.NaN()
	n, s1, s2 := sc.sums[g][0], sc.sums[g][1], sc.sums[g][2]
	if n == 0 {
		return [nStats]float64{nan, nan, nan}
	}
	gr := &bs.groups[g]
	mean := gr.centre + s1/n
	cells := sc.cells[g]
	if cap(sc.cum) < gr.binHi-gr.binLo {
		sc.cum = make([]float64, gr.binHi-gr.binLo)
	}
	cum := sc.cum[:gr.binHi-gr.binLo]
	var acc float64
	for b := gr.binLo; b < gr.binHi; b++ {
		acc += cells[2*b]
		cum[b-gr.binLo] = acc
	}
	q := func(p float64) float64 { return gr.quantile(sc.w, cum, n, p) }
	median := q(0.5)
	if n < 2 {
		return [nStats]float64{mean, median, median}
	}
	sd := math.Sqrt(math.Max(s2-s1*s1/n, 0) / (n - 1))
	h := silverman(sd, q(0.75)-q(0.25), n)
	if math.IsNaN(h) {
		return [nStats]float64{mean, median, median}
	}
	return [nStats]float64{mean, median, gr.binnedMode(sc, cells, h)}
}

// quantile is the type-7 quantile of the resampled group: the weighted
// order statistics k and k+1 (0-based) of its N* resampled values. cum
// holds the cumulative weighted counts of the group's cells.
func (gr *group) quantile(w []int32, cum []float64, n, p float64) float64 {
	h := p * (n - 1)
	k := math.Floor(h)
	x0 := gr.orderStat(w, cum, k)
	if k+1 > n-1 {
		return x0
	}
	x1 := gr.orderStat(w, cum, k+1)
	return x0 + (h-k)*(x1-x0)
}

// orderStat returns the k-th smallest (0-based) resampled value: the cell
// holding it by bisection of the cumulative weighted counts, then a
// weighted scan of the sorted values in that cell.
func (gr *group) orderStat(w []int32, cum []float64, k float64) float64 {
	c := sort.Search(len(cum), func(i int) bool { return cum[i] > k })
	if c == len(cum) {
		return gr.sorted[len(gr.sorted)-1]
	}
	b := gr.binLo + c
	acc := 0.0
	if c > 0 {
		acc = cum[c-1]
	}
	for i := gr.binStart[b]; i < gr.binStart[b+1]; i++ {
		acc += float64(w[gr.unit[i]])
		if acc > k {
			return gr.sorted[i]
		}
	}
	return gr.sorted[gr.binStart[b+1]-1] // not reached: the cell's weights sum to its count
}

// binnedMode returns the location of the maximum of the linearly binned
// Gaussian kernel density estimate (bandwidth h, kernel cut at 4h) over
// the occupied cells, refined by a parabola through the highest cell and
// its neighbours. The weight within ±K cells of a cell bounds its density
// from above (the kernel is at most 1), so only cells whose bound beats
// the best density found need the full sum.
func (gr *group) binnedMode(sc *scratch, cells []float64, h float64) float64 {
	K := int(math.Ceil(4 * h / gr.delta))
	if cap(sc.kern) < K+1 {
		sc.kern = make([]float64, K+1)
	}
	kern := sc.kern[:K+1]
	for i := range kern {
		u := float64(i) * gr.delta / h
		kern[i] = math.Exp(-0.5 * u * u)
	}
	lo, hi := gr.binLo, min(gr.binHi+1, gr.nbins)
	if cap(sc.dens) < gr.nbins+1 {
		sc.dens = make([]float64, gr.nbins+1)
		sc.mass = make([]float64, gr.nbins+1)
	}
	dens, mass := sc.dens[:gr.nbins], sc.mass[:gr.nbins+1]
	lin := func(i int) float64 { return cells[2*i+1] }
	mass[lo] = 0
	for i := lo; i < hi; i++ {
		mass[i+1] = mass[i] + lin(i)
	}
	window := func(j int) float64 { return mass[min(j+K, hi-1)+1] - mass[max(j-K, lo)] }
	density := func(j int) float64 {
		var s float64
		for i := max(j-K, lo); i <= min(j+K, hi-1); i++ {
			if l := lin(i); l != 0 {
				s += l * kern[abs(i-j)]
			}
		}
		return s
	}
	heavy := lo
	for j := lo; j < hi; j++ {
		if window(j) > window(heavy) {
			heavy = j
		}
	}
	for j := lo; j < hi; j++ {
		dens[j] = -1 // not evaluated
	}
	best, bestD := heavy, density(heavy)
	dens[heavy] = bestD
	for j := lo; j < hi; j++ {
		if j == heavy || window(j) <= bestD {
			continue
		}
		if dens[j] = density(j); dens[j] > bestD {
			best, bestD = j, dens[j]
		}
	}
	for _, j := range []int{best - 1, best + 1} {
		if j >= lo && j < hi && dens[j] < 0 {
			dens[j] = density(j)
		}
	}
	x := gr.lo + float64(best)*gr.delta
	if best > lo && best < hi-1 {
		l, c, r := dens[best-1], dens[best], dens[best+1]
		if den := l - 2*c + r; den < 0 {
			x += 0.5 * (l - r) / den * gr.delta
		}
	}
	return x
}

func abs(i int) int {
	if i < 0 {
		return -i
	}
	return i
}

// modes returns the point estimate of the mode of every group: the
// estimator of the resamples applied to the sample itself.
func (bs *bootSample) modes() []float64 {
	sc := bs.newScratch()
	bs.identity(sc)
	out := make([]float64, len(bs.groups))
	for g := range out {
		out[g] = bs.stats(sc, g)[statMode]
	}
	return out
}

// replicates computes the B resampled statistics of every group,
// reps[g][stat][b], resample b drawn from its own generator seeded by
// (seed, b) so that the result does not depend on the number of workers.
func (bs *bootSample) replicates(opt BootstrapOptions) [][nStats][]float64 {
	B := opt.Resamples
	if B <= 0 {
		B = DefaultResamples
	}
	workers := max(opt.Workers, 1)
	reps := make([][nStats][]float64, len(bs.groups))
	for g := range reps {
		for s := range reps[g] {
			reps[g][s] = make([]float64, B)
		}
	}
	var wg sync.WaitGroup
	for w := 0; w < workers; w++ {
		wg.Add(1)
		go func(w int) {
			defer wg.Done()
			sc := bs.newScratch()
			for b := w; b < B; b += workers {
				bs.resample(sc, rand.New(rand.NewPCG(opt.Seed, uint64(b))))
				for g := range bs.groups {
					st := bs.stats(sc, g)
					for s := range st {
						reps[g][s][b] = st[s]
					}
				}
			}
		}(w)
	}
	wg.Wait()
	return reps
}

// centredInterval is the interval est ± hw at Level: ξ the Level
// quantile of |rep − est| over the finite replicates (unknown if fewer
// than half are finite), combined in quadrature with z·u·|est| for a
// common factor of relative standard uncertainty u (see the package
// documentation). It contains est by construction.
func centredInterval(rep []float64, est, u float64) Interval {
	if math.IsNaN(est) || math.IsInf(est, 0) {
		return NoInterval()
	}
	dev := make([]float64, 0, len(rep))
	for _, x := range rep {
		if !math.IsNaN(x) && !math.IsInf(x, 0) {
			dev = append(dev, math.Abs(x-est))
		}
	}
	if len(dev) < max(2, len(rep)/2) {
		return NoInterval()
	}
	sort.Float64s(dev)
	hw := Quantile(dev, Level)
	if u > 0 && !math.IsInf(u, 0) {
		z := math.Sqrt2 * math.Erfinv(Level)
		hw = math.Hypot(hw, z*u*math.Abs(est))
	}
	return Interval{est - hw, est + hw}
}
