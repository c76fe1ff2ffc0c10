package figures

import (
	"fmt"
	"math"

	"gonum.org/v1/plot"
	"gonum.org/v1/plot/vg"
	"gonum.org/v1/plot/vg/draw"

	"crestspeed/report/summary"
)

// Gauge is the comparison with an in-situ series the gauge figure draws.
type Gauge struct {
	// Freq, Maps and Gauge are the two spectra (m²/Hz) at the same
	// frequencies (Hz).
	Freq, Maps, Gauge []float64
	Summary           *summary.GaugeSummary
}

// SectionGauge is the page section of the gauge figure.
const SectionGauge = "gauge"

// gaugeFigure draws the two spectra overlaid, on logarithmic axes.
func (in *figureInput) gaugeFigure() error {
	g := in.Gauge
	s := g.Summary
	fmax := g.Freq[len(g.Freq)-1]
	if fp := 1 / s.Maps.Tp; fp > 0 && !math.IsInf(fp, 0) {
		fmax = math.Min(fmax, 5*fp)
	}
	p := newPlot()
	p.X.Label.Text = "frequency f (Hz)"
	p.Y.Label.Text = "elevation spectral density S(f) (m²/Hz)"
	p.Y.Scale = plot.LogScale{}
	p.Y.Tick.Marker = plot.LogTicks{Prec: -1}
	var ymin, ymax = math.Inf(1), 0.0
	for k, series := range []struct {
		psd   []float64
		label string
	}{
		{g.Maps, fmt.Sprintf("maps at (%.1f, %.1f) m: Hm0 %.3f m, Tp %.2f s", s.X, s.Y, s.Maps.Hm0, s.Maps.Tp)},
		{g.Gauge, fmt.Sprintf("gauge: Hm0 %.3f m, Tp %.2f s", s.Gauge.Hm0, s.Gauge.Tp)},
	} {
		var xs, ys []float64
		for i, f := range g.Freq {
			v := series.psd[i]
			if f > 0 && f <= fmax && v > 0 && !math.IsNaN(v) {
				xs, ys = append(xs, f), append(ys, v)
				ymin, ymax = math.Min(ymin, v), math.Max(ymax, v)
			}
		}
		if len(xs) < 2 {
			continue
		}
		var dashes []vg.Length
		if k == 1 {
			dashes = []vg.Length{vg.Points(5), vg.Points(3)}
		}
		l, err := xyLine(xs, ys, okabeIto[k*4], 1.6, dashes...)
		if err != nil {
			return err
		}
		p.Add(l)
		p.Legend.Add(series.label, l)
	}
	if ymax == 0 {
		return fmt.Errorf("figure fig_gauge_spectra cannot be drawn: neither spectrum has energy")
	}
	p.X.Min, p.X.Max = 0, fmax
	p.Y.Min, p.Y.Max = math.Max(ymin, ymax*1e-5), 2*ymax
	p.Legend.Top = true
	p.Legend.XOffs, p.Legend.YOffs = vg.Points(-4), vg.Points(-4)
	fn := func(dc draw.Canvas) { p.Draw(dc) }
	cap := fmt.Sprintf("Frequency spectra of the elevation of the maps at the gauge's position (bilinear between cells; solid) and of the gauge's own series (dashed), "+
		"over their common span of %.0f s, by the same Welch estimator. The gauge lags the maps by %.3f s, where their correlation is %.3f (%.3f at no lag).",
		s.EndS-s.StartS, s.LagS, s.Correlation, s.ZeroLagCorrelation)
	return in.add("fig_gauge_spectra", "Figure G. The maps against the gauge", cap, SectionGauge, figHeight, fn)
}
