package main

import (
	"fmt"
	"path/filepath"
	"time"

	"github.com/spf13/cobra"

	"crestspeed/samples"
)

func newSynthesizeCmd(app *App) *cobra.Command {
	cmd := &cobra.Command{
		Use:   "synthesize --out FILE.nc",
		Short: "Write a synthetic elevation-map record with known truth",
		Long: `Write a synthetic sea-surface elevation record (NetCDF, the elevation-map
format crestspeed reads) and its truth (FILE.truth.json): a regular wave, a
directional JONSWAP random sea or a dispersive focusing packet, on the grid and
time base of the "synthesize" section of the configuration. The same settings
and seed give the same file.`,
		Args: cobra.NoArgs,
		RunE: func(cmd *cobra.Command, args []string) error {
			cfg := app.cfg
			out := cfg.Out
			if out == "" {
				return usageError{fmt.Errorf("give the output file with --out FILE.nc")}
			}
			_, err := app.synthesize(cmd, cfg.Synthesize, out)
			return err
		},
	}
	f := cmd.Flags()
	f.String("kind", "", "sea kind: regular, jonswap or packet")
	f.Float64("hs", 0, "JONSWAP significant wave height (m)")
	f.Float64("tp", 0, "JONSWAP peak period (s)")
	f.Float64("height", 0, "regular wave height (m)")
	f.Float64("period", 0, "regular wave period (s)")
	f.Float64("direction", 0, "direction of travel (degrees counter-clockwise from +x), for every kind")
	f.Float64("depth", 0, "water depth (m), 0 = deep water, for every kind")
	f.Uint64("seed", 0, "random seed of the JONSWAP sea")
	f.Float64("duration", 0, "record length (s)")
	f.Float64("fps", 0, "frame rate (Hz)")
	bindFlag(app, cmd, "kind", "synthesize.kind")
	bindFlag(app, cmd, "hs", "synthesize.jonswap.hs_m")
	bindFlag(app, cmd, "tp", "synthesize.jonswap.tp_s")
	bindFlag(app, cmd, "height", "synthesize.regular.height_m")
	bindFlag(app, cmd, "period", "synthesize.regular.period_s")
	for _, k := range []string{"regular", "jonswap", "packet"} {
		bindFlag(app, cmd, "direction", "synthesize."+k+".direction_deg")
		bindFlag(app, cmd, "depth", "synthesize."+k+".depth_m")
	}
	bindFlag(app, cmd, "seed", "synthesize.jonswap.seed")
	bindFlag(app, cmd, "duration", "synthesize.grid.duration_s")
	bindFlag(app, cmd, "fps", "synthesize.grid.frame_rate_hz")
	return cmd
}

func (app *App) synthesize(cmd *cobra.Command, sc SynthesizeConfig, out string) (samples.Truth, error) {
	if err := refuseOverwrite(out, app.cfg.Force); err != nil {
		return samples.Truth{}, err
	}
	if filepath.Ext(out) != ".nc" {
		return samples.Truth{}, usageError{fmt.Errorf("output %s should end in .nc", out)}
	}
	if sc.Deflate < 0 || sc.Deflate > 9 {
		return samples.Truth{}, usageError{fmt.Errorf("deflate level %d is outside 0–9", sc.Deflate)}
	}
	t0 := time.Now()
	pr := app.newProgress("synthesize", sc.Grid.Frames())
	truth, err := samples.Synthesize(cmd.Context(), sc.Scenario, out, sc.Deflate, app.cfg.Workers, pr.set)
	pr.done()
	if err != nil {
		return truth, err
	}
	app.logf("synthesize: wrote %s (%d frames of %d×%d, %s sea, Hm0 %.2f m, Tp %.2f s, direction %.1f°) in %s",
		out, truth.Frames, sc.Grid.Nx, sc.Grid.Ny, sc.Kind, truth.Hm0M, truth.PeakPeriodS, truth.MeanDirectionDeg, elapsed(t0))
	app.logf("synthesize: truth in %s", samples.TruthPath(out))
	return truth, nil
}
