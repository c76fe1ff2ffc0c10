package main

import (
	"context"
	"errors"
	"fmt"
	"path/filepath"
	"slices"
	"sort"
	"strings"
	"time"

	"github.com/spf13/cobra"

	"crestspeed/calib"
	"crestspeed/ingest"
	"crestspeed/surface"
)

// ReconstructConfig configures "crestspeed reconstruct": the inputs and
// output of the verb, and the reconstruction's own settings, which are
// surface.Options itself (its yaml tags are the schema of the section).
type ReconstructConfig struct {
	Rig             string  `yaml:"rig"`        // rig file
	Left            string  `yaml:"left"`       // glob of the left images
	Right           string  `yaml:"right"`      // glob of the right images
	Frames          string  `yaml:"frames"`     // record folder (instead of left/right)
	Timestamps      string  `yaml:"timestamps"` // timestamps file
	FPS             float64 `yaml:"fps"`        // time base for bare frame numbers
	StartUTC        string  `yaml:"start_utc"`  // instant of time 0 in the output
	DepthM          float64 `yaml:"depth_m"`    // water depth written to the output
	Deflate         int     `yaml:"deflate"`
	surface.Options `yaml:",inline"`
}

func init() { extraCommands = append(extraCommands, newReconstructCmd) }

// planeSpanCaution is the shortest span of fitted pairs, seconds, below
// which the fitted sea plane is flagged: several periods of the waves
// (common practice), 30 s covering at least three of most wind seas.
const planeSpanCaution = 30

func newReconstructCmd(app *App) *cobra.Command {
	cmd := &cobra.Command{
		Use:   "reconstruct --rig rig.yaml (--left GLOB --right GLOB | --frames DIR) --out maps.nc",
		Short: "Reconstruct sea-surface elevation maps from stereo image pairs",
		Long: `Reconstruct gridded sea-surface elevation maps η(t, y, x) from a record of
synchronised stereo image pairs and the rig file of the cameras, and write them
as an elevation-map NetCDF file (CF-1.8), with the number of stereo points per
cell in OUT-points.nc beside it.

Each pair is rectified, matched by OpenCV's semi-global block matcher (with a
left-right consistency check), reprojected to 3-D, put in the world frame of
the mean sea plane (z up from the plane, x along the left camera's horizontal
view direction, origin below the left camera) and binned on the grid: the
mean elevation of the points in a cell with at least min_points of them, NaN
elsewhere.

When the rig file has no sea plane, the plane is fitted (RANSAC and least
squares) to the points of plane.frames pairs spread over the first
plane.span_s seconds, and the rig with its plane is written to OUT-rig.yaml.
Without grid bounds the grid is the largest rectangle along the world x axis
well covered by both cameras in those pairs, at a spacing chosen from the
ground footprint of a pixel at the far edge; it is printed and stored in the
output's attributes.

Pairs are matched by the times or frame numbers in their names, or by a
timestamps file (frame,time_s,left,right); when names carry bare frame numbers
and there is no timestamps file, --fps sets the time base. Pairs that cannot
be used are skipped and listed with their reasons.`,
		Args: func(cmd *cobra.Command, args []string) error {
			if len(args) > 0 {
				return usageError{fmt.Errorf("reconstruct takes no file arguments but got %d (%s ...); quote the --left and --right patterns so that the shell does not expand them", len(args), args[0])}
			}
			return nil
		},
		RunE: func(cmd *cobra.Command, args []string) error {
			_, err := Reconstruct(cmd.Context(), app.con, *app.cfg)
			return err
		},
	}
	f := cmd.Flags()
	f.String("rig", "", "rig file from \"crestspeed calibrate\"")
	f.String("left", "", "glob of the left images (quote it), e.g. \"run1/left_*.png\"")
	f.String("right", "", "glob of the right images (quote it)")
	f.String("frames", "", "record folder with left_*/right_* images or left/ and right/ subfolders")
	f.String("timestamps", "", "timestamps file (CSV: frame,time_s,left,right)")
	f.Float64("fps", 0, "frame rate (Hz) for names that carry bare frame numbers")
	f.String("start", "", "UTC instant of time 0 (RFC 3339), for the output's time units")
	f.Float64("x0", 0, "grid: x of the first cell centre (m); give x0, x1, y0, y1 together")
	f.Float64("x1", 0, "grid: x of the last cell centre (m)")
	f.Float64("y0", 0, "grid: y of the first cell centre (m)")
	f.Float64("y1", 0, "grid: y of the last cell centre (m)")
	f.Float64("dx", 0, "grid spacing (m); 0 = from the ground sampling distance")
	f.Int("min-points", 0, "fewest stereo points for a cell's elevation")
	f.Int("plane-frames", 0, "pairs fitted for the mean sea plane")
	f.Bool("refit-plane", false, "fit the mean sea plane even when the rig file has one")
	f.Float64("max-range", 0, "drop points beyond this horizontal range (m); 0 = no limit")
	for flag, key := range map[string]string{
		"rig": "reconstruct.rig", "left": "reconstruct.left", "right": "reconstruct.right",
		"frames": "reconstruct.frames", "timestamps": "reconstruct.timestamps", "fps": "reconstruct.fps",
		"start": "reconstruct.start_utc",
		"x0":    "reconstruct.grid.x0_m", "x1": "reconstruct.grid.x1_m",
		"y0": "reconstruct.grid.y0_m", "y1": "reconstruct.grid.y1_m", "dx": "reconstruct.grid.dx_m",
		"min-points": "reconstruct.min_points", "plane-frames": "reconstruct.plane.frames",
		"refit-plane": "reconstruct.plane.refit", "max-range": "reconstruct.max_range_m",
	} {
		app.bindFlag(cmd, flag, key)
	}
	return cmd
}

// reconstructOutputs names the files written beside the elevation maps.
func reconstructOutputs(out string) (points, rig string) {
	stem := strings.TrimSuffix(out, filepath.Ext(out))
	return stem + "-points.nc", stem + "-rig.yaml"
}

// defaultReconstructConfig holds the surface package's defaults; the verb
// detects foam unless told not to (the library leaves it off so that its
// callers opt in).
func defaultReconstructConfig() ReconstructConfig {
	c := ReconstructConfig{Deflate: 4, Options: surface.DefaultOptions()}
	c.Foam.Enabled = true
	return c
}

// surfaceOptions are the reconstruction's options with the run's workers.
// The foam detector's internal constants, which are not settings (no yaml
// key), keep the package's values.
func (c ReconstructConfig) surfaceOptions(workers int) surface.Options {
	o := c.Options
	d := surface.DefaultFoamOptions()
	f := &o.Foam
	f.BlockPx, f.MedianBlocks, f.OpenPx, f.ClosePx = d.BlockPx, d.MedianBlocks, d.OpenPx, d.ClosePx
	f.SaturatedDN, f.SaturatedFraction, f.BlackMeanDN = d.SaturatedDN, d.SaturatedFraction, d.BlackMeanDN
	o.Workers = workers
	return o
}

// Reconstruct turns the stereo pairs of cfg.Reconstruct into the
// elevation-map file cfg.Out (with its point counts, and the rig with its
// sea plane when the plane was fitted).
func Reconstruct(ctx context.Context, con *console, c Config) (*surface.Result, error) {
	cfg := c.Reconstruct
	out := c.Out
	switch {
	case out == "":
		return nil, usageError{fmt.Errorf("give the elevation-map file to write with --out, like --out maps.nc")}
	case strings.ToLower(filepath.Ext(out)) != ".nc":
		return nil, usageError{fmt.Errorf("elevation-map file %s should end in .nc", out)}
	case cfg.Rig == "":
		return nil, usageError{fmt.Errorf("give the rig file with --rig (reconstruct.rig); make one with \"crestspeed calibrate\"")}
	case cfg.Frames == "" && cfg.Left == "" && cfg.Right == "" && cfg.Timestamps == "":
		return nil, usageError{fmt.Errorf("give the images with --left and --right patterns or a record folder with --frames")}
	case cfg.Frames != "" && (cfg.Left != "" || cfg.Right != ""):
		return nil, usageError{fmt.Errorf("give either --frames or --left and --right, not both")}
	}
	if cfg.StartUTC != "" {
		if _, err := time.Parse(time.RFC3339, cfg.StartUTC); err != nil {
			return nil, usageError{fmt.Errorf("--start (reconstruct.start_utc) %q is not an RFC 3339 instant like 2026-06-14T09:00:00Z", cfg.StartUTC)}
		}
	}
	if err := c.Site.check(); err != nil {
		return nil, usageError{err}
	}
	opt := cfg.surfaceOptions(c.Workers)
	if err := opt.Validate(); err != nil {
		return nil, usageError{fmt.Errorf("reconstruct settings: %w", err)}
	}
	rig, err := calib.LoadRig(cfg.Rig)
	if err != nil {
		return nil, err
	}
	pointsPath, rigPath := reconstructOutputs(out)
	outputs := []string{out, pointsPath}
	fitPlane := rig.SeaPlane == nil || cfg.Plane.Refit
	if fitPlane {
		outputs = append(outputs, rigPath)
	}
	if err := claimOutputs(c.Force, outputs...); err != nil {
		return nil, err
	}
	spec := ingest.PairSpec{Dir: cfg.Frames, LeftGlob: cfg.Left, RightGlob: cfg.Right, TimestampsFile: cfg.Timestamps, FPS: cfg.FPS, StartUTC: cfg.StartUTC}
	first, err := ingest.OpenPairs(spec)
	if err != nil {
		return nil, usageError{err}
	}
	total := first.Len()
	// The time base (how the times were read) and the absolute time of
	// time 0 (start_utc, the utc column of the timestamps file, or the
	// images' EXIF capture time) are printed and recorded in the maps.
	units, originNote := ingest.DefaultTimeUnits, "none (times count from the record's own zero)"
	if o, ok := first.Origin(); ok {
		units, originNote = "seconds since "+o.UTC.UTC().Format("2006-01-02T15:04:05.999999999Z"), o.From
	}
	timeRule := first.TimeRule()
	for _, it := range first.SkippedFiles().Items {
		con.logf("reconstruct: skipped %s: %s %s", strings.Join(it.Files, ", "), it.Reason, it.Detail)
	}
	first.Close()
	con.logf("reconstruct: times: %s; time 0: %s", timeRule, originNote)
	open := func() (ingest.StereoSource, error) { return ingest.OpenPairs(spec) }

	t0 := time.Now()
	con.logf("reconstruct: %d image pairs, rig %s (%d×%d px, baseline %.3f m), %d workers", total, cfg.Rig, rig.Size.X, rig.Size.Y, rig.Baseline(), c.Workers)
	update, stop := con.passes()
	opt.Progress = update
	sink := &surface.FileSink{Path: out, PointsPath: pointsPath, Options: ingest.WriteOptions{
		Deflate: cfg.Deflate, TimeUnits: units, DepthM: cfg.DepthM,
		Attrs:    map[string]string{"rig_file": cfg.Rig, "site": c.Site.Name, "time_base": timeRule, "time_origin": originNote},
		Platform: c.Site.Platform, Georef: c.Site.georef(),
	}}
	res, err := surface.Run(ctx, rig, open, opt, sink)
	stop()
	if err != nil {
		sink.Abort()
		var se *surface.SizeError
		if errors.As(err, &se) {
			return nil, fmt.Errorf("the frames are %d×%d px (first pair %s) but rig file %s describes %d×%d px cameras; give the rig file of the cameras that took these frames",
				se.Got.X, se.Got.Y, se.Path, cfg.Rig, se.Want.X, se.Want.Y)
		}
		return nil, err
	}
	s := res.Setup
	if err := sink.Commit(); err != nil {
		return nil, err
	}
	p := s.Rig.SeaPlane
	if s.PlaneFit != nil {
		con.logf("reconstruct: mean sea plane fitted to %d points of %d pairs: camera %.3f m above it, %d inliers within %g m, RMS %.3f m",
			s.PlaneFit.Points, s.PlanePairs, p.OffsetM, s.PlaneFit.Inliers, opt.Plane.ThresholdM, s.PlaneFit.RMSM)
		if s.PlaneFit.SpanS < planeSpanCaution {
			con.logf("reconstruct: caution: the plane was fitted to pairs spanning only %.1f s, too short for the waves to average out, so the plane and the mean level of the maps may be off by a fraction of Hs; fit over a longer record (plane.span_s) or give the plane in the rig file", s.PlaneFit.SpanS)
		}
		if err := s.Rig.Save(rigPath); err != nil {
			return nil, err
		}
	} else {
		con.logf("reconstruct: mean sea plane from the rig file: camera %.3f m above it", p.OffsetM)
	}
	g := s.Grid
	con.logf("reconstruct: grid x %.2f–%.2f m, y %.2f–%.2f m, %d × %d cells of %.4g m (%s)",
		g.X[0], g.X[len(g.X)-1], g.Y[0], g.Y[len(g.Y)-1], g.Nx(), g.Ny(), g.Dx(), s.GridNote)
	con.logf("reconstruct: disparities %d to %d px%s; %d workers × %d OpenCV threads",
		s.SGBM.MinDisparity, s.SGBM.MinDisparity+s.SGBM.NumDisparities-1, map[bool]string{true: " (residual about the sea plane's)", false: ""}[s.Prewarped],
		s.Workers, s.OpenCVThreads)
	for _, k := range sortedSkipReasons(res.FoamSkipped) {
		con.logf("reconstruct: no foam detection on %d pairs (elevation kept): %s", res.FoamSkipped[k], k)
	}
	for _, k := range sortedSkipReasons(res.Skipped) {
		con.logf("reconstruct: skipped %d pairs: %s", res.Skipped[k], k)
	}
	for i, p := range res.SkippedPairs {
		if i == maxNamedSkips {
			con.logf("reconstruct: … and %d more skipped pairs", len(res.SkippedPairs)-i)
			break
		}
		files := strings.Join(slices.DeleteFunc([]string{p.Left, p.Right}, func(s string) bool { return s == "" }), ", ")
		con.logf("reconstruct: skipped pair %d (t = %.3f s) %s: %s", p.Index, p.TimeS, files, p.Reason)
	}
	tm := res.Times
	if n := time.Duration(max(tm.Pairs, 1)); tm.Pairs > 0 {
		con.logf("reconstruct: per pair (summed over workers): remap %s, matching %s, reprojection %s, gridding %s",
			(tm.Remap / n).Round(time.Millisecond), (tm.Match / n).Round(time.Millisecond),
			(tm.Reproject / n).Round(time.Millisecond), (tm.Grid / n).Round(time.Millisecond))
	}
	written := out + " and " + pointsPath
	if s.PlaneFit != nil {
		written = out + ", " + pointsPath + " and " + rigPath
	}
	con.logf("reconstruct: %d maps, %.0f %% of cells with elevations on average (lowest %.0f %%); wrote %s in %s",
		res.Frames, 100*res.CoverageMean, 100*res.CoverageMin, written, elapsed(t0))
	return res, nil
}

// maxNamedSkips is how many skipped pairs the log names one by one.
const maxNamedSkips = 50

// sortedSkipReasons lists skip reasons in a fixed order.
func sortedSkipReasons(c ingest.SkipCounts) []string {
	keys := make([]string, 0, len(c))
	for k, v := range c {
		if v > 0 {
			keys = append(keys, k)
		}
	}
	sort.Strings(keys)
	return keys
}
