package page

import (
	"fmt"
	"html/template"
	"path"

	"crestspeed/report/stats"
	"crestspeed/report/summary"
)

// htmlDominant is the page's account of a dominant-wave analysis: the band
// this analysis found its crests in (Note), or the analysis of the
// dominant waves run beside this one (Rows, Link).
type htmlDominant struct {
	Note string
	Rows []htmlKV
	Link string
}

// bandText describes a band in words.
func bandText(b summary.BandSummary) string {
	if b.LowFp == 0 {
		return fmt.Sprintf("below %.3g F<sub>p</sub> (%.3f Hz; wavenumbers below %.3f rad/m)", b.HighFp, b.HighHz, b.HighK)
	}
	return fmt.Sprintf("%.3g–%.3g F<sub>p</sub> (%.3f–%.3f Hz; wavenumbers %.3f–%.3f rad/m)", b.LowFp, b.HighFp, b.LowHz, b.HighHz, b.LowK, b.HighK)
}

// dominantSection is nil when neither applies.
func dominantSection(in Input) *htmlDominant {
	sum := in.Summary
	switch {
	case sum.Band != nil:
		return &htmlDominant{Note: "The crests of this analysis were found and followed on maps band-passed to the dominant waves, " + bandText(*sum.Band) +
			", in wavenumber through the linear dispersion relation. The sea state, the reference phase speeds and the surface speed of B<sub>x</sub> come from the maps as they are."}
	case sum.Dominant != nil:
		d := sum.Dominant
		both := func(key string, f func(stats.Stats) float64) string {
			return fmt.Sprintf("%s | %s", fmt3(f(sum.Ratio[key].All)), fmt3(f(d.Ratio[key].All)))
		}
		median := func(s stats.Stats) float64 { return s.Median }
		mode := func(s stats.Stats) float64 { return s.Mode }
		h := &htmlDominant{Link: path.Join(d.Folder, "report.html"), Rows: []htmlKV{
			{"Band of the dominant waves", bandText(d.Band)},
			{"Tracks, all waves | dominant waves", fmt.Sprintf("%d | %d", sum.Crests.Tracks, d.Tracks)},
			{"Rows with a speed, all waves | dominant waves", fmt.Sprintf("%d | %d", sum.Crests.RowsWithSpeed, d.RowsWithSpeed)},
			{"Median c<sub>cr</sub>/c<sub>p</sub>, all waves | dominant waves", both("peak", median)},
			{"Mode c<sub>cr</sub>/c<sub>p</sub>, all waves | dominant waves", both("peak", mode)},
			{"Median c<sub>cr</sub>/c<sub>loc</sub>, all waves | dominant waves", both("local", median)},
		}}
		return h
	}
	return nil
}

// dominantTemplate is the section's part of the page template.
const dominantTemplate = `{{if .}}<section id="dominant">
<h2>Dominant waves</h2>
{{if .Note}}<p>{{raw .Note}}</p>{{else}}<table class="kv" id="dominant-table">
{{range .Rows}}<tr><td>{{raw .K}}</td><td>{{raw .V}}</td></tr>
{{end}}</table>
<p class="note">The dominant-wave analysis finds and follows the crests on maps band-passed in wavenumber, so that short waves riding on the crests neither set the crests' curvature nor move their tips; its statistics, figures and tables are in <a href="{{.Link}}">its own report</a>.</p>{{end}}
</section>
{{end}}`

var _ = template.Must(pageTemplate.New("dominant").Parse(dominantTemplate))
