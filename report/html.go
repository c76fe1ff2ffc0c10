package report

import (
	"bytes"
	"encoding/base64"
	"fmt"
	"html/template"
	"math"
	"path/filepath"
	"regexp"
	"sort"
	"strings"
	"time"
)

// symRE matches the plain-text symbols of the report (c_cr, S_c, f_p,
// θ0, ...): one letter, an underscore and its subscript.
var symRE = regexp.MustCompile(`\b([A-Za-zθ])_([a-z0-9]+)\b|θ0`)

// sym escapes plain text for the page and sets the subscripts of its
// symbols.
func sym(s string) template.HTML {
	e := template.HTMLEscapeString(s)
	return template.HTML(symRE.ReplaceAllStringFunc(e, func(m string) string {
		if m == "θ0" {
			return "θ<sub>0</sub>"
		}
		i := strings.IndexByte(m, '_')
		return m[:i] + "<sub>" + m[i+1:] + "</sub>"
	}))
}

// fmt3 formats a statistic for the page: three decimals, "–" if unknown.
func fmt3(v float64) string {
	if math.IsNaN(v) || math.IsInf(v, 0) {
		return "–"
	}
	return fmt.Sprintf("%.3f", v)
}

func fmtCI(iv Interval) string {
	if !iv.Known() {
		return "–"
	}
	return fmt.Sprintf("%.3f – %.3f", iv.Lo, iv.Hi)
}

type htmlStatRow struct {
	Key                                                    string
	Class                                                  template.HTML
	N, Tracks                                              int
	Mean, MeanCI, Median, MedianCI, Mode, ModeCI, P05, P95 string
	Few, All                                               bool
}

type htmlRatio struct {
	Key, Title, Symbol string
	Rows               []htmlStatRow
}

type htmlFigure struct {
	ID             string
	Title, Caption template.HTML
	Src            template.URL
	PNG, SVG       string
}

type htmlKV struct{ K, V string }

type htmlData struct {
	Title, Subtitle, Caution, Generated string
	Warnings                            []template.HTML
	Glance                              []template.HTML
	Trust                               []template.HTML
	Sea, Quality                        []htmlKV
	Skipped                             []htmlKV
	Ratios                              []htmlRatio
	Figures                             []htmlFigure
	Method                              []htmlKV
	References                          []string
	Version, ReportVersion              string
	Inputs                              []FileInfo
	Timings                             []htmlKV
	Outputs                             []htmlKV
	Record                              []htmlKV
	Config                              string
	FewTracks                           int
	Level                               int
	Breaking                            *htmlBreaking
}

// renderHTML writes report.html.
func renderHTML(sum *Summary, d *Deployment, res *Result, bounds []float64, B int, opt Options) ([]byte, error) {
	cb := ClassBounds(bounds)
	hd := htmlData{
		Title:     "Crest-speed deployment report",
		Caution:   Caution,
		Generated: time.Now().UTC().Format("2006-01-02 15:04 UTC"),
		Version:   sum.Tool["version"], ReportVersion: opt.Version,
		Inputs: sum.Inputs, FewTracks: FewTracks, Level: int(math.Round(100 * CILevel)),
		Config: prettyJSON(sum.Config),
	}
	site := sum.Record.Attributes["site"]
	var inName string
	if len(sum.Inputs) > 0 {
		inName = filepath.Base(sum.Inputs[0].Path)
	}
	switch {
	case site != "" && inName != "":
		hd.Subtitle = site + " — " + inName
	case inName != "":
		hd.Subtitle = inName
	default:
		hd.Subtitle = site
	}
	if sum.Record.Title != "" {
		hd.Record = append(hd.Record, htmlKV{"title", sum.Record.Title})
	}
	for _, k := range sortedKeys(sum.Record.Attributes) {
		hd.Record = append(hd.Record, htmlKV{k, sum.Record.Attributes[k]})
	}
	if sum.Record.TimeUnits != "" {
		hd.Record = append(hd.Record, htmlKV{"time axis", sum.Record.TimeUnits})
	}

	for _, w := range sum.Warnings {
		hd.Warnings = append(hd.Warnings, sym(w))
	}

	// sea state
	ss := sum.SeaState
	depth := "deep water"
	if ss.Depth > 0 {
		depth = fmt.Sprintf("%.1f m", ss.Depth)
	}
	hd.Sea = []htmlKV{
		{"Significant wave height H<sub>m0</sub> = 4√m<sub>0</sub>", fmt.Sprintf("%.2f m", ss.Hm0)},
		{"Peak period T<sub>p</sub>", fmt.Sprintf("%.2f s (f<sub>p</sub> = %.3f Hz)", ss.Tp, 1/ss.Tp)},
		{"Peak phase speed c<sub>p</sub> (linear dispersion)", fmt.Sprintf("%.2f m/s", ss.PeakPhaseSpeed)},
		{"Peak wavelength c<sub>p</sub> T<sub>p</sub>", fmt.Sprintf("%.1f m", ss.PeakWavelength)},
		{"Mean direction of travel θ<sub>0</sub>", fmt.Sprintf("%.1f° (%s)", ss.MeanDirection, ss.DirectionSource)},
		{"Directional spread", fmt.Sprintf("%.1f°", ss.DirectionSpread)},
		{"Water depth", fmt.Sprintf("%s (%s)", depth, ss.DepthSource)},
		{"Uniform current (x, y)", fmt.Sprintf("%.2f, %.2f m/s", ss.CurrentU, ss.CurrentV)},
		{"Shear (vorticity dU/dz)", fmt.Sprintf("%.3g 1/s", ss.Vorticity)},
	}

	// counts and quality
	q := trackQuality(d.Crests)
	fr := sum.Frames
	hd.Quality = []htmlKV{
		{"Frames in the input file", fmt.Sprint(fr.InFile)},
		{"Frames read", fmt.Sprint(fr.Read)},
		{"Frames skipped", fmt.Sprint(fr.Skipped)},
		{"Frame interval", fmt.Sprintf("%.4g s", fr.IntervalS)},
		{"Gaps of dropped frames", fmt.Sprint(len(fr.Gaps))},
		{"Masked (unknown) fraction of grid cells", pct(sum.Masked)},
		{"Crest detections", fmt.Sprint(sum.Crests.Detections)},
		{"Tracks formed", fmt.Sprint(q.tracks)},
		{"Detections outside every track's gates (started a new track)", fmt.Sprint(sum.Crests.Unmatched)},
		{"Gaps bridged within tracks", fmt.Sprint(sum.Crests.GapsBridged)},
		{"Crest rows (one per crest per frame)", fmt.Sprint(q.rows)},
		{"Rows with a crest speed", fmt.Sprint(q.rowsSpeed)},
		{"Rows without a speed (fit window incomplete: track ends, short tracks)", fmt.Sprint(q.rows - q.rowsSpeed)},
		{"Rows with a speed but no local wavelength (left out of c<sub>cr</sub>/c<sub>loc</sub>)", fmt.Sprint(q.rowsSpeed - q.rowsLocal)},
		{"Tracks rejected from the statistics: shorter than the speed window, no speed at all", fmt.Sprint(q.tracks - q.tracksSpeed)},
		{"Tracks in the statistics", fmt.Sprint(q.tracksSpeed)},
	}
	for _, k := range sortedKeys(fr.SkippedReasons) {
		hd.Skipped = append(hd.Skipped, htmlKV{k, fmt.Sprint(fr.SkippedReasons[k])})
	}

	// statistics tables
	for _, r := range []struct {
		key, title, sym string
		rd              RatioDistributions
	}{
		{"peak", "Crest speed relative to the peak phase speed, c<sub>cr</sub>/c<sub>p</sub>", "c_cr/c_p", res.Peak},
		{"local", "Crest speed relative to the local carrier phase speed, c<sub>cr</sub>/c<sub>loc</sub>", "c_cr/c_loc", res.Local},
	} {
		hr := htmlRatio{Key: r.key, Title: r.title, Symbol: r.sym}
		row := func(key, class string, s Stats, all bool) htmlStatRow {
			return htmlStatRow{Key: r.key + "/" + key, Class: sym(class), N: s.N, Tracks: s.Tracks,
				Mean: fmt3(s.Mean), MeanCI: fmtCI(s.MeanCI), Median: fmt3(s.Median), MedianCI: fmtCI(s.MedianCI),
				Mode: fmt3(s.Mode), ModeCI: fmtCI(s.ModeCI), P05: fmt3(s.P05), P95: fmt3(s.P95),
				Few: s.Tracks < FewTracks, All: all}
		}
		for k, c := range r.rd.Classes {
			hr.Rows = append(hr.Rows, row(fmt.Sprint(k), classLabel(cb[k][0], cb[k][1]), c.Stats, false))
		}
		hr.Rows = append(hr.Rows, row("all", "all crests", r.rd.All.Stats, true))
		hd.Ratios = append(hd.Ratios, hr)
	}

	// at a glance
	ap, al := res.Peak.All.Stats, res.Local.All.Stats
	dur := sum.Record.LastTimeS - sum.Record.FirstTimeS
	hd.Glance = append(hd.Glance, sym(fmt.Sprintf(
		"%d frames (%.0f s) were analysed; %d crest tracks gave %d crest-speed estimates from %d tracks long enough for a speed.",
		fr.Read, dur, q.tracks, q.rowsSpeed, q.tracksSpeed)))
	hd.Glance = append(hd.Glance, sym(fmt.Sprintf(
		"Over all crests, the crest speed is most often %s of the peak phase speed c_p = %.2f m/s (mode of c_cr/c_p; %d %% interval %s), with median %s (%s). "+
			"Against the local carrier wave the mode of c_cr/c_loc is %s (%s), the median %s (%s).",
		fmt3(ap.Mode), ss.PeakPhaseSpeed, hd.Level, fmtCI(ap.ModeCI), fmt3(ap.Median), fmtCI(ap.MedianCI),
		fmt3(al.Mode), fmtCI(al.ModeCI), fmt3(al.Median), fmtCI(al.MedianCI))))
	var parts []string
	for k, c := range res.Peak.Classes {
		s := c.Stats
		if s.N == 0 {
			parts = append(parts, fmt.Sprintf("%s: no crests", classLabel(cb[k][0], cb[k][1])))
			continue
		}
		few := ""
		if s.Tracks < FewTracks {
			few = ", few tracks: an indication only"
		}
		parts = append(parts, fmt.Sprintf("%s: median %s (%s), mode %s, from %d rows of %d tracks%s",
			classLabel(cb[k][0], cb[k][1]), fmt3(s.Median), fmtCI(s.MedianCI), fmt3(s.Mode), s.N, s.Tracks, few))
	}
	hd.Glance = append(hd.Glance, sym("By steepness class, c_cr/c_p has "+strings.Join(parts, "; ")+"."))
	hd.Trust = []template.HTML{
		sym(fmt.Sprintf("The intervals are %d %% bootstrap percentile intervals from %d resamples of whole crest tracks (rows of one track are correlated, so tracks, not rows, are the independent units). "+
			"They measure the sampling variation between tracks only.", hd.Level, B)),
		sym("They do not include systematic errors: of the surface elevation maps, of crest detection and linking, of the mean direction, depth and current used, " +
			"or of the choice of reference speed (c_p from the spectral peak, c_loc from the zero-crossing wavelength around each crest)."),
		sym(fmt.Sprintf("Classes with fewer than %d tracks are marked ◦ in the tables; read them as indications only.", FewTracks)),
	}

	hd.Glance = append(hd.Glance, breakingGlance(sum)...)

	// figures
	for _, f := range res.Figures {
		if f.Section != "" {
			continue
		}
		hd.Figures = append(hd.Figures, htmlFigure{
			ID: f.Name, Title: sym(f.Title), Caption: sym(f.Caption),
			Src: template.URL("data:image/png;base64," + base64.StdEncoding.EncodeToString(f.PNG)),
			PNG: "figures/" + f.Name + ".png", SVG: "figures/" + f.Name + ".svg",
		})
	}
	hd.Breaking = breakingSection(sum, res, bounds)

	// method
	window := "T<sub>p</sub>/4"
	if v, ok := sum.Method["crest_speed_window_s"].(float64); ok {
		window = fmt.Sprintf("%.2f s", v)
	}
	hd.Method = []htmlKV{
		{"Sea state", "Frequency spectrum of the elevation at grid points by Welch's method (Hann window, 50 % overlap; Welch 1967), averaged over the points; " +
			"H<sub>m0</sub> = 4√m<sub>0</sub>; T<sub>p</sub> from the spectral peak refined by a parabola; mean direction from the record unless given."},
		{"Reference speeds", "Linear dispersion ω² = g k tanh(k h), with current and constant vorticity where given; the wavenumber from the explicit approximation of Fenton & McKee (1990) refined by Newton's method. " +
			"c<sub>p</sub> at the peak period; c<sub>loc</sub> at the down-crossing to down-crossing wavelength around each crest, median over the speed window."},
		{"Crests and steepness", "A crest is the highest point between a zero up-crossing and the next down-crossing along the mean direction; " +
			"a<sub>c</sub> its elevation, w<sub>c</sub> the zero-crossing width, S<sub>c</sub> = a<sub>c</sub> π / w<sub>c</sub>. Crests are linked frame to frame into tracks."},
		{"Crest speed", "Derivative of a local least-squares quadratic fitted to the crest position along the mean direction over a window of " + window +
			" — the Savitzky–Golay filter (Savitzky & Golay 1964), written for uneven times; no speed where the window is incomplete."},
		{"Distributions", "Normalised histograms with the Freedman–Diaconis bin width 2 IQR n<sup>−1/3</sup> (Freedman & Diaconis 1981); " +
			"Gaussian kernel density estimates with Silverman's rule-of-thumb bandwidth 0.9 min(σ, IQR/1.34) n<sup>−1/5</sup> (Silverman 1986); " +
			"the mode is the maximum of the kernel estimate; percentiles by linear interpolation between order statistics (Hyndman & Fan 1996, type 7)."},
		{"Confidence intervals", fmt.Sprintf("Bootstrap percentile intervals (Efron & Tibshirani 1993) at %d %%: %d resamples (seed %d), each drawing whole crest tracks with replacement, "+
			"as many as the record has; each statistic recomputed on the rows of the resample (steepness classes as domains). The mode of a resample uses a linearly binned kernel estimate.",
			hd.Level, B, opt.Bootstrap.Seed)},
		{"Outputs", "crest_tracks.nc follows the CF-1.8 conventions for discrete sampling geometries (trajectories, contiguous ragged array). " +
			"Figures use the Okabe–Ito colour-blind-safe palette (Okabe & Ito 2008) and Moreland's diverging cool–warm map (Moreland 2009)."},
	}
	hd.References = []string{
		"Efron, B. &amp; Tibshirani, R. J. (1993). <i>An Introduction to the Bootstrap</i>. Chapman &amp; Hall.",
		"Fenton, J. D. &amp; McKee, W. D. (1990). On calculating the lengths of water waves. <i>Coastal Engineering</i> 14, 499–513.",
		"Freedman, D. &amp; Diaconis, P. (1981). On the histogram as a density estimator: L<sub>2</sub> theory. <i>Z. Wahrscheinlichkeitstheorie verw. Gebiete</i> 57, 453–476.",
		"Hyndman, R. J. &amp; Fan, Y. (1996). Sample quantiles in statistical packages. <i>The American Statistician</i> 50, 361–365.",
		"Moreland, K. (2009). Diverging color maps for scientific visualization. <i>Advances in Visual Computing</i> (ISVC 2009), 92–103.",
		"Okabe, M. &amp; Ito, K. (2008). <i>Color Universal Design (CUD): how to make figures and presentations that are friendly to colorblind people</i>.",
		"Savitzky, A. &amp; Golay, M. J. E. (1964). Smoothing and differentiation of data by simplified least squares procedures. <i>Analytical Chemistry</i> 36, 1627–1639.",
		"Silverman, B. W. (1986). <i>Density Estimation for Statistics and Data Analysis</i>. Chapman &amp; Hall.",
		"Welch, P. D. (1967). The use of fast Fourier transform for the estimation of power spectra. <i>IEEE Transactions on Audio and Electroacoustics</i> 15, 70–73.",
		"Eaton, B. et al. NetCDF Climate and Forecast (CF) Metadata Conventions, version 1.8 (2020).",
	}
	if sum.Whitecaps != nil || sum.Inception != nil {
		hd.References = append(hd.References, breakingReferences...)
	}

	// provenance
	keys := make([]string, 0, len(sum.Timings))
	for k := range sum.Timings {
		keys = append(keys, k)
	}
	sort.Strings(keys)
	for _, k := range keys {
		hd.Timings = append(hd.Timings, htmlKV{k, fmt.Sprintf("%.2f s", sum.Timings[k])})
	}
	for _, kv := range sortedOutputs(sum.Outputs) {
		hd.Outputs = append(hd.Outputs, htmlKV{kv[0], kv[1]})
	}

	var buf bytes.Buffer
	if err := pageTemplate.Execute(&buf, hd); err != nil {
		return nil, fmt.Errorf("report page cannot be written: %v", err)
	}
	return buf.Bytes(), nil
}

func pct(v float64) string {
	if math.IsNaN(v) {
		return "–"
	}
	return fmt.Sprintf("%.2f %%", 100*v)
}

// quality counts tracks and rows of a crest table.
type quality struct {
	tracks, tracksSpeed, rows, rowsSpeed, rowsLocal int
}

func trackQuality(t *CrestTable) quality {
	runs := t.TrackRuns()
	q := quality{tracks: len(runs) - 1, rows: t.Len()}
	sp, rl := t.Cols[ColCrestSpeed], t.Cols[ColRatioLocal]
	for k := 0; k < q.tracks; k++ {
		has := false
		for i := runs[k]; i < runs[k+1]; i++ {
			if !math.IsNaN(sp[i]) {
				q.rowsSpeed++
				has = true
				if !math.IsNaN(rl[i]) {
					q.rowsLocal++
				}
			}
		}
		if has {
			q.tracksSpeed++
		}
	}
	return q
}

var pageTemplate = template.Must(template.New("report").Funcs(template.FuncMap{
	"raw": func(s string) template.HTML { return template.HTML(s) },
}).Parse(`<!DOCTYPE html>
<html lang="en">
<head>
<meta charset="utf-8">
<meta name="viewport" content="width=device-width, initial-scale=1">
<title>{{.Title}}{{if .Subtitle}} — {{.Subtitle}}{{end}}</title>
<style>
:root { --ink: #1b1b1b; --muted: #5a5a5a; --rule: #d0d0d0; --band: #f4f6f8; --accent: #0072b2; --warn: #d55e00; }
* { box-sizing: border-box; }
html { font-size: 16px; }
body { margin: 0; color: var(--ink); background: #fff; font-family: "Liberation Sans", "DejaVu Sans", Arial, Helvetica, sans-serif; line-height: 1.45; }
main { max-width: 64rem; margin: 0 auto; padding: 1.5rem 1.5rem 3rem; }
h1 { font-size: 1.7rem; margin: 0 0 .2rem; }
h2 { font-size: 1.25rem; margin: 2.2rem 0 .6rem; padding-bottom: .25rem; border-bottom: 2px solid var(--rule); }
h3 { font-size: 1.05rem; margin: 1.4rem 0 .4rem; }
p { margin: .45rem 0; }
.sub { color: var(--muted); margin: 0 0 1rem; }
.caution { border: 2px solid var(--warn); background: #fff6ef; padding: .7rem 1rem; border-radius: 4px; margin: 1rem 0; }
.caution strong { color: var(--warn); }
.warnings { border-left: 4px solid var(--warn); background: #fffaf3; padding: .5rem 1rem; margin: 1rem 0; }
.warnings ul { margin: .3rem 0 0; padding-left: 1.2rem; }
.glance { background: var(--band); padding: .8rem 1.1rem; border-radius: 4px; }
.glance p:first-child { margin-top: 0; }
table { border-collapse: collapse; margin: .4rem 0 1rem; font-size: .92rem; }
th, td { padding: .28rem .6rem; border-bottom: 1px solid var(--rule); text-align: left; vertical-align: top; }
th { background: var(--band); font-weight: 600; }
td.num, th.num { text-align: right; font-variant-numeric: tabular-nums; white-space: nowrap; }
tr.all td { font-weight: 600; border-top: 2px solid #999; }
tr.few td { color: var(--muted); }
tr.few td:first-child::after { content: " ◦"; color: var(--warn); }
table.kv td:first-child { color: var(--muted); }
table.stats { width: 100%; }
.note { color: var(--muted); font-size: .88rem; }
figure { margin: 1.6rem 0; }
figure img { width: 100%; height: auto; border: 1px solid var(--rule); }
figcaption { font-size: .92rem; margin-top: .4rem; }
figcaption b { display: block; margin-bottom: .15rem; }
dl.method dt { font-weight: 600; margin-top: .6rem; }
dl.method dd { margin: .1rem 0 0 0; }
ol.refs li { margin: .2rem 0; font-size: .92rem; }
pre { background: var(--band); padding: .6rem .8rem; font-size: .78rem; overflow-x: auto; border-radius: 4px; }
code, .path { font-family: "Liberation Mono", "DejaVu Sans Mono", monospace; font-size: .85rem; overflow-wrap: anywhere; }
table.stats td:first-child { white-space: nowrap; }
table.stats th, table.stats td { padding: .28rem .42rem; font-size: .86rem; }
table.kv td.note { font-size: .82rem; }
table.confusion { min-width: 28rem; }
table.confusion td:first-child { white-space: nowrap; }
footer { margin-top: 2.5rem; color: var(--muted); font-size: .85rem; border-top: 1px solid var(--rule); padding-top: .6rem; }
@media print {
  html { font-size: 10.5pt; }
  main { max-width: none; padding: 0; }
  h2 { break-after: avoid; }
  figure, table, .caution, .glance { break-inside: avoid; }
  pre { white-space: pre-wrap; }
}
</style>
</head>
<body>
<main>
<header>
<h1>{{.Title}}</h1>
<p class="sub">{{.Subtitle}}{{if .Subtitle}} · {{end}}generated {{.Generated}} by crestspeed {{.ReportVersion}}</p>
</header>

<div class="caution" role="note"><strong>Caution.</strong> {{.Caution}}</div>

{{if .Warnings}}<div class="warnings" role="note"><strong>Warnings about this record.</strong><ul>
{{range .Warnings}}<li>{{.}}</li>
{{end}}</ul></div>
{{end}}
<section id="glance">
<h2>At a glance</h2>
<div class="glance">
{{range .Glance}}<p>{{.}}</p>
{{end}}</div>
<h3>How far to trust it</h3>
{{range .Trust}}<p>{{.}}</p>
{{end}}</section>

<section id="sea-state">
<h2>Sea state</h2>
<table class="kv">
{{range .Sea}}<tr><td>{{raw .K}}</td><td class="num">{{raw .V}}</td></tr>
{{end}}</table>
</section>

<section id="quality">
<h2>Counts and quality</h2>
<table class="kv">
{{range .Quality}}<tr><td>{{raw .K}}</td><td class="num">{{.V}}</td></tr>
{{end}}</table>
{{if .Skipped}}<h3>Frames skipped, by reason</h3>
<table class="kv">
{{range .Skipped}}<tr><td>{{.K}}</td><td class="num">{{.V}}</td></tr>
{{end}}</table>{{else}}<p class="note">No frame was skipped.</p>{{end}}
</section>

<section id="statistics">
<h2>Crest-speed statistics by steepness class</h2>
<p class="note">n: crest rows (one per crest per frame) with a known ratio; tracks: the crest tracks they come from. Intervals: {{.Level}} % bootstrap percentile intervals, resampling whole tracks. ◦ fewer than {{.FewTracks}} tracks.</p>
{{range .Ratios}}
<h3>{{raw .Title}}</h3>
<table class="stats" id="stats-{{.Key}}">
<thead><tr><th>S<sub>c</sub> class</th><th class="num">n</th><th class="num">tracks</th><th class="num">mean</th><th class="num">{{$.Level}} % interval</th><th class="num">median</th><th class="num">{{$.Level}} % interval</th><th class="num">mode</th><th class="num">{{$.Level}} % interval</th><th class="num">5 %</th><th class="num">95 %</th></tr></thead>
<tbody>
{{range .Rows}}<tr class="{{if .All}}all{{end}}{{if .Few}} few{{end}}"><td>{{.Class}}</td><td class="num" data-key="{{.Key}}/n">{{.N}}</td><td class="num" data-key="{{.Key}}/tracks">{{.Tracks}}</td><td class="num" data-key="{{.Key}}/mean">{{.Mean}}</td><td class="num" data-key="{{.Key}}/mean_ci90">{{.MeanCI}}</td><td class="num" data-key="{{.Key}}/median">{{.Median}}</td><td class="num" data-key="{{.Key}}/median_ci90">{{.MedianCI}}</td><td class="num" data-key="{{.Key}}/mode">{{.Mode}}</td><td class="num" data-key="{{.Key}}/mode_ci90">{{.ModeCI}}</td><td class="num" data-key="{{.Key}}/p05">{{.P05}}</td><td class="num" data-key="{{.Key}}/p95">{{.P95}}</td></tr>
{{end}}</tbody>
</table>
{{end}}</section>

<section id="figures">
<h2>Figures</h2>
{{range .Figures}}<figure id="{{.ID}}">
<img src="{{.Src}}" alt="{{.Title}}">
<figcaption><b>{{.Title}}</b>{{.Caption}} <span class="note">Files: <span class="path">{{.PNG}}</span>, <span class="path">{{.SVG}}</span>.</span></figcaption>
</figure>
{{end}}</section>

{{template "breaking" .Breaking}}
<section id="method">
<h2>Method</h2>
<dl class="method">
{{range .Method}}<dt>{{.K}}</dt><dd>{{raw .V}}</dd>
{{end}}</dl>
<h3>Sources</h3>
<ol class="refs">
{{range .References}}<li>{{raw .}}</li>
{{end}}</ol>
</section>

<section id="provenance">
<h2>Provenance</h2>
<table class="kv">
<tr><td>crestspeed version of the tracking run</td><td>{{.Version}}</td></tr>
<tr><td>crestspeed version of this report</td><td>{{.ReportVersion}}</td></tr>
{{range .Record}}<tr><td>record {{.K}}</td><td>{{.V}}</td></tr>
{{end}}</table>
<h3>Input files</h3>
<table>
<thead><tr><th>file</th><th class="num">bytes</th><th>SHA-256</th></tr></thead>
<tbody>
{{range .Inputs}}<tr><td class="path">{{.Path}}</td><td class="num">{{.Bytes}}</td><td class="path">{{.SHA256}}</td></tr>
{{end}}</tbody>
</table>
<h3>Run time per stage</h3>
<table class="kv">
{{range .Timings}}<tr><td>{{.K}}</td><td class="num">{{.V}}</td></tr>
{{end}}</table>
<h3>Outputs</h3>
<table class="kv">
{{range .Outputs}}<tr><td>{{.K}}</td><td class="path">{{.V}}</td></tr>
{{end}}</table>
<h3>Configuration as resolved</h3>
<pre>{{.Config}}</pre>
</section>

<footer>{{.Caution}}</footer>
</main>
</body>
</html>
`))
