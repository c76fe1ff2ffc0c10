package main

import (
	"fmt"
	"math"
	"os"
	"path/filepath"

	"github.com/spf13/cobra"

	"crestspeed/calib"
	"crestspeed/samples"
)

func newDemoCmd(app *App) *cobra.Command {
	cmd := &cobra.Command{
		Use:   "demo",
		Short: "Make a synthetic deployment with known truth and run the chain on it",
		Long: `Make the built-in synthetic deployment (an invented pier site with a stereo rig
and a directional JONSWAP sea, all with known truth) in the demo folder, run
the chain on it, and print what was measured next to the truth:

  1. chessboard views of the demo rig → calibrate → rig.yaml
  2. elevation maps of the sea → track → crest speeds, report

Everything is synthetic; nothing here describes a real site.`,
		Args: cobra.NoArgs,
		RunE: func(cmd *cobra.Command, args []string) error {
			dir := app.cfg.Demo.Dir
			if app.cfg.Out != "" {
				dir = app.cfg.Out
			}
			if err := os.MkdirAll(dir, 0o755); err != nil {
				return fmt.Errorf("cannot create demo folder %s: %v", dir, err)
			}
			if err := app.demoCalibration(cmd, filepath.Join(dir, "calibration")); err != nil {
				return err
			}
			maps := filepath.Join(dir, "elevation.nc")
			if app.cfg.Force {
				os.Remove(maps)
			}
			truth, err := app.synthesize(cmd, app.cfg.Synthesize, maps)
			if err != nil {
				return err
			}
			return app.demoChain(cmd, dir, maps, truth)
		},
	}
	return cmd
}

// demoCalibration renders chessboard views of the demo rig, calibrates
// from them and compares the result with the rig's truth.
func (app *App) demoCalibration(cmd *cobra.Command, dir string) error {
	if app.cfg.Force {
		os.RemoveAll(dir)
	}
	if err := os.MkdirAll(dir, 0o755); err != nil {
		return fmt.Errorf("cannot create %s: %v", dir, err)
	}
	rig := samples.DemoRig()
	board := samples.DemoChessboard()
	app.logf("demo: rendering 14 chessboard views of the demo rig in %s", dir)
	if _, _, err := samples.RenderCalibrationViews(cmd.Context(), rig, board, 14, dir, 7); err != nil {
		return err
	}
	saved := *app.cfg
	defer func() { *app.cfg = saved }()
	app.cfg.Calibrate.Left = filepath.Join(dir, "left_*.png")
	app.cfg.Calibrate.Right = filepath.Join(dir, "right_*.png")
	app.cfg.Calibrate.Pattern = board.Pattern().String()
	app.cfg.Calibrate.SquareM = board.SquareM
	app.cfg.Out = filepath.Join(dir, "rig.yaml")
	if err := app.calibrate(cmd); err != nil {
		return err
	}
	got, err := calib.LoadRig(app.cfg.Out)
	if err != nil {
		return err
	}
	app.logf("demo: calibration against the rig's truth: baseline %.4f m (truth %.4f m), left focal length %.1f px (truth %.1f px), relative rotation error %.3f°",
		got.Baseline(), rig.Baseline(), got.Left.Fx, rig.Left.Fx, calib.RotationAngle(calib.RelativeRotation(got.R, rig.R))*180/math.Pi)
	return nil
}
