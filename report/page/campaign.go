package page

// The page of a campaign report (report.html of "crestspeed campaign"):
// the caution, the campaign at a glance, the deployments with their sea
// state, counts and medians, the pooled statistics by steepness class,
// the figures, Λ(c/c_p), the method and the provenance. It has the style
// of the deployment report, and every number of its tables is that of
// summary.json, its cell saying where (data-sum).

import (
	"bytes"
	"fmt"
	"html/template"
	"math"
	"sort"
	"strings"
	"time"

	"crestspeed/report/figures"
	"crestspeed/report/stats"
	"crestspeed/report/summary"
)

// CampaignInput is what the campaign page shows.
type CampaignInput struct {
	// Summary is the campaign's summary.json.
	Summary *summary.Campaign
	Figures []figures.Figure
	// Notes say which figures are absent and why.
	Notes []string
	// Bounds are the inner steepness-class boundaries.
	Bounds []float64
	// Version is the version of the tool writing the page.
	Version string
	// MinClassTracks is the fewest tracks of a class not marked as an
	// indication only.
	MinClassTracks int
}

// htmlCell is one cell of a table: its text and, for a number of
// summary.json, the path of that number.
type htmlCell struct {
	V   template.HTML
	Key string
	Num bool
}

type htmlRow struct {
	Cells []htmlCell
	Few   bool
	All   bool
}

type htmlTable struct {
	ID   string
	Head []template.HTML
	Rows []htmlRow
}

type campaignData struct {
	Title, Subtitle, Caution, Generated string
	Warnings, Notes                     []template.HTML
	Glance, Trust                       []template.HTML
	Deployments, Medians, Lambda        htmlTable
	Ratios                              []htmlRatio
	HasLambda                           bool
	Figures                             []htmlFigure
	Method                              []htmlKV
	Settings                            []htmlKV
	References                          []string
	Version                             string
	Inputs                              []summary.FileInfo
	Timings, Outputs                    []htmlKV
	Config                              string
	FewTracks, Level                    int
}

// num shows a number of summary.json at path key with the format f ("–"
// when unknown).
func num(v float64, f, key string) htmlCell {
	s := "–"
	if !math.IsNaN(v) && !math.IsInf(v, 0) {
		s = fmt.Sprintf(f, v)
	}
	return htmlCell{V: template.HTML(template.HTMLEscapeString(s)), Key: key, Num: true}
}

func whole(v int, key string) htmlCell {
	return htmlCell{V: template.HTML(fmt.Sprint(v)), Key: key, Num: true}
}

func textCell(s string) htmlCell { return htmlCell{V: sym(s)} }

func interval(iv stats.Interval, key string) htmlCell {
	return htmlCell{V: template.HTML(template.HTMLEscapeString(fmtCI(iv))), Key: key, Num: true}
}

// RenderCampaign writes the campaign's report.html.
func RenderCampaign(in CampaignInput) ([]byte, error) {
	sum := in.Summary
	cb := &sum.Campaign
	level := int(math.Round(100 * stats.Level))
	hd := campaignData{
		Title:   "Crest-speed campaign report",
		Caution: summary.Caution, Generated: time.Now().UTC().Format("2006-01-02 15:04 UTC"),
		Version: in.Version, Inputs: sum.Inputs, Config: prettyJSON(sum.Config),
		FewTracks: in.MinClassTracks, Level: level,
	}
	var sites []string
	seen := map[string]bool{}
	for _, d := range cb.Deployments {
		if d.Site != "" && !seen[d.Site] {
			seen[d.Site] = true
			sites = append(sites, d.Site)
		}
	}
	hd.Subtitle = fmt.Sprintf("%d deployments", len(cb.Deployments))
	if len(sites) > 0 {
		hd.Subtitle += " — " + strings.Join(sites, "; ")
	}
	for _, w := range append(append([]string{}, sum.Warnings...), sum.Settings.Conversions...) {
		hd.Warnings = append(hd.Warnings, sym(w))
	}
	for _, n := range in.Notes {
		hd.Notes = append(hd.Notes, sym(n))
	}
	cbounds := stats.ClassBounds(in.Bounds)
	hd.Deployments = deploymentTable(cb)
	hd.Medians = medianTable(cb, cbounds, in.MinClassTracks)
	pin := Input{MinClassTracks: in.MinClassTracks}
	hd.Ratios = append(hd.Ratios,
		ratioTable(pin, "campaign/crest_speed_ratio/peak", cb.CrestRatio["peak"], cbounds,
			"Pooled crest speed relative to the peak phase speed of each deployment, c<sub>cr</sub>/c<sub>p</sub>", "S<sub>c</sub> class", "tracks", "", "all crests"),
		ratioTable(pin, "campaign/crest_speed_ratio/local", cb.CrestRatio["local"], cbounds,
			"Pooled crest speed relative to the local carrier phase speed, c<sub>cr</sub>/c<sub>loc</sub>", "S<sub>c</sub> class", "tracks", "", "all crests"))
	if cb.FrontRatio != nil {
		hd.Ratios = append(hd.Ratios, ratioTable(pin, "campaign/front_speed_ratio/peak", cb.FrontRatio["peak"], cbounds,
			"Pooled whitecap front speed relative to the peak phase speed of each deployment, c<sub>br</sub>/c<sub>p</sub>", "parent crest S<sub>c</sub> class", "whitecaps", "parent crest ", "all whitecap rows"))
	}
	if cb.Lambda != nil {
		hd.HasLambda = true
		hd.Lambda = lambdaTable(cb)
	}
	hd.Glance = campaignGlance(in, cbounds)
	hd.Trust = campaignTrust(in, level)
	for _, f := range in.Figures {
		hd.Figures = append(hd.Figures, htmlFigureOf(f))
	}
	hd.Method = campaignMethod(in, level)
	for _, k := range sortedKeys(sum.Settings.Reference) {
		hd.Settings = append(hd.Settings, htmlKV{k, sum.Settings.Reference[k]})
	}
	hd.References = append(append([]string{}, references...),
		"Davison, A. C. &amp; Hinkley, D. V. (1997). <i>Bootstrap Methods and their Application</i>. Cambridge University Press.",
		breakingReferences[1])
	sort.Strings(hd.References)
	for _, k := range sortedKeys(sum.Timings) {
		hd.Timings = append(hd.Timings, htmlKV{k, fmt.Sprintf("%.2f s", sum.Timings[k])})
	}
	for _, k := range sortedKeys(sum.Outputs) {
		hd.Outputs = append(hd.Outputs, htmlKV{k, sum.Outputs[k]})
	}
	var buf bytes.Buffer
	if err := campaignTemplate.Execute(&buf, hd); err != nil {
		return nil, fmt.Errorf("campaign page cannot be written: %w", err)
	}
	return buf.Bytes(), nil
}

// deploymentTable lists the deployments: where and when, sea state,
// counts.
func deploymentTable(cb *summary.CampaignBlock) htmlTable {
	t := htmlTable{ID: "deployments", Head: []template.HTML{"#", "site", "start (UTC)", "end (UTC)", "H<sub>m0</sub> (m)", "T<sub>p</sub> (s)",
		"c<sub>p</sub> (m/s)", "θ<sub>0</sub> (°)", "depth (m)", "H<sub>m0</sub> k<sub>p</sub>/2", "U (m/s)", "c<sub>p</sub>/U",
		"crest tracks", "rows with a speed", "whitecaps"}}
	for i, d := range cb.Deployments {
		k := func(f string) string { return fmt.Sprintf("campaign/deployments/%d/%s", i, f) }
		depth := textCell("deep water")
		if d.Depth > 0 {
			depth = num(d.Depth, "%.1f", k("depth_m"))
		}
		whitecaps := textCell("no foam mask")
		if d.HasWhitecaps {
			whitecaps = whole(d.WhitecapTracks, k("whitecap_tracks"))
		}
		site := d.Site
		if site == "" {
			site = "–"
		}
		t.Rows = append(t.Rows, htmlRow{Cells: []htmlCell{
			whole(d.Index, k("index")), textCell(site), textCell(orDash(d.StartUTC)), textCell(orDash(d.EndUTC)),
			num(d.Hm0, "%.3f", k("hm0_m")), num(d.Tp, "%.2f", k("tp_s")), num(d.PeakPhaseSpeed, "%.2f", k("peak_phase_speed_mps")),
			num(d.MeanDirection, "%.1f", k("mean_direction_deg")), depth, num(d.PeakSteepness, "%.4f", k("peak_steepness")),
			num(d.WindSpeed, "%.1f", k("wind_speed_mps")), num(d.WaveAge, "%.2f", k("wave_age")),
			whole(d.CrestTracks, k("crest_tracks")), whole(d.CrestRowsWithSpeed, k("crest_rows_with_speed")), whitecaps,
		}})
	}
	return t
}

func orDash(s string) string {
	if s == "" {
		return "–"
	}
	return s
}

// medianTable gives, per deployment and class, the median ratios and
// their intervals.
func medianTable(cb *summary.CampaignBlock, bounds [][2]float64, few int) htmlTable {
	t := htmlTable{ID: "deployment-medians", Head: []template.HTML{"#", "S<sub>c</sub> class", "n", "tracks", "median c<sub>cr</sub>/c<sub>p</sub>", "interval",
		"whitecap rows", "whitecaps", "median c<sub>br</sub>/c<sub>p</sub>", "interval"}}
	for i, d := range cb.Deployments {
		crest := d.CrestRatio["peak"]
		for g, s := range crest.Groups() {
			path := fmt.Sprintf("campaign/deployments/%d/crest_speed_ratio/peak/", i)
			fpath := fmt.Sprintf("campaign/deployments/%d/front_speed_ratio/peak/", i)
			sub := fmt.Sprintf("classes/%d/", g)
			label := "all"
			if g < len(bounds) {
				label = figures.ClassLabel(bounds[g][0], bounds[g][1])
			} else {
				sub = "all/"
			}
			row := htmlRow{All: g == len(bounds), Few: s.Tracks < few, Cells: []htmlCell{
				whole(d.Index, fmt.Sprintf("campaign/deployments/%d/index", i)), textCell(label),
				whole(s.N, path+sub+"n"), whole(s.Tracks, path+sub+"tracks"),
				num(s.Median, "%.3f", path+sub+"median"), interval(s.MedianCI, path+sub+"median_ci90"),
			}}
			if d.FrontRatio != nil {
				f := d.FrontRatio["peak"].Groups()[g]
				row.Cells = append(row.Cells, whole(f.N, fpath+sub+"n"), whole(f.Tracks, fpath+sub+"tracks"),
					num(f.Median, "%.3f", fpath+sub+"median"), interval(f.MedianCI, fpath+sub+"median_ci90"))
			} else {
				row.Cells = append(row.Cells, textCell("–"), textCell("–"), textCell("–"), textCell("–"))
			}
			t.Rows = append(t.Rows, row)
		}
	}
	return t
}

// lambdaTable gives the integral of Λ(c/c_p) per deployment and pooled.
func lambdaTable(cb *summary.CampaignBlock) htmlTable {
	t := htmlTable{ID: "lambda", Head: []template.HTML{"deployment", "analysed frames", "∫ Λ(c/c<sub>p</sub>) d(c/c<sub>p</sub>) (1/m)", "front length outside the bins, per frame (m)"}}
	for i, d := range cb.Deployments {
		if d.Lambda == nil {
			continue
		}
		k := fmt.Sprintf("campaign/deployments/%d/lambda_normalised/", i)
		t.Rows = append(t.Rows, htmlRow{Cells: []htmlCell{whole(d.Index, fmt.Sprintf("campaign/deployments/%d/index", i)),
			whole(d.Lambda.Frames, k+"frames"), num(d.Lambda.Integral, "%.4g", k+"integral_per_m"), num(d.Lambda.OutOfRange, "%.4g", k+"front_length_out_of_bins_m")}})
	}
	l := cb.Lambda
	t.Rows = append(t.Rows, htmlRow{All: true, Cells: []htmlCell{textCell("pooled"), whole(l.Frames, "campaign/lambda_normalised/frames"),
		num(l.Integral, "%.4g", "campaign/lambda_normalised/integral_per_m"), num(l.OutOfRange, "%.4g", "campaign/lambda_normalised/front_length_out_of_bins_m")}})
	return t
}

// campaignGlance are the paragraphs "At a glance".
func campaignGlance(in CampaignInput, cb [][2]float64) []template.HTML {
	c := &in.Summary.Campaign
	n := c.Counts
	ap := c.CrestRatio["peak"].All
	level := int(math.Round(100 * stats.Level))
	var starts, ends []string
	for _, d := range c.Deployments {
		if d.StartUTC != "" {
			starts = append(starts, d.StartUTC)
			ends = append(ends, d.EndUTC)
		}
	}
	span := ""
	if len(starts) > 0 {
		sort.Strings(starts)
		sort.Strings(ends)
		span = fmt.Sprintf(" recorded from %s to %s", starts[0], ends[len(ends)-1])
	}
	out := []template.HTML{sym(fmt.Sprintf("%d deployments%s: %d frames read, %d crest tracks, %d crest-speed estimates; %d whitecaps in the %d deployments with a foam mask.",
		n.Deployments, span, n.FramesRead, n.CrestTracks, n.CrestRowsWithSpeed, n.Whitecaps, n.DeploymentsWithWhitecap)),
		sym(fmt.Sprintf("Pooled over all deployments, each crest relative to the c_p of its own deployment, the crest speed is most often %s of c_p (mode of c_cr/c_p; %d %% interval %s), with median %s (%s).",
			fmt3(ap.Mode), level, fmtCI(ap.ModeCI), fmt3(ap.Median), fmtCI(ap.MedianCI)))}
	var parts []string
	for k, s := range c.CrestRatio["peak"].Classes {
		label := figures.ClassLabel(cb[k][0], cb[k][1])
		if s.N == 0 {
			parts = append(parts, label+": no crests")
			continue
		}
		few := ""
		if s.Tracks < in.MinClassTracks {
			few = ", few tracks: an indication only"
		}
		parts = append(parts, fmt.Sprintf("%s: median %s (%s) from %d rows of %d tracks%s", label, fmt3(s.Median), fmtCI(s.MedianCI), s.N, s.Tracks, few))
	}
	out = append(out, sym("By steepness class, the pooled c_cr/c_p has "+strings.Join(parts, "; ")+"."))
	if c.FrontRatio != nil {
		f := c.FrontRatio["peak"].All
		out = append(out, sym(fmt.Sprintf("Whitecap fronts, pooled over the deployments with whitecaps, move at a median %s of c_p (%s; %d rows of %d whitecaps).",
			fmt3(f.Median), fmtCI(f.MedianCI), f.N, f.Tracks)))
	}
	lo, hi, elo, ehi := math.Inf(1), math.Inf(-1), math.Inf(1), math.Inf(-1)
	for _, d := range c.Deployments {
		m := d.CrestRatio["peak"].All.Median
		if !math.IsNaN(m) {
			lo, hi = math.Min(lo, m), math.Max(hi, m)
			elo, ehi = math.Min(elo, d.PeakSteepness), math.Max(ehi, d.PeakSteepness)
		}
	}
	if !math.IsInf(lo, 1) {
		out = append(out, sym(fmt.Sprintf("Across the deployments, the median c_cr/c_p of all crests ranges from %.3f to %.3f, at peak steepness H_m0 k_p/2 from %.4f to %.4f. Wave age: %s.",
			lo, hi, elo, ehi, c.WaveAge)))
	}
	return out
}

// campaignTrust are the paragraphs "How far to trust it".
func campaignTrust(in CampaignInput, level int) []template.HTML {
	return []template.HTML{
		sym(fmt.Sprintf("The pooled intervals are %d %% bootstrap intervals from %d resamples that draw whole crest tracks (whitecaps) within each deployment, as many as it has (a stratified bootstrap): "+
			"tracks are the independent units, and every deployment keeps its share of them. Each interval is the estimate ± the %d %% point of the resampled estimates' distance from it.",
			level, in.Summary.Settings.BootstrapResamples, level)),
		sym("They measure the sampling variation of the tracks within the deployments given. They do not say how the statistics would vary over other deployments or sea states: " +
			"that variation is seen in the table of deployments and in the figures of the medians against peak steepness and wave age."),
		sym("Each ratio is taken relative to the c_p of its own deployment, so a bias of one deployment's c_p shifts its rows in the pool. Where a deployment records the uncertainty of its c_p it widens the intervals; " +
			"the intervals do not include other systematic errors (of the elevation maps, of crest detection and linking, of the mean direction, depth and current)."),
		sym(fmt.Sprintf("Classes with fewer than %d tracks are marked ◦ in the tables and drawn as points, not curves, or as open markers; read them as indications only.", in.MinClassTracks)),
	}
}

// campaignMethod are the rows of the method section.
func campaignMethod(in CampaignInput, level int) []htmlKV {
	s := in.Summary.Settings
	return []htmlKV{
		{"Deployments", "Each deployment is a folder of the tracking stage (crests.csv, summary.json, spectrum.csv, and the whitecap files with a foam mask), read back and checked against its summary. " +
			"Deployments whose reference settings differ (the definitions of S<sub>c</sub>, c<sub>p</sub> and c<sub>loc</sub>, the crest-speed fit and its window, the smallest crests and whitecap patches kept) are refused. " +
			"The steepness classes are converted exactly: every row carries its own S<sub>c</sub> and is classed into the campaign's classes; so are the speed bins of Λ(c), which is rebuilt from the whitecap rows on the campaign's bins of c/c<sub>p</sub>."},
		{"Pooling", "The pooled statistics are those of all rows of all deployments taken together — the same numbers as one analysis of the concatenated rows — with each ratio relative to the reference speeds of its own deployment. " +
			"Percentiles by linear interpolation between order statistics (Hyndman &amp; Fan 1996, type 7); densities and modes as in the deployment report (Silverman 1986; Wand 1994)."},
		{"Confidence intervals", fmt.Sprintf("Bootstrap intervals at %d %% (Efron &amp; Tibshirani 1993): %d resamples (seed %d), each drawing, within every deployment, as many whole tracks (whitecaps) with replacement as it has — "+
			"the bootstrap of several independent samples, stratified by deployment (Efron &amp; Tibshirani 1993, ch. 8; Davison &amp; Hinkley 1997, §3.2). "+
			"Each interval is the estimate ± the %d %% point of the absolute deviations of the resampled estimates (Hall 1988). "+
			"The statistics of each deployment are computed as its deployment report computes them, resampling its own tracks. Where the uncertainty u<sub>d</sub> of a deployment's c<sub>p</sub> is known, "+
			"the pooled half-width of c<sub>cr</sub>/c<sub>p</sub> and c<sub>br</sub>/c<sub>p</sub> is combined in quadrature with z √(Σ (n<sub>d</sub>/N)² u<sub>d</sub>²) times the estimate (JCGM 100:2008).",
			level, s.BootstrapResamples, s.BootstrapSeed, level)},
		{"Peak steepness and wave age", "Peak steepness H<sub>m0</sub> k<sub>p</sub>/2 with k<sub>p</sub> = 2π/(c<sub>p</sub> T<sub>p</sub>), the wavenumber at the peak period by linear dispersion with the deployment's depth and current. " +
			template.HTMLEscapeString(fmt.Sprintf("Wave age c_p/U with U the wind speed of the record attribute %q, in m/s, where recorded.", s.WindSpeedAttribute))},
		{"Λ(c/c<sub>p</sub>)", "Phillips's (1985) distribution of breaking-front length per unit area and unit speed, rebuilt from the whitecap rows — each front with a speed and a length, on the known area of its frame, averaged over the analysed frames — " +
			fmt.Sprintf("with the front speeds divided by the c<sub>p</sub> of their deployment, in bins of %.3g up to %.3g. ", s.LambdaBinWidth, s.LambdaMaxRatio) +
			"The Jacobian: with ĉ = c/c<sub>p</sub>, Λ̂(ĉ) dĉ = Λ(c) dc, so Λ̂(ĉ) = c<sub>p</sub> Λ(c<sub>p</sub> ĉ), in 1/m; its integral over ĉ is the front length per unit area. " +
			"The pooled curve takes the fronts of all deployments over all their analysed frames: the frame-weighted mean of the deployments' curves."},
		{"Outputs", "deployments.csv, one row per deployment (the precision of each column is that of the tables of the tracking stage); crest_tracks.nc (and whitecap_tracks.nc) hold the rows of every deployment as CF-1.8 trajectories " +
			"(contiguous ragged array) with the variable deployment giving each trajectory's row of deployments.csv and source_id its identifier in the deployment's own files. " +
			"Figures use the Okabe–Ito colour-blind-safe palette (Okabe &amp; Ito 2008)."},
	}
}

var campaignTemplate = template.Must(template.New("campaign").Funcs(template.FuncMap{
	"raw": func(s string) template.HTML { return template.HTML(s) },
}).Parse(`<!DOCTYPE html>
<html lang="en">
<head>
<meta charset="utf-8">
<meta name="viewport" content="width=device-width, initial-scale=1">
<title>{{.Title}} — {{.Subtitle}}</title>
<style>
` + pageCSS + `table.wide { width: 100%; }
table.wide th, table.wide td { padding: .26rem .38rem; font-size: .84rem; }
</style>
</head>
<body>
<main>
<header>
<h1>{{.Title}}</h1>
<p class="sub">{{.Subtitle}} · generated {{.Generated}} by crestspeed {{.Version}}</p>
</header>

<div class="caution" role="note"><strong>Caution.</strong> {{.Caution}}</div>

{{if .Warnings}}<div class="warnings" role="note"><strong>Warnings and conversions.</strong><ul>
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

<section id="deployments-section">
<h2>Deployments</h2>
{{template "table" .Deployments}}
<h3>Median speed ratios of each deployment by steepness class</h3>
<p class="note">n: rows with a known ratio; tracks (whitecaps): the units they come from. Intervals: {{.Level}} % bootstrap intervals of the median, resampling the deployment's own tracks (whitecaps). ◦ fewer than {{.FewTracks}} tracks: an indication only.</p>
{{template "table" .Medians}}
</section>

<section id="statistics">
<h2>Pooled statistics by steepness class</h2>
<p class="note">n: crest rows of all deployments with a known ratio; tracks: the crest tracks they come from. Intervals: {{.Level}} % bootstrap intervals resampling whole tracks within each deployment. ◦ fewer than {{.FewTracks}} tracks: an indication only.</p>
{{range .Ratios}}{{template "ratiotable" .}}{{end}}</section>

{{if .HasLambda}}<section id="lambda-section">
<h2>Breaking-front distribution against c/c<sub>p</sub></h2>
{{template "table" .Lambda}}
</section>
{{end}}
<section id="figures">
<h2>Figures</h2>
{{range .Notes}}<p class="note">{{.}}</p>
{{end}}{{range .Figures}}<figure id="{{.ID}}">
<img src="{{.Src}}" alt="{{.Title}}">
<figcaption><b>{{.Title}}</b>{{.Caption}} <span class="note">Files: <span class="path">{{.PNG}}</span>, <span class="path">{{.SVG}}</span>.</span></figcaption>
</figure>
{{end}}</section>

<section id="method">
<h2>Method</h2>
<dl class="method">
{{range .Method}}<dt>{{raw .K}}</dt><dd>{{raw .V}}</dd>
{{end}}</dl>
<h3>Reference settings shared by the deployments</h3>
<table class="kv">
{{range .Settings}}<tr><td>{{.K}}</td><td>{{.V}}</td></tr>
{{end}}</table>
<h3>Sources</h3>
<ol class="refs">
{{range .References}}<li>{{raw .}}</li>
{{end}}</ol>
</section>

<section id="provenance">
<h2>Provenance</h2>
<h3>Input files</h3>
<table>
<thead><tr><th>file</th><th class="num">bytes</th><th>SHA-256</th></tr></thead>
<tbody>
{{range .Inputs}}<tr><td class="path">{{.Path}}</td><td class="num">{{.Bytes}}</td><td class="path">{{.SHA256}}</td></tr>
{{end}}</tbody>
</table>
<h3>Run time</h3>
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
{{define "table"}}<table class="stats wide" id="{{.ID}}">
<thead><tr>{{range .Head}}<th>{{.}}</th>{{end}}</tr></thead>
<tbody>
{{range .Rows}}<tr class="{{if .All}}all{{end}}{{if .Few}} few{{end}}">{{range .Cells}}<td{{if .Num}} class="num"{{end}}{{if .Key}} data-sum="{{.Key}}"{{end}}>{{.V}}</td>{{end}}</tr>
{{end}}</tbody>
</table>
{{end}}`))

var _ = template.Must(campaignTemplate.New("ratiotable").Parse(ratioTableTemplate))
