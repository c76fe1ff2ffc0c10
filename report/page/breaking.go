package page

// The "Whitecaps and breaking" section of report.html: whitecap
// statistics, whitecap speed ratios per steepness class, the
// breaking-inception confusion table, the section's figures and its
// method. Every number shown comes from summary.json (its whitecaps and
// inception blocks); cells carry data-sum="path/in/summary.json" (and
// data-scale when shown scaled, e.g. in per cent) so that they can be
// checked against it.

import (
	"fmt"
	"html/template"
	"math"
	"strconv"
	"strings"

	"crestspeed/report/stats"
	"crestspeed/report/summary"
	"crestspeed/speed"
)

type htmlConfusion struct {
	Threshold                     string
	FF, FN, NF, NN                htmlSumRow
	RowF, RowN, ColF, ColN, Total int
	Shares, Lead                  []htmlSumRow
}

type htmlBreaking struct {
	// Absent is shown when there are neither whitecap nor B_x results.
	Absent    template.HTML
	Notes     []template.HTML
	Stats     []htmlSumRow
	Ratios    []htmlRatio
	Inception []htmlSumRow
	NoFoam    template.HTML
	Confusion *htmlConfusion
	Figures   []htmlFigure
	Method    []htmlKV
}

// sciNum formats a value with sig significant digits, in plain decimals
// from 0.001 to 99999 and as m×10ⁿ beyond; "–" when unknown.
func sciNum(v float64, sig int) string {
	if math.IsNaN(v) || math.IsInf(v, 0) {
		return "–"
	}
	if v == 0 || (math.Abs(v) >= 1e-3 && math.Abs(v) < 1e5) {
		return strconv.FormatFloat(v, 'g', sig, 64)
	}
	s := strconv.FormatFloat(v, 'e', sig-1, 64)
	m, e, _ := strings.Cut(s, "e")
	ex, _ := strconv.Atoi(e)
	return m + "×10" + superDigits.Replace(strconv.Itoa(ex))
}

func countStr(n int) string { return strconv.Itoa(n) }

// breakingSection builds the "Whitecaps and breaking" section from the
// summary (its whitecaps and inception blocks) and the figures drawn.
func breakingSection(in Input) *htmlBreaking {
	sum := in.Summary
	hb := &htmlBreaking{}
	ws, inc := sum.Whitecaps, sum.Inception
	if ws == nil && inc == nil {
		hb.Absent = sym("This run has no whitecap results (no foam mask was analysed) and no breaking-inception index B_x (that pass did not run), so this section is empty.")
		return hb
	}
	for _, n := range in.Notes {
		hb.Notes = append(hb.Notes, sym(n))
	}
	if ws == nil {
		hb.Notes = append([]template.HTML{sym("No foam mask was analysed in this run, so there are no whitecap statistics, Λ(c) or coverage W(t).")}, hb.Notes...)
	} else {
		hb.Stats = whitecapStatRows(ws)
		cb := stats.ClassBounds(in.Bounds)
		for _, r := range []struct{ key, title string }{
			{"peak", "Whitecap front speed relative to the peak phase speed, c<sub>br</sub>/c<sub>p</sub>"},
			{"local", "Whitecap front speed relative to the local carrier phase speed of the parent crest, c<sub>br</sub>/c<sub>loc</sub>"},
		} {
			if rs, ok := ws.Ratio[r.key]; ok {
				hb.Ratios = append(hb.Ratios, ratioTable(in, "whitecaps/front_speed_ratio/"+r.key, rs, cb,
					template.HTML(r.title), "S<sub>c</sub> class of the parent crest", "whitecaps", "parent ", "all whitecap rows"))
			}
		}
	}
	if inc == nil {
		hb.Notes = append(hb.Notes, sym("The breaking-inception index B_x was not computed in this run (the breaking-index pass was off), so no crest is flagged."))
	} else {
		hb.Inception = []htmlSumRow{
			{K: sym("Inception threshold on B_x"), V: sciNum(inc.Threshold, 4), Key: "inception/threshold"},
			{K: sym("Crest tracks with a B_x"), V: countStr(inc.TracksWithBx), Key: "inception/tracks_with_bx"},
			{K: sym("Crest tracks flagged (B_x reached the threshold)"), V: countStr(len(inc.Flags)), Key: "inception/flags#"},
		}
		if !inc.HaveFoam {
			hb.NoFoam = sym("The record had no foam mask, so the flags cannot be compared with whitecaps.")
		} else {
			hb.Confusion = confusionTable(inc)
		}
	}
	for _, f := range in.Figures {
		if f.Section == "breaking" {
			hb.Figures = append(hb.Figures, htmlFigureOf(f))
		}
	}
	hb.Method = breakingMethod(ws, inc)
	return hb
}

// whitecapStatRows are the rows of the whitecap statistics table.
func whitecapStatRows(ws *summary.WhitecapsSummary) []htmlSumRow {
	rows := []htmlSumRow{
		{K: "Whitecaps tracked", V: countStr(ws.Whitecaps), Key: "whitecaps/n"},
		{K: "Whitecap rows (one per whitecap per frame)", V: countStr(ws.Rows), Key: "whitecaps/rows"},
		{K: "Frames whose foam mask was analysed", V: countStr(ws.FramesAnalysed), Key: "whitecaps/frames_analysed"},
	}
	if len(ws.Skipped) == 0 {
		rows = append(rows, htmlSumRow{K: "Frames skipped", V: "0", Note: "none"})
	}
	for _, k := range sortedKeys(ws.Skipped) {
		rows = append(rows, htmlSumRow{K: template.HTML("Frames skipped: " + template.HTMLEscapeString(k)), V: countStr(ws.Skipped[k]), Key: "whitecaps/frames_skipped/" + k})
	}
	rows = append(rows,
		htmlSumRow{K: sym("Mean whitecap coverage W (% of the known surface)"), V: sciNum(100*ws.MeanCoverage, 4), Key: "whitecaps/mean_coverage", Scale: "100"},
		htmlSumRow{K: sym("Median whole-track front speed of the whitecaps over c_p"), V: fmt3(ws.MedianTrackSpeedRatio), Key: "whitecaps/median_track_speed_over_cp"},
		htmlSumRow{K: template.HTML("Total breaking-front length per unit area ∫ Λ(c) dc (m<sup>−1</sup>)"), V: sciNum(ws.LambdaIntegral, 4), Key: "whitecaps/lambda_integral_per_m"},
		htmlSumRow{K: template.HTML("Breaking-crest passage rate R = ∫ c Λ(c) dc (s<sup>−1</sup>)"), V: sciNum(ws.PassageRate, 4), Key: "whitecaps/passage_rate_per_s"},
		htmlSumRow{K: template.HTML("Dissipation estimate ε = b ρ<sub>w</sub> g<sup>−1</sup> ∫ c<sup>5</sup> Λ(c) dc (W m<sup>−2</sup>)"), V: sciNum(ws.Dissipation, 3), Key: "whitecaps/dissipation_w_per_m2",
			Note: "order of magnitude only: published values of b span more than an order of magnitude"},
		htmlSumRow{K: "Breaking parameter b used for ε", V: sciNum(ws.BreakingParameter, 3), Key: "whitecaps/breaking_parameter_b"},
		htmlSumRow{K: template.HTML("Water density ρ<sub>w</sub> (kg m<sup>−3</sup>)"), V: sciNum(ws.WaterDensity, 5), Key: "whitecaps/water_density_kg_per_m3"},
		htmlSumRow{K: "Front length per frame outside the speed bins (m)", V: sciNum(ws.LengthOutOfRange, 4), Key: "whitecaps/front_length_out_of_bins_m"},
		htmlSumRow{K: "Front length per frame without a speed (m)", V: sciNum(ws.LengthWithoutSpeed, 4), Key: "whitecaps/front_length_without_speed_m"},
	)
	return rows
}

// confusionTable compares the B_x flags with the crests that carried foam.
func confusionTable(inc *speed.Inception) *htmlConfusion {
	c := &htmlConfusion{
		Threshold: sciNum(inc.Threshold, 4),
		FF:        htmlSumRow{V: countStr(inc.FlaggedFoamed), Key: "inception/flagged_foamed"},
		FN:        htmlSumRow{V: countStr(inc.FlaggedNotFoamed), Key: "inception/flagged_not_foamed"},
		NF:        htmlSumRow{V: countStr(inc.NotFlaggedFoamed), Key: "inception/not_flagged_foamed"},
		NN:        htmlSumRow{V: countStr(inc.NotFlaggedNotFoamed), Key: "inception/not_flagged_not_foamed"},
	}
	c.RowF, c.RowN = inc.FlaggedFoamed+inc.FlaggedNotFoamed, inc.NotFlaggedFoamed+inc.NotFlaggedNotFoamed
	c.ColF, c.ColN = inc.FlaggedFoamed+inc.NotFlaggedFoamed, inc.FlaggedNotFoamed+inc.NotFlaggedNotFoamed
	c.Total = c.RowF + c.RowN
	pc := func(v float64) string {
		if math.IsNaN(v) {
			return "–"
		}
		return fmt.Sprintf("%.1f", 100*v)
	}
	c.Shares = []htmlSumRow{
		{K: "Share of the foam-carrying crests that were flagged (%)", V: pc(inc.ShareFoamedFlagged), Key: "inception/share_of_foamed_that_were_flagged", Scale: "100"},
		{K: "Share of the flagged crests that carried foam (%)", V: pc(inc.ShareFlaggedFoamed), Key: "inception/share_of_flagged_that_foamed", Scale: "100"},
	}
	c.Lead = []htmlSumRow{
		{K: "Flagged crests that foamed at or after the flag", V: countStr(inc.LeadTimeN), Key: "inception/lead_time_n"},
		{K: "Lead time from flag to first foam: median (s)", V: fmtSec(inc.LeadTimeMedian), Key: "inception/lead_time_median_s"},
		{K: "Lead time: shortest (s)", V: fmtSec(inc.LeadTimeMin), Key: "inception/lead_time_min_s"},
		{K: "Lead time: longest (s)", V: fmtSec(inc.LeadTimeMax), Key: "inception/lead_time_max_s"},
	}
	return c
}

func fmtSec(v float64) string {
	if math.IsNaN(v) || math.IsInf(v, 0) {
		return "–"
	}
	return fmt.Sprintf("%.2f", v)
}

// breakingMethod is the method paragraph of the section.
func breakingMethod(ws *summary.WhitecapsSummary, inc *speed.Inception) []htmlKV {
	var m []htmlKV
	if ws != nil {
		m = append(m,
			htmlKV{"Whitecaps and their fronts", "Foam cells are grouped into connected patches per frame and linked over time into whitecaps; " +
				"a patch's active breaking front is its leading edge along the mean direction θ<sub>0</sub>. The front speed c<sub>br</sub> is the derivative of a local quadratic " +
				"fitted to the front position over the crest-speed window (Savitzky–Golay), with the window kept inside the track at its ends. " +
				"Each whitecap is tied to the crest it rides on (nearest crest tip within a gate): c<sub>br</sub>/c<sub>loc</sub> uses that crest's local phase speed, " +
				"and the classes use its steepness S<sub>c</sub>; rows without a parent crest count in “all” only. " +
				"W(t) is the number of foam cells over the number of known cells of each analysed frame; frames whose foam mask covers more than a set fraction of the surface are skipped as failed masks."},
			htmlKV{"Λ(c), R and ε", fmt.Sprintf("Phillips (1985) distribution Λ(c): total breaking-front length per unit sea-surface area per unit speed interval, "+
				"Λ<sub>j</sub> = Σ L / (A · frames · Δc) over the front samples with speeds in bin j, A the known area of their frame. "+
				"The passage rate R = ∫ c Λ(c) dc and the dissipation estimate ε = b ρ<sub>w</sub> g<sup>−1</sup> ∫ c<sup>5</sup> Λ(c) dc are computed from the fronts' own speeds. "+
				"b = %s is a setting: published values of b span more than an order of magnitude (laboratory and field estimates differ, and b depends on wave steepness), "+
				"so ε is an order-of-magnitude estimate. The c<sup>−6</sup> line of the Λ(c) figure is for comparison with the equilibrium-range form of Phillips (1985): "+
				"only its amplitude is fitted, by least squares on log Λ over the bins above the peak; it is not a fit of the exponent.", sciNum(ws.BreakingParameter, 3))},
		)
	}
	if inc != nil {
		m = append(m, htmlKV{"Breaking-inception index", fmt.Sprintf("B<sub>x</sub> = u<sub>s</sub>/c<sub>cr</sub>, the horizontal surface speed at the crest tip over the crest speed. "+
			"u<sub>s</sub> comes from linear kinematics: the wavenumber–frequency spectrum of η from a 3-D FFT over overlapping, Hann-tapered windows of frames, "+
			"û = ω coth(|k|h) (k̂·θ̂<sub>0</sub>) η̂ kept for the components travelling with the waves (a dispersion filter), transformed back and read at the crest tip. "+
			"Linear kinematics underestimate the surface speed at steep crests, so B<sub>x</sub> is an estimate and tends to read low there. "+
			"Crests that reach B<sub>x</sub> ≈ 0.85 go on to break and those that stay below recur (Barthelemy et al. 2018, J. Fluid Mech. 841); "+
			"the threshold used here is %s (a setting). A crest track is flagged at its first frame at or above the threshold; its lead time runs from the flag to the first frame in which it carried foam.",
			sciNum(inc.Threshold, 4))})
	}
	return m
}

// breakingGlance is the sentence of "At a glance" on whitecaps and
// inception ("" when there is neither).
func breakingGlance(sum *summary.Summary) []template.HTML {
	var out []template.HTML
	if ws := sum.Whitecaps; ws != nil {
		a := ws.Ratio["peak"].All
		out = append(out, sym(fmt.Sprintf("%d whitecaps were tracked over %d frames; their fronts moved at a median of %s of c_p (c_br/c_p over %d whitecap rows, 5–95 %%: %s–%s). "+
			"Mean whitecap coverage W = %s %%; breaking-crest passage rate R = %s per second.",
			ws.Whitecaps, ws.FramesAnalysed, fmt3(a.Median), a.N, fmt3(a.P05), fmt3(a.P95), sciNum(100*ws.MeanCoverage, 3), sciNum(ws.PassageRate, 3))))
	}
	if inc := sum.Inception; inc != nil {
		s := fmt.Sprintf("%d of the %d crest tracks with a breaking-inception index reached B_x = %s", len(inc.Flags), inc.TracksWithBx, sciNum(inc.Threshold, 4))
		if inc.HaveFoam {
			s += fmt.Sprintf("; %d of them carried foam (%d at or after the flag, median lead time %s s), and %d foam-carrying crests were not flagged",
				inc.FlaggedFoamed, inc.LeadTimeN, fmtSec(inc.LeadTimeMedian), inc.NotFlaggedFoamed)
		}
		out = append(out, sym(s+"."))
	}
	return out
}

// breakingReferences are the sources the section cites.
var breakingReferences = []string{
	"Barthelemy, X., Banner, M. L., Peirson, W. L., Fedele, F., Allis, M. &amp; Dias, F. (2018). On a unified breaking onset threshold for gravity waves in deep and intermediate depth water. <i>J. Fluid Mech.</i> 841, 463–488.",
	"Phillips, O. M. (1985). Spectral and statistical properties of the equilibrium range in wind-generated gravity waves. <i>J. Fluid Mech.</i> 156, 505–531.",
}

// breakingTemplate is the section's part of the page template.
const breakingTemplate = `<section id="breaking">
<h2>Whitecaps and breaking</h2>
{{if .Absent}}<p class="note">{{.Absent}}</p>
{{else}}{{range .Notes}}<p class="note">{{.}}</p>
{{end}}{{if .Stats}}<h3>Whitecap statistics</h3>
<table class="kv" id="whitecap-stats">
{{range .Stats}}<tr><td>{{.K}}</td><td class="num"{{if .Key}} data-sum="{{.Key}}"{{end}}{{if .Scale}} data-scale="{{.Scale}}"{{end}}>{{.V}}</td><td class="note">{{.Note}}</td></tr>
{{end}}</table>
{{end}}{{range .Ratios}}{{template "ratiotable" .}}{{end}}{{if .Ratios}}<p class="note">n: whitecap rows (one per whitecap per frame) with a front speed; whitecaps: the whitecaps they come from (rows of one whitecap are correlated, so the intervals resample whole whitecaps). The classes hold the rows tied to a crest; “all” holds every row. ◦ fewer whitecaps than a class needs: an indication only.</p>
{{end}}{{if .Inception}}<h3>Breaking inception</h3>
<table class="kv" id="inception">
{{range .Inception}}<tr><td>{{.K}}</td><td class="num" data-sum="{{.Key}}">{{.V}}</td></tr>
{{end}}</table>
{{if .NoFoam}}<p class="note">{{.NoFoam}}</p>{{end}}
{{with .Confusion}}<table class="confusion" id="confusion">
<thead><tr><th>crest tracks with a B<sub>x</sub></th><th class="num">carried foam</th><th class="num">no foam</th><th class="num">total</th></tr></thead>
<tbody>
<tr><td>flagged (B<sub>x</sub> ≥ {{.Threshold}})</td><td class="num" data-sum="{{.FF.Key}}">{{.FF.V}}</td><td class="num" data-sum="{{.FN.Key}}">{{.FN.V}}</td><td class="num">{{.RowF}}</td></tr>
<tr><td>not flagged</td><td class="num" data-sum="{{.NF.Key}}">{{.NF.V}}</td><td class="num" data-sum="{{.NN.Key}}">{{.NN.V}}</td><td class="num">{{.RowN}}</td></tr>
<tr class="all"><td>total</td><td class="num">{{.ColF}}</td><td class="num">{{.ColN}}</td><td class="num">{{.Total}}</td></tr>
</tbody>
</table>
<table class="kv">
{{range .Shares}}<tr><td>{{.K}}</td><td class="num" data-sum="{{.Key}}" data-scale="{{.Scale}}">{{.V}}</td></tr>
{{end}}{{range .Lead}}<tr><td>{{.K}}</td><td class="num" data-sum="{{.Key}}">{{.V}}</td></tr>
{{end}}</table>
{{end}}{{end}}{{range .Figures}}<figure id="{{.ID}}">
<img src="{{.Src}}" alt="{{.Title}}">
<figcaption><b>{{.Title}}</b>{{.Caption}} <span class="note">Files: <span class="path">{{.PNG}}</span>, <span class="path">{{.SVG}}</span>.</span></figcaption>
</figure>
{{end}}<h3>Method</h3>
<dl class="method">
{{range .Method}}<dt>{{.K}}</dt><dd>{{raw .V}}</dd>
{{end}}</dl>
{{end}}</section>
`

var _ = template.Must(pageTemplate.New("breaking").Parse(breakingTemplate))

// superDigits writes the digits and minus of an exponent as superscripts.
var superDigits = strings.NewReplacer("-", "⁻", "0", "⁰", "1", "¹", "2", "²", "3", "³", "4", "⁴", "5", "⁵", "6", "⁶", "7", "⁷", "8", "⁸", "9", "⁹")
