package main

import (
	"fmt"
	"math"
	"os"
	"path/filepath"
	"time"

	"github.com/spf13/cobra"

	"crestspeed/ingest"
	"crestspeed/report"
	"crestspeed/speed"
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
			cfg := app.cfg
			if cfg.Track.Input == "" {
				return usageError{fmt.Errorf("give the elevation-map file with --input FILE.nc")}
			}
			if cfg.Out == "" {
				return usageError{fmt.Errorf("give the output folder with --out DIR")}
			}
			_, err := app.track(cmd, cfg.Track.Input, cfg.Out)
			return err
		},
	}
	f := cmd.Flags()
	f.String("input", "", "elevation-map NetCDF file")
	f.Float64("depth", 0, "water depth (m); 0 = deep water; default: the file's water_depth_m")
	f.Float64("direction", 0, "mean direction of wave travel (degrees counter-clockwise from +x); default: estimated")
	f.Float64("current-speed", 0, "uniform current speed (m/s)")
	f.Float64("current-direction", 0, "direction the current flows toward (degrees counter-clockwise from +x)")
	f.Float64("vorticity", 0, "dU/dz of a linear shear current (1/s); positive: current grows toward the surface along the wave direction")
	f.Int("max-gap", 0, "frames a track may miss and continue")
	f.Float64("window", 0, "crest-speed fit window (s); 0 = Tp/4")
	f.Bool("no-report", false, "skip the report after tracking")
	bindFlag(app, cmd, "input", "track.input")
	bindFlag(app, cmd, "depth", "track.depth_m")
	bindFlag(app, cmd, "direction", "track.direction_deg")
	bindFlag(app, cmd, "current-speed", "track.current_speed_mps")
	bindFlag(app, cmd, "current-direction", "track.current_direction_deg")
	bindFlag(app, cmd, "vorticity", "track.vorticity_per_s")
	bindFlag(app, cmd, "max-gap", "track.max_gap_frames")
	bindFlag(app, cmd, "window", "track.speed_window_s")
	prev := cmd.PreRunE
	cmd.PreRunE = func(c *cobra.Command, args []string) error {
		if err := prev(c, args); err != nil {
			return err
		}
		if v, _ := c.Flags().GetBool("no-report"); v {
			app.cfg.Track.Report = false
		}
		return nil
	}
	return cmd
}

func init() { extraCommands = append(extraCommands, newTrackCmd) }

// track runs the crest analysis of one elevation-map file into dir.
func (app *App) track(cmd *cobra.Command, input, dir string) (*report.Summary, error) {
	tc := app.cfg.Track
	for _, name := range report.TrackOutputs {
		if err := refuseOverwrite(filepath.Join(dir, name), app.cfg.Force); err != nil {
			return nil, err
		}
	}
	if err := checkSteepnessBounds(tc.SteepnessBounds); err != nil {
		return nil, usageError{err}
	}
	if !(tc.BxThreshold > 0 && tc.BxThreshold < 5) {
		return nil, usageError{fmt.Errorf("breaking-index threshold %g is outside (0, 5)", tc.BxThreshold)}
	}
	if tc.Report {
		if err := app.cfg.Report.options().Validate(); err != nil {
			return nil, usageError{err}
		}
		if err := refuseReportOverwrite(dir, false, app.cfg.Force); err != nil {
			return nil, err
		}
	}
	started := time.Now()
	src, err := ingest.OpenElevation(input, ingest.ElevationOptions{})
	if err != nil {
		return nil, err
	}
	defer src.Close()
	in, err := report.DescribeFile(input)
	if err != nil {
		return nil, err
	}
	cd := tc.CurrentDirectionDeg * math.Pi / 180
	opt := speed.RecordOptions{
		DepthM:           tc.DepthM,
		DirectionDeg:     tc.DirectionDeg,
		Current:          speed.Current{U: tc.CurrentSpeedMPS * math.Cos(cd), V: tc.CurrentSpeedMPS * math.Sin(cd)},
		Vorticity:        tc.VorticityPerS,
		MinCrestFraction: tc.MinCrestFraction,
		MinCrestLengthM:  tc.MinCrestLengthM,
		MaxGapFrames:     tc.MaxGapFrames,
		SpeedWindowS:     tc.SpeedWindowS,
		Workers:          app.cfg.Workers,
		BreakingIndex:    tc.BreakingIndex,
		VelocityWindowS:  tc.VelocityWindowS,
		BxThreshold:      tc.BxThreshold,
		Whitecaps:        tc.Whitecaps,
		Breaking: speed.BreakingOptions{
			MaxFoamFraction:   tc.FoamSaturation,
			MinPatchArea:      tc.MinFoamPatchArea,
			BinWidth:          tc.LambdaBinWidth,
			BreakingParameter: tc.BreakingParameter,
		},
	}
	if err := opt.Validate(); err != nil {
		return nil, usageError{err}
	}
	n := len(src.Meta().Times)
	bars := map[string]*progress{}
	opt.Progress = func(pass string, done, total int) {
		pr, ok := bars[pass]
		if !ok {
			pr = app.newProgress(pass, total)
			bars[pass] = pr
		}
		pr.set(done, total)
	}
	app.logf("track: %s, %d frames of %d×%d", input, n, src.Meta().Grid.Nx(), src.Meta().Grid.Ny())
	rec, err := speed.AnalyseRecord(cmd.Context(), src, opt)
	for _, pr := range bars {
		pr.done()
	}
	if err != nil {
		return nil, err
	}
	for _, w := range rec.Warnings {
		app.logf("track: warning: %s", w)
	}
	sum, err := report.WriteTrackOutputs(dir, rec, report.RunInfo{
		Version: version, Config: app.resolvedConfig(), Inputs: []report.FileInfo{in},
		SteepnessBounds: tc.SteepnessBounds, Started: started,
	})
	if err != nil {
		return nil, err
	}
	app.printTrackSummary(sum)
	app.printBreaking(sum)
	app.logf("track: wrote %s in %s", dir, elapsed(started))
	if tc.Report {
		if err := app.writeReport(report.DeploymentFromRecord(rec, sum, dir), dir, time.Now()); err != nil {
			return nil, err
		}
	}
	return sum, nil
}

func checkSteepnessBounds(b []float64) error {
	for i, v := range b {
		if !(v > 0 && v < 2) {
			return fmt.Errorf("steepness class boundary %g is outside (0, 2)", v)
		}
		if i > 0 && v <= b[i-1] {
			return fmt.Errorf("steepness class boundaries %v are not increasing", b)
		}
	}
	return nil
}

// resolvedConfig is the configuration as used, for provenance.
func (app *App) resolvedConfig() map[string]any {
	return app.V.AllSettings()
}

func (app *App) printTrackSummary(s *report.Summary) {
	ss := s.SeaState
	app.logf("sea state: Hm0 %.2f m, Tp %.2f s, mean direction %.1f° (%s), depth %s, peak phase speed %.2f m/s",
		ss.Hm0, ss.Tp, ss.MeanDirection, ss.DirectionSource, depthText(ss.Depth), ss.PeakPhaseSpeed)
	app.logf("frames: %d read, %d skipped %v; masked fraction %.3f", s.Frames.Read, s.Frames.Skipped, s.Frames.SkippedReasons, s.Masked)
	app.logf("crests: %d detections in %d tracks; %d rows with a speed", s.Crests.Detections, s.Crests.Tracks, s.Crests.RowsWithSpeed)
	for _, ref := range []string{"peak", "local"} {
		app.logf("c_cr/c_%s by steepness class:", ref)
		app.logf("  %-14s %7s %7s %7s %7s %7s %7s", "S_c", "n", "mean", "median", "mode", "p05", "p95")
		rs := s.Ratio[ref]
		for _, c := range append(rs.Classes, rs.All) {
			label := fmt.Sprintf("%.2f–%.2f", c.ScMin, c.ScMax)
			if math.IsInf(c.ScMax, 1) {
				label = fmt.Sprintf("≥ %.2f", c.ScMin)
			}
			if c.ScMin == 0 && math.IsInf(c.ScMax, 1) {
				label = "all"
			}
			app.logf("  %-14s %7d %7.3f %7.3f %7.3f %7.3f %7.3f", label, c.N, c.Mean, c.Median, c.Mode, c.P05, c.P95)
		}
	}
}

func (app *App) printBreaking(s *report.Summary) {
	if w := s.Whitecaps; w != nil {
		app.logf("whitecaps: %d tracked over %d frames (%d rows); mean coverage %.4f; passage rate R %.3g 1/s; dissipation %.3g W/m² (b = %.2g, an order-of-magnitude estimate)",
			w.Whitecaps, w.FramesAnalysed, w.Rows, w.MeanCoverage, w.PassageRate, w.Dissipation, w.BreakingParameter)
		a := w.Ratio["peak"].All
		app.logf("whitecaps: front speed c_br/c_p: n %d, median %.3f, p05 %.3f, p95 %.3f; median whole-track c_br/c_p %.3f", a.N, a.Median, a.P05, a.P95, w.MedianTrackSpeedRatio)
	}
	if in := s.Inception; in != nil {
		app.logf("breaking inception: %d of %d crest tracks reached B_x ≥ %.3g", len(in.Flags), in.TracksWithBx, in.Threshold)
		if in.HaveFoam {
			app.logf("breaking inception: flagged & foamed %d, flagged only %d, foamed only %d, neither %d",
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

var _ = os.Stat
