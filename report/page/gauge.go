package page

import (
	"fmt"
	"html/template"
	"math"

	"crestspeed/report/figures"
)

// htmlGauge is the page's comparison with an in-situ series.
type htmlGauge struct {
	Rows    []htmlKV
	Figures []htmlFigure
}

// gaugeSection is the gauge comparison of the page, nil without a gauge.
func gaugeSection(in Input) *htmlGauge {
	g := in.Summary.Gauge
	if g == nil {
		return nil
	}
	pm := func(v, u float64) string {
		if u > 0 && !math.IsInf(u, 0) && !math.IsNaN(u) {
			return fmt.Sprintf("%.2f ± %.2f s", v, u)
		}
		return fmt.Sprintf("%.2f s", v)
	}
	h := &htmlGauge{Rows: []htmlKV{
		{"Gauge series", g.File},
		{"Position on the grid", fmt.Sprintf("x %.2f m, y %.2f m (the maps sampled there by bilinear interpolation)", g.X, g.Y)},
		{"Common span", fmt.Sprintf("%.1f–%.1f s, %d samples where both are known", g.StartS, g.EndS, g.Samples)},
		{"H<sub>m0</sub>, maps | gauge", fmt.Sprintf("%.3f m | %.3f m (ratio %.3f)", g.Maps.Hm0, g.Gauge.Hm0, g.Maps.Hm0/g.Gauge.Hm0)},
		{"T<sub>p</sub>, maps | gauge", pm(g.Maps.Tp, g.Maps.TpStd) + " | " + pm(g.Gauge.Tp, g.Gauge.TpStd)},
		{"Lag of the gauge behind the maps", fmt.Sprintf("%.3f s (searched within ±%.0f s)", g.LagS, g.MaxLagS)},
		{"Correlation at that lag | at no lag", fmt.Sprintf("%.3f | %.3f", g.Correlation, g.ZeroLagCorrelation)},
	}}
	for i := range h.Rows {
		h.Rows[i].K = string(sym(h.Rows[i].K))
	}
	for _, f := range in.Figures {
		if f.Section == figures.SectionGauge {
			h.Figures = append(h.Figures, htmlFigureOf(f))
		}
	}
	return h
}

// gaugeTemplate is the section's part of the page template.
const gaugeTemplate = `{{if .}}<section id="gauge">
<h2>Against an in-situ gauge</h2>
<table class="kv" id="gauge-table">
{{range .Rows}}<tr><td>{{raw .K}}</td><td>{{.V}}</td></tr>
{{end}}</table>
<p class="note">Both series' H<sub>m0</sub> and T<sub>p</sub> come from the same spectral estimator. A lag other than zero means the two clocks disagree or the position is off along the waves' direction; a low correlation at the best lag, that the maps and the gauge do not see the same waves.</p>
{{range .Figures}}<figure id="{{.ID}}">
<img src="{{.Src}}" alt="{{.Title}}">
<figcaption><b>{{.Title}}</b>{{.Caption}} <span class="note">Files: <span class="path">{{.PNG}}</span>, <span class="path">{{.SVG}}</span>.</span></figcaption>
</figure>
{{end}}</section>
{{end}}`

var _ = template.Must(pageTemplate.New("gauge").Parse(gaugeTemplate))
