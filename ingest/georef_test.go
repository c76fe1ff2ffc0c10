package ingest

import (
	"math"
	"path/filepath"
	"testing"
)

// The grid's heading and origin written by the writer come back from the
// reader, with and without a position; the file then names its own
// georeference for the later stages.
func TestGeorefRoundTrip(t *testing.T) {
	for _, g := range []*Georef{
		{HeadingDeg: 245, LatDeg: math.NaN(), LonDeg: math.NaN()},
		{HeadingDeg: 12.5, LatDeg: 47.31, LonDeg: -35.82},
	} {
		path := filepath.Join(t.TempDir(), "g.nc")
		grid := Grid{X: []float64{0, 1, 2, 3}, Y: []float64{0, 1, 2}}
		w, err := CreateElevation(path, grid, WriteOptions{Georef: g, Platform: "test mast (invented)"})
		if err != nil {
			t.Fatal(err)
		}
		for k := 0; k < 3; k++ {
			eta := make([]float32, 12)
			eta[k] = 0.1
			if err := w.WriteFrame(float64(k)*0.1, eta, nil); err != nil {
				t.Fatal(err)
			}
		}
		if err := w.Commit(); err != nil {
			t.Fatal(err)
		}
		src, err := OpenElevation(path, ElevationOptions{})
		if err != nil {
			t.Fatal(err)
		}
		got := src.Meta().Georef
		src.Close()
		if got == nil || got.HeadingDeg != g.HeadingDeg || got.Placed() != g.Placed() ||
			(g.Placed() && (got.LatDeg != g.LatDeg || got.LonDeg != g.LonDeg)) {
			t.Errorf("wrote %+v, read %+v", g, got)
		}
	}
}
