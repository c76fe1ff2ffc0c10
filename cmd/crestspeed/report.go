package main

import (
	"fmt"
	"os"
	"path/filepath"
	"time"

	"github.com/spf13/cobra"

	"crestspeed/report"
)

// ReportConfig configures the deployment report ("crestspeed report" and
// the report stage of "crestspeed track").
type ReportConfig struct {
	Tracks             string `yaml:"tracks"`
	BootstrapResamples int    `yaml:"bootstrap_resamples"`
	BootstrapSeed      uint64 `yaml:"bootstrap_seed"`
	HighestCrests      int    `yaml:"highest_crests"`
	MinClassTracks     int    `yaml:"min_class_tracks"`
}

func (rc ReportConfig) options() report.Options {
	return report.Options{
		Bootstrap:      report.BootstrapOptions{Resamples: rc.BootstrapResamples, Seed: rc.BootstrapSeed},
		HighestCrests:  rc.HighestCrests,
		MinClassTracks: rc.MinClassTracks,
		Version:        version,
	}
}

func newReportCmd(app *App) *cobra.Command {
	cmd := &cobra.Command{
		Use:   "report --tracks DIR [--out DIR]",
		Short: "Write the deployment report from the files of a tracking run",
		Long: `Rebuild the deployment report from the files "crestspeed track" wrote
(crests.csv, summary.json, spectrum.csv, and whitecaps.csv, lambda.csv and
coverage.csv when the record had a foam mask): crest-speed ratio statistics
per steepness class with bootstrap confidence intervals (resampling whole
tracks), the figures (PNG and SVG) — crest speeds, and whitecaps and the
breaking-inception index when present — a self-contained report.html, the crest
tracks as CF-1.8 trajectories (crest_tracks.nc) and summary.json with the
intervals and the path of every output.

The output folder defaults to the track folder. Existing report files are
kept unless --force is given. "crestspeed track" writes the report itself
unless --no-report is given.`,
		Args: cobra.NoArgs,
		RunE: func(cmd *cobra.Command, args []string) error {
			rc := app.cfg.Report
			if rc.Tracks == "" {
				return usageError{fmt.Errorf("give the folder \"crestspeed track\" wrote with --tracks DIR")}
			}
			out := app.cfg.Out
			if out == "" {
				out = rc.Tracks
			}
			if err := rc.options().Validate(); err != nil {
				return usageError{err}
			}
			if err := refuseReportOverwrite(out, !samePath(out, rc.Tracks), app.cfg.Force); err != nil {
				return err
			}
			started := time.Now()
			d, err := report.LoadDeployment(rc.Tracks)
			if err != nil {
				return err
			}
			app.logf("report: %d crest rows from %s", d.Crests.Len(), rc.Tracks)
			return app.writeReport(d, out, started)
		},
	}
	f := cmd.Flags()
	f.String("tracks", "", "folder written by \"crestspeed track\" (crests.csv, summary.json, spectrum.csv)")
	f.Int("resamples", 0, "bootstrap resamples for the 90 % confidence intervals")
	f.Uint64("seed", 0, "seed of the bootstrap resampling")
	f.Int("highest-crests", 0, "number of highest crests whose histories figure 4 shows")
	bindFlag(app, cmd, "tracks", "report.tracks")
	bindFlag(app, cmd, "resamples", "report.bootstrap_resamples")
	bindFlag(app, cmd, "seed", "report.bootstrap_seed")
	bindFlag(app, cmd, "highest-crests", "report.highest_crests")
	return cmd
}

func init() { extraCommands = append(extraCommands, newReportCmd) }

// refuseReportOverwrite refuses to replace a finished report unless
// force; summary.json counts only when the report goes to another folder
// than the track files (in the track folder it is updated in place).
func refuseReportOverwrite(dir string, withSummary, force bool) error {
	names := append([]string{}, report.ReportOutputs...)
	if withSummary {
		names = append(names, "summary.json")
	}
	for _, name := range names {
		if err := refuseOverwrite(filepath.Join(dir, name), force); err != nil {
			return err
		}
	}
	return nil
}

// writeReport writes the report of d into dir and prints where it is.
func (app *App) writeReport(d *report.Deployment, dir string, started time.Time) error {
	opt := app.cfg.Report.options()
	opt.Bootstrap.Workers = app.cfg.Workers
	res, err := report.WriteReport(dir, d, opt)
	if err != nil {
		return err
	}
	app.logf("report: %d figures, %s written in %s", len(res.Figures), filepath.Join(dir, "crest_tracks.nc"), elapsed(started))
	fmt.Fprintln(app.Stdout, res.HTML)
	return nil
}

func samePath(a, b string) bool {
	aa, err1 := filepath.Abs(a)
	bb, err2 := filepath.Abs(b)
	if err1 != nil || err2 != nil {
		return a == b
	}
	if aa == bb {
		return true
	}
	ia, err1 := os.Stat(aa)
	ib, err2 := os.Stat(bb)
	return err1 == nil && err2 == nil && os.SameFile(ia, ib)
}
