package report

import (
	"math"
	"math/rand/v2"
	"sort"
	"sync"
)

// DefaultResamples is the number of bootstrap resamples used when none is
// given: Efron & Tibshirani (1993, An Introduction to the Bootstrap, §19.3)
// advise about 1000 for percentile intervals.
const DefaultResamples = 1000

// BootstrapOptions configure BootstrapTracks.
type BootstrapOptions struct {
	// Resamples is the number of bootstrap resamples B; ≤ 0 means
	// DefaultResamples.
	Resamples int
	// Seed makes the resampling reproducible: the same data, seed and
	// number of resamples give the same intervals for any worker count.
	Seed uint64
	// Workers run resamples in parallel; ≤ 0 means one.
	Workers int
}

// StatIntervals are confidence intervals of the mean, median and mode.
type StatIntervals struct {
	Mean, Median, Mode Interval
}

func noIntervals() StatIntervals {
	return StatIntervals{NoInterval(), NoInterval(), NoInterval()}
}

// maxBootstrapBins caps the grid on which resampled densities are binned.
const maxBootstrapBins = 1 << 16

// slotShift places the slot of a row above its cell number in a code.
const slotShift = 17

// BootstrapTracks computes bootstrap percentile confidence intervals at
// level CILevel for the mean, the median (Hyndman & Fan type-7 quantile,
// as Quantile) and the mode of a Gaussian kernel density estimate with
// the Silverman bandwidth, for the values of each group and of all values
// together.
//
// Rows of one crest track are strongly correlated, so whole tracks are
// resampled, not rows: each resample draws as many tracks as there are,
// uniformly with replacement, and takes all their rows — the cluster (or
// block) bootstrap for dependent data (Efron & Tibshirani 1993, An
// Introduction to the Bootstrap, ch. 8 and 13 for the percentile
// interval; Davison & Hinkley 1997, Bootstrap Methods and their
// Application, §3.8). Groups (steepness classes) are domains of the
// resample: a group's statistic is computed on the resampled rows that
// fall in it, so the number of its rows varies from resample to
// resample, as it would between deployments.
//
// values[i] belongs to track track[i] (0 ≤ track < nTracks) and group
// group[i] (0 ≤ group < nGroups, or −1 for none: counted only in "all").
// Non-finite values are ignored. The result has nGroups+1 entries, the
// last for all values. A group with fewer than two tracks gets unknown
// intervals; resamples in which a group is empty are left out of its
// interval.
//
// A resample is represented by the number of times each track is drawn,
// so no resampled data are built: the mean and standard deviation come
// from per-track sums, order statistics from weighted counts on a fine
// grid followed by an exact weighted scan inside one grid cell, and the
// mode from a linearly binned kernel density estimate on the same grid
// (cell width a quarter of the smallest group bandwidth; linear binning
// as in Wand 1994, J. Comput. Graph. Stat. 3, 433), with the bandwidth
// re-estimated on each resample. Cost per resample: one pass over the
// rows of the drawn tracks plus a few grid sweeps.
func BootstrapTracks(values []float64, track []int32, group []int8, nTracks, nGroups int, opt BootstrapOptions) []StatIntervals {
	out := make([]StatIntervals, nGroups+1)
	for i := range out {
		out[i] = noIntervals()
	}
	bs := newBootSample(values, track, group, nTracks, nGroups)
	if bs == nil {
		return out
	}
	B := opt.Resamples
	if B <= 0 {
		B = DefaultResamples
	}
	workers := max(opt.Workers, 1)
	// reps[g][stat][b]
	reps := make([][3][]float64, nGroups+1)
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
				rng := rand.New(rand.NewPCG(opt.Seed, uint64(b)))
				bs.resample(sc, rng)
				for g := 0; g <= nGroups; g++ {
					m, med, mode := bs.stats(sc, g)
					reps[g][0][b], reps[g][1][b], reps[g][2][b] = m, med, mode
				}
			}
		}(w)
	}
	wg.Wait()
	alpha := (1 - CILevel) / 2
	for g := 0; g <= nGroups; g++ {
		if bs.groupTracks[g] < 2 {
			continue
		}
		var iv [3]Interval
		for s := range iv {
			iv[s] = percentileInterval(reps[g][s], alpha)
		}
		out[g] = StatIntervals{Mean: iv[0], Median: iv[1], Mode: iv[2]}
	}
	return out
}

// percentileInterval is the bootstrap percentile interval (Efron &
// Tibshirani 1993, §13.3): the alpha and 1−alpha quantiles of the
// replicates (NaN replicates left out; unknown if fewer than half remain).
func percentileInterval(rep []float64, alpha float64) Interval {
	v := make([]float64, 0, len(rep))
	for _, x := range rep {
		if !math.IsNaN(x) {
			v = append(v, x)
		}
	}
	if len(v) < max(2, len(rep)/2) {
		return NoInterval()
	}
	sort.Float64s(v)
	return Interval{Quantile(v, alpha), Quantile(v, 1-alpha)}
}

// bootSample is the prepared sample. Slots 0..nGroups−1 are the groups,
// slot nGroups the rows of no group; output group nGroups is all rows.
type bootSample struct {
	nTracks, nGroups int
	// rows in track order: rows of track t are trackStart[t]..trackStart[t+1]
	trackStart []int32
	// code is slot<<slotShift | cell; frac the position within the cell
	code []uint32
	frac []float32
	// per track and slot: row count, sum and sum of squares of
	// value−centre, at [(t·slots+s)·3 + 0,1,2]
	tsum   []float64
	centre float64
	// grid
	lo, delta float64
	nbins     int
	// per output group: sorted values, their tracks, start of each bin in
	// the sorted order (len nbins+1), occupied bin range
	sorted      [][]float64
	sortedTrack [][]int32
	binStart    [][]int32
	binLo       []int
	binHi       []int
	groupTracks []int
}

func newBootSample(values []float64, track []int32, group []int8, nTracks, nGroups int) *bootSample {
	bs := &bootSample{nTracks: nTracks, nGroups: nGroups}
	slots := nGroups + 1
	// keep finite values
	idx := make([]int32, 0, len(values))
	lo, hi := math.Inf(1), math.Inf(-1)
	var sum float64
	for i, v := range values {
		if math.IsNaN(v) || math.IsInf(v, 0) {
			continue
		}
		idx = append(idx, int32(i))
		lo, hi = math.Min(lo, v), math.Max(hi, v)
		sum += v
	}
	n := len(idx)
	if n == 0 || nTracks == 0 {
		return nil
	}
	bs.centre = sum / float64(n)
	slotOf := func(i int32) int {
		g := int(group[i])
		if g < 0 || g >= nGroups {
			return nGroups
		}
		return g
	}
	// per output group: sorted values with their tracks
	bs.sorted = make([][]float64, nGroups+1)
	bs.sortedTrack = make([][]int32, nGroups+1)
	bs.groupTracks = make([]int, nGroups+1)
	{
		per := make([][]int32, nGroups+1)
		for _, i := range idx {
			if s := slotOf(i); s < nGroups {
				per[s] = append(per[s], i)
			}
		}
		per[nGroups] = idx
		for g, ix := range per {
			ix = append([]int32(nil), ix...)
			sort.Slice(ix, func(a, b int) bool { return values[ix[a]] < values[ix[b]] })
			bs.sorted[g] = make([]float64, len(ix))
			bs.sortedTrack[g] = make([]int32, len(ix))
			seen := map[int32]bool{}
			for k, i := range ix {
				bs.sorted[g][k] = values[i]
				bs.sortedTrack[g][k] = track[i]
				seen[track[i]] = true
			}
			bs.groupTracks[g] = len(seen)
		}
	}
	// grid: a quarter of the smallest group bandwidth
	hmin := math.Inf(1)
	for g := range bs.sorted {
		if h := SilvermanBandwidth(bs.sorted[g]); !math.IsNaN(h) {
			hmin = math.Min(hmin, h)
		}
	}
	bs.lo = lo
	switch {
	case hi == lo:
		bs.delta = 1
	case math.IsInf(hmin, 1):
		bs.delta = (hi - lo) / 1000
	default:
		bs.delta = hmin / 4
	}
	bs.nbins = int((hi-lo)/bs.delta) + 2
	if bs.nbins > maxBootstrapBins {
		bs.nbins = maxBootstrapBins
		bs.delta = (hi - lo) / float64(maxBootstrapBins-2)
	}
	binOf := func(v float64) (int32, float32) {
		u := (v - bs.lo) / bs.delta
		b := int(u)
		if b > bs.nbins-2 {
			b = bs.nbins - 2
		}
		return int32(b), float32(u - float64(b))
	}
	bs.binStart = make([][]int32, nGroups+1)
	bs.binLo = make([]int, nGroups+1)
	bs.binHi = make([]int, nGroups+1)
	for g, sv := range bs.sorted {
		st := make([]int32, bs.nbins+1)
		// st[b] = first index with bin ≥ b
		k := 0
		for b := 0; b <= bs.nbins; b++ {
			for k < len(sv) {
				if bb, _ := binOf(sv[k]); int(bb) >= b {
					break
				}
				k++
			}
			st[b] = int32(k)
		}
		bs.binStart[g] = st
		if len(sv) > 0 {
			b0, _ := binOf(sv[0])
			b1, _ := binOf(sv[len(sv)-1])
			bs.binLo[g], bs.binHi[g] = int(b0), int(b1)+1
		}
	}
	// rows in track order (counting sort by track)
	bs.trackStart = make([]int32, nTracks+1)
	for _, i := range idx {
		bs.trackStart[track[i]+1]++
	}
	for t := 0; t < nTracks; t++ {
		bs.trackStart[t+1] += bs.trackStart[t]
	}
	fill := append([]int32(nil), bs.trackStart[:nTracks]...)
	bs.code = make([]uint32, n)
	bs.frac = make([]float32, n)
	bs.tsum = make([]float64, nTracks*slots*3)
	for _, i := range idx {
		t := track[i]
		p := fill[t]
		fill[t]++
		s := slotOf(i)
		b, f := binOf(values[i])
		bs.code[p] = uint32(s)<<slotShift | uint32(b)
		bs.frac[p] = f
		d := values[i] - bs.centre
		k := (int(t)*slots + s) * 3
		bs.tsum[k]++
		bs.tsum[k+1] += d
		bs.tsum[k+2] += d * d
	}
	return bs
}

// bootScratch is one worker's state.
type bootScratch struct {
	w []int32
	// cells[s][2b] is the weighted count of slot s in cell b,
	// cells[s][2b+1] its linearly binned weight; the last entry (slot
	// nGroups+1) is their sum over the slots, for all values.
	cells [][]float64
	// sums[s] are the weighted row count, sum and sum of squares of
	// value−centre of slot s.
	sums [][3]float64
	cnt  []float64
	lin  []float64
	kern []float64
	dens []float64
	cum  []float64
	mass []float64
}

func (bs *bootSample) newScratch() *bootScratch {
	slots := bs.nGroups + 1
	sc := &bootScratch{w: make([]int32, bs.nTracks), cells: make([][]float64, slots+1), sums: make([][3]float64, slots),
		cnt: make([]float64, bs.nbins), lin: make([]float64, bs.nbins)}
	for s := range sc.cells {
		sc.cells[s] = make([]float64, 2*bs.nbins+2)
	}
	return sc
}

// resample draws the track multiplicities and bins the drawn rows.
func (bs *bootSample) resample(sc *bootScratch, rng *rand.Rand) {
	clear(sc.w)
	for range bs.nTracks {
		sc.w[rng.IntN(bs.nTracks)]++
	}
	bs.accumulate(sc)
}

// accumulate bins the rows of the tracks drawn (multiplicities sc.w) and
// sums their moments per slot.
func (bs *bootSample) accumulate(sc *bootScratch) {
	slots := bs.nGroups + 1
	for s := range sc.cells {
		clear(sc.cells[s])
	}
	clear(sc.sums)
	const mask = 1<<slotShift - 1
	for t := 0; t < bs.nTracks; t++ {
		w := sc.w[t]
		if w == 0 {
			continue
		}
		fw := float64(w)
		ts := bs.tsum[t*slots*3 : (t+1)*slots*3]
		for s := range sc.sums {
			sc.sums[s][0] += fw * ts[3*s]
			sc.sums[s][1] += fw * ts[3*s+1]
			sc.sums[s][2] += fw * ts[3*s+2]
		}
		for p := bs.trackStart[t]; p < bs.trackStart[t+1]; p++ {
			c := bs.code[p]
			cells := sc.cells[c>>slotShift]
			b := 2 * int(c&mask)
			fwf := fw * float64(bs.frac[p])
			cells[b] += fw
			cells[b+1] += fw - fwf
			cells[b+3] += fwf
		}
	}
	all := sc.cells[slots]
	for s := 0; s < slots; s++ {
		for i, v := range sc.cells[s] {
			all[i] += v
		}
	}
}

// stats returns the mean, median and mode of output group g in the
// current resample (NaN when the group is empty).
func (bs *bootSample) stats(sc *bootScratch, g int) (mean, median, mode float64) {
	nan := math.NaN()
	var n, s1, s2 float64
	for s := range sc.sums {
		if g < bs.nGroups && s != g {
			continue
		}
		n += sc.sums[s][0]
		s1 += sc.sums[s][1]
		s2 += sc.sums[s][2]
	}
	if n == 0 {
		return nan, nan, nan
	}
	mean = bs.centre + s1/n
	cells := sc.cells[bs.nGroups+1]
	if g < bs.nGroups {
		cells = sc.cells[g]
	}
	lo, hi := bs.binLo[g], bs.binHi[g]
	if cap(sc.cum) < hi-lo {
		sc.cum = make([]float64, hi-lo)
	}
	cum := sc.cum[:hi-lo]
	var acc float64
	for b := lo; b < hi; b++ {
		acc += cells[2*b]
		cum[b-lo] = acc
	}
	lin := sc.lin
	for b := range lin {
		lin[b] = cells[2*b+1]
	}
	q := func(p float64) float64 { return bs.quantile(sc, g, cum, n, p) }
	median = q(0.5)
	if n < 2 {
		return mean, median, median
	}
	sd := math.Sqrt(math.Max(s2-s1*s1/n, 0) / (n - 1))
	iqr := q(0.75) - q(0.25)
	sig := sd
	if iqr > 0 {
		sig = math.Min(sd, iqr/1.34)
	}
	if !(sig > 0) {
		return mean, median, median
	}
	h := 0.9 * sig * math.Pow(n, -0.2)
	mode = bs.binnedMode(sc, g, lin, h)
	return mean, median, mode
}

// quantile is the type-7 quantile of the resampled group: the weighted
// order statistics k and k+1 (0-based) of the N* resampled values. cum
// holds the cumulative weighted counts of the group's cells.
func (bs *bootSample) quantile(sc *bootScratch, g int, cum []float64, n, p float64) float64 {
	h := p * (n - 1)
	k := math.Floor(h)
	x0 := bs.orderStat(sc, g, cum, k)
	if k+1 > n-1 {
		return x0
	}
	x1 := bs.orderStat(sc, g, cum, k+1)
	return x0 + (h-k)*(x1-x0)
}

// orderStat returns the k-th smallest (0-based) resampled value of group
// g: the grid cell holding it by bisection of the cumulative weighted
// counts (cum[b−binLo] is the weight in cells binLo..b), then a weighted
// scan of the sorted values in that cell.
func (bs *bootSample) orderStat(sc *bootScratch, g int, cum []float64, k float64) float64 {
	c := sort.Search(len(cum), func(i int) bool { return cum[i] > k })
	if c == len(cum) {
		v := bs.sorted[g]
		return v[len(v)-1]
	}
	b := bs.binLo[g] + c
	acc := 0.0
	if c > 0 {
		acc = cum[c-1]
	}
	st := bs.binStart[g]
	vals, trk := bs.sorted[g], bs.sortedTrack[g]
	for i := st[b]; i < st[b+1]; i++ {
		acc += float64(sc.w[trk[i]])
		if acc > k {
			return vals[i]
		}
	}
	return vals[st[b+1]-1] // not reached: the cell's weights sum to its count
}

// binnedMode returns the location of the maximum of the linearly binned
// Gaussian kernel density estimate (bandwidth h, kernel cut at 4h) over
// the occupied cells of group g, refined by a parabola through the
// highest cell and its neighbours.
func (bs *bootSample) binnedMode(sc *bootScratch, g int, lin []float64, h float64) float64 {
	K := int(math.Ceil(4 * h / bs.delta))
	if cap(sc.kern) < K+1 {
		sc.kern = make([]float64, K+1)
	}
	kern := sc.kern[:K+1]
	for i := range kern {
		u := float64(i) * bs.delta / h
		kern[i] = math.Exp(-0.5 * u * u)
	}
	lo, hi := bs.binLo[g], min(bs.binHi[g]+1, bs.nbins)
	if cap(sc.dens) < bs.nbins {
		sc.dens = make([]float64, bs.nbins)
		sc.mass = make([]float64, bs.nbins+1)
	}
	dens, mass := sc.dens[:bs.nbins], sc.mass[:bs.nbins+1]
	// mass[i] = weight in cells lo..i−1; the weight within ±K cells of j
	// bounds the density at j from above (the kernel is at most 1), so
	// only cells whose bound beats the density at the heaviest window need
	// the full sum.
	mass[lo] = 0
	for i := lo; i < hi; i++ {
		mass[i+1] = mass[i] + lin[i]
	}
	window := func(j int) float64 { return mass[min(j+K, hi-1)+1] - mass[max(j-K, lo)] }
	density := func(j int) float64 {
		var s float64
		for i := max(j-K, lo); i <= min(j+K, hi-1); i++ {
			if lin[i] != 0 {
				d := i - j
				if d < 0 {
					d = -d
				}
				s += lin[i] * kern[d]
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
	best := heavy
	dh := density(heavy)
	dens[best] = dh
	for j := lo; j < hi; j++ {
		dens[j] = -1 // not evaluated
		if j == heavy {
			dens[j] = dh
			continue
		}
		if window(j) > dens[best] {
			dens[j] = density(j)
			if dens[j] > dens[best] {
				best = j
			}
		}
	}
	for _, j := range []int{best - 1, best + 1} {
		if j >= lo && j < hi && dens[j] < 0 {
			dens[j] = density(j)
		}
	}
	x := bs.lo + float64(best)*bs.delta
	if best > lo && best < hi-1 {
		l, c, r := dens[best-1], dens[best], dens[best+1]
		if den := l - 2*c + r; den < 0 {
			x += 0.5 * (l - r) / den * bs.delta
		}
	}
	return x
}
