// Package figures draws the figures of the report as PNG and SVG with
// gonum/plot: the crest-speed ratio PDFs by steepness class, the crest
// tracks in space and time, the histories of the highest crests, the
// frequency spectrum, the ratio against steepness, and — when the record
// had them — Λ(c), the whitecap coverage, the whitecap speed-ratio PDFs
// and the breaking-inception index. It draws what it is given and
// computes nothing of its own beyond display ranges and the c⁻⁶
// comparison line of Λ(c).
package figures

import (
	"bytes"
	"fmt"
	"image/color"
	"math"
	"sort"
	"strconv"

	"crestspeed/report/stats"
	"crestspeed/report/summary"
	"crestspeed/report/table"

	"gonum.org/v1/plot"
	"gonum.org/v1/plot/font"
	"gonum.org/v1/plot/palette"
	"gonum.org/v1/plot/palette/moreland"
	"gonum.org/v1/plot/plotter"
	"gonum.org/v1/plot/text"
	"gonum.org/v1/plot/vg"
	"gonum.org/v1/plot/vg/draw"
	"gonum.org/v1/plot/vg/vgimg"
	"gonum.org/v1/plot/vg/vgsvg"
)

// Figure is one rendered figure of the report.
type Figure struct {
	// Name is the file stem ("fig1_ratio_peak_pdf"); the files are
	// Name+".png" and Name+".svg".
	Name string
	// Title and Caption are shown with the figure in report.html.
	Title, Caption string
	PNG, SVG       []byte
	// Section is the id of the page section the figure belongs to: "" for
	// the figures of the crest speeds, "breaking" for the whitecap and
	// breaking-inception figures.
	Section string
}

// FigureDPI is the resolution of the PNG figures.
const FigureDPI = 150

// okabeIto is the colour-blind-safe qualitative palette of Okabe & Ito
// (2008, "Color Universal Design", J*FLY; hex values from memory), in the
// order used for classes and tracks; yellow is left out (too pale for
// lines on white).
var okabeIto = []color.NRGBA{
	{0x00, 0x72, 0xB2, 0xff}, // blue
	{0xE6, 0x9F, 0x00, 0xff}, // orange
	{0x00, 0x9E, 0x73, 0xff}, // bluish green
	{0xCC, 0x79, 0xA7, 0xff}, // reddish purple
	{0xD5, 0x5E, 0x00, 0xff}, // vermillion
	{0x56, 0xB4, 0xE9, 0xff}, // sky blue
	{0x00, 0x00, 0x00, 0xff}, // black
}

var (
	grey      = color.NRGBA{0x99, 0x99, 0x99, 0xff}
	lightGrey = color.NRGBA{0xdd, 0xdd, 0xdd, 0xff}
	darkGrey  = color.NRGBA{0x55, 0x55, 0x55, 0xff}
	black     = color.NRGBA{0, 0, 0, 0xff}
)

func classColour(k int) color.NRGBA { return okabeIto[k%len(okabeIto)] }

// sansFont is Liberation Sans, shipped with gonum/plot.
var sansFont = font.Font{Typeface: "Liberation", Variant: "Sans"}

// newPlot returns a plot in the report's style: sans-serif text, light
// grid, no title (the caption in the report says what it shows).
func newPlot() *plot.Plot {
	p := plot.New()
	set := func(s *text.Style, size float64) {
		s.Font = sansFont
		s.Font.Size = vg.Points(size)
		s.Handler = p.TextHandler
	}
	set(&p.Title.TextStyle, 11)
	set(&p.X.Label.TextStyle, 10)
	set(&p.Y.Label.TextStyle, 10)
	set(&p.X.Tick.Label, 9)
	set(&p.Y.Tick.Label, 9)
	set(&p.Legend.TextStyle, 8.5)
	p.Legend.ThumbnailWidth = vg.Points(18)
	p.Legend.Padding = vg.Points(1)
	p.X.Tick.Marker = niceTicks{}
	p.Y.Tick.Marker = niceTicks{}
	g := plotter.NewGrid()
	g.Vertical.Color = color.Gray{0xe8}
	g.Horizontal.Color = color.Gray{0xe8}
	p.Add(g)
	return p
}

// niceTicks puts about six labelled ticks at multiples of 1, 2 or 5
// times a power of ten, with a minor tick between labels, and labels them
// with just the decimals the step needs (common practice).
type niceTicks struct{}

func (niceTicks) Ticks(lo, hi float64) []plot.Tick {
	if !(hi > lo) || math.IsInf(lo, 0) || math.IsInf(hi, 0) {
		return nil
	}
	raw := (hi - lo) / 6
	mag := math.Pow(10, math.Floor(math.Log10(raw)))
	step := mag
	for _, m := range []float64{1, 2, 5, 10} {
		if m*mag >= raw {
			step = m * mag
			break
		}
	}
	dec := max(0, -int(math.Floor(math.Log10(step)+1e-9)))
	var ticks []plot.Tick
	for k := math.Ceil(lo/step - 1e-9); k*step <= hi+1e-9*step; k++ {
		v := k * step
		if math.Abs(v) < 1e-12*step {
			v = 0
		}
		ticks = append(ticks, plot.Tick{Value: v, Label: strconv.FormatFloat(v, 'f', dec, 64)})
		if m := v + step/2; m <= hi {
			ticks = append(ticks, plot.Tick{Value: m})
		}
	}
	if len(ticks) > 0 && ticks[0].Value-step/2 >= lo {
		ticks = append(ticks, plot.Tick{Value: ticks[0].Value - step/2})
	}
	return ticks
}

// render draws a figure into a PNG (FigureDPI) and an SVG of w × h. A
// drawing failure (gonum/plot panics on some degenerate inputs) is
// returned as an error.
func render(name string, w, h vg.Length, drawFn func(dc draw.Canvas)) (png, svg []byte, err error) {
	defer func() {
		if r := recover(); r != nil {
			err = fmt.Errorf("figure %s cannot be drawn: %v", name, r)
		}
	}()
	img := vgimg.NewWith(vgimg.UseWH(w, h), vgimg.UseDPI(FigureDPI), vgimg.UseBackgroundColor(color.White))
	drawFn(draw.New(img))
	var pb bytes.Buffer
	if _, err := (vgimg.PngCanvas{Canvas: img}).WriteTo(&pb); err != nil {
		return nil, nil, fmt.Errorf("figure %s: %w", name, err)
	}
	sv := vgsvg.New(w, h)
	sc := draw.New(sv)
	sc.SetColor(color.White)
	sc.Fill(sc.Rectangle.Path())
	drawFn(sc)
	var sb bytes.Buffer
	if _, err := sv.WriteTo(&sb); err != nil {
		return nil, nil, fmt.Errorf("figure %s: %w", name, err)
	}
	return pb.Bytes(), sb.Bytes(), nil
}

// Spectrum is the frequency spectrum figure 5 draws: one-sided power
// spectral density (m²/Hz) at frequencies (Hz).
type Spectrum struct {
	Freq, PSD []float64
}

// Input is what the figures are drawn from.
type Input struct {
	// Crests is the crest table (table.Crests), rows of a track together.
	Crests *table.Table
	// Peak and Local are the distributions of c_cr/c_p and c_cr/c_loc by
	// steepness class, with their curves and values.
	Peak, Local stats.Distributions
	Bounds      [][2]float64
	Spectrum    Spectrum
	Sea         summary.SeaStateSummary
	// T0 is the time origin of the record, s.
	T0 float64
	// Highest is the number of tracks figure 4 follows.
	Highest int
	// MinClassTracks is the fewest tracks (whitecaps) a class needs to be
	// drawn as a density curve; a smaller class is drawn as points.
	MinClassTracks int
	// Breaking holds the inputs of the "Whitecaps and breaking" figures;
	// nil when the deployment has neither whitecap results nor B_x.
	Breaking *Breaking
	// Gauge is the comparison with an in-situ series; nil without one.
	Gauge *Gauge
	// StepResiduals is the histogram of each tracking step's measured
	// minus predicted advance; nil when no step was taken.
	StepResiduals *summary.HistogramSummary
}

// figureInput is Input with the display range of the ratios and what
// the figures computed.
type figureInput struct {
	Input
	ratioLo, ratioHi float64
	out              Output
}

// Output is what Draw drew and computed.
type Output struct {
	Figures []Figure
	// Reference is the c⁻⁶ comparison line of the Λ(c) figure.
	Reference stats.PhillipsReference
	// Notes say, one sentence each, which figures of the "Whitecaps and
	// breaking" section are absent and why.
	Notes []string
}

// ClassLabel names a steepness class.
func ClassLabel(lo, hi float64) string {
	switch {
	case lo == 0 && math.IsInf(hi, 1):
		return "all crests"
	case lo == 0:
		return fmt.Sprintf("S_c < %.2f", hi)
	case math.IsInf(hi, 1):
		return fmt.Sprintf("S_c ≥ %.2f", lo)
	}
	return fmt.Sprintf("%.2f ≤ S_c < %.2f", lo, hi)
}

// curveQuantile returns the p-quantile of a density curve (trapezoidal
// cumulative integral, linear between grid points).
func curveQuantile(c stats.Curve, p float64) float64 {
	if len(c.X) < 2 {
		return math.NaN()
	}
	total := c.Integral()
	target := p * total
	var cum float64
	for i := 1; i < len(c.X); i++ {
		seg := 0.5 * (c.Density[i] + c.Density[i-1]) * (c.X[i] - c.X[i-1])
		if cum+seg >= target && seg > 0 {
			return c.X[i-1] + (target-cum)/seg*(c.X[i]-c.X[i-1])
		}
		cum += seg
	}
	return c.X[len(c.X)-1]
}

// displayRange is the range of ratios the figures show: the 0.5–99.5 %
// range of all crests (both references), widened to include 1 and padded.
func displayRange(ds ...stats.Distributions) (lo, hi float64) {
	lo, hi = 1.0, 1.0
	for _, d := range ds {
		if q := curveQuantile(d.All.PDF, 0.005); !math.IsNaN(q) {
			lo = math.Min(lo, q)
		}
		if q := curveQuantile(d.All.PDF, 0.995); !math.IsNaN(q) {
			hi = math.Max(hi, q)
		}
	}
	pad := 0.06 * (hi - lo)
	if pad == 0 {
		pad = 0.5
	}
	return lo - pad, hi + pad
}

func xyLine(xs, ys []float64, c color.Color, width float64, dashes ...vg.Length) (*plotter.Line, error) {
	pts := make(plotter.XYs, 0, len(xs))
	for i := range xs {
		if !math.IsNaN(xs[i]) && !math.IsNaN(ys[i]) && !math.IsInf(xs[i], 0) && !math.IsInf(ys[i], 0) {
			pts = append(pts, plotter.XY{X: xs[i], Y: ys[i]})
		}
	}
	l, err := plotter.NewLine(pts)
	if err != nil {
		return nil, err
	}
	l.Color = c
	l.Width = vg.Points(width)
	l.Dashes = dashes
	return l, nil
}

// pdfStyle is what differs between the ratio PDF figures: the axis label,
// the names of the sample and of its independent units, the reference
// line's label, the class-label prefix and the display range.
type pdfStyle struct {
	xLabel      string
	allNoun     string // "all crests"
	unitNoun    string // "tracks"
	refLabel    string // "c_cr = c_p"
	classPrefix string // put before the class label, e.g. "parent "
	lo, hi      float64
}

// pdfFigure draws the PDFs of one crest-speed ratio by steepness class
// (figures 1 and 2).
func (in *figureInput) pdfFigure(rd stats.Distributions, sym string) (func(draw.Canvas), error) {
	return in.ratioPDF(rd, pdfStyle{
		xLabel:   fmt.Sprintf("crest speed ratio c_cr/%s (dimensionless)", sym),
		allNoun:  "all crests",
		unitNoun: "tracks",
		refLabel: fmt.Sprintf("c_cr = %s", sym),
		lo:       in.ratioLo, hi: in.ratioHi,
	})
}

// ratioPDF draws the PDFs of a ratio by steepness class: the
// normalised histogram of the whole sample, its kernel density curve and
// one kernel density curve per class, with the ratio 1 marked. A class
// (or the whole sample) with fewer than MinClassTracks tracks has no
// curve: its values are drawn as rings in a strip near the axis, its
// median as a filled marker, so that a density of a few tracks does not
// pass for a distribution.
func (in *figureInput) ratioPDF(rd stats.Distributions, st pdfStyle) (func(draw.Canvas), error) {
	p := newPlot()
	p.X.Label.Text = st.xLabel
	p.Y.Label.Text = "probability density (per unit ratio)"
	pl := &pdfPlot{p: p, lo: st.lo, hi: st.hi}
	pl.histogram(rd.All.Hist, fmt.Sprintf("%s, histogram (%s bins)", st.allNoun, rd.All.Hist.Rule))
	type group struct {
		d      stats.Distribution
		col    color.Color
		width  float64
		label  string
		dashes []vg.Length
	}
	groups := []group{{rd.All, black, 1.2, st.allNoun, []vg.Length{vg.Points(4), vg.Points(2.5)}}}
	for k, d := range rd.Classes {
		groups = append(groups, group{d, classColour(k), 1.8, st.classPrefix + ClassLabel(in.Bounds[k][0], in.Bounds[k][1]), nil})
	}
	var few []group
	for _, g := range groups {
		label := fmt.Sprintf("%s (n = %d, %d %s)", g.label, g.d.Stats.N, g.d.Stats.Tracks, st.unitNoun)
		switch {
		case g.d.Stats.N == 0:
		case g.d.Stats.Tracks < in.MinClassTracks || len(g.d.PDF.X) == 0:
			few = append(few, group{g.d, g.col, g.width, label, nil})
		default:
			if err := pl.curve(g.d.PDF, g.col, g.width, label+", KDE", g.dashes...); err != nil {
				return nil, err
			}
		}
	}
	if pl.ymax == 0 {
		pl.ymax = 1
	}
	for j, g := range few {
		if err := pl.points(g.d, g.col, (0.05+0.06*float64(j))*pl.ymax, g.label+fmt.Sprintf(": values and median, too few %s for a curve", st.unitNoun)); err != nil {
			return nil, err
		}
	}
	ref, err := xyLine([]float64{1, 1}, []float64{0, 1.45 * pl.ymax}, grey, 0.8, vg.Points(2), vg.Points(2))
	if err != nil {
		return nil, err
	}
	p.Add(ref)
	p.Legend.Add(st.refLabel, ref)
	p.X.Min, p.X.Max = st.lo, st.hi
	p.Y.Min, p.Y.Max = 0, 1.45*pl.ymax // headroom for the legend
	p.Legend.Top = true
	p.Legend.Left = !(rd.All.Stats.Mode < (st.lo+st.hi)/2)
	p.Legend.XOffs, p.Legend.YOffs = vg.Points(-4), vg.Points(-4)
	if p.Legend.Left {
		p.Legend.XOffs = vg.Points(4)
	}
	return func(dc draw.Canvas) { p.Draw(dc) }, nil
}

// pdfPlot collects the layers of a PDF figure and the highest density
// they reach within the display range.
type pdfPlot struct {
	p      *plot.Plot
	lo, hi float64
	ymax   float64
}

func (pl *pdfPlot) histogram(h stats.Histogram, label string) {
	if len(h.Counts) == 0 {
		return
	}
	hist := &plotter.Histogram{Width: h.Width(), FillColor: lightGrey}
	hist.LineStyle = draw.LineStyle{Color: color.Gray{0xc4}, Width: vg.Points(0.3)}
	for i, d := range h.Density {
		if h.Edges[i+1] < pl.lo || h.Edges[i] > pl.hi {
			continue
		}
		hist.Bins = append(hist.Bins, plotter.HistogramBin{Min: h.Edges[i], Max: h.Edges[i+1], Weight: d})
		pl.ymax = math.Max(pl.ymax, d)
	}
	if len(hist.Bins) > 0 {
		pl.p.Add(hist)
		pl.p.Legend.Add(label, hist)
	}
}

func (pl *pdfPlot) curve(c stats.Curve, col color.Color, width float64, label string, dashes ...vg.Length) error {
	l, err := xyLine(c.X, c.Density, col, width, dashes...)
	if err != nil {
		return err
	}
	for i, x := range c.X {
		if x >= pl.lo && x <= pl.hi {
			pl.ymax = math.Max(pl.ymax, c.Density[i])
		}
	}
	pl.p.Add(l)
	pl.p.Legend.Add(label, l)
	return nil
}

// points draws the values of a group as rings at height y and its
// median as a filled circle.
func (pl *pdfPlot) points(d stats.Distribution, col color.Color, y float64, label string) error {
	pts := make(plotter.XYs, 0, len(d.Values))
	for _, v := range d.Values {
		pts = append(pts, plotter.XY{X: v, Y: y})
	}
	rings, err := plotter.NewScatter(pts)
	if err != nil {
		return err
	}
	rings.GlyphStyle = draw.GlyphStyle{Color: col, Radius: vg.Points(2.2), Shape: draw.RingGlyph{}}
	med, err := plotter.NewScatter(plotter.XYs{{X: d.Stats.Median, Y: y}})
	if err != nil {
		return err
	}
	med.GlyphStyle = draw.GlyphStyle{Color: col, Radius: vg.Points(3.6), Shape: draw.CircleGlyph{}}
	pl.p.Add(rings, med)
	pl.p.Legend.Add(label, rings, med)
	return nil
}

// trackSegments draws crest tracks as polylines coloured by a value per
// row (NaN in grey); consecutive segments of the same colour level are
// merged, which keeps the SVG small.
type trackSegments struct {
	x, y, v []float64
	runs    []int // start of each drawn track; the last entry ends the last
	tracks  []int // indices into runs of the tracks drawn
	cmap    palette.ColorMap
	levels  int
	width   vg.Length
}

func (ts *trackSegments) colour(v float64) (color.Color, int) {
	if math.IsNaN(v) {
		return darkGrey, -1
	}
	lo, hi := ts.cmap.Min(), ts.cmap.Max()
	u := (v - lo) / (hi - lo)
	lev := int(math.Floor(u * float64(ts.levels)))
	lev = min(max(lev, 0), ts.levels-1)
	c, err := ts.cmap.At(lo + (float64(lev)+0.5)/float64(ts.levels)*(hi-lo))
	if err != nil {
		return grey, -2
	}
	return c, lev
}

func (ts *trackSegments) Plot(c draw.Canvas, plt *plot.Plot) {
	trX, trY := plt.Transforms(&c)
	for _, k := range ts.tracks {
		a, b := ts.runs[k], ts.runs[k+1]
		var line []vg.Point
		var col color.Color
		cur := -3
		flush := func() {
			if len(line) > 1 {
				c.StrokeLines(draw.LineStyle{Color: col, Width: ts.width}, c.ClipLinesXY(line)...)
			}
			line = line[:0]
		}
		for i := a + 1; i < b; i++ {
			cc, lev := ts.colour(ts.v[i])
			p0 := vg.Point{X: trX(ts.x[i-1]), Y: trY(ts.y[i-1])}
			p1 := vg.Point{X: trX(ts.x[i]), Y: trY(ts.y[i])}
			if lev != cur || len(line) == 0 {
				flush()
				col, cur = cc, lev
				line = append(line, p0)
			}
			line = append(line, p1)
		}
		flush()
	}
}

func (ts *trackSegments) DataRange() (xmin, xmax, ymin, ymax float64) {
	xmin, ymin = math.Inf(1), math.Inf(1)
	xmax, ymax = math.Inf(-1), math.Inf(-1)
	for _, k := range ts.tracks {
		for i := ts.runs[k]; i < ts.runs[k+1]; i++ {
			if math.IsNaN(ts.x[i]) || math.IsNaN(ts.y[i]) {
				continue
			}
			xmin, xmax = math.Min(xmin, ts.x[i]), math.Max(xmax, ts.x[i])
			ymin, ymax = math.Min(ymin, ts.y[i]), math.Max(ymax, ts.y[i])
		}
	}
	return
}

// maxDrawnSegments bounds the segments of the space–time diagram.
const maxDrawnSegments = 20000

// ratioColourMap is the diverging map of ratios centred on 1: Moreland's
// smooth cool-warm map (Moreland 2009, "Diverging Color Maps for
// Scientific Visualization", ISVC), designed to stay readable with the
// common colour-vision deficiencies.
func ratioColourMap(half float64) palette.ColorMap {
	cm := moreland.SmoothBlueRed()
	cm.SetMin(1 - half)
	cm.SetMax(1 + half)
	return cm
}

// spaceTimeFigure draws the crest tracks as distance along θ0 against
// time, coloured by c_cr/c_p (figure 3). It returns the drawing, the
// stride by which tracks are thinned and the number of tracks drawn.
func (in *figureInput) spaceTimeFigure() (func(draw.Canvas), int, int, error) {
	tab := in.Crests
	runs := table.TrackRuns(tab)
	nTr := len(runs) - 1
	segs := tab.Len() - nTr
	stride := 1
	if segs > maxDrawnSegments {
		stride = (segs + maxDrawnSegments - 1) / maxDrawnSegments
	}
	ts := &trackSegments{runs: runs, levels: 48, width: vg.Points(0.9), v: tab.Cols[table.CrestRatioPeak], y: tab.Cols[table.CrestAlong]}
	ts.x = make([]float64, tab.Len())
	for i, t := range tab.Cols[table.CrestTime] {
		ts.x[i] = t - in.T0
	}
	multi := 0
	for k := 0; k < nTr; k++ {
		if runs[k+1]-runs[k] > 1 {
			if multi%stride == 0 {
				ts.tracks = append(ts.tracks, k)
			}
			multi++
		}
	}
	half := 0.5
	for _, q := range []float64{in.Peak.All.Stats.P05, in.Peak.All.Stats.P95} {
		if !math.IsNaN(q) {
			half = math.Max(half, math.Abs(q-1))
		}
	}
	half = math.Min(math.Ceil(half*10)/10, 2)
	ts.cmap = ratioColourMap(half)
	p := newPlot()
	p.X.Label.Text = "time since the start of the record (s)"
	p.Y.Label.Text = fmt.Sprintf("distance along the mean direction θ0 = %.1f° (m)", in.Sea.MeanDirection)
	if len(ts.tracks) > 0 {
		p.Add(ts)
	}
	cb := newPlot()
	cb.Add(&plotter.ColorBar{ColorMap: ts.cmap, Vertical: true})
	cb.HideX()
	cb.Y.Label.Text = "c_cr/c_p (dark grey: no speed)"
	cb.Y.Padding = 0
	drawFn := func(dc draw.Canvas) {
		w := dc.Max.X - dc.Min.X
		main := draw.Crop(dc, 0, -vg.Points(88), 0, 0)
		p.Draw(main)
		bar := draw.Crop(dc, w-vg.Points(84), -vg.Points(30), vg.Points(34), -vg.Points(8))
		cb.Draw(bar)
	}
	return drawFn, stride, len(ts.tracks), nil
}

// highestTracks returns the table track indices (into TrackRuns) of the
// n tracks with the highest crest elevation, highest first.
func highestTracks(tab *table.Table, n int) []int {
	runs := table.TrackRuns(tab)
	type tr struct {
		k   int
		max float64
	}
	var all []tr
	el := tab.Cols[table.CrestElevation]
	for k := 0; k+1 < len(runs); k++ {
		m := math.Inf(-1)
		for i := runs[k]; i < runs[k+1]; i++ {
			if el[i] > m {
				m = el[i]
			}
		}
		if runs[k+1]-runs[k] >= 3 && !math.IsInf(m, -1) {
			all = append(all, tr{k, m})
		}
	}
	sort.SliceStable(all, func(a, b int) bool { return all[a].max > all[b].max })
	var out []int
	for i := 0; i < len(all) && i < n; i++ {
		out = append(out, all[i].k)
	}
	return out
}

// peakRow returns the row of the highest crest among rows a..b−1.
func peakRow(el []float64, a, b int) int {
	imax := a
	for i := a; i < b; i++ {
		if el[i] > el[imax] {
			imax = i
		}
	}
	return imax
}

// trackStyle is the colour and dashes of the j-th followed track (those
// of figure 4, reused by the B_x figure).
func trackStyle(j int) (color.Color, []vg.Length) {
	if j >= len(okabeIto) {
		return classColour(j), []vg.Length{vg.Points(4), vg.Points(2)}
	}
	return classColour(j), nil
}

// highestFigure draws a_c, S_c and c_cr/c_p against time from the moment
// of each track's highest crest, for the highest crests (figure 4).
func (in *figureInput) highestFigure() (func(draw.Canvas), []int, error) {
	tab := in.Crests
	runs := table.TrackRuns(tab)
	ks := highestTracks(tab, in.Highest)
	el, tm := tab.Cols[table.CrestElevation], tab.Cols[table.CrestTime]
	cols := []int{table.CrestElevation, table.CrestSteepness, table.CrestRatioPeak}
	labels := []string{"crest elevation a_c (m)", "steepness S_c (dimensionless)", "c_cr/c_p (dimensionless)"}
	plots := make([][]*plot.Plot, 3)
	for r := range plots {
		p := newPlot()
		p.Y.Label.Text = labels[r]
		plots[r] = []*plot.Plot{p}
	}
	plots[2][0].X.Label.Text = "time from the track's highest crest (s)"
	var ids []int
	xmin, xmax, amax := math.Inf(1), math.Inf(-1), 0.0
	for j, k := range ks {
		a, b := runs[k], runs[k+1]
		imax := peakRow(el, a, b)
		t0 := tm[imax]
		ts := make([]float64, b-a)
		for i := range ts {
			ts[i] = tm[a+i] - t0
		}
		xmin, xmax, amax = math.Min(xmin, ts[0]), math.Max(xmax, ts[len(ts)-1]), math.Max(amax, el[imax])
		id := int(tab.Cols[table.CrestTrack][a])
		ids = append(ids, id)
		col, dashes := trackStyle(j)
		for r, c := range cols {
			l, err := xyLine(ts, tab.Cols[c][a:b], col, 1.4, dashes...)
			if err != nil {
				if r == 2 { // no speed at all on this track
					continue
				}
				return nil, nil, err
			}
			plots[r][0].Add(l)
			if r == 0 {
				plots[r][0].Legend.Add(fmt.Sprintf("track %d: a_c max %.2f m at t = %.1f s", id, el[imax], t0-in.T0), l)
			}
		}
	}
	in.highestAxes(plots, xmin, xmax, amax, len(ks))
	drawFn := func(dc draw.Canvas) {
		tiles := draw.Tiles{Rows: 3, Cols: 1, PadY: vg.Points(6), PadTop: vg.Points(4), PadBottom: vg.Points(2), PadLeft: vg.Points(2), PadRight: vg.Points(6)}
		cs := plot.Align(plots, tiles, dc)
		for r := range plots {
			plots[r][0].Draw(cs[r][0])
		}
	}
	return drawFn, ids, nil
}

// highestAxes adds the reference lines of figure 4 and sets its axes:
// time from xmin to xmax shared by the panels, headroom above the highest
// crest amax for the legend of n tracks.
func (in *figureInput) highestAxes(plots [][]*plot.Plot, xmin, xmax, amax float64, n int) {
	for _, b := range in.Bounds[1:] {
		if l, err := xyLine([]float64{-1e9, 1e9}, []float64{b[0], b[0]}, grey, 0.7, vg.Points(3), vg.Points(2)); err == nil {
			plots[1][0].Add(l)
		}
	}
	one, _ := xyLine([]float64{-1e9, 1e9}, []float64{1, 1}, grey, 0.7, vg.Points(2), vg.Points(2))
	plots[2][0].Add(one)
	if math.IsInf(xmin, 1) {
		xmin, xmax = -1, 1
	}
	for r := range plots {
		p := plots[r][0]
		p.X.Min, p.X.Max = xmin, xmax
		p.Legend.Top, p.Legend.Left = true, true
		p.Legend.XOffs, p.Legend.YOffs = vg.Points(4), vg.Points(-2)
	}
	plots[0][0].Y.Min = 0
	if amax > 0 {
		plots[0][0].Y.Max = amax * (1.15 + 0.09*float64(n))
	}
	plots[2][0].Y.Min = math.Max(in.ratioLo, -0.5)
	plots[2][0].Y.Max = math.Min(in.ratioHi, 2.5)
}

// spectrumFigure draws the frequency spectrum with Hm0, Tp and c_p marked
// (figure 5).
func (in *figureInput) spectrumFigure() (func(draw.Canvas), error) {
	sp, ss := in.Spectrum, in.Sea
	fp := 1 / ss.Tp
	fmax := sp.Freq[len(sp.Freq)-1]
	if fp > 0 && !math.IsInf(fp, 0) {
		fmax = math.Min(fmax, 4*fp)
	}
	var xs, ys []float64
	ymax := 0.0
	for i, f := range sp.Freq {
		if f <= fmax*1.0001 {
			xs = append(xs, f)
			ys = append(ys, sp.PSD[i])
			ymax = math.Max(ymax, sp.PSD[i])
		}
	}
	if ymax == 0 {
		ymax = 1
	}
	p := newPlot()
	p.X.Label.Text = "frequency f (Hz)"
	p.Y.Label.Text = "elevation spectral density S(f) (m²/Hz)"
	l, err := xyLine(xs, ys, okabeIto[0], 1.6)
	if err != nil {
		return nil, err
	}
	pts := make(plotter.XYs, len(xs))
	for i := range xs {
		pts[i] = plotter.XY{X: xs[i], Y: ys[i]}
	}
	dots, err := plotter.NewScatter(pts)
	if err != nil {
		return nil, err
	}
	dots.GlyphStyle = draw.GlyphStyle{Color: okabeIto[0], Radius: vg.Points(2), Shape: draw.CircleGlyph{}}
	p.Add(l, dots)
	p.Legend.Add("Welch spectrum of the record (estimates at the dots)", l, dots)
	if fp > 0 && !math.IsInf(fp, 0) {
		pk, err := xyLine([]float64{fp, fp}, []float64{0, 1.15 * ymax}, okabeIto[4], 1, vg.Points(4), vg.Points(2))
		if err != nil {
			return nil, err
		}
		p.Add(pk)
		p.Legend.Add(fmt.Sprintf("peak f_p = 1/Tp = %.3f Hz", fp), pk)
		lab, err := plotter.NewLabels(plotter.XYLabels{
			XYs: []plotter.XY{{X: 0.55 * fmax, Y: 0.8 * ymax}},
			Labels: []string{fmt.Sprintf("Hm0 = %.2f m\nTp = %.2f s\npeak phase speed c_p = %.2f m/s\npeak wavelength = %.1f m",
				ss.Hm0, ss.Tp, ss.PeakPhaseSpeed, ss.PeakWavelength)},
		})
		if err != nil {
			return nil, err
		}
		lab.TextStyle[0].Font = sansFont
		lab.TextStyle[0].Font.Size = vg.Points(9)
		lab.TextStyle[0].Handler = p.TextHandler
		lab.TextStyle[0].YAlign = draw.YTop
		p.Add(lab)
	}
	p.X.Min, p.X.Max = 0, fmax
	p.Y.Min, p.Y.Max = 0, 1.15*ymax
	p.Legend.Top = true
	p.Legend.XOffs, p.Legend.YOffs = vg.Points(-4), vg.Points(-4)
	return func(dc draw.Canvas) { p.Draw(dc) }, nil
}

// maxScatterPoints bounds the points of the ratio–steepness scatter.
const maxScatterPoints = 20000

// scatterFigure draws c_cr/c_p against S_c with the class boundaries
// (figure 6). It returns the drawing and the row stride used.
func (in *figureInput) scatterFigure() (func(draw.Canvas), int, error) {
	tab := in.Crests
	sc, rp := tab.Cols[table.CrestSteepness], tab.Cols[table.CrestRatioPeak]
	var idx []int
	for i := range sc {
		if !math.IsNaN(sc[i]) && !math.IsNaN(rp[i]) {
			idx = append(idx, i)
		}
	}
	stride := 1
	if len(idx) > maxScatterPoints {
		stride = (len(idx) + maxScatterPoints - 1) / maxScatterPoints
	}
	scs := make([]float64, 0, len(idx))
	for _, i := range idx {
		scs = append(scs, sc[i])
	}
	sort.Float64s(scs)
	xmax := 0.3
	if len(scs) > 0 {
		xmax = math.Max(stats.Quantile(scs, 0.999)*1.05, in.Bounds[len(in.Bounds)-1][0]*1.2)
	}
	p := newPlot()
	p.X.Label.Text = "local crest steepness S_c = a_c π / w_c (dimensionless)"
	p.Y.Label.Text = "crest speed ratio c_cr/c_p (dimensionless)"
	perClass := make([]plotter.XYs, len(in.Bounds))
	for j := 0; j < len(idx); j += stride {
		i := idx[j]
		for k, b := range in.Bounds {
			if sc[i] >= b[0] && sc[i] < b[1] {
				perClass[k] = append(perClass[k], plotter.XY{X: sc[i], Y: rp[i]})
				break
			}
		}
	}
	for k, pts := range perClass {
		if len(pts) == 0 {
			continue
		}
		s, err := plotter.NewScatter(pts)
		if err != nil {
			return nil, 0, err
		}
		c := classColour(k)
		c.A = 0x90
		s.GlyphStyle = draw.GlyphStyle{Color: c, Radius: vg.Points(1.3), Shape: draw.CircleGlyph{}}
		p.Add(s)
		big := *s
		big.GlyphStyle.Radius = vg.Points(3)
		big.GlyphStyle.Color = classColour(k)
		p.Legend.Add(ClassLabel(in.Bounds[k][0], in.Bounds[k][1]), &big)
	}
	ylo, yhi := in.ratioLo, in.ratioHi
	for _, b := range in.Bounds[1:] {
		l, err := xyLine([]float64{b[0], b[0]}, []float64{ylo - 10, yhi + 10}, grey, 0.9, vg.Points(4), vg.Points(2))
		if err != nil {
			return nil, 0, err
		}
		p.Add(l)
	}
	one, _ := xyLine([]float64{-1, 10}, []float64{1, 1}, grey, 0.7, vg.Points(2), vg.Points(2))
	p.Add(one)
	p.X.Min, p.X.Max = 0, xmax
	p.Y.Min, p.Y.Max = ylo, yhi
	p.Legend.Top = true
	p.Legend.XOffs, p.Legend.YOffs = vg.Points(-4), vg.Points(-4)
	return func(dc draw.Canvas) { p.Draw(dc) }, stride, nil
}

// Draw draws the six figures of the crest speeds, then those of the
// whitecaps and breaking inception that the data allow.
func Draw(input Input) (Output, error) {
	in := &figureInput{Input: input}
	in.ratioLo, in.ratioHi = displayRange(in.Peak, in.Local)
	for _, step := range []func() error{in.pdfFigures, in.spaceTimeAndHighest, in.spectrumAndScatter, in.residualFigure} {
		if err := step(); err != nil {
			return Output{}, err
		}
	}
	if in.Breaking != nil {
		if err := in.breakingFigures(); err != nil {
			return Output{}, err
		}
	}
	if in.Gauge != nil {
		if err := in.gaugeFigure(); err != nil {
			return Output{}, err
		}
	}
	return in.out, nil
}

// residualFigure draws the distribution of the tracking steps' residual
// advance (figure 7), when steps were taken.
func (in *figureInput) residualFigure() error {
	h := in.StepResiduals
	if h == nil {
		return nil
	}
	n := h.Below + h.Above
	for _, c := range h.Counts {
		n += c
	}
	if n == 0 || len(h.EdgesM) != len(h.Counts)+1 {
		return nil
	}
	w := h.EdgesM[1] - h.EdgesM[0]
	hist := &plotter.Histogram{Width: w, FillColor: lightGrey}
	hist.LineStyle = draw.LineStyle{Color: color.Gray{0xc4}, Width: vg.Points(0.3)}
	top := 0.0
	for i, c := range h.Counts {
		d := float64(c) / (float64(n) * w) // density of all steps, those outside included
		hist.Bins = append(hist.Bins, plotter.HistogramBin{Min: h.EdgesM[i], Max: h.EdgesM[i+1], Weight: d})
		top = math.Max(top, d)
	}
	zero, err := xyLine([]float64{0, 0}, []float64{0, top}, color.Black, 1, vg.Points(3), vg.Points(3))
	if err != nil {
		return fmt.Errorf("figure fig7_step_residuals cannot be drawn: %w", err)
	}
	fn := func(dc draw.Canvas) {
		p := newPlot()
		p.X.Label.Text = "measured − predicted advance per step (m)"
		p.Y.Label.Text = "probability density (1/m)"
		p.Add(hist, zero)
		p.Draw(dc)
	}
	outside := ""
	if h.Below+h.Above > 0 {
		outside = fmt.Sprintf(" %d of the %d steps lie outside the range drawn (%d below, %d above).", h.Below+h.Above, n, h.Below, h.Above)
	}
	return in.add("fig7_step_residuals", "Figure 7. Tracking steps against linear kinematics",
		"Distribution of each frame-to-frame step's measured advance of the crest line minus the advance its linear prediction gives (the local "+
			"linear phase speed × Δt); dashed: zero. A crest that moves at its carrier's phase speed lies at zero; one slower than that (short waves "+
			"riding on it, a crest in a group) to the left. Steps outside the linear range of a crest's speed swing in its group are not taken "+
			"(the track is split there; see the quality table)."+outside, "", figHeight, fn)
}

// Sizes of the figures.
const (
	figWidth  = vg.Inch * 7
	figHeight = vg.Inch * 4.2
)

// add renders a figure and appends it to the output.
func (in *figureInput) add(name, title, caption, section string, h vg.Length, fn func(draw.Canvas)) error {
	png, svg, err := render(name, figWidth, h, fn)
	if err != nil {
		return err
	}
	in.out.Figures = append(in.out.Figures, Figure{Name: name, Title: title, Caption: caption, PNG: png, SVG: svg, Section: section})
	return nil
}

// pdfFigures draws figures 1 and 2.
func (in *figureInput) pdfFigures() error {
	classes := ""
	for k, b := range in.Bounds {
		if k > 0 {
			classes += ", "
		}
		classes += ClassLabel(b[0], b[1])
	}
	for _, f := range []struct {
		rd              stats.Distributions
		name, sym, what string
	}{
		{in.Peak, "fig1_ratio_peak_pdf", "c_p", "the linear phase speed at the spectral peak, c_p"},
		{in.Local, "fig2_ratio_local_pdf", "c_loc", "the linear phase speed of the local carrier wave, c_loc (from the zero-crossing wavelength around each crest)"},
	} {
		fn, err := in.pdfFigure(f.rd, f.sym)
		if err != nil {
			return fmt.Errorf("figure %s cannot be drawn: %w", f.name, err)
		}
		cap := fmt.Sprintf("Probability density of the crest speed c_cr relative to %s, one curve per steepness class (%s): "+
			"Gaussian kernel density estimates with the Silverman bandwidth. Grey bars: normalised histogram of all crests (bin width by the %s rule); "+
			"black dashes: kernel estimate of all crests. Each row of a track counts once, so long tracks weigh more. "+
			"A class of fewer than %d tracks has no curve: its values are drawn as rings near the axis and its median as a filled circle. "+
			"The dotted line marks c_cr = %s. Shown: the central 99 %% of the values.", f.what, classes, f.rd.All.Hist.Rule, in.MinClassTracks, f.sym)
		if err := in.add(f.name, fmt.Sprintf("Figure %s. Crest speed relative to %s, by steepness class", f.name[3:4], f.sym), cap, "", figHeight, fn); err != nil {
			return err
		}
	}
	return nil
}

// spaceTimeAndHighest draws figures 3 and 4.
func (in *figureInput) spaceTimeAndHighest() error {
	fn, stride, shown, err := in.spaceTimeFigure()
	if err != nil {
		return err
	}
	thin := fmt.Sprintf("All %d tracks of two or more frames are drawn.", shown)
	if stride > 1 {
		thin = fmt.Sprintf("One in %d of the tracks of two or more frames is drawn (%d tracks), to keep the figure legible.", stride, shown)
	}
	if err := in.add("fig3_space_time", "Figure 3. Crest tracks in space and time",
		"Space–time diagram: each line is one crest track, its position along the mean direction of travel against time, "+
			"coloured by the crest speed ratio c_cr/c_p (blue slower, red faster than the peak phase speed, light grey close to it; dark grey where the speed is unknown, at the ends of tracks). "+
			"The slope of a line is the crest speed. "+thin, "", vg.Inch*4.6, fn); err != nil {
		return err
	}
	fn, ids, err := in.highestFigure()
	if err != nil {
		return err
	}
	return in.add("fig4_highest_crests", fmt.Sprintf("Figure 4. Histories of the %d highest crests", len(ids)),
		fmt.Sprintf("Crest elevation a_c, local steepness S_c and speed ratio c_cr/c_p along the %d tracks with the highest crests, "+
			"against time from the moment each crest is highest. Dashed lines: steepness class boundaries (middle) and c_cr = c_p (bottom). "+
			"Speeds are unknown near the ends of a track, where the fit window is incomplete.", len(ids)), "", vg.Inch*7, fn)
}

// spectrumAndScatter draws figures 5 and 6.
func (in *figureInput) spectrumAndScatter() error {
	fn, err := in.spectrumFigure()
	if err != nil {
		return fmt.Errorf("figure fig5_spectrum cannot be drawn: %w", err)
	}
	if err := in.add("fig5_spectrum", "Figure 5. Frequency spectrum of the record",
		"Welch estimate of the frequency spectrum of the surface elevation, averaged over the grid points used. "+
			"The dashed line marks the peak frequency f_p = 1/Tp; the peak phase speed c_p follows from Tp by linear dispersion with the depth and current of the run. "+
			"Hm0 = 4√m0 from the spectrum.", "", figHeight, fn); err != nil {
		return err
	}
	fn, stride, err := in.scatterFigure()
	if err != nil {
		return fmt.Errorf("figure fig6_ratio_vs_steepness cannot be drawn: %w", err)
	}
	thin := "Every crest row with a known speed is drawn."
	if stride > 1 {
		thin = fmt.Sprintf("One in %d of the crest rows with a known speed is drawn.", stride)
	}
	return in.add("fig6_ratio_vs_steepness", "Figure 6. Crest speed ratio against steepness",
		"Crest speed ratio c_cr/c_p of every crest row against its local steepness S_c, coloured by steepness class; "+
			"dashed vertical lines: class boundaries; dotted: c_cr = c_p. "+thin+" The vertical range is that of figure 1.", "", figHeight, fn)
}
