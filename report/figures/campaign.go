package figures

// The figures of a campaign report: the pooled crest-speed and whitecap
// front-speed ratio PDFs by steepness class, the per-deployment medians
// against peak steepness and against wave age, and Λ(c/c_p) of every
// deployment with the pooled curve. They are drawn in the style of the
// deployment report, with its palette, fonts and PDF layout.

import (
	"fmt"
	"image/color"
	"math"

	"gonum.org/v1/plot"
	"gonum.org/v1/plot/plotter"
	"gonum.org/v1/plot/vg"
	"gonum.org/v1/plot/vg/draw"

	"crestspeed/report/stats"
)

// CampaignInput is what the campaign figures are drawn from.
type CampaignInput struct {
	// Peak and Front are the pooled distributions of c_cr/c_p and of
	// c_br/c_p by steepness class (of the parent crest, for whitecaps),
	// with curves and values; Front is empty without whitecaps.
	Peak, Front stats.Distributions
	Bounds      [][2]float64
	// MinClassTracks is the fewest tracks a class needs for a curve.
	MinClassTracks int
	// Deployments are the points of the scatter figures, one per
	// deployment.
	Deployments []CampaignPoint
	// Lambda are the Λ(c/c_p) curves of the deployments with whitecaps;
	// PooledLambda the pooled one (nil without whitecaps).
	Lambda       []LambdaCurve
	PooledLambda *LambdaCurve
	// LambdaJacobian states how Λ(c/c_p) relates to Λ(c).
	LambdaJacobian string
}

// CampaignPoint is one deployment in the scatter figures.
type CampaignPoint struct {
	// Label names the deployment in legends ("1").
	Label string
	// PeakSteepness is H_m0 k_p / 2; WaveAge c_p/U, NaN without a wind
	// speed.
	PeakSteepness, WaveAge float64
	// Crest and Front are the statistics of c_cr/c_p and c_br/c_p, the
	// classes then all (stats.RatioStats.Groups); Front is nil without
	// whitecaps.
	Crest, Front []stats.Stats
}

// LambdaCurve is Λ(c/c_p) in bins [Lo_j, Hi_j) of c/c_p, m⁻¹.
type LambdaCurve struct {
	Label          string
	Lo, Hi, Lambda []float64
}

// classGlyphs are the marker shapes of the classes in the scatter
// figures (the colour also tells them apart): filled for a class of
// enough tracks, the same shape open for one of too few.
var classGlyphs = [][2]draw.GlyphDrawer{
	{draw.CircleGlyph{}, draw.RingGlyph{}},
	{draw.BoxGlyph{}, draw.SquareGlyph{}},
	{draw.PyramidGlyph{}, draw.TriangleGlyph{}},
}

// DrawCampaign draws the campaign figures that the data allow; notes say,
// one sentence each, which are left out and why.
func DrawCampaign(in CampaignInput) (figs []Figure, notes []string, err error) {
	fi := &figureInput{Input: Input{Bounds: in.Bounds, MinClassTracks: in.MinClassTracks, Peak: in.Peak}}
	add := func(slug, title, caption string, h vg.Length, fn func(draw.Canvas)) error {
		num := len(fi.out.Figures) + 1
		return fi.add(fmt.Sprintf("campaign%d_%s", num, slug), fmt.Sprintf("Figure %d. %s", num, title), caption, "", h, fn)
	}
	n := len(in.Deployments)
	// pooled crest-speed PDFs
	lo, hi := displayRange(in.Peak)
	fn, err := fi.ratioPDF(in.Peak, pdfStyle{xLabel: "crest speed ratio c_cr/c_p (dimensionless)", allNoun: "all crests", unitNoun: "tracks",
		refLabel: "c_cr = c_p", lo: lo, hi: hi})
	if err != nil {
		return nil, nil, fmt.Errorf("figure of the pooled crest-speed ratios cannot be drawn: %w", err)
	}
	if err := add("ratio_peak_pdf", "Pooled crest speed relative to c_p, by steepness class",
		fmt.Sprintf("Probability density of the crest speed c_cr relative to the peak phase speed c_p of its own deployment, pooled over the %d deployments, "+
			"one curve per steepness class: Gaussian kernel density estimates with the Silverman bandwidth. Grey bars: normalised histogram of all crests "+
			"(bin width by the %s rule); black dashes: kernel estimate of all crests. Each row of a track counts once, so long tracks and long deployments weigh more. "+
			"A class of fewer than %d tracks has no curve: its values are drawn as rings and its median as a filled circle. Dotted: c_cr = c_p. Shown: the central 99 %% of the values.",
			n, in.Peak.All.Hist.Rule, in.MinClassTracks), figHeight, fn); err != nil {
		return nil, nil, err
	}
	// pooled whitecap PDFs
	if in.Front.All.Stats.N > 0 {
		lo, hi := displayRange(in.Front)
		fn, err := fi.ratioPDF(in.Front, pdfStyle{xLabel: "whitecap front speed ratio c_br/c_p (dimensionless)", allNoun: "all whitecap rows",
			unitNoun: "whitecaps", refLabel: "c_br = c_p", classPrefix: "parent crest ", lo: lo, hi: hi})
		if err != nil {
			return nil, nil, fmt.Errorf("figure of the pooled whitecap speed ratios cannot be drawn: %w", err)
		}
		if err := add("front_ratio_pdf", "Pooled whitecap front speed relative to c_p, by steepness class of the parent crest",
			fmt.Sprintf("Probability density of the whitecap front speed c_br relative to the c_p of its deployment, pooled over the deployments with whitecaps, "+
				"one curve per steepness class of the parent crest, drawn as figure 1. Rows without a parent crest count in the black curve only. "+
				"A class of fewer than %d whitecaps is drawn as points.", in.MinClassTracks), figHeight, fn); err != nil {
			return nil, nil, err
		}
	} else {
		notes = append(notes, "No deployment has whitecap rows with a front speed, so the pooled whitecap speed-ratio PDFs are not drawn.")
	}
	// medians against peak steepness and wave age
	for _, ax := range []struct {
		slug, title, label string
		x                  func(CampaignPoint) float64
		what               string
	}{
		{"medians_vs_peak_steepness", "Median speed ratios against peak steepness", "peak steepness H_m0 k_p / 2 (dimensionless)",
			func(p CampaignPoint) float64 { return p.PeakSteepness }, "the peak steepness H_m0 k_p/2 of its deployment (k_p = 2π/(c_p T_p), the wavenumber at the peak by linear dispersion)"},
		{"medians_vs_wave_age", "Median speed ratios against wave age", "wave age c_p / U (dimensionless)",
			func(p CampaignPoint) float64 { return p.WaveAge }, "the wave age c_p/U of its deployment (U the recorded wind speed)"},
	} {
		have := 0
		for _, p := range in.Deployments {
			if v := ax.x(p); !math.IsNaN(v) && !math.IsInf(v, 0) {
				have++
			}
		}
		if have == 0 {
			if ax.slug == "medians_vs_wave_age" {
				notes = append(notes, "No deployment records a wind speed, so the wave age c_p/U is unavailable and the medians are not drawn against it.")
			}
			continue
		}
		fn, err := fi.mediansFigure(in, ax.x, ax.label)
		if err != nil {
			return nil, nil, fmt.Errorf("figure %s cannot be drawn: %w", ax.slug, err)
		}
		missing := ""
		if have < n {
			missing = fmt.Sprintf(" %d of the %d deployments have no value and are not drawn.", n-have, n)
		}
		if err := add(ax.slug, ax.title,
			fmt.Sprintf("Median crest speed ratio c_cr/c_p (top) and whitecap front speed ratio c_br/c_p (bottom) of each deployment and steepness class, against %s. "+
				"Bars: 90 %% bootstrap intervals of the medians, resampling the deployment's tracks (whitecaps); a point without a bar has too few tracks for an interval. "+
				"Open markers: classes of fewer than %d tracks, an indication only. Black: all crests (whitecaps) of the deployment. Dotted: ratio 1.%s",
				ax.what, in.MinClassTracks, missing), vg.Inch*6, fn); err != nil {
			return nil, nil, err
		}
	}
	// Λ(c/c_p)
	if in.PooledLambda != nil {
		fn, err := fi.lambdaRatioFigure(in)
		if err != nil {
			return nil, nil, fmt.Errorf("figure of Λ(c/c_p) cannot be drawn: %w", err)
		}
		if fn == nil {
			notes = append(notes, "No breaking front with a speed fell in the bins of c/c_p, so Λ(c/c_p) is zero and its figure is not drawn.")
		} else if err := add("lambda_normalised", "Breaking-front length per unit area and unit c/c_p, Λ(c/c_p)",
			fmt.Sprintf("Phillips's distribution against the front speed normalised by the peak phase speed of its deployment: %s "+
				"Coloured lines: each deployment with whitecaps, averaged over its analysed frames; black: the pooled curve, the fronts of all deployments averaged over all their analysed frames "+
				"(the frame-weighted mean of the deployments' curves). Bins of %.3g in c/c_p; empty bins are not drawn. Dotted: c = c_p.",
				in.LambdaJacobian, in.PooledLambda.Hi[0]-in.PooledLambda.Lo[0]), vg.Inch*4.6, fn); err != nil {
			return nil, nil, err
		}
	} else {
		notes = append(notes, "No deployment has whitecap results, so Λ(c/c_p) is not drawn.")
	}
	return fi.out.Figures, notes, nil
}

// mediansFigure draws the per-deployment medians of c_cr/c_p (top) and
// c_br/c_p (bottom) with their intervals against x.
func (in *figureInput) mediansFigure(ci CampaignInput, x func(CampaignPoint) float64, xLabel string) (func(draw.Canvas), error) {
	panels := []*plot.Plot{newPlot(), newPlot()}
	panels[0].Y.Label.Text = "median c_cr/c_p"
	panels[1].Y.Label.Text = "median c_br/c_p"
	panels[1].X.Label.Text = xLabel
	xmin, xmax := math.Inf(1), math.Inf(-1)
	for _, p := range ci.Deployments {
		if v := x(p); !math.IsNaN(v) && !math.IsInf(v, 0) {
			xmin, xmax = math.Min(xmin, v), math.Max(xmax, v)
		}
	}
	span := xmax - xmin
	if !(span > 0) {
		span = math.Max(0.2*math.Abs(xmax), 0.01)
	}
	// classes side by side about each deployment's x, so bars do not hide each other
	nGroups := len(ci.Bounds) + 1
	step := 0.012 * span
	ylo, yhi := math.Inf(1), math.Inf(-1)
	for r, pick := range []func(CampaignPoint) []stats.Stats{
		func(p CampaignPoint) []stats.Stats { return p.Crest },
		func(p CampaignPoint) []stats.Stats { return p.Front },
	} {
		for g := 0; g < nGroups; g++ {
			col := color.Color(black)
			label := "all"
			if g < len(ci.Bounds) {
				col = classColour(g)
				label = ClassLabel(ci.Bounds[g][0], ci.Bounds[g][1])
			}
			var full, few plotter.XYs
			var bars plotter.XYs
			var errs plotter.YErrors
			for _, p := range ci.Deployments {
				gs := pick(p)
				xv := x(p)
				if g >= len(gs) || math.IsNaN(xv) || math.IsInf(xv, 0) || math.IsNaN(gs[g].Median) {
					continue
				}
				s := gs[g]
				pt := plotter.XY{X: xv + (float64(g)-float64(nGroups-1)/2)*step, Y: s.Median}
				if s.Tracks < ci.MinClassTracks {
					few = append(few, pt)
				} else {
					full = append(full, pt)
				}
				ylo, yhi = math.Min(ylo, s.Median), math.Max(yhi, s.Median)
				if s.MedianCI.Known() {
					bars = append(bars, pt)
					errs = append(errs, struct{ Low, High float64 }{s.Median - s.MedianCI.Lo, s.MedianCI.Hi - s.Median})
					ylo, yhi = math.Min(ylo, s.MedianCI.Lo), math.Max(yhi, s.MedianCI.Hi)
				}
			}
			if err := addErrorBars(panels[r], bars, errs, col); err != nil {
				return nil, err
			}
			if err := addClassPoints(panels[r], full, few, col, classGlyph(g, nGroups), label); err != nil {
				return nil, err
			}
		}
	}
	if math.IsInf(ylo, 1) {
		ylo, yhi = 0.5, 1.1
	}
	ylo, yhi = math.Min(ylo, 1), math.Max(yhi, 1)
	pad := 0.08 * (yhi - ylo)
	for _, p := range panels {
		one, err := xyLine([]float64{xmin - span, xmax + span}, []float64{1, 1}, grey, 0.7, vg.Points(2), vg.Points(2))
		if err != nil {
			return nil, err
		}
		p.Add(one)
		p.X.Min, p.X.Max = xmin-0.1*span, xmax+0.1*span
		p.Y.Min, p.Y.Max = ylo-pad, yhi+3*pad // headroom for the legend
		p.Legend.Top = true
		p.Legend.XOffs, p.Legend.YOffs = vg.Points(-4), vg.Points(-2)
	}
	plots := [][]*plot.Plot{{panels[0]}, {panels[1]}}
	return func(dc draw.Canvas) {
		tiles := draw.Tiles{Rows: 2, Cols: 1, PadY: vg.Points(8), PadTop: vg.Points(4), PadBottom: vg.Points(2), PadLeft: vg.Points(2), PadRight: vg.Points(6)}
		cs := plot.Align(plots, tiles, dc)
		for r := range plots {
			plots[r][0].Draw(cs[r][0])
		}
	}, nil
}

// classGlyph is the pair of glyphs (enough tracks, too few) of class group
// g of nGroups; the last group, all classes together, has circles.
func classGlyph(g, nGroups int) [2]draw.GlyphDrawer {
	glyph := classGlyphs[g%len(classGlyphs)]
	if g == nGroups-1 {
		glyph = [2]draw.GlyphDrawer{draw.CircleGlyph{}, draw.RingGlyph{}}
	}
	return glyph
}

// addErrorBars adds vertical interval bars (errs about bars) in col to p;
// nothing when there are none.
func addErrorBars(p *plot.Plot, bars plotter.XYs, errs plotter.YErrors, col color.Color) error {
	if len(bars) == 0 {
		return nil
	}
	eb, err := plotter.NewYErrorBars(struct {
		plotter.XYer
		plotter.YErrorer
	}{bars, errs})
	if err != nil {
		return err
	}
	eb.LineStyle = draw.LineStyle{Color: col, Width: vg.Points(1)}
	eb.CapWidth = vg.Points(4)
	p.Add(eb)
	return nil
}

// addClassPoints adds one class's medians to p: those from enough tracks
// (full) with the first glyph, the others (few) with the second, and one
// legend entry named label.
func addClassPoints(p *plot.Plot, full, few plotter.XYs, col color.Color, glyph [2]draw.GlyphDrawer, label string) error {
	var key []plot.Thumbnailer
	if len(full) > 0 {
		s, err := scatter(full, col, 3.2, glyph[0])
		if err != nil {
			return err
		}
		p.Add(s)
		key = append(key, s)
	}
	if len(few) > 0 {
		s, err := scatter(few, col, 3.2, glyph[1])
		if err != nil {
			return err
		}
		p.Add(s)
		if len(key) == 0 {
			key = append(key, s)
		}
	}
	if len(key) > 0 {
		p.Legend.Add(label, key...)
	}
	return nil
}

// lambdaRatioFigure draws Λ(c/c_p) of every deployment and the pooled
// curve on a logarithmic Λ axis; nil when no bin holds fronts.
func (in *figureInput) lambdaRatioFigure(ci CampaignInput) (func(draw.Canvas), error) {
	p := newPlot()
	p.Y.Scale = plot.LogScale{}
	p.Y.Tick.Marker = logTicks{}
	p.X.Label.Text = "normalised front speed c/c_p (dimensionless)"
	p.Y.Label.Text = "Λ(c/c_p) (1/m)"
	lmin, lmax, xmax := math.Inf(1), 0.0, 1.2
	curves := append(append([]LambdaCurve{}, ci.Lambda...), *ci.PooledLambda)
	for _, c := range curves {
		for j, l := range c.Lambda {
			if l > 0 {
				lmin, lmax = math.Min(lmin, l), math.Max(lmax, l)
				xmax = math.Max(xmax, c.Hi[j])
			}
		}
	}
	if lmax == 0 {
		return nil, nil
	}
	for k, c := range curves {
		pooled := k == len(curves)-1
		col, width := color.Color(classColour(k)), 1.2
		label := "deployment " + c.Label
		if pooled {
			col, width, label = black, 2.2, "pooled"
		}
		var run, all plotter.XYs
		var first *plotter.Line
		flush := func() error {
			if len(run) > 1 { // lines join neighbouring bins only
				l, err := plotter.NewLine(run)
				if err != nil {
					return err
				}
				l.Color, l.Width = col, vg.Points(width)
				p.Add(l)
				if first == nil {
					first = l
				}
			}
			run = nil
			return nil
		}
		for j, l := range c.Lambda {
			if !(l > 0) {
				if err := flush(); err != nil {
					return nil, err
				}
				continue
			}
			run = append(run, plotter.XY{X: 0.5 * (c.Lo[j] + c.Hi[j]), Y: l})
			all = append(all, run[len(run)-1])
		}
		if err := flush(); err != nil {
			return nil, err
		}
		if len(all) == 0 {
			continue
		}
		dots, err := scatter(all, col, 0.8*width+0.6, draw.CircleGlyph{})
		if err != nil {
			return nil, err
		}
		p.Add(dots)
		if first != nil {
			p.Legend.Add(label, first, dots)
		} else {
			p.Legend.Add(label, dots)
		}
	}
	one, err := xyLine([]float64{1, 1}, []float64{lmin / 3, lmax * 30}, grey, 0.8, vg.Points(2), vg.Points(2))
	if err != nil {
		return nil, err
	}
	p.Add(one)
	p.X.Min, p.X.Max = 0, xmax*1.05
	p.Y.Min, p.Y.Max = lmin/3, lmax*30
	p.Legend.Top = true
	p.Legend.XOffs, p.Legend.YOffs = vg.Points(-4), vg.Points(-4)
	return func(dc draw.Canvas) { p.Draw(dc) }, nil
}
