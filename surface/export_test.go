package surface

import (
	"fmt"

	"gocv.io/x/gocv"

	"crestspeed/internal/cvshim"
)

// Stages of a Worker exposed to the benchmarks of package surface_test.

// Bin reprojects the worker's last disparity map and grids its world
// points into m.
func Bin(w *Worker, m *Map) error { return w.bin(m) }

// ApplyGeometry sets a settled geometry on a reconstructor.
func ApplyGeometry(r *Reconstructor, g *Geometry) error { return r.applyGeometry(g) }

// MatcherParams resolves the matcher parameters for a disparity range.
func MatcherParams(o Options, minD, numD int) cvshim.SGBMParams { return o.Matcher.params(minD, numD) }

// SetDisparityPx replaces the worker's disparity map (pixels, NaN where
// none) by d, row-major over the rig's image.
func SetDisparityPx(w *Worker, d []float32) error {
	sz := w.r.rig.Size
	if len(d) != sz.X*sz.Y {
		return fmt.Errorf("%d disparities for %d×%d px", len(d), sz.X, sz.Y)
	}
	if w.dispF.Rows() != sz.Y || w.dispF.Cols() != sz.X || w.dispF.Type() != gocv.MatTypeCV32FC1 {
		w.dispF.Close()
		w.dispF = gocv.NewMatWithSize(sz.Y, sz.X, gocv.MatTypeCV32FC1)
	}
	p, err := w.dispF.DataPtrFloat32()
	if err != nil {
		return err
	}
	copy(p, d)
	return nil
}

// StripWork is the matcher's work of a strip plan relative to one range
// over the whole image.
func StripWork(st []cvshim.Strip, cols, rows int) float64 { return stripWork(st, cols, rows) }
