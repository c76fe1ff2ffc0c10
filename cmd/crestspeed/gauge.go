package main

import (
	"errors"
	"fmt"
	"math"

	"crestspeed/ingest"
	"crestspeed/report"
	"crestspeed/speed"
	"crestspeed/speed/analysis"
)

// GaugeConfig names an in-situ elevation series (a wave gauge, a buoy's
// heave, a pressure record converted to elevation) and where it was on the
// grid, for "track" to compare the maps with.
type GaugeConfig struct {
	// File is the series: CSV with a header naming time_s (seconds on the
	// maps' time base) or utc (ISO 8601 instants) and eta_m, or CF NetCDF.
	File string `yaml:"file"`
	// XM and YM are the gauge's position on the analysis grid, metres.
	XM *float64 `yaml:"x_m,omitempty"`
	YM *float64 `yaml:"y_m,omitempty"`
	// Variable names the elevation column or variable; "" = eta_m (CSV) or
	// a CF sea-surface elevation standard_name, else eta (NetCDF).
	Variable string `yaml:"variable"`
	// MaxLagS bounds the lag searched, seconds; 0 = a quarter of the common
	// span, at most 60 s.
	MaxLagS float64 `yaml:"max_lag_s"`
}

// openedGauge is a gauge series put on the maps' time base.
type openedGauge struct {
	series *ingest.GaugeSeries
	times  []float64
}

// openGauge reads the gauge series and checks, before any analysis, that
// its position is on the grid and that its time span meets the maps'.
func openGauge(gc GaugeConfig, meta ingest.ElevationMeta) (*openedGauge, error) {
	if gc.File == "" {
		return nil, nil
	}
	if gc.XM == nil || gc.YM == nil {
		return nil, usageError{fmt.Errorf("give the gauge's position on the grid with --gauge-x and --gauge-y (track.gauge.x_m, y_m)")}
	}
	if !(gc.MaxLagS >= 0 && gc.MaxLagS <= 3600) {
		return nil, usageError{fmt.Errorf("track.gauge.max_lag_s %g is outside 0–3600 s", gc.MaxLagS)}
	}
	g := meta.Grid
	x, y := *gc.XM, *gc.YM
	if !(x >= g.X[0] && x <= g.X[g.Nx()-1] && y >= g.Y[0] && y <= g.Y[g.Ny()-1]) {
		return nil, usageError{fmt.Errorf("the gauge position (%g, %g) m is outside the grid of the maps (x %g–%g m, y %g–%g m)",
			x, y, g.X[0], g.X[g.Nx()-1], g.Y[0], g.Y[g.Ny()-1])}
	}
	s, err := ingest.ReadGauge(gc.File, gc.Variable)
	if err != nil {
		return nil, err
	}
	origin := ingest.TimeOriginOf(meta.TimeUnits)
	if !s.Origin.IsZero() && origin.IsZero() {
		return nil, fmt.Errorf("gauge file %s gives UTC times but the maps' time axis has no reference instant; give the gauge's times as time_s on the maps' time base", gc.File)
	}
	og := &openedGauge{series: s, times: s.Shifted(origin)}
	t0, t1 := meta.Times[0], meta.Times[len(meta.Times)-1]
	if og.times[len(og.times)-1] <= t0 || og.times[0] >= t1 {
		return nil, fmt.Errorf("gauge file %s covers %.6g–%.6g s and the maps %.6g–%.6g s on the maps' time base: %w",
			gc.File, og.times[0], og.times[len(og.times)-1], t0, t1, speed.ErrNoOverlap)
	}
	return og, nil
}

// compare compares the record's probe series with the gauge.
func (og *openedGauge) compare(rec *analysis.Record, gc GaugeConfig) (*report.GaugeRun, error) {
	c, err := speed.CompareGauge(rec.Probe, rec.Meta.Times[0], rec.FrameInterval, og.times, og.series.Eta, gc.MaxLagS)
	if err != nil {
		if errors.Is(err, speed.ErrNoOverlap) {
			return nil, fmt.Errorf("gauge file %s: %w", gc.File, err)
		}
		return nil, fmt.Errorf("the maps cannot be compared with gauge file %s: %w", gc.File, err)
	}
	return &report.GaugeRun{File: gc.File, X: *gc.XM, Y: *gc.YM, Cmp: c}, nil
}

func printGauge(con *console, g *report.GaugeRun) {
	c := g.Cmp
	con.logf("gauge: %s at (%.2f, %.2f) m, %d common samples over %.0f s", g.File, g.X, g.Y, c.Samples, c.EndS-c.StartS)
	con.logf("gauge: Hm0 maps %.3f m, gauge %.3f m; Tp maps %.2f s, gauge %.2f s; lag %.3f s, correlation %.3f (%.3f at no lag)",
		c.Maps.Hm0, c.Gauge.Hm0, c.Maps.Tp, c.Gauge.Tp, c.LagS, c.Correlation, c.ZeroLagCorrelation)
	if math.Abs(c.Correlation) < 0.5 {
		con.logf("gauge: warning: the maps and the gauge correlate at %.2f only; check the position and the clocks", c.Correlation)
	}
}
