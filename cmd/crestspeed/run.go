package main

import (
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
			return app.runChain(cmd)
		},
	}
}

// runChain wires calibrate → reconstruct → track for one deployment.
func (app *App) runChain(cmd *cobra.Command) error {
	dir := app.cfg.Out
	if dir == "" {
		return usageError{fmt.Errorf("give the deployment's output folder with --out DIR")}
	}
	if err := os.MkdirAll(dir, 0o755); err != nil {
		return fmt.Errorf("cannot create %s: %v", dir, err)
	}
	t0 := time.Now()
	saved := *app.cfg
	defer func() { *app.cfg = saved }()

	rig := saved.Reconstruct.Rig
	if rig == "" {
		rig = filepath.Join(dir, "rig.yaml")
	}
	if _, err := os.Stat(rig); errors.Is(err, os.ErrNotExist) {
		if saved.Calibrate.Left == "" || saved.Calibrate.Right == "" {
			return usageError{fmt.Errorf("rig file %s does not exist and the configuration gives no calibration images (calibrate.left, calibrate.right)", rig)}
		}
		app.logf("run: 1/3 calibrate → %s", rig)
		*app.cfg = saved
		app.cfg.Out = rig
		if err := app.calibrate(cmd); err != nil {
			return err
		}
	} else {
		app.logf("run: 1/3 using the rig file %s", rig)
	}

	maps := filepath.Join(dir, "elevation.nc")
	app.logf("run: 2/3 reconstruct → %s", maps)
	*app.cfg = saved
	app.cfg.Out = maps
	app.cfg.Reconstruct.Rig = rig
	if err := app.reconstruct(cmd); err != nil {
		return err
	}

	tracks := filepath.Join(dir, "tracks")
	app.logf("run: 3/3 track → %s", tracks)
	*app.cfg = saved
	if _, err := app.track(cmd, maps, tracks); err != nil {
		return err
	}
	app.logf("run: done in %s; report %s", elapsed(t0), filepath.Join(tracks, "report.html"))
	return nil
}
