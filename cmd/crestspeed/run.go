package main

import (
	"context"
	"errors"
	"fmt"
	"os"
	"path/filepath"
	"time"

	"github.com/spf13/cobra"
)

func init() { extraCommands = append(extraCommands, newRunCmd) }

func newRunCmd(app *App) *cobra.Command {
	return &cobra.Command{
		Use:   "run --config deployment.yaml --out DIR",
		Short: "Run the whole chain on a deployment: calibrate, reconstruct, track, report",
		Long: `Run the whole chain on one deployment from one configuration file:

  1. calibrate  when the rig file (reconstruct.rig, default DIR/rig.yaml) does
                not exist yet, from the chessboard pairs of the calibrate
                section;
  2. reconstruct the stereo frames of the reconstruct section (a folder
                with reconstruct.frames, or reconstruct.left/right globs) into
                DIR/elevation.nc;
  3. track      crests (and whitecaps) on it into DIR/tracks, with the
                report.

Every setting comes from the file (see "crestspeed init"); a finished output
is kept unless --force is given.`,
		Args: cobra.NoArgs,
		RunE: func(cmd *cobra.Command, args []string) error {
			return RunDeployment(cmd.Context(), app.con, *app.cfg)
		},
	}
}

// RunDeployment chains calibrate (when the rig file is missing),
// reconstruct and track for one deployment into the folder cfg.Out. Each
// stage gets its own copy of the configuration with its inputs and output
// set, and that copy is what the stage records.
func RunDeployment(ctx context.Context, con *console, cfg Config) error {
	dir := cfg.Out
	if dir == "" {
		return usageError{fmt.Errorf("give the deployment's output folder with --out DIR")}
	}
	if err := os.MkdirAll(dir, 0o755); err != nil {
		return fmt.Errorf("cannot create %s: %w", dir, err)
	}
	t0 := time.Now()
	rig := cfg.Reconstruct.Rig
	if rig == "" {
		rig = filepath.Join(dir, "rig.yaml")
	}
	if _, err := os.Stat(rig); errors.Is(err, os.ErrNotExist) {
		if cfg.Calibrate.Left == "" || cfg.Calibrate.Right == "" {
			return usageError{fmt.Errorf("rig file %s does not exist and the configuration gives no calibration images (calibrate.left, calibrate.right)", rig)}
		}
		con.logf("run: 1/3 calibrate → %s", rig)
		c := cfg
		c.Out = rig
		if err := Calibrate(ctx, con, c); err != nil {
			return err
		}
	} else {
		con.logf("run: 1/3 using the rig file %s", rig)
	}

	maps := filepath.Join(dir, "elevation.nc")
	con.logf("run: 2/3 reconstruct → %s", maps)
	c := cfg
	c.Out = maps
	c.Reconstruct.Rig = rig
	if _, err := Reconstruct(ctx, con, c); err != nil {
		return err
	}

	tracks := filepath.Join(dir, "tracks")
	con.logf("run: 3/3 track → %s", tracks)
	c = cfg
	c.Out, c.Track.Input = tracks, maps
	if _, err := Track(ctx, con, c); err != nil {
		return err
	}
	con.logf("run: done in %s; report %s", elapsed(t0), filepath.Join(tracks, "report.html"))
	return nil
}
