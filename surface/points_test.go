package surface

import (
	"math"
	"math/rand/v2"
	"testing"

	"crestspeed/ingest"
)

// Points already level (z up from the water) are taken as given; points
// lifted by 5 m are moved down by exactly that; binning gives each cell
// the mean of its points (checked against the mean computed directly).
func TestPointGridFrameAndBinning(t *testing.T) {
	rng := rand.New(rand.NewPCG(3, 3))
	frame := func(lift float64) []ingest.Point {
		pts := make([]ingest.Point, 20000)
		for i := range pts {
			x, y := 40*rng.Float64(), 10*rng.Float64()
			pts[i] = ingest.Point{X: x, Y: y, Z: 0.2*math.Sin(0.7*x) + lift}
		}
		return pts
	}
	opt := DefaultPointGridOptions()
	level, err := SettlePointGrid([][]ingest.Point{frame(0), frame(0), frame(0)}, opt)
	if err != nil {
		t.Fatal(err)
	}
	if level.Moved {
		t.Errorf("level points were moved: %s", level.Note)
	}
	lifted, err := SettlePointGrid([][]ingest.Point{frame(5), frame(5), frame(5)}, opt)
	if err != nil {
		t.Fatal(err)
	}
	if !lifted.Moved || math.Abs(lifted.Plane.Plane.OffsetM+5) > 0.02 || lifted.tilt() > 0.1 {
		t.Fatalf("points 5 m up: moved %v, plane offset %.3f m, tilt %.3f°", lifted.Moved, lifted.Plane.Plane.OffsetM, lifted.tilt())
	}
	pts := frame(0)
	g := level.Grid
	n := g.Nx() * g.Ny()
	eta, counts, sum := make([]float32, n), make([]int32, n), make([]float64, n)
	st := level.Bin(pts, eta, counts, sum)
	if st.Gridded+st.OutOfGrid+st.Implausible != st.Points {
		t.Fatalf("points lost in the counts: %+v", st)
	}
	// direct mean of one cell
	c, d := n/2, g.Dx()
	cx, cy := g.X[c%g.Nx()], g.Y[c/g.Nx()]
	var s float64
	var k int32
	for _, p := range pts {
		if math.Abs(p.X-cx) < d/2 && math.Abs(p.Y-cy) < d/2 {
			s += p.Z
			k++
		}
	}
	if k != counts[c] || math.Abs(float64(eta[c])-s/float64(k)) > 1e-6 {
		t.Errorf("cell %d: %d points, mean %.6f; direct: %d points, mean %.6f", c, counts[c], eta[c], k, s/float64(k))
	}
}
