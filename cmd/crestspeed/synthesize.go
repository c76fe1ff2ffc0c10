package main

import (
	"context"
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
			_, err := Synthesize(cmd.Context(), app.con, *app.cfg)
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
	app.bindFlag(cmd, "kind", "synthesize.kind")
	app.bindFlag(cmd, "hs", "synthesize.jonswap.hs_m")
	app.bindFlag(cmd, "tp", "synthesize.jonswap.tp_s")
	app.bindFlag(cmd, "height", "synthesize.regular.height_m")
	app.bindFlag(cmd, "period", "synthesize.regular.period_s")
	app.bindFlag(cmd, "direction", "synthesize.regular.direction_deg", "synthesize.jonswap.direction_deg", "synthesize.packet.direction_deg")
	app.bindFlag(cmd, "depth", "synthesize.regular.depth_m", "synthesize.jonswap.depth_m", "synthesize.packet.depth_m")
	app.bindFlag(cmd, "seed", "synthesize.jonswap.seed")
	app.bindFlag(cmd, "duration", "synthesize.grid.duration_s")
	app.bindFlag(cmd, "fps", "synthesize.grid.frame_rate_hz")
	return cmd
}

// Synthesize writes the synthetic record of cfg.Synthesize to the file
// cfg.Out, with its truth beside it.
func Synthesize(ctx context.Context, con *console, cfg Config) (samples.Truth, error) {
	sc, out := cfg.Synthesize, cfg.Out
	if out == "" {
		return samples.Truth{}, usageError{fmt.Errorf("give the output file with --out FILE.nc")}
	}
	if filepath.Ext(out) != ".nc" {
		return samples.Truth{}, usageError{fmt.Errorf("output %s should end in .nc", out)}
	}
	if sc.Deflate < 0 || sc.Deflate > 9 {
		return samples.Truth{}, usageError{fmt.Errorf("deflate level %d is outside 0–9 (synthesize.deflate)", sc.Deflate)}
	}
	if err := sc.Scenario.Validate(); err != nil {
		return samples.Truth{}, usageError{fmt.Errorf("synthesize settings: %w", err)}
	}
	if err := claimOutputs(cfg.Force, out, samples.TruthPath(out)); err != nil {
		return samples.Truth{}, err
	}
	t0 := time.Now()
	pr := con.newProgress("synthesize", sc.Grid.Frames())
	truth, err := samples.Synthesize(ctx, sc.Scenario, out, sc.Deflate, cfg.Workers, pr.set)
	pr.done()
	if err != nil {
		return truth, err
	}
	con.logf("synthesize: wrote %s (%d frames of %d×%d, %s sea, Hm0 %.2f m, Tp %.2f s, direction %.1f°) in %s",
		out, truth.Frames, sc.Grid.Nx, sc.Grid.Ny, sc.Kind, truth.Hm0M, truth.PeakPeriodS, truth.MeanDirectionDeg, elapsed(t0))
	con.logf("synthesize: truth in %s", samples.TruthPath(out))
	return truth, nil
}
