package main

import (
	"context"
	"fmt"
	"os"
	"path/filepath"
	"time"

	"github.com/spf13/cobra"

	"crestspeed/report"
)

// ReportConfig configures the deployment report ("crestspeed report" and
// the report stage of "crestspeed track"): the verb's input and the report
// package's options.
type ReportConfig struct {
	Tracks         string `yaml:"tracks"`
	report.Options `yaml:",inline"`
}

func defaultReportConfig() ReportConfig { return ReportConfig{Options: report.DefaultOptions()} }

func (rc ReportConfig) options() report.Options {
	o := rc.Options
	o.Version = version
	return o
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
			return Report(cmd.Context(), app.con, *app.cfg)
		},
	}
	f := cmd.Flags()
	f.String("tracks", "", "folder written by \"crestspeed track\" (crests.csv, summary.json, spectrum.csv)")
	f.Int("resamples", 0, "bootstrap resamples for the 90 % confidence intervals")
	f.Uint64("seed", 0, "seed of the bootstrap resampling")
	f.Int("highest-crests", 0, "number of highest crests whose histories figure 4 shows")
	app.bindFlag(cmd, "tracks", "report.tracks")
	app.bindFlag(cmd, "resamples", "report.bootstrap_resamples")
	app.bindFlag(cmd, "seed", "report.bootstrap_seed")
	app.bindFlag(cmd, "highest-crests", "report.highest_crests")
	return cmd
}

// Report rebuilds the report of the track folder cfg.Report.Tracks into
// cfg.Out (default: that folder).
func Report(ctx context.Context, con *console, cfg Config) error {
	rc := cfg.Report
	if rc.Tracks == "" {
		return usageError{fmt.Errorf("give the folder \"crestspeed track\" wrote with --tracks DIR")}
	}
	out := cfg.Out
	if out == "" {
		out = rc.Tracks
	}
	if err := rc.options().Validate(); err != nil {
		return usageError{fmt.Errorf("report settings: %w", err)}
	}
	outputs := inDir(out, report.ReportOutputs...)
	if !samePath(out, rc.Tracks) {
		// in the track folder summary.json is updated in place
		outputs = append(outputs, filepath.Join(out, "summary.json"))
	}
	if err := claimOutputs(cfg.Force, outputs...); err != nil {
		return err
	}
	started := time.Now()
	d, err := report.LoadDeployment(rc.Tracks)
	if err != nil {
		return err
	}
	con.logf("report: %d crest rows from %s", d.Crests.Len(), rc.Tracks)
	return writeReport(con, cfg, d, out, started, time.Time{})
}

func init() { extraCommands = append(extraCommands, newReportCmd) }

// writeReport writes the report of d into dir and prints where it is.
func writeReport(con *console, cfg Config, d *report.Deployment, dir string, started, created time.Time) error {
	opt := cfg.Report.options()
	opt.Bootstrap.Workers = cfg.Workers
	opt.Created, opt.Reproducible = created, !created.IsZero()
	res, err := report.WriteReport(dir, d, opt)
	if err != nil {
		return err
	}
	con.logf("report: %d figures, %s written in %s", len(res.Figures), filepath.Join(dir, "crest_tracks.nc"), elapsed(started))
	fmt.Fprintln(con.stdout, res.HTML)
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
