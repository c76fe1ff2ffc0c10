package figures

// The figures of the "Whitecaps and breaking" section: Phillips's Λ(c)
// with a c⁻⁶ comparison line, the whitecap coverage W(t), the whitecap
// front-speed ratio PDFs by steepness class of the parent crest, and the
// breaking-inception index B_x along the highest crests.

import (
	"fmt"
	"image/color"
	"math"
	"strings"

	"gonum.org/v1/plot"
	"gonum.org/v1/plot/plotter"
	"gonum.org/v1/plot/vg"
	"gonum.org/v1/plot/vg/draw"

	"crestspeed/report/stats"
	"crestspeed/report/summary"
	"crestspeed/report/table"
	"crestspeed/speed"
)

// Breaking is what the figures of the "Whitecaps and breaking" section are
// drawn from.
type Breaking struct {
	// Lambda and Coverage are lambda.csv and coverage.csv (table.Lambda,
	// table.Coverage); nil without whitecap results.
	Lambda, Coverage *table.Table
	// FrontRatio are the distributions of c_br/c_p by steepness class of
	// the parent crest, with curves and values.
	FrontRatio stats.Distributions
	// Whitecaps is the whitecaps block of the summary (nil without a foam
	// mask); Inception the inception block (nil without B_x).
	Whitecaps *summary.WhitecapsSummary
	Inception *speed.Inception
}

// logTicks labels a logarithmic axis: every decade, and 2 and 5 times it
// when the axis spans fewer than three decades (all of 1–9 below 1.2
// decades), with unlabelled minor ticks at the other multiples (common
// practice).
type logTicks struct{}

func (logTicks) Ticks(lo, hi float64) []plot.Tick {
	if !(lo > 0) || !(hi > lo) || math.IsInf(hi, 0) {
		return nil
	}
	dec := math.Log10(hi / lo)
	label := map[int]bool{1: true}
	if dec < 3 {
		label[2], label[5] = true, true
	}
	if dec < 1.2 {
		label[3], label[4], label[6], label[8] = true, true, true, true
	}
	var ticks []plot.Tick
	for e := int(math.Floor(math.Log10(lo))); e <= int(math.Ceil(math.Log10(hi))); e++ {
		for m := 1; m <= 9; m++ {
			v := float64(m) * math.Pow(10, float64(e))
			if v < lo*(1-1e-9) || v > hi*(1+1e-9) {
				continue
			}
			t := plot.Tick{Value: v}
			if label[m] {
				t.Label = logLabel(m, e)
			}
			ticks = append(ticks, t)
		}
	}
	return ticks
}

// logLabel writes m·10^e in plain decimals from 0.00001 to 900000 and as
// "me-7" beyond (the font of the figures has no superscript minus).
func logLabel(m, e int) string {
	switch {
	case e >= 0 && e <= 5:
		return fmt.Sprint(m) + strings.Repeat("0", e)
	case e < 0 && e >= -5:
		return "0." + strings.Repeat("0", -e-1) + fmt.Sprint(m)
	}
	return fmt.Sprintf("%de%d", m, e)
}

// lambdaFigure draws Λ(c) on log–log axes with the c⁻⁶ reference line
// and c_p marked. It returns nil when no bin holds fronts.
func (in *figureInput) lambdaFigure(t *table.Table, ref stats.PhillipsReference) (func(draw.Canvas), error) {
	lo, hi, lam := t.Cols[0], t.Cols[1], t.Cols[2]
	centre := func(j int) float64 { return 0.5 * (lo[j] + hi[j]) }
	var all, fitted plotter.XYs
	isFitted := map[int]bool{}
	for _, j := range ref.Fitted {
		isFitted[j] = true
	}
	cmin, cmax, lmin, lmax := math.Inf(1), 0.0, math.Inf(1), 0.0
	for j := range lam {
		if !(lam[j] > 0) {
			continue
		}
		pt := plotter.XY{X: centre(j), Y: lam[j]}
		all = append(all, pt)
		if isFitted[j] && !math.IsNaN(ref.Amplitude) {
			fitted = append(fitted, pt)
		}
		cmin, cmax = math.Min(cmin, pt.X), math.Max(cmax, pt.X)
		lmin, lmax = math.Min(lmin, pt.Y), math.Max(lmax, pt.Y)
	}
	if len(all) == 0 {
		return nil, nil
	}
	for _, l := range ref.Lambda {
		lmin, lmax = math.Min(lmin, l), math.Max(lmax, l)
	}
	cp := in.Sea.PeakPhaseSpeed
	if cp > 0 && cp > cmin/2 && cp < 2*cmax {
		cmin, cmax = math.Min(cmin, cp), math.Max(cmax, cp)
	}
	p := newPlot()
	p.X.Scale, p.Y.Scale = plot.LogScale{}, plot.LogScale{}
	p.X.Tick.Marker, p.Y.Tick.Marker = logTicks{}, logTicks{}
	p.X.Label.Text = "breaking-front speed c (m/s)"
	// m⁻² s written s/m²: the font of the figures has no superscript minus
	p.Y.Label.Text = "Λ(c) (s/m²)"
	p.X.Min, p.X.Max = cmin/1.3, cmax*1.3
	if p.X.Max/p.X.Min < 3 { // at least half a decade either side of the middle
		mid := math.Sqrt(p.X.Min * p.X.Max)
		p.X.Min, p.X.Max = mid/math.Sqrt(3), mid*math.Sqrt(3)
	}
	p.Y.Min, p.Y.Max = lmin/3, lmax*8 // headroom for the legend
	if lmax/lmin < 10 {
		p.Y.Min = lmax / 30
	}
	if err := lambdaLayers(p, t, all, fitted, ref, cp); err != nil {
		return nil, err
	}
	// the legend goes to the side away from the peak of Λ
	p.Legend.Top = true
	p.Legend.Left = ref.Peak >= 0 && math.Log(centre(ref.Peak)/p.X.Min) > 0.5*math.Log(p.X.Max/p.X.Min)
	p.Legend.XOffs, p.Legend.YOffs = vg.Points(-4), vg.Points(-4)
	if p.Legend.Left {
		p.Legend.XOffs = vg.Points(4)
	}
	return func(dc draw.Canvas) { p.Draw(dc) }, nil
}

// lambdaLayers adds to the Λ(c) plot the measured bins (lines join
// neighbouring bins only: a gap is a run of empty bins), the fitted bins,
// the reference line and c_p.
func lambdaLayers(p *plot.Plot, t *table.Table, all, fitted plotter.XYs, ref stats.PhillipsReference, cp float64) error {
	lo, hi, lam := t.Cols[0], t.Cols[1], t.Cols[2]
	var run plotter.XYs
	var lines []*plotter.Line
	flush := func() error {
		if len(run) > 1 {
			l, err := plotter.NewLine(run)
			if err != nil {
				return err
			}
			l.Color, l.Width = okabeIto[0], vg.Points(0.8)
			lines = append(lines, l)
		}
		run = nil
		return nil
	}
	for j := range lam {
		if !(lam[j] > 0) {
			if err := flush(); err != nil {
				return err
			}
			continue
		}
		run = append(run, plotter.XY{X: 0.5 * (lo[j] + hi[j]), Y: lam[j]})
	}
	if err := flush(); err != nil {
		return err
	}
	for _, l := range lines {
		p.Add(l)
	}
	dots, err := scatter(all, okabeIto[0], 2.8, draw.RingGlyph{})
	if err != nil {
		return err
	}
	p.Add(dots)
	key := []plot.Thumbnailer{dots}
	if len(lines) > 0 {
		key = []plot.Thumbnailer{lines[0], dots}
	}
	p.Legend.Add(fmt.Sprintf("Λ(c) in bins of %.3g m/s (empty bins not drawn)", hi[0]-lo[0]), key...)
	if len(fitted) > 0 {
		fd, err := scatter(fitted, okabeIto[0], 2.8, draw.CircleGlyph{})
		if err != nil {
			return err
		}
		p.Add(fd)
		p.Legend.Add("bins above the peak, to which the amplitude is fitted", fd)
	}
	if len(ref.C) > 1 {
		rl, err := xyLine(ref.C, ref.Lambda, okabeIto[4], 1.6, vg.Points(5), vg.Points(2.5))
		if err != nil {
			return err
		}
		p.Add(rl)
		p.Legend.Add("A/c⁶ (Phillips 1985) for comparison: A fitted, exponent fixed", rl)
	}
	if cp > 0 && cp >= p.X.Min && cp <= p.X.Max {
		l, err := xyLine([]float64{cp, cp}, []float64{p.Y.Min, p.Y.Max}, grey, 0.8, vg.Points(2), vg.Points(2))
		if err != nil {
			return err
		}
		p.Add(l)
		p.Legend.Add(fmt.Sprintf("peak phase speed c_p = %.2f m/s", cp), l)
	}
	return nil
}

// scatter is a scatter of points drawn with one glyph.
func scatter(pts plotter.XYs, c color.Color, radius float64, shape draw.GlyphDrawer) (*plotter.Scatter, error) {
	s, err := plotter.NewScatter(pts)
	if err != nil {
		return nil, err
	}
	s.GlyphStyle = draw.GlyphStyle{Color: c, Radius: vg.Points(radius), Shape: shape}
	return s, nil
}

// maxCoveragePoints bounds the points of the W(t) line. A longer record
// is drawn by the smallest and largest W of each run of k frames (min–max
// decimation, common practice for long time series), which keeps every
// peak and trough.
const maxCoveragePoints = 4000

// coverageFigure draws W(t) in per cent, broken where frames were not
// analysed, with its mean; it returns the run length k of the min–max
// decimation (1: every frame drawn).
func (in *figureInput) coverageFigure(t *table.Table, mean float64) (func(draw.Canvas), int, error) {
	tm, fr, cov := t.Cols[0], t.Cols[1], t.Cols[2]
	p := newPlot()
	p.X.Label.Text = "time since the start of the record (s)"
	p.Y.Label.Text = "whitecap coverage W (% of the known surface)"
	ymax := 0.0
	k := 1
	if len(cov) > maxCoveragePoints {
		k = (len(cov) + maxCoveragePoints/2 - 1) / (maxCoveragePoints / 2)
	}
	var xs, ys []float64
	var bucket []int // rows of the current decimation run
	emit := func() {
		if len(bucket) == 0 {
			return
		}
		lo, hi := bucket[0], bucket[0]
		for _, i := range bucket {
			if cov[i] < cov[lo] {
				lo = i
			}
			if cov[i] > cov[hi] {
				hi = i
			}
		}
		for _, i := range []int{min(lo, hi), max(lo, hi)} {
			xs = append(xs, tm[i]-in.T0)
			ys = append(ys, 100*cov[i])
			if lo == hi {
				break
			}
		}
		bucket = bucket[:0]
	}
	first := true
	flush := func() error {
		emit()
		if len(xs) == 0 {
			return nil
		}
		l, err := xyLine(xs, ys, okabeIto[0], 1.2)
		if err != nil {
			return err
		}
		p.Add(l)
		if first {
			p.Legend.Add("W(t): foam cells over known cells, per analysed frame", l)
			first = false
		}
		xs, ys = xs[:0:0], ys[:0:0]
		return nil
	}
	for i := range cov {
		if (i > 0 && fr[i] != fr[i-1]+1) || math.IsNaN(cov[i]) {
			if err := flush(); err != nil {
				return nil, 0, err
			}
		}
		if math.IsNaN(cov[i]) {
			continue
		}
		bucket = append(bucket, i)
		if len(bucket) == k {
			emit()
		}
		ymax = math.Max(ymax, 100*cov[i])
	}
	if err := flush(); err != nil {
		return nil, 0, err
	}
	tmin, tmax := tm[0]-in.T0, tm[len(tm)-1]-in.T0
	if !math.IsNaN(mean) {
		l, err := xyLine([]float64{tmin, tmax}, []float64{100 * mean, 100 * mean}, okabeIto[4], 1.4, vg.Points(5), vg.Points(2.5))
		if err != nil {
			return nil, 0, err
		}
		p.Add(l)
		p.Legend.Add(fmt.Sprintf("mean W = %.3g %% over %d analysed frames", 100*mean, len(cov)), l)
		ymax = math.Max(ymax, 100*mean)
	}
	if ymax == 0 {
		ymax = 1
	}
	if tmax <= tmin {
		tmin, tmax = tmin-1, tmax+1
	}
	p.X.Min, p.X.Max = tmin, tmax
	p.Y.Min, p.Y.Max = 0, 1.4*ymax
	p.Legend.Top = true
	p.Legend.XOffs, p.Legend.YOffs = vg.Points(-4), vg.Points(-4)
	return func(dc draw.Canvas) { p.Draw(dc) }, k, nil
}

// bxFigure draws B_x against time from each track's highest crest for the
// tracks of figure 4 (same colours), the threshold line, and marks the
// frames in which the crest carried foam; it returns the number of tracks
// followed, and nil when none of them has a B_x.
func (in *figureInput) bxFigure(threshold float64) (func(draw.Canvas), int, error) {
	tab := in.Crests
	runs := table.TrackRuns(tab)
	ks := highestTracks(tab, in.Highest)
	el, bx, foam, tm := tab.Cols[table.CrestElevation], tab.Cols[table.CrestBx], tab.Cols[table.CrestFoam], tab.Cols[table.CrestTime]
	p := newPlot()
	p.X.Label.Text = "time from the track's highest crest (s)"
	p.Y.Label.Text = "breaking-inception index B_x = u_s/c_cr"
	drawn, foamed := 0, 0
	xmin, xmax, ymax := math.Inf(1), math.Inf(-1), 0.0
	for j, k := range ks {
		a, b := runs[k], runs[k+1]
		t0 := tm[peakRow(el, a, b)]
		xmin, xmax = math.Min(xmin, tm[a]-t0), math.Max(xmax, tm[b-1]-t0)
		var ts, vs []float64
		var pts, marks plotter.XYs
		trackMax := math.Inf(-1)
		for i := a; i < b; i++ {
			ts = append(ts, tm[i]-t0)
			vs = append(vs, bx[i])
			if !math.IsNaN(bx[i]) {
				pts = append(pts, plotter.XY{X: tm[i] - t0, Y: bx[i]})
				trackMax = math.Max(trackMax, bx[i])
				if foam[i] == 1 {
					marks = append(marks, plotter.XY{X: tm[i] - t0, Y: bx[i]})
				}
			}
		}
		id := int(tab.Cols[table.CrestTrack][a])
		col, dashes := trackStyle(j)
		switch len(pts) {
		case 0:
			// listed, so that the colours stay those of figure 4
			p.Legend.Add(fmt.Sprintf("track %d: no B_x", id))
			continue
		case 1:
			dot, err := plotter.NewScatter(pts)
			if err != nil {
				return nil, 0, err
			}
			dot.GlyphStyle = draw.GlyphStyle{Color: col, Radius: vg.Points(1.8), Shape: draw.CircleGlyph{}}
			p.Add(dot)
			p.Legend.Add(fmt.Sprintf("track %d: B_x in one frame, %.2f", id, trackMax), dot)
		default:
			l, err := xyLine(ts, vs, col, 1.4, dashes...)
			if err != nil {
				return nil, 0, err
			}
			p.Add(l)
			p.Legend.Add(fmt.Sprintf("track %d: B_x in %d frames, largest %.2f", id, len(pts), trackMax), l)
		}
		drawn++
		ymax = math.Max(ymax, trackMax)
		if len(marks) > 0 {
			s, err := plotter.NewScatter(marks)
			if err != nil {
				return nil, 0, err
			}
			s.GlyphStyle = draw.GlyphStyle{Color: col, Radius: vg.Points(3), Shape: draw.CircleGlyph{}}
			ring, _ := plotter.NewScatter(marks)
			ring.GlyphStyle = draw.GlyphStyle{Color: black, Radius: vg.Points(3), Shape: draw.RingGlyph{}}
			p.Add(s, ring)
			foamed += len(marks)
		}
	}
	if drawn == 0 {
		return nil, 0, nil
	}
	if foamed > 0 {
		key, _ := plotter.NewScatter(plotter.XYs{{}})
		key.GlyphStyle = draw.GlyphStyle{Color: grey, Radius: vg.Points(3), Shape: draw.CircleGlyph{}}
		ring, _ := plotter.NewScatter(plotter.XYs{{}})
		ring.GlyphStyle = draw.GlyphStyle{Color: black, Radius: vg.Points(3), Shape: draw.RingGlyph{}}
		p.Legend.Add("frame in which the crest carried foam", key, ring)
	}
	thr, err := xyLine([]float64{xmin - 1e3, xmax + 1e3}, []float64{threshold, threshold}, black, 1.1, vg.Points(6), vg.Points(3))
	if err != nil {
		return nil, 0, err
	}
	p.Add(thr)
	p.Legend.Add(fmt.Sprintf("inception threshold B_x = %.3g", threshold), thr)
	ymax = math.Max(ymax, threshold)
	p.X.Min, p.X.Max = xmin, xmax
	p.Y.Min, p.Y.Max = 0, ymax*(1.15+0.075*float64(len(ks)+2)) // headroom for the legend
	p.Legend.Top, p.Legend.Left = true, true
	p.Legend.XOffs, p.Legend.YOffs = vg.Points(4), vg.Points(-2)
	return func(dc draw.Canvas) { p.Draw(dc) }, len(ks), nil
}

// breakingFigures draws the figures of the "Whitecaps and breaking"
// section, numbered on from the crest figures, and notes which are absent.
func (in *figureInput) breakingFigures() error {
	b := in.Breaking
	if b.Lambda != nil {
		if err := in.lambdaAndCoverage(); err != nil {
			return err
		}
		if err := in.whitecapPDF(); err != nil {
			return err
		}
	}
	if b.Lambda == nil && b.Whitecaps != nil {
		in.note("The whitecap files (whitecaps.csv, lambda.csv, coverage.csv) were not given, so the whitecap figures are not drawn.")
	}
	if b.Inception != nil {
		return in.bxHistories()
	}
	return nil
}

func (in *figureInput) note(s string) { in.out.Notes = append(in.out.Notes, s) }

// addBreaking adds a figure of the section, named and titled by its number.
func (in *figureInput) addBreaking(slug, title, caption string, h vg.Length, fn func(draw.Canvas)) error {
	num := len(in.out.Figures) + 1
	return in.add(fmt.Sprintf("fig%d_%s", num, slug), fmt.Sprintf("Figure %d. %s", num, title), caption, "breaking", h, fn)
}

// lambdaAndCoverage draws Λ(c) and W(t).
func (in *figureInput) lambdaAndCoverage() error {
	b, ws := in.Breaking, in.Breaking.Whitecaps
	lo, hi := b.Lambda.Cols[0], b.Lambda.Cols[1]
	ref := stats.FitPhillipsReference(lo, hi, b.Lambda.Cols[2])
	in.out.Reference = ref
	fn, err := in.lambdaFigure(b.Lambda, ref)
	if err != nil {
		return fmt.Errorf("figure of Λ(c) cannot be drawn: %w", err)
	}
	if fn == nil {
		in.note("No breaking front with a speed fell in the speed bins, so Λ(c) is zero and its figure is not drawn.")
	} else {
		refText := fmt.Sprintf("The dashed line is the c⁻⁶ form Phillips (1985) derived for the equilibrium range, drawn for comparison: "+
			"only its amplitude is fitted (least squares on log Λ over the %d filled bins above the peak of Λ), its exponent is fixed, "+
			"so the line is not a fit of the exponent.", len(ref.Fitted))
		if math.IsNaN(ref.Amplitude) {
			refText = fmt.Sprintf("No c⁻⁶ reference line is drawn: fewer than %d bins above the peak of Λ hold fronts.", stats.MinReferenceBins)
		}
		if err := in.addBreaking("lambda", "Breaking-front length per unit area and speed, Λ(c)",
			fmt.Sprintf("Phillips's distribution Λ(c): total length of breaking fronts per unit sea-surface area per unit speed interval (m⁻² s), "+
				"against front speed c on log–log axes, averaged over the %d analysed frames in bins of %.3g m/s; empty bins are not drawn. %s "+
				"The dotted line marks the peak phase speed c_p. Fronts without a speed (%.3g m per frame) or outside the bins (%.3g m per frame) are not in Λ(c).",
				ws.FramesAnalysed, hi[0]-lo[0], refText, ws.LengthWithoutSpeed, ws.LengthOutOfRange),
			vg.Inch*4.6, fn); err != nil {
			return err
		}
	}
	if b.Coverage.Len() == 0 {
		in.note("No frame's foam mask was analysed, so there is no whitecap coverage W(t) to draw.")
		return nil
	}
	fn, k, err := in.coverageFigure(b.Coverage, ws.MeanCoverage)
	if err != nil {
		return fmt.Errorf("figure of the whitecap coverage cannot be drawn: %w", err)
	}
	skipped := 0
	for _, v := range ws.Skipped {
		skipped += v
	}
	thin := ""
	if k > 1 {
		thin = fmt.Sprintf(" The line joins the smallest and largest W of each run of %d frames, which keeps every peak.", k)
	}
	return in.addBreaking("coverage", "Whitecap coverage W(t)",
		fmt.Sprintf("Whitecap coverage W(t): the fraction of the known sea surface covered by foam in each analysed frame, in per cent, "+
			"with its mean over the %d analysed frames (dashed). Breaks in the line are frames whose foam mask was not used (%d skipped; reasons in the table above).%s",
			b.Coverage.Len(), skipped, thin), vg.Inch*3.6, fn)
}

// whitecapPDF draws the c_br/c_p PDFs by class of the parent crest.
func (in *figureInput) whitecapPDF() error {
	rd := in.Breaking.FrontRatio
	if rd.All.Stats.N == 0 {
		in.note("No whitecap row has a front speed, so the whitecap speed-ratio PDFs are not drawn.")
		return nil
	}
	lo, hi := displayRange(rd)
	fn, err := in.ratioPDF(rd, pdfStyle{
		xLabel: "whitecap front speed ratio c_br/c_p (dimensionless)", allNoun: "all whitecap rows", unitNoun: "whitecaps",
		refLabel: "c_br = c_p", classPrefix: "parent crest ", lo: lo, hi: hi,
	})
	if err != nil {
		return fmt.Errorf("figure of the whitecap speed ratios cannot be drawn: %w", err)
	}
	return in.addBreaking("whitecap_ratio_pdf", "Whitecap front speed relative to c_p, by steepness class of the parent crest",
		fmt.Sprintf("Probability density of the whitecap front speed c_br relative to the peak phase speed c_p, one curve per steepness class of the parent crest "+
			"(the crest the whitecap rides on, its S_c in that frame): Gaussian kernel density estimates with the Silverman bandwidth, as in figure 1. "+
			"Grey bars: normalised histogram of all whitecap rows (bin width by the %s rule); black dashes: kernel estimate of all rows, "+
			"including those without a parent crest. Each whitecap counts once per frame, so long-lived whitecaps weigh more. "+
			"A class of fewer than %d whitecaps has no curve: its values are drawn as rings near the axis and its median as a filled circle. "+
			"The dotted line marks c_br = c_p. Shown: the central 99 %% of the values.", rd.All.Hist.Rule, in.MinClassTracks),
		vg.Inch*4.2, fn)
}

// bxHistories draws B_x along the highest crests.
func (in *figureInput) bxHistories() error {
	b := in.Breaking
	fn, n, err := in.bxFigure(b.Inception.Threshold)
	if err != nil {
		return fmt.Errorf("figure of B_x cannot be drawn: %w", err)
	}
	if fn == nil {
		in.note(fmt.Sprintf("None of the %d tracks with the highest crests has a B_x (it needs a crest speed inside a complete FFT window), so their B_x histories are not drawn.", in.Highest))
		return nil
	}
	foam := "Filled circles mark the frames in which the crest carried foam."
	if b.Lambda == nil {
		foam = "The record had no foam mask, so no frame is marked as foam-carrying."
	}
	return in.addBreaking("bx_highest_crests", fmt.Sprintf("Breaking-inception index along the %d highest crests", n),
		fmt.Sprintf("Breaking-inception index B_x = u_s/c_cr along the tracks with the highest crests (those of figure 4, in the same colours), "+
			"against time from each track's highest crest. Dashed: the inception threshold B_x = %.3g; a crest that reaches it is flagged. %s "+
			"u_s is a linear estimate that underestimates the surface speed at steep crests (see the method below), so B_x is an estimate; "+
			"it is unknown where the crest speed or a complete FFT window is missing.", b.Inception.Threshold, foam),
		vg.Inch*4.2, fn)
}
