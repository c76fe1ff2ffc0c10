package main

import (
	"context"
	"fmt"
	"image"
	"math"
	"os"
	"path/filepath"

	"github.com/spf13/cobra"

	"crestspeed/calib"
	"crestspeed/report/summary"
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

  1. a rendered stereo deployment (chessboard views and 30 s of image
     pairs of the demo rig) → calibrate → reconstruct → track → report,
     in DIR/stereo;
  2. a long record of elevation maps with painted whitecaps → track →
     crest and whitecap speeds, breaking statistics, report, in DIR/tracks;
  3. the two pooled as a campaign of deployments → campaign report, in
     DIR/campaign.

Everything is synthetic; nothing here describes a real site.`,
		Args: cobra.NoArgs,
		RunE: func(cmd *cobra.Command, args []string) error {
			return Demo(cmd.Context(), app.con, *app.cfg)
		},
	}
	return cmd
}

// Demo makes the synthetic deployment in cfg.Out (default cfg.Demo.Dir),
// runs the chain on it and prints what was measured beside the truth. It
// uses the configuration it is given; only the inputs and outputs of each
// stage are set here.
func Demo(ctx context.Context, con *console, cfg Config) error {
	dir := cfg.Demo.Dir
	if cfg.Out != "" {
		dir = cfg.Out
	}
	if err := os.MkdirAll(dir, 0o755); err != nil {
		return fmt.Errorf("cannot create demo folder %s: %w", dir, err)
	}
	if err := demoStereo(ctx, con, cfg, filepath.Join(dir, "stereo")); err != nil {
		return err
	}
	maps := filepath.Join(dir, "elevation.nc")
	if cfg.Force {
		os.Remove(maps)
	}
	c := cfg
	c.Out = maps
	if !c.Synthesize.Foam.Enabled && c.Synthesize.Kind == samples.KindJONSWAP {
		foam, err := demoFoam(c.Synthesize.Scenario)
		if err != nil {
			return err
		}
		c.Synthesize.Foam = foam
	}
	truth, err := Synthesize(ctx, con, c)
	if err != nil {
		return err
	}
	if err := demoChain(ctx, con, cfg, dir, maps, truth); err != nil {
		return err
	}
	return demoCampaign(ctx, con, cfg, dir)
}

// demoStereo renders a short stereo deployment of the demo rig (chessboard
// views and sea frames, with the true rig and the true elevation), then
// calibrates, reconstructs and tracks it, comparing with the truth.
func demoStereo(ctx context.Context, con *console, cfg Config, dir string) error {
	if cfg.Force {
		os.RemoveAll(dir)
	}
	if err := os.MkdirAll(filepath.Dir(dir), 0o755); err != nil {
		return fmt.Errorf("cannot create %s: %w", filepath.Dir(dir), err)
	}
	d := demoStereoDeployment()
	con.logf("demo: rendering %d stereo pairs of %d×%d and %d chessboard views of the demo rig in %s",
		d.Frames, d.ImageSize.X, d.ImageSize.Y, d.CalibrationViews, dir)
	pr := con.newProgress("render", d.Frames+d.CalibrationViews)
	truth, err := samples.WriteDeployment(ctx, d, dir, cfg.Workers, pr.set)
	pr.done()
	if err != nil {
		return err
	}
	// 1. calibrate from the chessboard views
	calDir := filepath.Join(dir, samples.DeploymentCalibrationDir)
	rigPath := filepath.Join(dir, "rig.yaml")
	c := cfg
	c.Calibrate.Left = filepath.Join(calDir, "left_*.png")
	c.Calibrate.Right = filepath.Join(calDir, "right_*.png")
	c.Calibrate.Pattern = d.Board.Pattern().String()
	c.Calibrate.SquareM = d.Board.SquareM
	c.Out = rigPath
	if err := Calibrate(ctx, con, c); err != nil {
		return err
	}
	got, err := calib.LoadRig(rigPath)
	if err != nil {
		return err
	}
	// 2. reconstruct the frames
	maps := filepath.Join(dir, "elevation.nc")
	c = cfg
	c.Reconstruct.Rig = rigPath
	c.Reconstruct.Frames = filepath.Join(dir, samples.DeploymentFramesDir)
	c.Reconstruct.StartUTC = d.StartUTC
	c.Out = maps
	if _, err := Reconstruct(ctx, con, c); err != nil {
		return err
	}
	// 3. track crests on the reconstructed maps, and the dominant waves
	// (below 2 F_p, the band the reconstruction resolves) beside them
	c = cfg
	c.Track.Input, c.Out = maps, filepath.Join(dir, "tracks")
	c.Track.DominantBandFp = []float64{0, 2}
	sum, err := Track(ctx, con, c)
	if err != nil {
		return err
	}
	con.logf("")
	con.logf("demo (stereo chain): measured against truth, %s", truth.Site)
	con.logf("  %-26s %10s %10s", "", "truth", "measured")
	con.logf("  %-26s %10.4f %10.4f", "baseline (m)", d.Rig.Baseline(), got.Baseline())
	con.logf("  %-26s %10.1f %10.1f", "left focal length (px)", samples.ScaleRig(d.Rig, d.ImageSize).Left.Fx, got.Left.Fx)
	con.logf("  %-26s %10.3f %10.3f", "Hm0 (m)", truth.Hm0M, sum.SeaState.Hm0)
	con.logf("  %-26s %10.3f %10.3f", "Tp (s)", truth.PeakPeriodS, sum.SeaState.Tp)
	con.logf("  %-26s %10.1f %10.1f", "mean direction (°)", math.Remainder(truth.MeanDirectionDeg, 360), sum.SeaState.MeanDirection)
	if sea, err := d.Sea.Sea(); err == nil {
		logExactSpeeds(con, "crest speed c_cr (m/s)", c.Out, sea, sum)
		// the reconstruction smooths the short waves riding on the crests
		// (which slow the true crests' tips); below 2 F_p both see the same
		// waves
		domDir := filepath.Join(c.Out, dominantDir)
		if ds, err := summary.Read(filepath.Join(domDir, "summary.json")); err == nil {
			logExactSpeeds(con, "  waves below 2 F_p (m/s)", domDir, sea, ds)
		}
	}
	if sum.Whitecaps != nil {
		con.logf("  %-26s %10d %10d", "whitecaps", len(d.Foam.Patches), sum.Whitecaps.Whitecaps)
		con.logf("  %-26s %10.3f %10.3f", "whitecap front speed (m/s)", d.Foam.Patches[0].SpeedMPS, sum.Whitecaps.MedianTrackSpeedRatio*sum.SeaState.PeakPhaseSpeed)
	}
	con.logf("  (the truth Hm0 and Tp are those of the generated spectrum; a %.0f s record scatters around them by several per cent)", float64(d.Frames)/d.FPS)
	return nil
}

// demoStereoDeployment is the rendered part of the demo: the demo rig
// (scaled to 640×512 px to keep the demo quick) 13.5 m above the water
// looking 45° down, a short wind sea running toward it, 6 frames per second
// for 30 s — long enough for the mean sea plane to be fitted from the
// frames themselves.
func demoStereoDeployment() samples.Deployment {
	d := samples.DemoDeployment()
	d.ImageSize = image.Pt(640, 512)
	d.DepressionDeg = 45
	d.Sea.JONSWAP.HsM = 0.6
	d.Sea.JONSWAP.TpS = 2.8
	d.FPS = 6
	d.Frames = 180
	d.CalibrationViews = 14
	// Whitecaps painted on the surface, fronts moving with the waves at 0.8
	// of the phase speed of the peak period (deep water, c = gT/2π), within
	// the part of the sea both cameras see well.
	c := 0.8 * speed.G * d.Sea.JONSWAP.TpS / (2 * math.Pi)
	d.Foam = samples.FoamSpec{Enabled: true}
	for i, y := range []float64{-2, 1.5, 0, -1, 2} {
		d.Foam.Patches = append(d.Foam.Patches, samples.FoamPatch{
			StartS: 3 + 5*float64(i), FrontXM: 23 + float64(i%2), FrontYM: y,
			DirectionDeg: d.Sea.JONSWAP.DirectionDeg, SpeedMPS: c,
			FrontLengthM: 3, LengthM: 1.5, DurationS: 2,
		})
	}
	return d
}

// demoFoam paints a set of whitecaps on the demo sea: fronts moving along
// the mean direction at 0.7–0.9 of the peak phase speed (the range reported
// for breaking crests: Rapp & Melville 1990; Stansell & MacFarlane 2002), spread over the record and the grid,
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
