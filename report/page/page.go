// Package page writes report.html: a self-contained page (figures
// embedded, no scripts, fonts or styles from elsewhere) with the caution,
// the results at a glance, the sea state, counts and quality, the ratio
// statistics by steepness class, the figures, the whitecaps and breaking
// section, the method with its sources, and the provenance of the run.
// Every number of the statistics tables is that of summary.json, and its
// cell says where (data-sum="path/in/summary.json").
package page

import (
	"bytes"
	"encoding/base64"
	"encoding/json"
	"fmt"
	"html/template"
	"math"
	"path/filepath"
	"regexp"
	"sort"
	"strings"
	"time"

	"crestspeed/report/figures"
	"crestspeed/report/stats"
	"crestspeed/report/summary"
	"crestspeed/report/table"
)

// Input is what the page shows.
type Input struct {
	// Summary is the report's summary.json, statistics with intervals.
	Summary *summary.Summary
	// Crests is the crest table, for the counts of tracks and rows.
	Crests  *table.Table
	Figures []figures.Figure
	// Notes say which figures of the breaking section are absent and why.
	Notes []string
	// Bounds are the inner steepness-class boundaries.
	Bounds []float64
	// Resamples and Seed are those of the bootstrap.
	Resamples int
	Seed      uint64
	// Version is the version of the tool writing the report.
	Version string
	// MinClassTracks is the fewest tracks of a class not marked as an
	// indication only.
	MinClassTracks int
	// Generated is the time the page says it was made; zero means now.
	Generated time.Time
}

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

func fmtCI(iv stats.Interval) string {
	if !iv.Known() {
		return "–"
	}
	return fmt.Sprintf("%.3f – %.3f", iv.Lo, iv.Hi)
}

// htmlSumRow is one row of a key–value table (or one cell of a table)
// whose value is a number of summary.json.
type htmlSumRow struct {
	K     template.HTML
	V     string
	Key   string // path in summary.json
	Scale string // factor the value is shown multiplied by ("" = 1)
	Note  template.HTML
}

// htmlRatioRow is one class of a ratio table.
type htmlRatioRow struct {
	Class    template.HTML
	All, Few bool
	Cells    []htmlSumRow // n, tracks, mean, CI, median, CI, mode, CI, p05, p95
}

// htmlRatio is one ratio table (see ratioTableTemplate).
type htmlRatio struct {
	ID, Title, ClassHead, UnitNoun template.HTML
	Level                          int
	Rows                           []htmlRatioRow
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
	Inputs                              []summary.FileInfo
	Timings                             []htmlKV
	Outputs                             []htmlKV
	Record                              []htmlKV
	Config                              string
	FewTracks                           int
	Level                               int
	RefUncertainty                      bool
	Breaking                            *htmlBreaking
	Gauge                               *htmlGauge
	Dominant                            *htmlDominant
}

// Render writes report.html.
func Render(in Input) ([]byte, error) {
	sum := in.Summary
	hd := htmlData{
		Title:     "Crest-speed deployment report",
		Caution:   summary.Caution,
		Generated: generatedAt(in.Generated),
		Version:   sum.Tool["version"], ReportVersion: in.Version,
		Inputs: sum.Inputs, FewTracks: in.MinClassTracks, Level: int(math.Round(100 * stats.Level)),
		Config:         prettyJSON(sum.Config),
		RefUncertainty: sum.SeaState.PeakSpeedRelativeUncertainty() > 0,
	}
	hd.Subtitle, hd.Record = recordRows(sum)
	for _, w := range sum.Warnings {
		hd.Warnings = append(hd.Warnings, sym(w))
	}
	hd.Sea = seaRows(sum.SeaState)
	q := trackQuality(in.Crests)
	hd.Quality = qualityRows(sum, q)
	for _, k := range sortedKeys(sum.Frames.SkippedReasons) {
		hd.Skipped = append(hd.Skipped, htmlKV{k, fmt.Sprint(sum.Frames.SkippedReasons[k])})
	}
	cb := stats.ClassBounds(in.Bounds)
	for _, r := range []struct{ key, title string }{
		{"peak", "Crest speed relative to the peak phase speed, c<sub>cr</sub>/c<sub>p</sub>"},
		{"local", "Crest speed relative to the local carrier phase speed, c<sub>cr</sub>/c<sub>loc</sub>"},
	} {
		hd.Ratios = append(hd.Ratios, ratioTable(in, "crest_speed_ratio/"+r.key, sum.Ratio[r.key], cb,
			template.HTML(r.title), "S<sub>c</sub> class", "tracks", "", "all crests"))
	}
	hd.Glance = glance(in, q)
	hd.Trust = trust(in, hd.Level, hd.RefUncertainty)
	hd.Glance = append(hd.Glance, breakingGlance(sum)...)
	for _, f := range in.Figures {
		if f.Section == "" {
			hd.Figures = append(hd.Figures, htmlFigureOf(f))
		}
	}
	hd.Breaking = breakingSection(in)
	hd.Gauge = gaugeSection(in)
	hd.Dominant = dominantSection(in)
	hd.Method = methodRows(in, hd.Level)
	hd.References = references
	if sum.Whitecaps != nil || sum.Inception != nil {
		hd.References = append(hd.References, breakingReferences...)
	}
	for _, k := range sortedKeys(sum.Timings) {
		hd.Timings = append(hd.Timings, htmlKV{k, fmt.Sprintf("%.2f s", sum.Timings[k])})
	}
	for _, k := range sortedKeys(sum.Outputs) {
		hd.Outputs = append(hd.Outputs, htmlKV{k, sum.Outputs[k]})
	}
	var buf bytes.Buffer
	if err := pageTemplate.Execute(&buf, hd); err != nil {
		return nil, fmt.Errorf("report page cannot be written: %w", err)
	}
	return buf.Bytes(), nil
}

// recordRows are the page's subtitle and the record's provenance rows.
func recordRows(sum *summary.Summary) (string, []htmlKV) {
	site := sum.Record.Attributes["site"]
	var inName, subtitle string
	if len(sum.Inputs) > 0 {
		inName = filepath.Base(sum.Inputs[0].Path)
	}
	switch {
	case site != "" && inName != "":
		subtitle = site + " — " + inName
	case inName != "":
		subtitle = inName
	default:
		subtitle = site
	}
	var rows []htmlKV
	if sum.Record.Title != "" {
		rows = append(rows, htmlKV{"title", sum.Record.Title})
	}
	for _, k := range sortedKeys(sum.Record.Attributes) {
		rows = append(rows, htmlKV{k, sum.Record.Attributes[k]})
	}
	if sum.Record.TimeUnits != "" {
		rows = append(rows, htmlKV{"time axis", sum.Record.TimeUnits})
	}
	return subtitle, rows
}

// seaRows are the rows of the sea-state table.
func seaRows(ss summary.SeaStateSummary) []htmlKV {
	depth := "deep water"
	if ss.Depth > 0 {
		depth = fmt.Sprintf("%.1f m", ss.Depth)
	}
	pm := func(v, u float64, format string) string {
		s := fmt.Sprintf(format, v)
		if u > 0 && !math.IsInf(u, 0) {
			s += fmt.Sprintf(" ± "+format, u)
		}
		return s
	}
	direction := []htmlKV{{"Mean direction of travel θ<sub>0</sub>, grid frame",
		fmt.Sprintf("%.1f° counter-clockwise from the grid's +x axis, the direction the waves travel toward (%s)", ss.MeanDirection, ss.DirectionSource)}}
	if !math.IsNaN(ss.DirectionToTrue) {
		direction = append(direction,
			htmlKV{"Waves travel toward (true bearing)", fmt.Sprintf("%.1f° clockwise from true north (oceanographic convention)", ss.DirectionToTrue)},
			htmlKV{"Waves come from (true bearing)", fmt.Sprintf("%.1f° clockwise from true north (nautical and meteorological convention)", ss.DirectionFromTrue)})
	} else {
		direction = append(direction, htmlKV{"True bearings", "not given: the grid's heading is unknown (set site.heading_deg)"})
	}
	noise := "no white-noise floor seen in the spectrum; nothing removed"
	if !math.IsNaN(ss.NoiseRMS) {
		noise = fmt.Sprintf("%.3f m RMS removed (the spectrum's high-frequency floor); %.2f m before the correction", ss.NoiseRMS, ss.Hm0Total)
	}
	rows := []htmlKV{
		{"Significant wave height H<sub>m0</sub> = 4√m<sub>0</sub>, waves' band", fmt.Sprintf("%.2f m (%.3f–%.3f Hz)", ss.Hm0, ss.BandLowHz, ss.BandHighHz)},
		{"Measurement noise in H<sub>m0</sub>", noise},
		{"Peak period T<sub>p</sub>", pm(ss.Tp, ss.TpUncertainty, "%.2f") + fmt.Sprintf(" s (f<sub>p</sub> = %.3f Hz)", 1/ss.Tp)},
		{"Peak phase speed c<sub>p</sub> (linear dispersion)", pm(ss.PeakPhaseSpeed, ss.PeakPhaseSpeedUncertainty, "%.2f") + " m/s"},
		{"Peak wavelength c<sub>p</sub> T<sub>p</sub>", fmt.Sprintf("%.1f m", ss.PeakWavelength)},
	}
	rows = append(rows, direction...)
	return append(rows,
		htmlKV{"Directional spread", fmt.Sprintf("%.1f°", ss.DirectionSpread)},
		htmlKV{"Water depth", fmt.Sprintf("%s (%s)", depth, ss.DepthSource)},
		htmlKV{"Uniform current (x, y)", fmt.Sprintf("%.2f, %.2f m/s", ss.CurrentU, ss.CurrentV)},
		htmlKV{"Shear (vorticity dU/dz)", fmt.Sprintf("%.3g 1/s", ss.Vorticity)},
	)
}

// qualityRows are the rows of the counts and quality table.
func qualityRows(sum *summary.Summary, q quality) []htmlKV {
	fr := sum.Frames
	rows := []htmlKV{
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
	c := sum.Crests
	for _, k := range sortedKeys(c.EndedByReason) {
		rows = append(rows, htmlKV{"Tracks ended: " + template.HTMLEscapeString(k), fmt.Sprint(c.EndedByReason[k])})
	}
	if r := c.StepResidualM; r != nil {
		rows = append(rows, htmlKV{"Steps: measured minus predicted advance (median; 5–95 %)",
			fmt.Sprintf("%+.3f m; %+.3f to %+.3f m over %d steps", r.P50, r.P05, r.P95, r.N)})
	}
	rows = append(rows, htmlKV{"Steps whose crest elevation changed by more than 0.3 H<sub>m0</sub>", pct(c.ElevationJumpShare)})
	return rows
}

// ratioTable is the table of one ratio's statistics, its cells keyed by
// their path under prefix in summary.json.
func ratioTable(in Input, prefix string, rs stats.RatioStats, cb [][2]float64, title, classHead template.HTML, unitNoun, classPrefix, allLabel string) htmlRatio {
	hr := htmlRatio{ID: template.HTML(strings.ReplaceAll(prefix, "/", "-")), Title: title, ClassHead: classHead,
		UnitNoun: template.HTML(unitNoun), Level: int(math.Round(100 * stats.Level))}
	row := func(path string, class template.HTML, s stats.Stats, all bool) htmlRatioRow {
		base := prefix + "/" + path + "/"
		cell := func(k, v string) htmlSumRow { return htmlSumRow{V: v, Key: base + k} }
		return htmlRatioRow{Class: class, All: all, Few: s.Tracks < in.MinClassTracks, Cells: []htmlSumRow{
			cell("n", fmt.Sprint(s.N)), cell("tracks", fmt.Sprint(s.Tracks)),
			cell("mean", fmt3(s.Mean)), cell("mean_ci90", fmtCI(s.MeanCI)),
			cell("median", fmt3(s.Median)), cell("median_ci90", fmtCI(s.MedianCI)),
			cell("mode", fmt3(s.Mode)), cell("mode_ci90", fmtCI(s.ModeCI)),
			cell("p05", fmt3(s.P05)), cell("p95", fmt3(s.P95)),
		}}
	}
	for k, s := range rs.Classes {
		label := fmt.Sprintf("class %d", k)
		if k < len(cb) {
			label = figures.ClassLabel(cb[k][0], cb[k][1])
		}
		hr.Rows = append(hr.Rows, row(fmt.Sprintf("classes/%d", k), sym(classPrefix+label), s, false))
	}
	hr.Rows = append(hr.Rows, row("all", sym(allLabel), rs.All, true))
	return hr
}

// glance are the paragraphs "At a glance" on the crest speeds.
func glance(in Input, q quality) []template.HTML {
	sum := in.Summary
	cb := stats.ClassBounds(in.Bounds)
	ap, al := sum.Ratio["peak"].All, sum.Ratio["local"].All
	dur := sum.Record.LastTimeS - sum.Record.FirstTimeS
	level := int(math.Round(100 * stats.Level))
	out := []template.HTML{sym(fmt.Sprintf(
		"%d frames (%.0f s) were analysed; %d crest tracks gave %d crest-speed estimates from %d tracks long enough for a speed.",
		sum.Frames.Read, dur, q.tracks, q.rowsSpeed, q.tracksSpeed)),
		sym(fmt.Sprintf(
			"Over all crests, the crest speed is most often %s of the peak phase speed c_p = %.2f m/s (mode of c_cr/c_p; %d %% interval %s), with median %s (%s). "+
				"Against the local carrier wave the mode of c_cr/c_loc is %s (%s), the median %s (%s).",
			fmt3(ap.Mode), sum.SeaState.PeakPhaseSpeed, level, fmtCI(ap.ModeCI), fmt3(ap.Median), fmtCI(ap.MedianCI),
			fmt3(al.Mode), fmtCI(al.ModeCI), fmt3(al.Median), fmtCI(al.MedianCI)))}
	var parts []string
	for k, s := range sum.Ratio["peak"].Classes {
		label := figures.ClassLabel(cb[k][0], cb[k][1])
		if s.N == 0 {
			parts = append(parts, label+": no crests")
			continue
		}
		few := ""
		if s.Tracks < in.MinClassTracks {
			few = ", few tracks: an indication only"
		}
		parts = append(parts, fmt.Sprintf("%s: median %s (%s), mode %s, from %d rows of %d tracks%s",
			label, fmt3(s.Median), fmtCI(s.MedianCI), fmt3(s.Mode), s.N, s.Tracks, few))
	}
	return append(out, sym("By steepness class, c_cr/c_p has "+strings.Join(parts, "; ")+"."))
}

// trust are the paragraphs "How far to trust it".
func trust(in Input, level int, refU bool) []template.HTML {
	ref := "The uncertainty of the reference speed c_p is not known for this run, so the intervals of c_cr/c_p leave it out."
	if refU {
		ref = fmt.Sprintf("The intervals of c_cr/c_p and c_br/c_p include the uncertainty of c_p (%.2g %% relative, standard), combined in quadrature with the sampling spread.",
			100*in.Summary.SeaState.PeakSpeedRelativeUncertainty())
	}
	return []template.HTML{
		sym(fmt.Sprintf("The intervals are %d %% bootstrap intervals from %d resamples of whole crest tracks (rows of one track are correlated, so tracks, not rows, are the independent units), "+
			"centred on their estimates: each is the estimate ± the %d %% point of the resampled estimates' distance from it. They measure the sampling variation between tracks.", level, in.Resamples, level)),
		sym(ref),
		sym("They do not include other systematic errors: of the surface elevation maps, of crest detection and linking, of the mean direction, depth and current used, " +
			"or of the choice of reference speed (c_p from the spectral peak, c_loc from the zero-crossing wavelength around each crest)."),
		sym(fmt.Sprintf("Classes with fewer than %d tracks are marked ◦ in the tables and drawn as points, not curves; read them as indications only.", in.MinClassTracks)),
	}
}

// methodRows are the rows of the method section.
func methodRows(in Input, level int) []htmlKV {
	window := "T<sub>p</sub>/4"
	if v, ok := in.Summary.Method["crest_speed_window_s"].(float64); ok {
		window = fmt.Sprintf("%.2f s", v)
	}
	return []htmlKV{
		{"Sea state", "Frequency spectrum of the elevation at grid points by Welch's method (Hann window, 50 % overlap; Welch 1967), averaged over the points; " +
			"H<sub>m0</sub> = 4√m<sub>0</sub> of the variance in the waves' band, less the white-noise floor the spectrum shows at high frequencies; " +
			"T<sub>p</sub> = 1/F<sub>p</sub> with Young's (1995) weighted peak F<sub>p</sub> = ∫ f S⁴ df / ∫ S⁴ df, its uncertainty from the spectrum's degrees of freedom and resolution; " +
			"mean direction from the cross-spectra of successive frames unless given."},
		{"Reference speeds", "Linear dispersion ω² = g k tanh(k h), with current and constant vorticity where given; the wavenumber from the explicit approximation of Fenton & McKee (1990) refined by Newton's method. " +
			"c<sub>p</sub> at the peak period; c<sub>loc</sub> at the down-crossing to down-crossing wavelength around each crest, median over the speed window."},
		{"Crests and steepness", "A crest is the highest point between a zero up-crossing and the next down-crossing along the mean direction; " +
			"a<sub>c</sub> its elevation, w<sub>c</sub> the zero-crossing width, S<sub>c</sub> = a<sub>c</sub> π / w<sub>c</sub>. Crests are linked frame to frame into tracks."},
		{"Crest speed", "Derivative of a local least-squares quadratic fitted to the crest position along the mean direction over a window of " + window +
			" — the Savitzky–Golay filter (Savitzky & Golay 1964), written for uneven times; no speed where the window is incomplete."},
		{"Distributions", "Normalised histograms with the Freedman–Diaconis bin width 2 IQR n<sup>−1/3</sup> (Freedman & Diaconis 1981); " +
			"Gaussian kernel density estimates with Silverman's rule-of-thumb bandwidth 0.9 min(σ, IQR/1.34) n<sup>−1/5</sup> (Silverman 1986); " +
			"the mode is the maximum of the kernel estimate, linearly binned on cells of a quarter bandwidth (Wand 1994); percentiles by linear interpolation between order statistics (Hyndman & Fan 1996, type 7)."},
		{"Confidence intervals", fmt.Sprintf("Bootstrap intervals at %d %% (Efron & Tibshirani 1993): %d resamples (seed %d), each drawing whole crest tracks with replacement, "+
			"as many as the record has; each statistic recomputed on the rows of the resample (steepness classes as domains) by the same estimator as the reported estimate — the mode on the same grid with the same bandwidth rule. "+
			"Each interval is the estimate ± the %d %% point of the absolute deviations of the resampled estimates from it (the symmetric interval of Hall 1988), so it contains its estimate; "+
			"where the uncertainty u of c<sub>p</sub> is known, the half-width of c<sub>cr</sub>/c<sub>p</sub> and c<sub>br</sub>/c<sub>p</sub> is combined with z u times the estimate in quadrature (JCGM 100:2008).",
			level, in.Resamples, in.Seed, level)},
		{"Outputs", "crest_tracks.nc follows the CF-1.8 conventions for discrete sampling geometries (trajectories, contiguous ragged array). " +
			"The CSV files are written with the precision their values carry — times to 1 µs, positions to 1 mm, elevations to 0.1 mm, speeds to 1 mm/s, ratios, steepness and B<sub>x</sub> to 4 significant digits — listed column by column in summary.json (method.csv_precision). " +
			"Figures use the Okabe–Ito colour-blind-safe palette (Okabe & Ito 2008) and Moreland's diverging cool–warm map (Moreland 2009)."},
	}
}

// references are the sources the page cites.
var references = []string{
	"Efron, B. &amp; Tibshirani, R. J. (1993). <i>An Introduction to the Bootstrap</i>. Chapman &amp; Hall.",
	"Fenton, J. D. &amp; McKee, W. D. (1990). On calculating the lengths of water waves. <i>Coastal Engineering</i> 14, 499–513.",
	"Freedman, D. &amp; Diaconis, P. (1981). On the histogram as a density estimator: L<sub>2</sub> theory. <i>Z. Wahrscheinlichkeitstheorie verw. Gebiete</i> 57, 453–476.",
	"Hall, P. (1988). On symmetric bootstrap confidence intervals. <i>J. R. Statist. Soc. B</i> 50, 35–45.",
	"Hyndman, R. J. &amp; Fan, Y. (1996). Sample quantiles in statistical packages. <i>The American Statistician</i> 50, 361–365.",
	"JCGM 100:2008. <i>Evaluation of measurement data — Guide to the expression of uncertainty in measurement</i>.",
	"Moreland, K. (2009). Diverging color maps for scientific visualization. <i>Advances in Visual Computing</i> (ISVC 2009), 92–103.",
	"Okabe, M. &amp; Ito, K. (2008). <i>Color Universal Design (CUD): how to make figures and presentations that are friendly to colorblind people</i>.",
	"Savitzky, A. &amp; Golay, M. J. E. (1964). Smoothing and differentiation of data by simplified least squares procedures. <i>Analytical Chemistry</i> 36, 1627–1639.",
	"Silverman, B. W. (1986). <i>Density Estimation for Statistics and Data Analysis</i>. Chapman &amp; Hall.",
	"Wand, M. P. (1994). Fast computation of multivariate kernel estimators. <i>J. Comput. Graph. Stat.</i> 3, 433–445.",
	"Welch, P. D. (1967). The use of fast Fourier transform for the estimation of power spectra. <i>IEEE Transactions on Audio and Electroacoustics</i> 15, 70–73.",
	"Eaton, B. et al. NetCDF Climate and Forecast (CF) Metadata Conventions, version 1.8 (2020).",
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

func trackQuality(t *table.Table) quality {
	runs := table.TrackRuns(t)
	q := quality{tracks: len(runs) - 1, rows: t.Len()}
	sp, rl := t.Cols[table.CrestSpeed], t.Cols[table.CrestRatioLocal]
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

func htmlFigureOf(f figures.Figure) htmlFigure {
	return htmlFigure{
		ID: f.Name, Title: sym(f.Title), Caption: sym(f.Caption),
		Src: template.URL("data:image/png;base64," + base64.StdEncoding.EncodeToString(f.PNG)),
		PNG: "figures/" + f.Name + ".png", SVG: "figures/" + f.Name + ".svg",
	}
}

// sortedKeys returns the keys of m in order.
func sortedKeys[V any](m map[string]V) []string {
	k := make([]string, 0, len(m))
	for s := range m {
		k = append(k, s)
	}
	sort.Strings(k)
	return k
}

// prettyJSON indents v for the page.
func prettyJSON(v any) string {
	b, err := json.MarshalIndent(v, "", "  ")
	if err != nil {
		return fmt.Sprint(v)
	}
	return string(b)
}

// pageCSS is the style of the report pages (deployment and campaign).
const pageCSS = `:root { --ink: #1b1b1b; --muted: #5a5a5a; --rule: #d0d0d0; --band: #f4f6f8; --accent: #0072b2; --warn: #d55e00; }
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
`

var pageTemplate = template.Must(template.New("report").Funcs(template.FuncMap{
	"raw": func(s string) template.HTML { return template.HTML(s) },
}).Parse(`<!DOCTYPE html>
<html lang="en">
<head>
<meta charset="utf-8">
<meta name="viewport" content="width=device-width, initial-scale=1">
<title>{{.Title}}{{if .Subtitle}} — {{.Subtitle}}{{end}}</title>
<style>
` + pageCSS + `</style>
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
<p class="note">n: crest rows (one per crest per frame) with a known ratio; tracks: the crest tracks they come from. Intervals: {{.Level}} % bootstrap intervals centred on their estimates, resampling whole tracks{{if .RefUncertainty}}, widened by the uncertainty of c<sub>p</sub> for c<sub>cr</sub>/c<sub>p</sub>{{end}}. ◦ fewer than {{.FewTracks}} tracks: an indication only, drawn as points, not curves, in the figures.</p>
{{range .Ratios}}{{template "ratiotable" .}}{{end}}</section>

<section id="figures">
<h2>Figures</h2>
{{range .Figures}}<figure id="{{.ID}}">
<img src="{{.Src}}" alt="{{.Title}}">
<figcaption><b>{{.Title}}</b>{{.Caption}} <span class="note">Files: <span class="path">{{.PNG}}</span>, <span class="path">{{.SVG}}</span>.</span></figcaption>
</figure>
{{end}}</section>

{{template "breaking" .Breaking}}
{{template "gauge" .Gauge}}
{{template "dominant" .Dominant}}
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

// ratioTableTemplate is the table of one ratio's statistics by class,
// the same for crest and whitecap ratios; every cell carries the path of
// its number in summary.json (data-sum).
const ratioTableTemplate = `<h3>{{.Title}}</h3>
<table class="stats" id="stats-{{.ID}}">
<thead><tr><th>{{.ClassHead}}</th><th class="num">n</th><th class="num">{{.UnitNoun}}</th><th class="num">mean</th><th class="num">{{.Level}} % interval</th><th class="num">median</th><th class="num">{{.Level}} % interval</th><th class="num">mode</th><th class="num">{{.Level}} % interval</th><th class="num">5 %</th><th class="num">95 %</th></tr></thead>
<tbody>
{{range .Rows}}<tr class="{{if .All}}all{{end}}{{if .Few}} few{{end}}"><td>{{.Class}}</td>{{range .Cells}}<td class="num" data-sum="{{.Key}}">{{.V}}</td>{{end}}</tr>
{{end}}</tbody>
</table>
`

var _ = template.Must(pageTemplate.New("ratiotable").Parse(ratioTableTemplate))

// generatedAt formats the time a page was made: t, or now when t is zero.
func generatedAt(t time.Time) string {
	if t.IsZero() {
		t = time.Now()
	}
	return t.UTC().Format("2006-01-02 15:04 UTC")
}
