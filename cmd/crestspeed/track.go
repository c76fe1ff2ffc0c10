package main

import (
	"context"
	"fmt"
	"maps"
	"math"
	"os"
	"path/filepath"
	"slices"
	"time"

	"github.com/spf13/cobra"

	"crestspeed/ingest"
	"crestspeed/report"
	"crestspeed/report/summary"
	"crestspeed/speed/analysis"
)

func newTrackCmd(app *App) *cobra.Command {
	cmd := &cobra.Command{
		Use:   "track --input FILE.nc --out DIR",
		Short: "Find and follow wave crests on elevation maps and measure their speeds",
		Long: `Find every wave crest on every frame of an elevation-map record, follow each
through time, and measure its speed against the nominal phase speed of its
carrier wave: c_cr/c_p (c_p at the spectral peak) and c_cr/c_loc (c_loc from
the local zero-crossing wavelength), with the local steepness S_c.

Depth comes from the file's water_depth_m attribute unless --depth is given
(--depth 0 means deep water). The mean direction of travel is estimated from
the record unless --direction is given. A uniform current is given by its
speed and the direction it flows toward; --vorticity is dU/dz of a linear
shear current: positive means the current grows toward the surface in the
direction the waves travel.

Writes crests.csv, tracks.csv, spectrum.csv and summary.json in the output
folder, then the report (report.html, figures, crest_tracks.nc; see
"crestspeed report") unless --no-report is given.`,
		Args: cobra.NoArgs,
		RunE: func(cmd *cobra.Command, args []string) error {
			cfg := *app.cfg
			if flagGiven(cmd, "no-report") {
				cfg.Track.Report = false
			}
			_, err := Track(cmd.Context(), app.con, cfg)
			return err
		},
	}
	f := cmd.Flags()
	f.String("input", "", "elevation maps: a NetCDF file, a quoted glob of files in time order, or an index of parts (.json, .txt)")
	f.String("variable", "", "name of the elevation variable (default: found by CF standard_name, else eta)")
	f.Float64("heading", 0, "bearing of the grid's +x axis, degrees clockwise from true north (site.heading_deg); default: the file's")
	f.Float64("depth", 0, "water depth (m); 0 = deep water; default: the file's water_depth_m")
	f.Float64("direction", 0, "mean direction of wave travel (degrees counter-clockwise from +x); default: estimated")
	f.Float64("current-speed", 0, "uniform current speed (m/s)")
	f.Float64("current-direction", 0, "direction the current flows toward (degrees counter-clockwise from +x)")
	f.Float64("vorticity", 0, "dU/dz of a linear shear current (1/s); positive: current grows toward the surface along the wave direction")
	f.Int("max-gap", 0, "frames a track may miss and continue")
	f.Float64("window", 0, "crest-speed fit window (s); 0 = Tp/8")
	f.Bool("no-report", false, "skip the report after tracking")
	f.String("gauge", "", "in-situ elevation series to compare the maps with (CSV time_s|utc,eta_m, or CF NetCDF)")
	f.Float64("gauge-x", 0, "x of the gauge on the grid (m)")
	f.Float64("gauge-y", 0, "y of the gauge on the grid (m)")
	app.bindFlag(cmd, "input", "track.input")
	app.bindFlag(cmd, "variable", "track.variable")
	app.bindFlag(cmd, "heading", "site.heading_deg")
	app.bindFlag(cmd, "gauge", "track.gauge.file")
	app.bindFlag(cmd, "gauge-x", "track.gauge.x_m")
	app.bindFlag(cmd, "gauge-y", "track.gauge.y_m")
	app.bindFlag(cmd, "depth", "track.depth_m")
	app.bindFlag(cmd, "direction", "track.direction_deg")
	app.bindFlag(cmd, "current-speed", "track.current_speed_mps")
	app.bindFlag(cmd, "current-direction", "track.current_direction_deg")
	app.bindFlag(cmd, "vorticity", "track.vorticity_per_s")
	app.bindFlag(cmd, "max-gap", "track.max_gap_frames")
	app.bindFlag(cmd, "window", "track.speed_window_s")
	return cmd
}

func init() { extraCommands = append(extraCommands, newTrackCmd) }

// checkTrack refuses a track configuration that cannot run, before any
// work is done.
func checkTrack(cfg Config) error {
	tc := cfg.Track
	switch {
	case tc.Input == "":
		return usageError{fmt.Errorf("give the elevation-map file with --input FILE.nc (track.input)")}
	case cfg.Out == "":
		return usageError{fmt.Errorf("give the output folder with --out DIR")}
	}
	if err := cfg.Site.check(); err != nil {
		return usageError{err}
	}
	if err := checkSteepnessBounds(tc.SteepnessBounds); err != nil {
		return usageError{err}
	}
	if err := tc.Options.Validate(); err != nil {
		return usageError{fmt.Errorf("track settings: %w", err)}
	}
	if tc.Report {
		if err := cfg.Report.options().Validate(); err != nil {
			return usageError{fmt.Errorf("report settings: %w", err)}
		}
	}
	return nil
}

// Track runs the crest analysis of the elevation-map file cfg.Track.Input
// into the folder cfg.Out, then the report unless cfg.Track.Report is off.
// With a dominant-wave band (track.dominant_band_fp) it runs the analysis
// of the dominant waves into cfg.Out/dominant as well.
func Track(ctx context.Context, con *console, cfg Config) (*report.Summary, error) {
	return track(ctx, con, cfg, time.Time{})
}

// track is Track. A non-zero created makes the outputs reproducible (the
// steps of "run"): the wall times of the passes go to the log instead of
// summary.json and the page, and the report says it was made at created,
// so that the same inputs give the same bytes.
func track(ctx context.Context, con *console, cfg Config, created time.Time) (*report.Summary, error) {
	reproducible := !created.IsZero()
	if err := checkTrack(cfg); err != nil {
		return nil, err
	}
	tc, dir := cfg.Track, cfg.Out
	outputs := inDir(dir, report.AllTrackOutputs()...)
	if tc.Report {
		outputs = append(outputs, inDir(dir, report.ReportOutputs...)...)
	}
	if !tc.dominantPass { // a dominant-wave analysis of an earlier run is not left behind
		d := filepath.Join(dir, dominantDir)
		outputs = append(outputs, inDir(d, append(report.AllTrackOutputs(), report.ReportOutputs...)...)...)
	}
	if err := claimOutputs(cfg.Force, outputs...); err != nil {
		return nil, err
	}
	// A dominant-wave band asks for both analyses: the dominant waves
	// into DIR/dominant first, then every wave here, whose summary and
	// report compare the two.
	var dominant *summary.DominantSummary
	if len(tc.DominantBandFp) > 0 && !tc.dominantPass {
		dc := cfg
		dc.Out = filepath.Join(dir, dominantDir)
		dc.Track.dominantPass = true
		if err := os.MkdirAll(dc.Out, 0o755); err != nil {
			return nil, fmt.Errorf("cannot create %s: %w", dc.Out, err)
		}
		con.logf("track: the dominant waves (band %v F_p) into %s", tc.DominantBandFp, dc.Out)
		ds, err := track(ctx, con, dc, created)
		if err != nil {
			return nil, fmt.Errorf("dominant-wave analysis: %w", err)
		}
		dominant = &summary.DominantSummary{Band: *ds.Band, Folder: dominantDir, Tracks: ds.Crests.Tracks, RowsWithSpeed: ds.Crests.RowsWithSpeed, Ratio: ds.Ratio}
		tc.DominantBandFp = nil
		con.logf("track: every wave into %s", dir)
	}
	started := time.Now()
	src, err := ingest.OpenElevations(tc.Input, tc.ElevationOptions)
	if err != nil {
		return nil, err
	}
	defer src.Close()
	var inputs []report.FileInfo
	for _, p := range src.Paths() {
		in, err := report.DescribeFile(p)
		if err != nil {
			return nil, err
		}
		inputs = append(inputs, in)
	}
	opt := tc.Options
	opt.Workers = cfg.Workers
	gauge, err := openGauge(tc.Gauge, src.Meta())
	if err != nil {
		return nil, err
	}
	if gauge != nil {
		opt.Probe = &analysis.ProbePoint{X: *tc.Gauge.XM, Y: *tc.Gauge.YM}
	}
	update, stop := con.passes()
	opt.Progress = hookPasses("track", update)
	con.logf("track: %s, %d frames of %d×%d", tc.Input, len(src.Meta().Times), src.Meta().Grid.Nx(), src.Meta().Grid.Ny())
	rec, err := analysis.Run(ctx, src, opt)
	stop()
	if err != nil {
		return nil, err
	}
	meta := src.Meta()
	// The maps are read: free the read-ahead blocks before the tables and
	// the report are made (a read-only file has nothing to flush, so an
	// error closing it changes nothing that was read).
	src.Close()
	for _, w := range rec.Warnings {
		con.logf("track: warning: %s", w)
	}
	if reproducible {
		for _, k := range slices.Sorted(maps.Keys(rec.Timings)) {
			con.logf("track: %s took %s", k, rec.Timings[k].Round(time.Millisecond))
		}
		clear(rec.Timings)
	}
	var gaugeRun *report.GaugeRun
	if gauge != nil {
		if gaugeRun, err = gauge.compare(rec, tc.Gauge); err != nil {
			return nil, err
		}
		printGauge(con, gaugeRun)
	}
	sum, d, err := report.WriteTrackOutputsForReport(dir, rec, report.RunInfo{
		Site:    siteSummary(cfg.Site, meta),
		Gauge:   gaugeRun,
		Version: version, Config: settingsMap(cfg), Inputs: inputs,
		SteepnessBounds: tc.SteepnessBounds, Started: started, Dominant: dominant,
	})
	if err != nil {
		return nil, err
	}
	printTrackSummary(con, sum)
	printBreaking(con, sum)
	con.logf("track: wrote %s in %s", dir, elapsed(started))
	// (WriteTrackOutputsForReport has let the crest rows go: the report
	// works from the tables alone.)
	if tc.Report {
		if err := writeReport(con, cfg, d, dir, time.Now(), created); err != nil {
			return nil, err
		}
	}
	return sum, nil
}

// dominantDir is the folder, inside a track folder, of the dominant-wave
// analysis.
const dominantDir = "dominant"

func checkSteepnessBounds(b []float64) error {
	for i, v := range b {
		if !(v > 0 && v < 2) {
			return fmt.Errorf("steepness class boundary %g is outside (0, 2) (track.steepness_bounds)", v)
		}
		if i > 0 && v <= b[i-1] {
			return fmt.Errorf("steepness class boundaries %v are not increasing (track.steepness_bounds)", b)
		}
	}
	return nil
}

func printTrackSummary(con *console, s *report.Summary) {
	ss := s.SeaState
	con.logf("sea state: Hm0 %.2f m, Tp %.2f s, mean direction %.1f° counter-clockwise from the grid's +x (%s), depth %s, peak phase speed %.2f m/s",
		ss.Hm0, ss.Tp, ss.MeanDirection, ss.DirectionSource, depthText(ss.Depth), ss.PeakPhaseSpeed)
	if !math.IsNaN(ss.DirectionToTrue) {
		con.logf("sea state: waves travel toward %.1f° true, coming from %.1f° true", ss.DirectionToTrue, ss.DirectionFromTrue)
	}
	con.logf("frames: %d read, %d skipped %v; masked fraction %.3f", s.Frames.Read, s.Frames.Skipped, s.Frames.SkippedReasons, s.Masked)
	if len(s.Frames.MaskedCells) > 0 {
		con.logf("cells masked on reading: %v", s.Frames.MaskedCells)
	}
	con.logf("crests: %d detections in %d tracks; %d rows with a speed", s.Crests.Detections, s.Crests.Tracks, s.Crests.RowsWithSpeed)
	for _, ref := range []string{"peak", "local"} {
		con.logf("c_cr/c_%s by steepness class:", ref)
		con.logf("  %-14s %7s %7s %7s %7s %7s %7s", "S_c", "n", "mean", "median", "mode", "p05", "p95")
		rs := s.Ratio[ref]
		for _, c := range append(rs.Classes, rs.All) {
			label := fmt.Sprintf("%.2f–%.2f", c.ScMin, c.ScMax)
			if math.IsInf(c.ScMax, 1) {
				label = fmt.Sprintf("≥ %.2f", c.ScMin)
			}
			if c.ScMin == 0 && math.IsInf(c.ScMax, 1) {
				label = "all"
			}
			con.logf("  %-14s %7d %7.3f %7.3f %7.3f %7.3f %7.3f", label, c.N, c.Mean, c.Median, c.Mode, c.P05, c.P95)
		}
	}
}

func printBreaking(con *console, s *report.Summary) {
	if w := s.Whitecaps; w != nil {
		con.logf("whitecaps: %d tracked over %d frames (%d rows); mean coverage %.4f; passage rate R %.3g 1/s; dissipation %.3g W/m² (b = %.2g, an order-of-magnitude estimate)",
			w.Whitecaps, w.FramesAnalysed, w.Rows, w.MeanCoverage, w.PassageRate, w.Dissipation, w.BreakingParameter)
		a := w.Ratio["peak"].All
		con.logf("whitecaps: front speed c_br/c_p: n %d, median %.3f, p05 %.3f, p95 %.3f; median whole-track c_br/c_p %.3f", a.N, a.Median, a.P05, a.P95, w.MedianTrackSpeedRatio)
	}
	if in := s.Inception; in != nil {
		con.logf("breaking inception: %d of %d crest tracks reached B_x ≥ %.3g", len(in.Flags), in.TracksWithBx, in.Threshold)
		if in.HaveFoam {
			con.logf("breaking inception: flagged & foamed %d, flagged only %d, foamed only %d, neither %d",
				in.FlaggedFoamed, in.FlaggedNotFoamed, in.NotFlaggedFoamed, in.NotFlaggedNotFoamed)
		}
	}
}

func depthText(d float64) string {
	if d <= 0 {
		return "deep water"
	}
	return fmt.Sprintf("%.1f m", d)
}
