package main

import (
	"fmt"
	"math"
	"os"
	"path/filepath"

	"github.com/spf13/cobra"

	"crestspeed/calib"
	"crestspeed/samples"
	"crestspeed/speed"
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
			sc := app.cfg.Synthesize
			if !sc.Foam.Enabled && sc.Kind == samples.KindJONSWAP {
				foam, err := demoFoam(sc.Scenario)
				if err != nil {
					return err
				}
				sc.Foam = foam
			}
			truth, err := app.synthesize(cmd, sc, maps)
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

// demoFoam paints a set of whitecaps on the demo sea: fronts moving along
// the mean direction at 0.7–0.9 of the peak phase speed (the range reported
// for breaking crests, PHYSICS.md §5), spread over the record and the grid,
// so that the whitecap stage has a known truth to find.
func demoFoam(sc samples.Scenario) (samples.FoamSpec, error) {
	j := sc.JONSWAP
	dir := j.DirectionDeg * math.Pi / 180
	cp, err := speed.PhaseSpeedFromPeriod(j.TpS, j.DepthM, j.Current, dir, 0)
	if err != nil {
		return samples.FoamSpec{}, err
	}
	g := sc.Grid
	xs, ys := g.Axes()
	w, h := xs[len(xs)-1]-xs[0], ys[len(ys)-1]-ys[0]
	spec := samples.FoamSpec{Enabled: true}
	ratios := []float64{0.7, 0.75, 0.8, 0.85, 0.9}
	n := int(g.Duration / 6)
	for i := 0; i < n; i++ {
		r := ratios[i%len(ratios)]
		spec.Patches = append(spec.Patches, samples.FoamPatch{
			StartS:       3 + float64(i)*6,
			FrontXM:      xs[0] + w*(0.2+0.25*float64(i%3)),
			FrontYM:      ys[0] + h*(0.25+0.2*float64((i/3)%3)),
			DirectionDeg: j.DirectionDeg,
			SpeedMPS:     r * cp,
			FrontLengthM: 6 + float64(i%4)*2,
			LengthM:      3,
			DurationS:    2.5,
		})
	}
	return spec, nil
}
