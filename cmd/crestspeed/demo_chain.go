package main

import (
	"context"
	"math"
	"path/filepath"

	"crestspeed/samples"
)

// demoChain runs the chain on the synthetic record and compares what was
// measured with the generator's truth.
func demoChain(ctx context.Context, con *console, cfg Config, dir, maps string, truth samples.Truth) error {
	out := filepath.Join(dir, "tracks")
	c := cfg
	c.Track.Input, c.Out = maps, out
	sum, err := Track(ctx, con, c)
	if err != nil {
		return err
	}
	ss := sum.SeaState
	con.logf("")
	con.logf("demo: measured against truth (synthetic %s sea, %s)", truth.Scenario.Kind, truth.Scenario.Site)
	con.logf("  %-22s %10s %10s", "", "truth", "measured")
	con.logf("  %-22s %10.3f %10.3f", "Hm0 (m)", truth.Hm0M, ss.Hm0)
	con.logf("  %-22s %10.3f %10.3f", "Tp (s)", truth.PeakPeriodS, ss.Tp)
	con.logf("  %-22s %10.1f %10.1f", "mean direction (°)", truth.MeanDirectionDeg, ss.MeanDirection)
	con.logf("  %-22s %10.3f %10.3f", "peak phase speed (m/s)", truth.PeakPhaseSpeed, ss.PeakPhaseSpeed)
	if sea, err := truth.Scenario.Sea(); err == nil {
		logExactSpeeds(con, "crest speed c_cr (m/s)", out, sea, sum)
	}
	if wt := truth.Whitecaps; wt != nil && len(wt.Patches) > 0 && sum.Whitecaps != nil {
		var mean float64
		for _, p := range wt.Patches {
			mean += p.SpeedMPS / truth.PeakPhaseSpeed
		}
		mean /= float64(len(wt.Patches))
		con.logf("  %-22s %10d %10d", "whitecaps", len(wt.Patches), sum.Whitecaps.Whitecaps)
		con.logf("  %-22s %10.3f %10.3f", "mean c_br/c_p (track)", mean, sum.Whitecaps.MedianTrackSpeedRatio)
	}
	if math.Abs(ss.Hm0-truth.Hm0M) > 0.1*truth.Hm0M {
		con.logf("demo: warning: measured Hm0 differs from the truth by more than 10 %%")
	}
	con.logf("demo: outputs in %s", out)
	con.logf("demo: report %s", filepath.Join(out, "report.html"))
	return nil
}
