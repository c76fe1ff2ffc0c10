package main

import (
	"context"
	"fmt"
	"runtime"

	"github.com/spf13/cobra"
)

func init() { extraCommands = append(extraCommands, newRunCmd, newRunStepCmd) }

func newRunCmd(app *App) *cobra.Command {
	cmd := &cobra.Command{
		Use:   "run --config deployment.yaml --out DIR [--parts N] | run --out DIR [--config campaign.yaml] A.yaml B.yaml...",
		Short: "Run the whole chain on a deployment: calibrate, reconstruct in parts, track, report",
		Long: `Run the whole chain on one deployment from one configuration file, in steps
recorded in the run folder DIR:

  calibrate   when the configuration gives no rig file (reconstruct.rig), from
              the chessboard pairs of the calibrate section, into DIR/rig.yaml;
  settle      the mean sea plane, disparity band and grid, once, from pairs
              sampled over the whole record, into DIR/geometry.yaml;
  part-NNNN   each part of the record (contiguous ranges of pairs; --parts N
              or run.parts, default one per run.pairs_per_part pairs) into
              DIR/parts/part-NNNN.nc;
  index       DIR/parts/index.json, the parts as one record;
  track       crests (and whitecaps) into DIR/tracks, with the report.

Running the same command again does only the steps that are missing or out
of date, and says which and why: after an interruption it goes on where it
stopped, and after a change of setting it redoes what depends on it. The
result is the same, byte for byte, as that of an uninterrupted run. A folder
holding the run of another deployment is refused; --force redoes every step.
"crestspeed status DIR" shows where a run stands.

Given several deployment configuration files as arguments, run does each
deployment into DIR/<file name without .yaml>/ in turn, then pools them into
the campaign report in DIR/campaign (settings of the campaign section from
--config); a rerun again does only what is missing or out of date.

Every setting comes from the file (see "crestspeed init"); the resolved
configuration is kept in DIR/.crestspeed/config.yaml and the run's log in
DIR/run.log.`,
		Args: cobra.ArbitraryArgs,
		RunE: func(cmd *cobra.Command, args []string) error {
			if s, _ := cmd.Flags().GetString("scheduler"); s != "local" {
				conf, _ := cmd.Flags().GetString("config")
				return runScheduled(cmd.Context(), app.con, *app.cfg, s, args, conf, flagGiven(cmd, "parts")) // slurm.go
			}
			if len(args) > 0 {
				parts := -1
				if flagGiven(cmd, "parts") {
					parts = app.cfg.Run.Parts
				}
				return RunCampaign(cmd.Context(), app.con, *app.cfg, args, parts)
			}
			return RunDeployment(cmd.Context(), app.con, *app.cfg)
		},
	}
	cmd.Flags().String("scheduler", "local", "where the parts run: local (this machine) or slurm (submitted with sbatch; see the slurm settings)")
	cmd.Flags().Int("parts", 0, "number of parts of the record (run.parts); 0 = one per run.pairs_per_part pairs")
	app.bindFlag(cmd, "parts", "run.parts")
	return cmd
}

// RunDeployment runs every step of the deployment of cfg into the folder
// cfg.Out on this machine: prepare (calibrate when needed, settle), the
// parts in order with all workers each, then index and track.
func RunDeployment(ctx context.Context, con *console, cfg Config) error {
	n, err := prepareRun(ctx, con, cfg)
	if err != nil {
		return err
	}
	dir := absPath(cfg.Out)
	con.logf("run: %s, %d parts", dir, n)
	return doSteps(ctx, con, dir, cfg.Workers, wantAll)
}

// newRunStepCmd is the hidden command that does one group of steps of a
// run prepared by "run" (or by a scheduler's submission): the unit of a
// cluster job.
func newRunStepCmd(app *App) *cobra.Command {
	cmd := &cobra.Command{
		Use:    "run-step --out DIR --step prepare|part|finish [--part K]",
		Short:  "Do one step of a prepared run (for cluster jobs)",
		Hidden: true,
		Args:   cobra.NoArgs,
		RunE: func(cmd *cobra.Command, args []string) error {
			step, _ := cmd.Flags().GetString("step")
			part, _ := cmd.Flags().GetInt("part")
			return RunStep(cmd.Context(), app.con, app.cfg.Out, app.cfg.Workers, step, part, flagGiven(cmd, "part"))
		},
	}
	cmd.Flags().String("step", "", "prepare (calibrate and settle), part (one part, with --part K) or finish (index, track and report)")
	cmd.Flags().Int("part", 0, "the part to reconstruct, from 0")
	return cmd
}

// RunStep does one group of steps of the run prepared in dir, reading the
// run's saved configuration: "prepare" = calibrate (when the run has no rig
// file) and settle; "part" = part K (nothing when it is up to date);
// "finish" = index, track and report.
func RunStep(ctx context.Context, con *console, dir string, workers int, step string, part int, partGiven bool) error {
	if dir == "" {
		return usageError{fmt.Errorf("give the run folder with --out DIR")}
	}
	switch step {
	case "prepare":
		return doSteps(ctx, con, dir, workers, wantPrepare)
	case "finish":
		return doSteps(ctx, con, dir, workers, wantFinish)
	case "part":
		if !partGiven {
			return usageError{fmt.Errorf("give the part to reconstruct with --part K")}
		}
		c, rp, err := loadRun(dir)
		if err != nil {
			return err
		}
		if part < 0 || part >= len(rp.Parts) {
			return usageError{fmt.Errorf("part %d does not exist: the run in %s has parts 0 to %d", part, dir, len(rp.Parts)-1)}
		}
		if workers <= 0 {
			workers = runtime.NumCPU()
		}
		// inside a Slurm task, as many workers as its memory holds
		if workers, err = partWorkers(con, c, workers); err != nil {
			return err
		}
		return doSteps(ctx, con, dir, workers, wantPart(part))
	}
	return usageError{fmt.Errorf("--step %q is not a step; give prepare, part or finish", step)}
}
