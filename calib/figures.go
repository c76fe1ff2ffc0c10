package calib

import (
	"bytes"
	"encoding/binary"
	"fmt"
	"image"
	"image/color"
	"math"

	"gocv.io/x/gocv"
	"gonum.org/v1/plot"
	"gonum.org/v1/plot/plotter"
	"gonum.org/v1/plot/vg"
	"gonum.org/v1/plot/vg/draw"
	"gonum.org/v1/plot/vg/vgimg"
)

// residualScale magnifies residual vectors in the worst-view picture.
const residualScale = 20

// WriteWorstViewPNG draws the worst view (see [Result.WorstView]) as a
// PNG: left and right images side by side with the detected corners (in
// OpenCV's row colours) and each corner's reprojection residual as a red
// line magnified 20 times. The file is written atomically.
func (r *Result) WriteWorstViewPNG(path string) error {
	p := r.Pattern
	v := r.WorstView()
	if v == nil {
		return fmt.Errorf("calibration has no view to draw")
	}
	var halves [2]gocv.Mat
	for side, in := range []struct {
		path    string
		corners [][2]float32
		res     [][2]float64
	}{{v.Pair.Left, v.Left, v.ResidualsLeft}, {v.Pair.Right, v.Right, v.ResidualsRight}} {
		img := gocv.IMRead(in.path, gocv.IMReadColor)
		if img.Empty() {
			img.Close()
			if side == 1 {
				halves[0].Close()
			}
			return fmt.Errorf("image %s cannot be read again to draw the worst view", in.path)
		}
		if err := drawCorners(&img, p, in.corners, in.res); err != nil {
			img.Close()
			if side == 1 {
				halves[0].Close()
			}
			return err
		}
		halves[side] = img
	}
	both := gocv.NewMat()
	defer both.Close()
	gocv.Hconcat(halves[0], halves[1], &both)
	rmsText := fmt.Sprintf("view %s (%s): RMS left %.3f px, right %.3f px; red = residual x%d", v.Name, v.Status, v.RMSLeftPx, v.RMSRightPx, residualScale)
	scale := math.Max(0.5, float64(both.Rows())/1000)
	org := image.Pt(10, int(30*scale))
	gocv.PutText(&both, rmsText, org, gocv.FontHersheySimplex, scale, color.RGBA{0, 0, 0, 255}, int(4*scale))
	gocv.PutText(&both, rmsText, org, gocv.FontHersheySimplex, scale, color.RGBA{255, 255, 0, 255}, max(1, int(1.5*scale)))
	halves[0].Close()
	halves[1].Close()
	buf, err := gocv.IMEncode(gocv.PNGFileExt, both)
	if err != nil {
		return fmt.Errorf("worst-view picture cannot be encoded: %v", err)
	}
	defer buf.Close()
	return writeFileAtomic(path, buf.GetBytes())
}

func drawCorners(img *gocv.Mat, p Pattern, corners [][2]float32, res [][2]float64) error {
	data := make([]byte, 8*len(corners))
	for i, c := range corners {
		binary.NativeEndian.PutUint32(data[8*i:], math.Float32bits(c[0]))
		binary.NativeEndian.PutUint32(data[8*i+4:], math.Float32bits(c[1]))
	}
	m, err := gocv.NewMatFromBytes(len(corners), 1, gocv.MatTypeCV32FC2, data)
	if err != nil {
		return fmt.Errorf("corners cannot be drawn: %v", err)
	}
	defer m.Close()
	gocv.DrawChessboardCorners(img, image.Pt(p.Cols, p.Rows), m, true)
	for i, c := range corners {
		if i >= len(res) {
			break
		}
		a := image.Pt(int(math.Round(float64(c[0]))), int(math.Round(float64(c[1]))))
		b := image.Pt(int(math.Round(float64(c[0])+residualScale*res[i][0])), int(math.Round(float64(c[1])+residualScale*res[i][1])))
		gocv.Line(img, a, b, color.RGBA{255, 0, 0, 255}, 2)
	}
	return nil
}

// WriteResidualPlot draws a PNG of two panels: the reprojection residuals
// of every corner of the views used (left camera blue, right red), and the
// RMS error of every view in each camera with dropped views marked and the
// drop threshold drawn. The file is written atomically.
func (r *Result) WriteResidualPlot(path string) error {
	p1, err := r.residualPanel()
	if err != nil {
		return err
	}
	p2, err := r.viewRMSPanel()
	if err != nil {
		return err
	}
	const w, h = 12 * vg.Inch, 5 * vg.Inch
	img := vgimg.New(w, h)
	dc := draw.New(img)
	tiles := draw.Tiles{Rows: 1, Cols: 2, PadX: vg.Inch / 2, PadTop: vg.Inch / 8, PadBottom: vg.Inch / 8, PadLeft: vg.Inch / 8, PadRight: vg.Inch / 8}
	plots := [][]*plot.Plot{{p1, p2}}
	canvases := plot.Align(plots, tiles, dc)
	p1.Draw(canvases[0][0])
	p2.Draw(canvases[0][1])
	var buf bytes.Buffer
	if _, err := (vgimg.PngCanvas{Canvas: img}).WriteTo(&buf); err != nil {
		return fmt.Errorf("residual plot cannot be encoded: %v", err)
	}
	return writeFileAtomic(path, buf.Bytes())
}

// Colours of the left and right cameras in the calibration figures.
var (
	plotBlue = color.RGBA{31, 119, 180, 255}
	plotRed  = color.RGBA{214, 39, 40, 255}
)

// residualPanel draws the scatter of every used corner's reprojection
// residual, left camera blue and right red, on square axes.
func (r *Result) residualPanel() (*plot.Plot, error) {
	var resL, resR plotter.XYs
	for _, v := range r.Views {
		if v.Status != ViewUsed {
			continue
		}
		for _, d := range v.ResidualsLeft {
			resL = append(resL, plotter.XY{X: d[0], Y: d[1]})
		}
		for _, d := range v.ResidualsRight {
			resR = append(resR, plotter.XY{X: d[0], Y: d[1]})
		}
	}
	if len(resL) == 0 {
		return nil, fmt.Errorf("calibration has no residuals to plot")
	}
	p1 := plot.New()
	p1.Title.Text = "Reprojection residuals, views used"
	p1.X.Label.Text = "projected − detected, x (px)"
	p1.Y.Label.Text = "projected − detected, y (px)"
	lim := 0.0
	for _, xy := range append(append(plotter.XYs(nil), resL...), resR...) {
		lim = math.Max(lim, math.Max(math.Abs(xy.X), math.Abs(xy.Y)))
	}
	lim *= 1.05
	p1.X.Min, p1.X.Max, p1.Y.Min, p1.Y.Max = -lim, lim, -lim, lim
	for _, s := range []struct {
		name string
		xy   plotter.XYs
		c    color.Color
	}{{"left camera", resL, plotBlue}, {"right camera", resR, plotRed}} {
		sc, err := plotter.NewScatter(s.xy)
		if err != nil {
			return nil, fmt.Errorf("residual plot cannot be drawn: %v", err)
		}
		sc.GlyphStyle.Color = s.c
		sc.GlyphStyle.Radius = vg.Points(1.5)
		sc.GlyphStyle.Shape = draw.CircleGlyph{}
		p1.Add(sc)
		p1.Legend.Add(s.name, sc)
	}
	p1.Add(plotter.NewGrid())
	return p1, nil
}

// viewRMSPanel draws each view's RMS reprojection error per camera, with
// dropped views marked and the drop threshold drawn when one was used.
func (r *Result) viewRMSPanel() (*plot.Plot, error) {
	p2 := plot.New()
	p2.Title.Text = "RMS reprojection error per view"
	p2.X.Label.Text = "view"
	p2.Y.Label.Text = "RMS error (px)"
	var ticks []plot.Tick
	var usedL, usedR, usedB, dropL, dropR, dropB plotter.XYs
	var errsUsed []float64
	for i, v := range r.Views {
		if v.Status == ViewSkipped {
			continue
		}
		x := float64(i + 1)
		ticks = append(ticks, plot.Tick{Value: x, Label: v.Name})
		if v.Status == ViewUsed {
			usedL = append(usedL, plotter.XY{X: x, Y: v.RMSLeftPx})
			usedR = append(usedR, plotter.XY{X: x, Y: v.RMSRightPx})
			usedB = append(usedB, plotter.XY{X: x, Y: v.rms()})
			errsUsed = append(errsUsed, v.rms())
		} else {
			dropL = append(dropL, plotter.XY{X: x, Y: v.RMSLeftPx})
			dropR = append(dropR, plotter.XY{X: x, Y: v.RMSRightPx})
			dropB = append(dropB, plotter.XY{X: x, Y: v.rms()})
		}
	}
	p2.X.Tick.Marker = plot.ConstantTicks(ticks)
	p2.Y.Min = 0
	for _, s := range []struct {
		name  string
		xy    plotter.XYs
		c     color.Color
		shape draw.GlyphDrawer
	}{
		{"left, used", usedL, plotBlue, draw.CircleGlyph{}},
		{"right, used", usedR, plotRed, draw.CircleGlyph{}},
		{"left, dropped", dropL, plotBlue, draw.CrossGlyph{}},
		{"right, dropped", dropR, plotRed, draw.CrossGlyph{}},
		{"both cameras, used", usedB, color.Black, draw.RingGlyph{}},
		{"both cameras, dropped", dropB, color.Black, draw.CrossGlyph{}},
	} {
		if len(s.xy) == 0 {
			continue
		}
		sc, err := plotter.NewScatter(s.xy)
		if err != nil {
			return nil, fmt.Errorf("residual plot cannot be drawn: %v", err)
		}
		sc.GlyphStyle.Color = s.c
		sc.GlyphStyle.Radius = vg.Points(3)
		sc.GlyphStyle.Shape = s.shape
		p2.Add(sc)
		p2.Legend.Add(s.name, sc)
	}
	if q := r.Rig.Quality; q != nil && q.DropFactor > 0 && len(errsUsed) > 0 {
		th := q.DropFactor * median(errsUsed)
		first, last := ticks[0].Value, ticks[len(ticks)-1].Value
		ln, err := plotter.NewLine(plotter.XYs{{X: first, Y: th}, {X: last, Y: th}})
		if err != nil {
			return nil, fmt.Errorf("residual plot cannot be drawn: %v", err)
		}
		ln.Dashes = []vg.Length{vg.Points(4), vg.Points(3)}
		p2.Add(ln)
		p2.Legend.Add(fmt.Sprintf("drop threshold, %g × median of both cameras", q.DropFactor), ln)
	}
	p2.Add(plotter.NewGrid())
	return p2, nil
}
