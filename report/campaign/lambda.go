package campaign

import (
	"fmt"
	"math"
	"path/filepath"

	"crestspeed/report/figures"
	"crestspeed/report/summary"
	"crestspeed/report/table"
	"crestspeed/speed"
)

// Jacobian states how Λ(c/c_p) is made from Λ(c).
const Jacobian = "with ĉ = c/c_p, Λ̂(ĉ) dĉ = Λ(c) dc, so Λ̂(ĉ) = c_p Λ(c_p ĉ), the breaking-front length per unit sea-surface area per unit interval of c/c_p (1/m); its integral over ĉ equals that of Λ over c, the front length per unit area."

// lambdaRatio computes Λ(c/c_p) of a deployment with whitecaps from its
// whitecap rows, by speed.Breaking (Phillips 1985) with the front speeds
// divided by the deployment's c_p: each row with a front speed and a
// front length is a front sample, on the known area of its frame
// (coverage.csv), averaged over the analysed frames — the same fronts,
// areas and frames as lambda.csv, whose speed bins therefore need not
// match the campaign's. It returns the samples too, for the pooled curve.
func lambdaRatio(d Deployment, opt Options) (*summary.LambdaNormalised, []speed.FrontSample, error) {
	w := d.Whitecaps
	cp := d.Summary.SeaState.PeakPhaseSpeed
	area := make(map[float64]float64, w.Coverage.Len())
	for i, fr := range w.Coverage.Cols[table.CoverageFrame] {
		area[fr] = w.Coverage.Cols[table.CoverageArea][i]
	}
	rows := w.Rows.Cols
	var fronts []speed.FrontSample
	for i, v := range rows[table.WhitecapFrontSpeed] {
		l := rows[table.WhitecapFrontLength][i]
		if math.IsNaN(v) || !(l > 0) {
			continue // as the tracking stage: no speed, or no front
		}
		a, ok := area[rows[table.WhitecapFrame][i]]
		if !ok || !(a > 0) {
			return nil, nil, &table.Error{File: filepath.Join(d.TracksDir, "whitecaps.csv"), Line: i + 2,
				Msg: fmt.Sprintf("has a front in frame %g, which coverage.csv does not list with a known area", rows[table.WhitecapFrame][i])}
		}
		fronts = append(fronts, speed.FrontSample{Speed: v / cp, Length: l, Area: a})
	}
	lam, err := lambdaOf(fronts, w.Coverage.Len(), opt)
	if err != nil {
		return nil, nil, fmt.Errorf("track folder %s: %w", d.TracksDir, err)
	}
	return lam, fronts, nil
}

// lambdaOf bins front samples of normalised speed over frames analysed
// frames into Λ(c/c_p).
func lambdaOf(fronts []speed.FrontSample, frames int, opt Options) (*summary.LambdaNormalised, error) {
	if frames == 0 {
		return &summary.LambdaNormalised{Jacobian: Jacobian, BinWidth: opt.LambdaBinWidth, Bins: []summary.LambdaRatioBin{}}, nil
	}
	st, err := speed.Breaking(fronts, frames, opt.LambdaBinWidth, opt.LambdaMaxRatio, 0, speed.DefaultWaterDensity)
	if err != nil {
		return nil, err
	}
	out := &summary.LambdaNormalised{Jacobian: Jacobian, BinWidth: opt.LambdaBinWidth, Frames: frames,
		Integral: st.MeanFrontLengthPerArea, OutOfRange: st.LengthOutOfRange}
	for _, b := range st.Bins {
		out.Bins = append(out.Bins, summary.LambdaRatioBin{Lo: b.CLow, Hi: b.CHigh, Lambda: b.Lambda, Fronts: b.Fronts})
	}
	return out, nil
}

// curveOf is the figure's curve of Λ(c/c_p).
func curveOf(label string, l *summary.LambdaNormalised) figures.LambdaCurve {
	c := figures.LambdaCurve{Label: label}
	for _, b := range l.Bins {
		c.Lo, c.Hi, c.Lambda = append(c.Lo, b.Lo), append(c.Hi, b.Hi), append(c.Lambda, b.Lambda)
	}
	return c
}
