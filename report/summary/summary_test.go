package summary

import (
	"math"
	"testing"
)

// True bearings from a grid direction: with the grid's +x axis pointing
// east (heading 90°) and +y north, a wave travelling along +y goes toward
// true north (0°) and comes from the south (180°); travelling along −x it
// goes toward the west (270°) from the east (90°). Angles counter-clockwise
// from +x turn against the clockwise bearings (plane geometry).
func TestTrueBearings(t *testing.T) {
	cases := []struct{ grid, heading, to, from float64 }{
		{90, 90, 0, 180},
		{180, 90, 270, 90},
		{0, 245, 245, 65},
		{-30, 10, 40, 220},
		{20, 200, 180, 0},
		{370, 0, 350, 170},
	}
	for _, c := range cases {
		to, from := TrueBearings(c.grid, c.heading)
		if math.Abs(to-c.to) > 1e-9 || math.Abs(from-c.from) > 1e-9 {
			t.Errorf("grid %g°, heading %g°: toward %g°, from %g°; want %g°, %g°", c.grid, c.heading, to, from, c.to, c.from)
		}
		if to < 0 || to >= 360 || from < 0 || from >= 360 {
			t.Errorf("bearings %g, %g outside [0, 360)", to, from)
		}
	}
}
