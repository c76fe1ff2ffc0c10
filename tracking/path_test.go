package tracking

import (
	"math"
	"sort"
	"testing"
)

// A regular wave travelling at 30° seen along lines at 29° (a 1° error in
// θ0): on a fixed line across the crest the crest moves at c/cos(1°)
// (geometry of an oblique line crossing). The path advance per frame must
// match that within 1 %, even though the tip of the long, flat crest
// jumps along it from frame to frame.
func TestPathAdvanceMisalignedDirection(t *testing.T) {
	g := Geometry{Nx: 128, Ny: 96, Dx: 1, Dy: 1, Theta: 29 * math.Pi / 180}
	lambda := 53.0
	k := 2 * math.Pi / lambda
	c := 8.84
	d := NewDetector(g, DetectOptions{MinElevation: 0.1, MinLength: 5})
	sc := d.NewScratch()
	l := NewLinker(LinkOptions{MaxGapFrames: 2, GateS: 0.2 * lambda, GateN: lambda, Speed: func(Crest) float64 { return c }})
	truth := g
	truth.Theta = 30 * math.Pi / 180
	dt := 0.1
	for f := 0; f < 60; f++ {
		tt := float64(f) * dt
		l.Push(f, tt, d.Detect(sinusoidFrame(truth, 0.5, k, c*k, tt), nil, f, tt, sc))
	}
	tracks, _ := l.Finish()
	want := c / math.Cos(math.Pi/180)
	// Each step is measured at the tip's cross-position (AdvanceAtTip), so
	// a single step carries the sub-sample error of a few crest points on
	// a 1 m grid (a few per cent of a 0.9 m advance); over a track those
	// errors do not accumulate. The speed over each track (path over time)
	// must match within 1 %, and the median step too.
	checked := 0
	var steps []float64
	for _, tr := range tracks {
		var first, last Crest
		n := 0
		for i := 1; i < len(tr.Crests); i++ {
			a, b := tr.Crests[i-1], tr.Crests[i]
			if b.Length < 20 {
				continue // crests entering at a corner have few common lines
			}
			if n == 0 {
				first = a
			}
			last = b
			n++
			steps = append(steps, (b.Path-a.Path)/(b.Time-a.Time))
			checked++
		}
		if n >= 10 {
			if v := (last.Path - first.Path) / (last.Time - first.Time); math.Abs(v-want) > 0.01*want {
				t.Errorf("track %d: speed over %d steps %.3f m/s, want %.3f", tr.ID, n, v, want)
			}
		}
	}
	sort.Float64s(steps)
	if m := steps[len(steps)/2]; math.Abs(m-want) > 0.01*want {
		t.Errorf("median step %.3f m/s, want %.3f", m, want)
	}
	if checked < 50 {
		t.Fatalf("only %d steps checked", checked)
	}
}
