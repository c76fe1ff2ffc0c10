package surface

import (
	"fmt"
	"math"

	"crestspeed/ingest"
)

// autoRangeHeights caps the sea considered by the automatic grid, when no
// MaxRangeM is set, at this many camera heights of horizontal range
// (grazing angles above about 6°), beyond which a pixel's footprint on the
// sea grows without bound toward the horizon.
const autoRangeHeights = 10

// footprint describes the sea seen by the rectified left camera on the
// mean plane: its bounding box and the largest pixel footprint in it.
type footprint struct {
	x0, x1, y0, y1 float64
	maxPixelM      float64 // longer side of the largest pixel footprint, metres
	farX           float64 // x of that pixel's ground point
}

// groundPoint intersects the ray through rectified left pixel (u, v) with
// the mean plane; ok is false when the ray does not reach it within
// maxRange (horizontal).
func (r *Reconstructor) groundPoint(u, v, maxRange float64) (x, y float64, ok bool) {
	d := r.rectRay(u, v)
	if !(d[2] < 0) {
		return 0, 0, false
	}
	t := -r.world.T[2] / d[2]
	x, y = t*d[0], t*d[1]
	if math.Hypot(x, y) > maxRange {
		return 0, 0, false
	}
	return x, y, true
}

// groundRange returns the horizontal range the automatic grid considers.
func (r *Reconstructor) groundRange() float64 {
	if r.opt.MaxRangeM > 0 {
		return r.opt.MaxRangeM
	}
	return autoRangeHeights * r.world.T[2]
}

// viewFootprint samples the rectified left image every step pixels. When
// inside is not nil only ground points inside it count toward the pixel
// footprint.
func (r *Reconstructor) viewFootprint(step int, inside func(x, y float64) bool) (footprint, error) {
	fp := footprint{x0: math.Inf(1), x1: math.Inf(-1), y0: math.Inf(1), y1: math.Inf(-1)}
	maxR := r.groundRange()
	sz := r.rig.Size
	found := false
	for v := 0; v < sz.Y-1; v += step {
		for u := 0; u < sz.X-1; u += step {
			x, y, ok := r.groundPoint(float64(u), float64(v), maxR)
			if !ok {
				continue
			}
			found = true
			fp.x0, fp.x1 = math.Min(fp.x0, x), math.Max(fp.x1, x)
			fp.y0, fp.y1 = math.Min(fp.y0, y), math.Max(fp.y1, y)
			if inside != nil && !inside(x, y) {
				continue
			}
			xu, yu, oku := r.groundPoint(float64(u+1), float64(v), math.Inf(1))
			xv, yv, okv := r.groundPoint(float64(u), float64(v+1), math.Inf(1))
			if !oku || !okv {
				continue
			}
			side := math.Max(math.Hypot(xu-x, yu-y), math.Hypot(xv-x, yv-y))
			if side > fp.maxPixelM {
				fp.maxPixelM, fp.farX = side, x
			}
		}
	}
	if !found || !(fp.maxPixelM > 0) {
		return fp, fmt.Errorf("surface: the left camera sees no sea within %.0f m of horizontal range; check the sea plane, or set max_range_m or the grid", maxR)
	}
	return fp, nil
}

// niceSpacing rounds a spacing up to two significant digits.
func niceSpacing(v float64) float64 {
	e := math.Pow(10, math.Floor(math.Log10(v))-1)
	s := math.Ceil(v/e-1e-9) * e
	// Clean the binary representation (0.63 rather than 0.6300000000000001).
	p := math.Pow(10, -math.Floor(math.Log10(e)))
	return math.Round(s*p) / p
}

// lattice is the provisional grid on which coverage is counted.
type lattice struct {
	x0, y0, d float64 // centre of cell (0, 0) and spacing
	nx, ny    int
}

func (l lattice) cell(x, y float64) (int, bool) {
	fi := (x-l.x0)/l.d + 0.5
	fj := (y-l.y0)/l.d + 0.5
	if !(fi >= 0 && fj >= 0) {
		return 0, false
	}
	i, j := int(fi), int(fj)
	if i >= l.nx || j >= l.ny {
		return 0, false
	}
	return j*l.nx + i, true
}

// coverageLattice lays a lattice of the given spacing (cell centres at
// multiples of it) over the footprint.
func coverageLattice(fp footprint, d float64) (lattice, error) {
	i0, i1 := math.Floor(fp.x0/d), math.Ceil(fp.x1/d)
	j0, j1 := math.Floor(fp.y0/d), math.Ceil(fp.y1/d)
	l := lattice{x0: i0 * d, y0: j0 * d, d: d, nx: int(i1-i0) + 1, ny: int(j1-j0) + 1}
	if l.nx < 2 || l.ny < 2 || float64(l.nx)*float64(l.ny) > 16e6 {
		return l, fmt.Errorf("surface: a grid spacing of %g m does not suit the %.0f m × %.0f m view; set the grid spacing", d, fp.x1-fp.x0, fp.y1-fp.y0)
	}
	return l, nil
}

// largestRectangle returns the largest axis-aligned rectangle of true cells
// in a row-major ny×nx mask, as cell ranges [i0, i1) × [j0, j1). Of equal
// areas the first found (lowest j1, then lowest i0) wins.
//
// Method: the classic maximal-rectangle algorithm (common practice): for
// each row the heights of the runs of true cells ending there form a
// histogram, whose largest rectangle is found with a stack in linear time;
// O(nx·ny) overall.
func largestRectangle(mask []bool, nx, ny int) (i0, i1, j0, j1 int) {
	h := make([]int, nx)
	stack := make([]int, 0, nx+1)
	best := 0
	for j := 0; j < ny; j++ {
		for i := 0; i < nx; i++ {
			if mask[j*nx+i] {
				h[i]++
			} else {
				h[i] = 0
			}
		}
		stack = stack[:0]
		for i := 0; i <= nx; i++ {
			hi := 0
			if i < nx {
				hi = h[i]
			}
			for len(stack) > 0 && h[stack[len(stack)-1]] >= hi {
				top := stack[len(stack)-1]
				stack = stack[:len(stack)-1]
				left := 0
				if len(stack) > 0 {
					left = stack[len(stack)-1] + 1
				}
				if a := h[top] * (i - left); a > best {
					best = a
					i0, i1, j0, j1 = left, i, j-h[top]+1, j+1
				}
			}
			stack = append(stack, i)
		}
	}
	return i0, i1, j0, j1
}

// axis returns the cell centres k·d for k from ceil(a/d) to floor(b/d).
func axis(a, b, d float64) []float64 {
	k0, k1 := math.Ceil(a/d-1e-9), math.Floor(b/d+1e-9)
	var v []float64
	for k := k0; k <= k1; k++ {
		v = append(v, k*d)
	}
	return v
}

// configuredGrid builds the grid of configured bounds; spacing d.
func configuredGrid(g GridSpec, d float64) (ingest.Grid, error) {
	out := ingest.Grid{X: axis(*g.X0, *g.X1, d), Y: axis(*g.Y0, *g.Y1, d)}
	if len(out.X) < 2 || len(out.Y) < 2 {
		return out, fmt.Errorf("surface: the grid bounds x %g–%g m, y %g–%g m hold fewer than 2 cells of %g m each way; widen them or use a finer spacing", *g.X0, *g.X1, *g.Y0, *g.Y1, d)
	}
	if float64(len(out.X))*float64(len(out.Y)) > 64<<20 {
		return out, fmt.Errorf("surface: the grid of %d × %d cells is too large; use a coarser spacing or a smaller area", len(out.X), len(out.Y))
	}
	return out, nil
}

// GridCandidate is one spacing the automatic grid weighed.
type GridCandidate struct {
	SpacingM float64 `yaml:"spacing_m"`
	// SupportedCells is the number of cells of that spacing, over the
	// whole view, holding MinPoints points in at least Coverage of the
	// sampled pairs; SupportedAreaM2 their area.
	SupportedCells  int     `yaml:"supported_cells"`
	SupportedAreaM2 float64 `yaml:"supported_area_m2"`
	// SpacingAsked is the spacing the pixel footprint at the far edge of
	// the supported cells asks for (GSDFactor times it, rounded up).
	SpacingAsked float64 `yaml:"spacing_asked_m"`
	// Eligible: the candidate could be chosen (see the package
	// documentation).
	Eligible bool `yaml:"eligible"`
}

// GridChoice records how the automatic grid was chosen.
type GridChoice struct {
	Extent   string  `yaml:"extent"`
	SpacingM float64 `yaml:"spacing_m"`
	// ViewXM and ViewYM are the ranges of x and y, metres, of the mean
	// plane both cameras see (within the range considered).
	ViewXM [2]float64 `yaml:"view_x_m,flow"`
	ViewYM [2]float64 `yaml:"view_y_m,flow"`
	// SupportedXM and SupportedYM are the ranges of the centres of the
	// grid's supported cells; SupportedCells their number and
	// SupportedFraction their fraction of the grid.
	SupportedXM       [2]float64 `yaml:"supported_x_m,flow"`
	SupportedYM       [2]float64 `yaml:"supported_y_m,flow"`
	SupportedCells    int        `yaml:"supported_cells"`
	SupportedFraction float64    `yaml:"supported_fraction"`
	// Pairs is the number of sampled pairs coverage was counted on.
	Pairs      int             `yaml:"pairs"`
	Candidates []GridCandidate `yaml:"candidates"`
}

// bothViews returns the x and y ranges of the points of the mean plane that
// both rectified cameras see, within the range the automatic grid
// considers, sampled every step pixels of the left image.
func (r *Reconstructor) bothViews(step int) (xr, yr [2]float64) {
	xr = [2]float64{math.Inf(1), math.Inf(-1)}
	yr = xr
	maxR := r.groundRange()
	W, H := r.rig.Size.X, r.rig.Size.Y
	for v := 0; v < H; v += step {
		for u := 0; u < W; u += step {
			x, y, ok := r.groundPoint(float64(u), float64(v), maxR)
			if !ok {
				continue
			}
			// The right camera's rectified column of the same point.
			rx := float64(u) - r.pa*float64(u) - r.pb*float64(v) - r.pc
			if rx < 0 || rx > float64(W-1) {
				continue
			}
			xr = [2]float64{math.Min(xr[0], x), math.Max(xr[1], x)}
			yr = [2]float64{math.Min(yr[0], y), math.Max(yr[1], y)}
		}
	}
	return xr, yr
}

// largestComponent returns the mask of the largest 4-connected set of true
// cells of a row-major ny×nx mask (the first found of equal sizes), and its
// bounding box [i0, i1) × [j0, j1).
func largestComponent(mask []bool, nx, ny int) (keep []bool, i0, i1, j0, j1 int) {
	label := make([]int32, len(mask))
	var stack []int
	best, bestLabel := 0, int32(0)
	next := int32(0)
	for s := range mask {
		if !mask[s] || label[s] != 0 {
			continue
		}
		next++
		label[s] = next
		stack = append(stack[:0], s)
		n := 0
		for len(stack) > 0 {
			c := stack[len(stack)-1]
			stack = stack[:len(stack)-1]
			n++
			i, j := c%nx, c/nx
			for _, nb := range [4][2]int{{i - 1, j}, {i + 1, j}, {i, j - 1}, {i, j + 1}} {
				if nb[0] < 0 || nb[0] >= nx || nb[1] < 0 || nb[1] >= ny {
					continue
				}
				k := nb[1]*nx + nb[0]
				if mask[k] && label[k] == 0 {
					label[k] = next
					stack = append(stack, k)
				}
			}
		}
		if n > best {
			best, bestLabel = n, next
		}
	}
	keep = make([]bool, len(mask))
	i0, j0, i1, j1 = nx, ny, 0, 0
	for c, l := range label {
		if l == bestLabel && best > 0 {
			keep[c] = true
			i, j := c%nx, c/nx
			i0, i1 = min(i0, i), max(i1, i+1)
			j0, j1 = min(j0, j), max(j1, j+1)
		}
	}
	return keep, i0, i1, j0, j1
}
