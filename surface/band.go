package surface

import (
	"fmt"
	"math"
	"slices"

	"crestspeed/internal/cvshim"
)

// The disparity band: which disparities the matcher searches at each row
// of the rectified image (see the package documentation).

// Constants of the strip plan.
const (
	// stripBlockRows is the granularity of the strips, rows.
	stripBlockRows = 16
	// stripOverlapBlocks is the number of blocks above a strip's kept rows
	// that it also matches, so that the matcher's top-down paths have
	// built up when they reach the kept rows (their disparities are
	// discarded).
	stripOverlapBlocks = 1
	// stripPixelCost is the matcher's work per pixel that does not grow
	// with the number of disparities searched, in units of the work per
	// pixel and disparity (measured here on 1280×1024 sea images: about
	// 0.2 s of a 1.0 s match of 64 disparities).
	stripPixelCost = 16
	// stripFixedCost is a fixed cost per strip in pixel-disparities per
	// image column, to keep strips from splitting for a few disparities.
	stripFixedCost = 2 * stripBlockRows * 16
	// stripMinRows and stripParts bound a strip's kept rows to
	// max(stripMinRows, relevant rows / stripParts), so that the strips of
	// a pair can be shared out between threads.
	stripMinRows = 64
	stripParts   = 4
	// bandNoisePx widens the band by this many pixels each side for the
	// matcher's own disparity noise (a few tenths of a pixel is common
	// practice for semi-global matching with sub-pixel interpolation).
	bandNoisePx = 1
)

// pixelBand returns the disparities the matcher can meet at rectified
// left pixel (u, v) for water between hLo and hHi metres about the mean
// plane: residual ones when prewarped. ok is false when the pixel does not
// see the sea (above the horizon, or beyond MaxRangeM at the crest
// height) or when its match lies left of the right image for all heights
// of the band. ground, when not nil, is told the pixel's ground points at the
// three heights hLo, 0 and hHi and may reject the pixel.
func (r *Reconstructor) pixelBand(u, v, hLo, hHi float64, ground func(x, y float64) bool) (lo, hi float64, ok bool) {
	rc := r.maps.Rectification
	f, B := rc.FocalPx(), rc.BaselineM()
	H := r.world.T[2]
	d := r.rectRay(u, v)
	if !(d[2] < 0) {
		return 0, 0, false // above the horizon
	}
	horiz := math.Hypot(d[0], d[1])
	maxR := r.opt.MaxRangeM
	// Ray parameters (depths in the rectified frame) at the two heights.
	tHi := (hHi - H) / d[2]
	if maxR > 0 && tHi*horiz > maxR {
		return 0, 0, false
	}
	tLo := (hLo - H) / d[2]
	if maxR > 0 && tLo*horiz > maxR {
		tLo = maxR / horiz
	}
	if ground != nil {
		t0 := -H / d[2]
		in := false
		for _, t := range []float64{tLo, t0, tHi} {
			if ground(r.world.T[0]+t*d[0], r.world.T[1]+t*d[1]) {
				in = true
				break
			}
		}
		if !in {
			return 0, 0, false
		}
	}
	eHi, eLo := f*B/tHi, f*B/tLo
	if u-eLo < 0 {
		// Even the lowest water is matched left of the right image.
		return 0, 0, false
	}
	if r.prewarp {
		dp := r.PlaneDisparity(u, v)
		eHi, eLo = (eHi-dp)/(1-r.pa), (eLo-dp)/(1-r.pa)
	}
	if eLo > eHi {
		eLo, eHi = eHi, eLo
	}
	return eLo, eHi, true
}

// blockBand is the band of one block of stripBlockRows rows.
type blockBand struct {
	lo, hi float64
	col0   int // first column with a pixel that sees the sea kept
	ok     bool
}

// rangeOf turns a band of disparities into the matcher's range: the
// smallest disparity and the number searched, so that every disparity of
// the band, widened by bandNoisePx, lies within the used part of the range
// (which leaves out its two end pixels).
func (r *Reconstructor) rangeOf(lo, hi float64) (minD, numD int) {
	lo -= bandNoisePx
	hi += bandNoisePx
	if !r.prewarp && r.opt.MaxRangeM == 0 {
		// Rays close to the horizon reach disparities near zero.
		lo = math.Max(0, lo)
	}
	minD = int(math.Floor(lo)) - 1
	if !r.prewarp {
		minD = max(minD, 0)
	}
	numD = roundUp16(math.Floor(hi) + 2 - float64(minD))
	return minD, numD
}

// planStrips chooses the strips the matcher works in for water within
// ±halfM of the mean plane, over the pixels accepted by ground (all that
// see the sea when nil); one strip over the image when Options.Band.Strips
// is off.
//
// Method: the rectified image is cut into blocks of 16 rows; each block's
// band is the union of pixelBand over its pixels (every 4th pixel and
// row). Blocks that see none of the sea kept are left out at the top and
// bottom; the rest are partitioned into strips by dynamic programming
// (common practice) minimising Σ pixels·(disparities + 16) + a fixed cost
// per strip, the matcher's work being about proportional to pixels times
// disparities plus a part per pixel; each strip also matches the block
// above its kept rows, and only the columns from a little left of the
// first one whose pixels can be matched in the right image.
func (r *Reconstructor) planStrips(halfM float64, ground func(x, y float64) bool) ([]cvshim.Strip, error) {
	W, H := r.rig.Size.X, r.rig.Size.Y
	hHi := math.Min(halfM, 0.9*r.world.T[2])
	nb := (H + stripBlockRows - 1) / stripBlockRows
	blocks := make([]blockBand, nb)
	for b := range blocks {
		v0, v1 := b*stripBlockRows, min((b+1)*stripBlockRows, H)
		bb := blockBand{lo: math.Inf(1), hi: math.Inf(-1), col0: W}
		for v := v0; v < v1; v += 4 {
			for _, vv := range []int{v, min(v+3, v1-1)} {
				for u := 0; u < W; u += 4 {
					for _, uu := range []int{u, min(u+3, W-1)} {
						lo, hi, ok := r.pixelBand(float64(uu), float64(vv), -halfM, hHi, ground)
						if !ok {
							continue
						}
						bb.ok = true
						bb.lo, bb.hi = math.Min(bb.lo, lo), math.Max(bb.hi, hi)
						bb.col0 = min(bb.col0, max(uu-4, 0))
					}
				}
			}
		}
		blocks[b] = bb
	}
	first := slices.IndexFunc(blocks, func(b blockBand) bool { return b.ok })
	if first < 0 {
		return nil, fmt.Errorf("surface: no pixel of the rectified left image sees the sea to be mapped (within %g m of range); check the sea plane, max_range_m and the grid", r.opt.MaxRangeM)
	}
	last := nb - 1
	for !blocks[last].ok {
		last--
	}
	rows := func(i, j int) (int, int) { return i * stripBlockRows, min(j*stripBlockRows, H) }
	strip := func(i, j int) cvshim.Strip {
		top := max(i-stripOverlapBlocks, 0)
		lo, hi := math.Inf(1), math.Inf(-1)
		c0 := W
		for b := top; b < j; b++ {
			if blocks[b].ok {
				lo, hi = math.Min(lo, blocks[b].lo), math.Max(hi, blocks[b].hi)
				c0 = min(c0, blocks[b].col0)
			}
		}
		minD, numD := r.rangeOf(lo, hi)
		r0, r1 := rows(i, j)
		// The matcher leaves the first max(0, minD + numD) columns it is
		// given without a disparity, and its left-to-right paths need a
		// few more to build up: start that far left of the first column
		// that sees the sea kept.
		lead := max(0, minD+numD) + r.opt.Matcher.BlockSize + stripBlockRows
		col0 := min(max(0, c0-lead), max(0, W-numD-16))
		return cvshim.Strip{Row0: r0, Row1: r1, Top: top * stripBlockRows, Col0: col0, MinDisparity: minD, NumDisparities: numD}
	}
	if !r.opt.Band.Strips {
		s := strip(0, nb)
		s.Row0, s.Row1, s.Top, s.Col0 = 0, H, 0, 0
		return []cvshim.Strip{s}, nil
	}
	n := last - first + 1
	maxBlocks := max(stripMinRows/stripBlockRows, (n+stripParts-1)/stripParts)
	// best[k]: the cheapest plan of blocks [first, first+k); from[k] where
	// its last strip starts.
	best := make([]float64, n+1)
	from := make([]int, n+1)
	for k := 1; k <= n; k++ {
		best[k] = math.Inf(1)
		for s := k - 1; s >= 0 && k-s <= maxBlocks; s-- {
			st := strip(first+s, first+k)
			matched := float64(st.Row1-st.Top) * float64(W-st.Col0) / float64(W)
			c := best[s] + matched*float64(st.NumDisparities+stripPixelCost) + stripFixedCost
			if c < best[k] {
				best[k], from[k] = c, s
			}
		}
	}
	var out []cvshim.Strip
	for k := n; k > 0; k = from[k] {
		out = append(out, strip(first+from[k], first+k))
	}
	slices.Reverse(out)
	return out, nil
}

// unionRange returns the smallest disparity and the number searched over
// all strips.
func unionRange(strips []cvshim.Strip) (minD, numD int) {
	lo, hi := math.MaxInt, math.MinInt
	for _, s := range strips {
		lo = min(lo, s.MinDisparity)
		hi = max(hi, s.MinDisparity+s.NumDisparities)
	}
	return lo, hi - lo
}

// stripWork returns the matcher's work of a strip plan relative to one
// strip over the whole image with the plan's union range, by the cost
// model of planStrips, for images of cols × rows pixels.
func stripWork(strips []cvshim.Strip, cols, rows int) float64 {
	_, numD := unionRange(strips)
	var w float64
	for _, s := range strips {
		w += float64(s.Row1-s.Top) * float64(cols-s.Col0) * float64(s.NumDisparities+stripPixelCost)
	}
	return w / (float64(rows) * float64(cols) * float64(numD+stripPixelCost))
}
