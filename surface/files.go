package surface

import (
	"context"
	"fmt"
	"maps"
	"os"
	"slices"
	"strings"

	"crestspeed/calib"
	"crestspeed/ingest"
	"crestspeed/internal/cvshim"
	"crestspeed/internal/netcdf"
)

// FileSink writes the maps of a [Run] as an elevation-map NetCDF file of
// the project's contract (through ingest.CreateElevation) and, beside it,
// a NetCDF file of the number of points per cell. Nothing appears at
// either path until Commit; Abort discards both.
type FileSink struct {
	// Path of the elevation maps; PointsPath of the point counts ("" for
	// none).
	Path, PointsPath string
	// Options of the elevation file; the sink adds attributes describing
	// the reconstruction (sea plane, grid, matcher) to Options.Attrs, and
	// sets WithFoam when the run detects foam.
	Options ingest.WriteOptions

	ew   *ingest.ElevationWriter
	cw   *netcdf.Writer
	n    int
	ny   int
	nx   int
	foam bool // the file has the foam variable (Options.Foam.Enabled)
}

// Attributes returns the global attributes that describe a run's setup.
func (s *Setup) Attributes() map[string]string {
	a := map[string]string{}
	p := s.Rig.SeaPlane
	plane := fmt.Sprintf("normal (%.9f, %.9f, %.9f), offset %.6f m, in the left camera frame (a point X lies normal·X + offset metres above the plane)",
		p.Normal[0], p.Normal[1], p.Normal[2], p.OffsetM)
	if s.PlaneFit != nil {
		plane += fmt.Sprintf("; fitted by RANSAC and total least squares to %d points of %d pairs over %.1f s (%d inliers within %g m, RMS %.3f m)",
			s.PlaneFit.Points, s.PlanePairs, s.PlaneFit.SpanS, s.PlaneFit.Inliers, s.Options.Plane.ThresholdM, s.PlaneFit.RMSM)
	} else {
		plane += "; from the rig file"
	}
	a["sea_plane"] = plane
	a["grid"] = s.GridNote
	a["grid_spacing_m"] = fmt.Sprintf("%g", s.Grid.Dx())
	m := s.SGBM
	modes := map[int]string{0: "SGBM (5 directions)", 1: "HH (8 directions, two passes)", 2: "3WAY", 3: "HH4"}
	lr := "off"
	if s.Options.Matcher.LRCheck {
		lr = fmt.Sprintf("%g px", s.Options.Matcher.LRMaxDiffPx)
	}
	rangeNote := "configured"
	if s.AutoDisparity {
		b := s.Options.Band
		if b.Sigmas > 0 {
			rangeNote = fmt.Sprintf("automatic: water within ±%.3f m of the sea plane = min(%g σ_η + %g m, %g m), σ_η = %.4f m measured on the sampled pairs",
				s.BandHalfWidthM, b.Sigmas, b.MarginM, s.Options.ElevationMarginM, s.SeaSigmaM)
		} else {
			rangeNote = fmt.Sprintf("automatic: water within ±%g m of the sea plane", s.BandHalfWidthM)
		}
	}
	if len(s.Strips) > 1 {
		rangeNote += fmt.Sprintf("; in %d strips of rows, each searching the disparities its rows can have (%s)", len(s.Strips), describeStrips(s.Strips))
	}
	if s.Prewarped {
		rangeNote += ", residual about the sea plane's disparity: the right image is sheared by the plane's disparity before matching"
	}
	a["stereo_matcher"] = fmt.Sprintf("OpenCV StereoSGBM mode %s, disparities %d to %d px (%s), block %d px, P1 %d, P2 %d, uniqueness %d %%, speckle window %d px range %d px, disp12MaxDiff %d px, prefilter cap %d; left-right check %s; rectification alpha %g",
		modes[m.Mode], m.MinDisparity, m.MinDisparity+m.NumDisparities-1, rangeNote, m.BlockSize, m.P1, m.P2, m.UniquenessRatio,
		m.SpeckleWindowSize, m.SpeckleRange, m.Disp12MaxDiff, m.PreFilterCap, lr, s.Options.RectifyAlpha)
	a["sea_sigma_m"] = fmt.Sprintf("%.6g", s.SeaSigmaM)
	if s.Geometry != nil {
		a["settled_on"] = fmt.Sprintf("%d pairs sampled evenly over the record of %d pairs", len(s.Geometry.Samples), s.Geometry.RecordPairs)
		a["record_pairs"] = fmt.Sprintf("pairs %d to %d of the record (indices from 0, last excluded)", s.First, s.Last)
	}
	a["gridding"] = fmt.Sprintf("mean elevation of the points in each cell with at least %d points, NaN otherwise; points farther than %g m from the mean plane dropped",
		s.Options.MinPoints, s.Options.MaxAbsElevationM)
	if s.Options.MaxRangeM > 0 {
		a["gridding"] += fmt.Sprintf(" and points beyond %g m of horizontal range dropped", s.Options.MaxRangeM)
	}
	return a
}

// describeStrips lists strips as "rows a–b: d0…d1 px".
func describeStrips(st []cvshim.Strip) string {
	var b strings.Builder
	for i, s := range st {
		if i > 0 {
			b.WriteString(", ")
		}
		fmt.Fprintf(&b, "rows %d–%d: %d…%d px", s.Row0, s.Row1-1, s.MinDisparity, s.MinDisparity+s.NumDisparities-1)
	}
	return b.String()
}

// Start creates both files.
func (fs *FileSink) Start(s *Setup) error {
	if fs.Path == "" {
		return fmt.Errorf("surface: no output path given")
	}
	opt := fs.Options
	attrs := maps.Clone(opt.Attrs)
	if attrs == nil {
		attrs = map[string]string{}
	}
	for k, v := range s.Attributes() {
		attrs[k] = v
	}
	if fs.PointsPath != "" {
		attrs["point_counts_file"] = fs.PointsPath
	}
	opt.Attrs = attrs
	if opt.Title == "" {
		opt.Title = "Sea-surface elevation maps reconstructed from stereo image pairs"
	}
	opt.WithFoam = s.Options.Foam.Enabled
	fs.foam = opt.WithFoam
	ew, err := ingest.CreateElevation(fs.Path, s.Grid, opt)
	if err != nil {
		return err
	}
	fs.ew = ew
	fs.ny, fs.nx = s.Grid.Ny(), s.Grid.Nx()
	if fs.PointsPath != "" {
		cw, err := createPoints(fs.PointsPath, s, opt)
		if err != nil {
			ew.Abort()
			fs.ew = nil
			return err
		}
		fs.cw = cw
	}
	return nil
}

// createPoints defines the point-count file.
func createPoints(path string, s *Setup, opt ingest.WriteOptions) (*netcdf.Writer, error) {
	w, err := netcdf.Create(path)
	if err != nil {
		return nil, fmt.Errorf("surface: %v", err)
	}
	units := opt.TimeUnits
	if units == "" {
		units = ingest.DefaultTimeUnits
	}
	g := s.Grid
	ds := []string{"time", "y", "x"}
	steps := []func() error{
		func() error { return w.DefDim("time", 0) },
		func() error { return w.DefDim("y", g.Ny()) },
		func() error { return w.DefDim("x", g.Nx()) },
		func() error { return w.DefVar("time", netcdf.Float64, []string{"time"}) },
		func() error { return w.SetChunks("time", []int{1024}) },
		func() error { return w.PutAttText("time", "standard_name", "time") },
		func() error { return w.PutAttText("time", "units", units) },
		func() error { return w.PutAttText("time", "calendar", "standard") },
		func() error { return w.PutAttText("time", "axis", "T") },
		func() error { return w.DefVar("y", netcdf.Float64, []string{"y"}) },
		func() error { return w.PutAttText("y", "units", "m") },
		func() error { return w.PutAttText("y", "axis", "Y") },
		func() error { return w.DefVar("x", netcdf.Float64, []string{"x"}) },
		func() error { return w.PutAttText("x", "units", "m") },
		func() error { return w.PutAttText("x", "axis", "X") },
		func() error { return w.DefVar("points", netcdf.Int32, ds) },
		func() error { return w.SetChunks("points", []int{1, g.Ny(), g.Nx()}) },
		func() error { return w.SetDeflate("points", 4, true) },
		func() error {
			return w.PutAttText("points", "long_name", "number of stereo points averaged into the cell's elevation")
		},
		func() error { return w.PutAttText("points", "units", "1") },
		func() error { return w.PutAttText("", "Conventions", "CF-1.8") },
		func() error { return w.PutAttText("", "title", "Points per cell of the elevation maps in "+opt.Title) },
	}
	attrs := s.Attributes()
	for _, k := range slices.Sorted(maps.Keys(attrs)) {
		v := attrs[k]
		steps = append(steps, func() error { return w.PutAttText("", k, v) })
	}
	steps = append(steps, w.EndDef,
		func() error { return w.PutFloat64("y", g.Y) },
		func() error { return w.PutFloat64("x", g.X) })
	for _, st := range steps {
		if err := st(); err != nil {
			w.Abort()
			return nil, fmt.Errorf("surface: cannot write %s: %v", path, err)
		}
	}
	return w, nil
}

// Write appends one map to both files.
func (fs *FileSink) Write(m *Map) error {
	if fs.ew == nil {
		return fmt.Errorf("surface: the output is not started or already finished")
	}
	var foam []uint8
	if fs.foam {
		foam = m.Foam
	}
	if err := fs.ew.WriteFrame(m.Time, m.Eta, foam); err != nil {
		return err
	}
	if fs.cw != nil {
		start, count := []int{fs.n, 0, 0}, []int{1, fs.ny, fs.nx}
		if err := fs.cw.PutFloat64Slab("time", start[:1], count[:1], []float64{m.Time}); err != nil {
			return fmt.Errorf("surface: %v", err)
		}
		if err := fs.cw.PutInt32Slab("points", start, count, m.Points); err != nil {
			return fmt.Errorf("surface: %v", err)
		}
	}
	fs.n++
	return nil
}

// Commit finishes both files and moves them into place; when the
// elevation file cannot be finished the point-count file is removed too.
func (fs *FileSink) Commit() error {
	if fs.ew == nil {
		return fmt.Errorf("surface: the output is not started or already finished")
	}
	ew, cw := fs.ew, fs.cw
	fs.ew, fs.cw = nil, nil
	if cw != nil {
		if err := cw.Commit(); err != nil {
			ew.Abort()
			return fmt.Errorf("surface: %v", err)
		}
	}
	if err := ew.Commit(); err != nil {
		if cw != nil {
			os.Remove(fs.PointsPath)
		}
		return err
	}
	return nil
}

// Abort discards both outputs; it does nothing after Commit.
func (fs *FileSink) Abort() {
	if fs.ew != nil {
		fs.ew.Abort()
		fs.ew = nil
	}
	if fs.cw != nil {
		fs.cw.Abort()
		fs.cw = nil
	}
}

// sortedKeys returns the keys of a skip count in order.
func sortedKeys(c ingest.SkipCounts) []string {
	keys := slices.Sorted(maps.Keys(c))
	return slices.DeleteFunc(keys, func(k string) bool { return strings.TrimSpace(k) == "" })
}

// WritePart reconstructs the pairs [first, last) of a record with a settled
// geometry (see [ReconstructRange]) into fs, and commits fs: its files
// appear complete, or, after an error, not at all. A part without a usable
// pair is written with no frames.
func WritePart(ctx context.Context, rig *calib.Rig, open Opener, geom *Geometry, opt Options, first, last int, fs *FileSink) (*Result, error) {
	res, err := ReconstructRange(ctx, rig, open, geom, opt, first, last, fs)
	if err != nil {
		fs.Abort()
		return res, err
	}
	if err := fs.Commit(); err != nil {
		return res, err
	}
	return res, nil
}
