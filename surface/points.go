package surface

// Gridding point clouds that were reconstructed elsewhere.
//
// A record of per-frame point clouds (PLY or XYZ files, see ingest.OpenPoints)
// becomes elevation maps by the same binning as the stereo path: the mean
// elevation of the points in each cell holding at least MinPoints of them,
// NaN elsewhere, with the count kept. What the stereo path knows from the rig
// is settled here from a sample of frames spread over the record:
//
//   - the frame: points are taken to be in a world frame with z up from the
//     mean water level. When they are not (the plane fitted to the sample by
//     RANSAC and total least squares is tilted by more than PlaneTiltDeg, or
//     lies more than PlaneOffsetM from z = 0), they are moved into the frame
//     of that plane: z up from it, x along the projection of the points' x
//     axis onto it, origin below the points' origin;
//   - the grid: cells of SpacingM, or by default the spacing at which a cell
//     holds on average four times MinPoints points at the sample's mean
//     density, rounded up to two digits; over the given region, or by
//     default the largest rectangle of cells supported (MinPoints points) in
//     Coverage of the sampled frames, isolated unsupported cells inside it
//     aside.

import (
	"errors"
	"fmt"
	"math"

	"crestspeed/calib"
	"crestspeed/ingest"
)

// Plane handling of PointGridOptions.Plane.
const (
	PlaneAuto   = "auto" // fit, and move the points into the plane's frame when it is off z = 0
	PlaneAlways = "fit"  // always move the points into the fitted plane's frame
	PlaneNone   = "none" // take the points as they are
)

// PointGridOptions configure the gridding of point clouds. The yaml tags
// are the keys of the "grid" section of the configuration.
type PointGridOptions struct {
	// SpacingM is the cell size, metres; 0 = automatic (see the package
	// documentation of this file).
	SpacingM float64 `yaml:"spacing_m"`
	// X0M, X1M, Y0M, Y1M bound the cell centres, metres; give all four or
	// none (the automatic region).
	X0M *float64 `yaml:"x0_m,omitempty"`
	X1M *float64 `yaml:"x1_m,omitempty"`
	Y0M *float64 `yaml:"y0_m,omitempty"`
	Y1M *float64 `yaml:"y1_m,omitempty"`
	// MinPoints is the fewest points a cell needs for an elevation
	// (default 3, as for stereo maps).
	MinPoints int `yaml:"min_points"`
	// Coverage is the fraction of sampled frames in which a cell must hold
	// MinPoints points to be inside the automatic region (default 0.8).
	Coverage float64 `yaml:"coverage"`
	// SampleFrames is the number of frames, spread evenly over the record,
	// the plane, spacing and region are settled from (default 20).
	SampleFrames int `yaml:"sample_frames"`
	// Plane is "auto" (default), "fit" or "none".
	Plane string `yaml:"plane"`
	// PlaneTiltDeg and PlaneOffsetM: in "auto", a fitted plane closer to
	// z = 0 than both is taken as z = 0 itself (defaults 0.5° and 0.05 m).
	PlaneTiltDeg float64 `yaml:"plane_tilt_deg"`
	PlaneOffsetM float64 `yaml:"plane_offset_m"`
	// RansacIterations, RansacThresholdM and Seed tune the plane fit
	// (defaults 500, 1 m, 1).
	RansacIterations int     `yaml:"ransac_iterations"`
	RansacThresholdM float64 `yaml:"ransac_threshold_m"`
	Seed             uint64  `yaml:"seed"`
	// MaxAbsElevationM drops points farther than this from the plane,
	// metres (default 10).
	MaxAbsElevationM float64 `yaml:"max_abs_elevation_m"`
}

// DefaultPointGridOptions returns the defaults.
func DefaultPointGridOptions() PointGridOptions {
	return PointGridOptions{MinPoints: 3, Coverage: 0.8, SampleFrames: 20, Plane: PlaneAuto,
		PlaneTiltDeg: 0.5, PlaneOffsetM: 0.05, RansacIterations: 500, RansacThresholdM: 1, Seed: 1,
		MaxAbsElevationM: 10}
}

// Validate reports the first setting that cannot work, naming its key.
func (o PointGridOptions) Validate() error {
	in := func(v, lo, hi float64) bool { return v >= lo && v <= hi }
	given := 0
	for _, p := range []*float64{o.X0M, o.X1M, o.Y0M, o.Y1M} {
		if p != nil {
			given++
			if math.IsNaN(*p) || math.IsInf(*p, 0) {
				return fmt.Errorf("grid region bound %g is not a finite number of metres", *p)
			}
		}
	}
	switch {
	case !in(o.SpacingM, 0, 1000):
		return fmt.Errorf("spacing_m %g is outside 0–1000 m (0 = automatic)", o.SpacingM)
	case given != 0 && given != 4:
		return fmt.Errorf("give all four of x0_m, x1_m, y0_m, y1_m, or none for the automatic region")
	case given == 4 && (*o.X1M <= *o.X0M || *o.Y1M <= *o.Y0M):
		return fmt.Errorf("the region x %g–%g m, y %g–%g m is empty", *o.X0M, *o.X1M, *o.Y0M, *o.Y1M)
	case o.MinPoints < 1 || o.MinPoints > 10000:
		return fmt.Errorf("min_points %d is outside 1–10000", o.MinPoints)
	case !in(o.Coverage, 0.01, 1):
		return fmt.Errorf("coverage %g is outside 0.01–1", o.Coverage)
	case o.SampleFrames < 1 || o.SampleFrames > 10000:
		return fmt.Errorf("sample_frames %d is outside 1–10000", o.SampleFrames)
	case o.Plane != PlaneAuto && o.Plane != PlaneAlways && o.Plane != PlaneNone:
		return fmt.Errorf("plane %q is not auto, fit or none", o.Plane)
	case !in(o.PlaneTiltDeg, 0, 90) || !in(o.PlaneOffsetM, 0, 1e4):
		return fmt.Errorf("plane_tilt_deg %g or plane_offset_m %g is out of range", o.PlaneTiltDeg, o.PlaneOffsetM)
	case o.RansacIterations < 1 || !in(o.RansacThresholdM, 1e-6, 1e3):
		return fmt.Errorf("ransac_iterations %d or ransac_threshold_m %g is out of range", o.RansacIterations, o.RansacThresholdM)
	case !in(o.MaxAbsElevationM, 1e-3, 1e4):
		return fmt.Errorf("max_abs_elevation_m %g is outside 0.001–10000 m", o.MaxAbsElevationM)
	}
	return nil
}

// PointGrid is what is settled for a record of point clouds: the frame
// the points are moved into, and the grid. Bin is safe for concurrent use.
type PointGrid struct {
	Grid ingest.Grid
	// Plane is the fitted mean plane in the points' own frame (nil when
	// Plane is "none"); Moved says whether the points are moved into its
	// frame.
	Plane *PlaneFit
	Moved bool
	// Note says in words how the frame, spacing and region were chosen.
	Note string
	// SampledFrames is the number of frames the choice was made from.
	SampledFrames int

	rot      [3][3]float64 // rows: the new x, y, z axes in the points' frame
	offset   float64       // z = rot[2]·p + offset
	minPts   int32
	maxAbs   float64
	x0, y0   float64
	invD     float64
	nx, ny   int
	settings PointGridOptions
}

// ErrNoPoints marks a sample with no usable points.
var ErrNoPoints = errors.New("no usable points")

// SettlePointGrid settles the frame and grid of a record of point clouds
// from a sample of its frames (see the file's documentation).
func SettlePointGrid(sample [][]ingest.Point, opt PointGridOptions) (*PointGrid, error) {
	if err := opt.Validate(); err != nil {
		return nil, err
	}
	pg := &PointGrid{minPts: int32(opt.MinPoints), maxAbs: opt.MaxAbsElevationM, settings: opt, SampledFrames: len(sample)}
	pg.rot = [3][3]float64{{1, 0, 0}, {0, 1, 0}, {0, 0, 1}}
	var total int
	for _, s := range sample {
		total += len(s)
	}
	if total < 3 {
		return nil, fmt.Errorf("the %d sampled frames hold %d points: %w", len(sample), total, ErrNoPoints)
	}
	frameNote := "points taken as given (z up from the mean water level)"
	if opt.Plane != PlaneNone {
		if err := pg.settlePlane(sample, total, opt); err != nil {
			return nil, err
		}
		if pg.Moved {
			frameNote = fmt.Sprintf("points moved into the frame of the mean plane fitted to %d points of %d frames (tilt %.2f°, offset %.3f m, RMS %.3f m)",
				pg.Plane.Points, len(sample), pg.tilt(), pg.Plane.Plane.OffsetM, pg.Plane.RMSM)
		} else {
			frameNote = fmt.Sprintf("points taken as given: the mean plane fitted to %d points is within %.2g° and %.2g m of z = 0",
				pg.Plane.Points, opt.PlaneTiltDeg, opt.PlaneOffsetM)
		}
	}
	// the sample in the settled frame, for spacing and region
	moved := make([][][3]float64, len(sample))
	for k, s := range sample {
		moved[k] = make([][3]float64, 0, len(s))
		for _, p := range s {
			x, y, z := pg.transform(p)
			if math.Abs(z) <= pg.maxAbs {
				moved[k] = append(moved[k], [3]float64{x, y, z})
			}
		}
	}
	grid, gridNote, err := pointGridOf(moved, opt)
	if err != nil {
		return nil, err
	}
	pg.Grid = grid
	pg.x0, pg.y0, pg.invD = grid.X[0], grid.Y[0], 1/grid.Dx()
	pg.nx, pg.ny = grid.Nx(), grid.Ny()
	pg.Note = frameNote + "; " + gridNote
	return pg, nil
}

// settlePlane fits the mean plane to (at most 200 000 of) the sampled
// points and decides whether to move the points into its frame.
func (pg *PointGrid) settlePlane(sample [][]ingest.Point, total int, opt PointGridOptions) error {
	stride := max(1, total/200000)
	var pts [][3]float32
	k := 0
	for _, s := range sample {
		for _, p := range s {
			if k%stride == 0 {
				pts = append(pts, [3]float32{float32(p.X), float32(p.Y), float32(p.Z)})
			}
			k++
		}
	}
	fit, err := FitPlane(pts, opt.RansacIterations, opt.RansacThresholdM, opt.Seed)
	if err != nil {
		return err
	}
	// FitPlane orients the normal toward the origin; we want it up (+z).
	n := fit.Plane.Normal
	d := fit.Plane.OffsetM
	if n[2] < 0 {
		n = [3]float64{-n[0], -n[1], -n[2]}
		d = -d
	}
	fit.Plane = calib.Plane{Normal: n, OffsetM: d}
	pg.Plane = &fit
	pg.Moved = opt.Plane == PlaneAlways || pg.tilt() > opt.PlaneTiltDeg || math.Abs(d) > opt.PlaneOffsetM
	if !pg.Moved {
		return nil
	}
	// new x: the points' x axis projected onto the plane (y when x is
	// normal to it), new y = z × x.
	ex := [3]float64{1 - n[0]*n[0], -n[0] * n[1], -n[0] * n[2]}
	if math.Hypot(math.Hypot(ex[0], ex[1]), ex[2]) < 1e-6 {
		ex = [3]float64{-n[1] * n[0], 1 - n[1]*n[1], -n[1] * n[2]}
	}
	l := math.Hypot(math.Hypot(ex[0], ex[1]), ex[2])
	ex = [3]float64{ex[0] / l, ex[1] / l, ex[2] / l}
	ey := [3]float64{n[1]*ex[2] - n[2]*ex[1], n[2]*ex[0] - n[0]*ex[2], n[0]*ex[1] - n[1]*ex[0]}
	pg.rot = [3][3]float64{ex, ey, n}
	pg.offset = d
	return nil
}

// tilt is the angle of the fitted plane's normal from +z, degrees.
func (pg *PointGrid) tilt() float64 {
	return math.Acos(math.Min(1, math.Abs(pg.Plane.Plane.Normal[2]))) * 180 / math.Pi
}

// transform moves a point into the settled frame.
func (pg *PointGrid) transform(p ingest.Point) (x, y, z float64) {
	if !pg.Moved {
		return p.X, p.Y, p.Z
	}
	r := &pg.rot
	x = r[0][0]*p.X + r[0][1]*p.Y + r[0][2]*p.Z
	y = r[1][0]*p.X + r[1][1]*p.Y + r[1][2]*p.Z
	z = r[2][0]*p.X + r[2][1]*p.Y + r[2][2]*p.Z + pg.offset
	return x, y, z
}

// PointBinStats counts what happened to the points of one frame.
type PointBinStats struct {
	Points, Gridded, OutOfGrid, Implausible, Cells int
}

// Bin grids one frame's points: eta gets the mean elevation of each cell
// with at least MinPoints points (NaN elsewhere) and counts the number of
// points per cell. sum is scratch space of the grid's size (reused).
func (pg *PointGrid) Bin(points []ingest.Point, eta []float32, counts []int32, sum []float64) PointBinStats {
	st := PointBinStats{Points: len(points)}
	clear(sum)
	clear(counts)
	for _, p := range points {
		x, y, z := pg.transform(p)
		if math.Abs(z) > pg.maxAbs {
			st.Implausible++
			continue
		}
		fi := (x-pg.x0)*pg.invD + 0.5
		fj := (y-pg.y0)*pg.invD + 0.5
		if !(fi >= 0 && fj >= 0) {
			st.OutOfGrid++
			continue
		}
		i, j := int(fi), int(fj)
		if i >= pg.nx || j >= pg.ny {
			st.OutOfGrid++
			continue
		}
		c := j*pg.nx + i
		sum[c] += z
		counts[c]++
		st.Gridded++
	}
	nan := float32(math.NaN())
	for c := range eta {
		if counts[c] >= pg.minPts {
			eta[c] = float32(sum[c] / float64(counts[c]))
			st.Cells++
		} else {
			eta[c] = nan
		}
	}
	return st
}

// autoPointsFactor: the automatic spacing gives cells holding on average
// this many times MinPoints points, so that with points scattered at
// random (Poisson counts) fewer than one cell in a thousand falls short of
// three points (P(N < 3) = 5·10⁻⁴ for a mean of 12).
const autoPointsFactor = 4

// pointGridOf chooses the spacing and region from the moved sample.
func pointGridOf(sample [][][3]float64, opt PointGridOptions) (ingest.Grid, string, error) {
	x0, x1, y0, y1 := math.Inf(1), math.Inf(-1), math.Inf(1), math.Inf(-1)
	var n int
	for _, s := range sample {
		for _, p := range s {
			x0, x1 = math.Min(x0, p[0]), math.Max(x1, p[0])
			y0, y1 = math.Min(y0, p[1]), math.Max(y1, p[1])
		}
		n += len(s)
	}
	if n == 0 || !(x1 > x0) || !(y1 > y0) {
		return ingest.Grid{}, "", fmt.Errorf("the sampled points span no area within %g m of the plane: %w", opt.MaxAbsElevationM, ErrNoPoints)
	}
	d := opt.SpacingM
	spacingNote := fmt.Sprintf("cells of %g m (configured)", d)
	if d == 0 {
		density := float64(n) / float64(len(sample)) / ((x1 - x0) * (y1 - y0))
		d = niceSpacing(math.Sqrt(autoPointsFactor * float64(opt.MinPoints) / density))
		spacingNote = fmt.Sprintf("cells of %g m, holding on average %d points at the sample's mean density of %.3g points/m² per frame", d, autoPointsFactor*opt.MinPoints, density)
	}
	if opt.X0M != nil {
		g, err := configuredGrid(GridSpec{X0: opt.X0M, X1: opt.X1M, Y0: opt.Y0M, Y1: opt.Y1M}, d)
		return g, spacingNote + " over the configured region", err
	}
	fp := footprint{x0: x0, x1: x1, y0: y0, y1: y1}
	lat, err := coverageLattice(fp, d)
	if err != nil {
		return ingest.Grid{}, "", err
	}
	support := make([]int, lat.nx*lat.ny)
	cnt := make([]int32, lat.nx*lat.ny)
	for _, s := range sample {
		clear(cnt)
		for _, p := range s {
			if c, ok := lat.cell(p[0], p[1]); ok {
				cnt[c]++
			}
		}
		for c, v := range cnt {
			if v >= int32(opt.MinPoints) {
				support[c]++
			}
		}
	}
	need := int(math.Ceil(opt.Coverage * float64(len(sample))))
	mask := make([]bool, len(support))
	for c, v := range support {
		mask[c] = v >= need
	}
	mask = fillIsolated(mask, lat.nx, lat.ny)
	i0, i1, j0, j1 := largestRectangle(mask, lat.nx, lat.ny)
	if (i1-i0) < 4 || (j1-j0) < 4 {
		return ingest.Grid{}, "", fmt.Errorf("no rectangle of at least 4 × 4 cells of %g m holds %d points in %.0f %% of the %d sampled frames; set a coarser spacing_m, a lower coverage, or the region", d, opt.MinPoints, 100*opt.Coverage, len(sample))
	}
	g := ingest.Grid{X: axisCells(lat.x0, i0, i1, d), Y: axisCells(lat.y0, j0, j1, d)}
	return g, fmt.Sprintf("%s over the largest rectangle holding %d points per cell in %.0f %% of %d sampled frames (x %.2f–%.2f m, y %.2f–%.2f m)",
		spacingNote, opt.MinPoints, 100*opt.Coverage, len(sample), g.X[0], g.X[len(g.X)-1], g.Y[0], g.Y[len(g.Y)-1]), nil
}

// fillIsolated counts as supported a cell that is not but whose eight
// neighbours mostly are (six or more): with points scattered at random a
// few cells inside the covered area fall short of MinPoints by chance, and
// such holes must not cut the rectangle (they stay unknown in the maps).
func fillIsolated(mask []bool, nx, ny int) []bool {
	out := append([]bool(nil), mask...)
	for j := 1; j < ny-1; j++ {
		for i := 1; i < nx-1; i++ {
			c := j*nx + i
			if mask[c] {
				continue
			}
			n := 0
			for dj := -1; dj <= 1; dj++ {
				for di := -1; di <= 1; di++ {
					if (di != 0 || dj != 0) && mask[c+dj*nx+di] {
						n++
					}
				}
			}
			out[c] = n >= 6
		}
	}
	return out
}

// axisCells returns the centres of cells [k0, k1) of a lattice starting at
// c0 with spacing d.
func axisCells(c0 float64, k0, k1 int, d float64) []float64 {
	base := int(math.Round(c0 / d)) // the lattice starts at a multiple of d
	v := make([]float64, 0, k1-k0)
	for k := k0; k < k1; k++ {
		v = append(v, float64(base+k)*d)
	}
	return v
}
