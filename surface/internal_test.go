package surface

import (
	"bytes"
	"encoding/json"
	"image"
	"math"
	"math/rand/v2"
	"os"
	"os/exec"
	"path/filepath"
	"slices"
	"testing"

	"crestspeed/calib"
	"crestspeed/internal/cvshim"
)

// testRig is a 640×512 two-camera rig 2.5 m apart, slightly toed in and
// with lens distortion, posed 13.5 m above the sea looking 30° down.
func testRig() *calib.Rig {
	c := math.Cos(3 * math.Pi / 180)
	s := math.Sin(3 * math.Pi / 180)
	// Right camera turned 3° toward the left one (about y), 2.5 m to the
	// right of it.
	R := [9]float64{c, 0, -s, 0, 1, 0, s, 0, c}
	centre := [3]float64{2.5, 0.01, 0.05}
	var T [3]float64
	for i := 0; i < 3; i++ {
		T[i] = -(R[3*i]*centre[0] + R[3*i+1]*centre[1] + R[3*i+2]*centre[2])
	}
	plane := calib.PlaneFromPose(13.5, 30, 0.5)
	return &calib.Rig{
		Size:  image.Pt(640, 512),
		Left:  calib.Camera{Fx: 700, Fy: 700.5, Cx: 320.3, Cy: 255.1, K1: -0.1, K2: 0.05},
		Right: calib.Camera{Fx: 698, Fy: 698.4, Cx: 318.9, Cy: 256.4, K1: -0.09, K2: 0.04},
		R:     R, T: T, SeaPlane: &plane,
	}
}

// pyRun runs a script with Debian's /usr/bin/python3 (numpy), giving it
// the JSON of in as sys.argv[1] and decoding its output into out.
func pyRun(t *testing.T, script string, in, out any) {
	t.Helper()
	dir := t.TempDir()
	data, err := json.Marshal(in)
	if err != nil {
		t.Fatal(err)
	}
	p := filepath.Join(dir, "in.json")
	if err := os.WriteFile(p, data, 0o644); err != nil {
		t.Fatal(err)
	}
	var stdout, stderr bytes.Buffer
	cmd := exec.Command("/usr/bin/python3", "-c", script, p)
	cmd.Stdout, cmd.Stderr = &stdout, &stderr
	if err := cmd.Run(); err != nil {
		t.Fatalf("/usr/bin/python3 with numpy is needed for this check (scripts/setup-deps installs it): %v\n%s", err, stderr.String())
	}
	if err := json.Unmarshal(stdout.Bytes(), out); err != nil {
		t.Fatalf("python output cannot be read: %v\n%s", err, stdout.String())
	}
}

// TestFitPlane: a plane recovered from noisy points with a third of gross
// outliers, and its least-squares step against numpy's SVD on the same
// inliers (reference: numpy.linalg.svd, the total-least-squares plane
// being the right singular vector of the smallest singular value of the
// centred points).
func TestFitPlane(t *testing.T) {
	truth := calib.PlaneFromPose(12, 25, 1.5)
	w, err := truth.World()
	if err != nil {
		t.Fatal(err)
	}
	rng := rand.New(rand.NewPCG(3, 4))
	var pts [][3]float32
	const sigma = 0.2
	for i := 0; i < 30000; i++ {
		x, y := 10+60*rng.Float64(), -20+40*rng.Float64()
		z := sigma * rng.NormFloat64()
		if i%3 == 0 {
			z = -30 + 60*rng.Float64() // gross mismatch
		}
		X := w.ToCamera([3]float64{x, y, z})
		pts = append(pts, [3]float32{float32(X[0]), float32(X[1]), float32(X[2])})
	}
	fit, err := FitPlane(pts, 300, 1, 1)
	if err != nil {
		t.Fatal(err)
	}
	dot := 0.0
	for i := 0; i < 3; i++ {
		dot += fit.Plane.Normal[i] * truth.Normal[i]
	}
	ang := math.Acos(math.Min(1, dot)) * 180 / math.Pi
	t.Logf("fitted normal %v offset %.4f (truth %v, %.4f): %.4f°; %d of %d inliers, RMS %.3f m",
		fit.Plane.Normal, fit.Plane.OffsetM, truth.Normal, truth.OffsetM, ang, fit.Inliers, fit.Points, fit.RMSM)
	// Standard errors of a least-squares plane through N = 20000 points of
	// σ = 0.2 m spread uniformly over 60 m × 40 m (common practice:
	// regression standard errors): slopes σ/(√N·L/√12) ≈ 8e-5 and 1.2e-4
	// rad, about 0.008° together; height at the centroid σ/√N ≈ 1.4 mm,
	// and at the camera's foot, 40 m away, about 6 mm. Bounds at five
	// standard errors.
	if ang > 0.05 || math.Abs(fit.Plane.OffsetM-truth.OffsetM) > 0.03 {
		t.Errorf("plane off by %.4f° and %.4f m", ang, fit.Plane.OffsetM-truth.OffsetM)
	}
	if fit.Plane.OffsetM < 0 {
		t.Error("plane normal does not point toward the camera")
	}
	// The final least-squares plane against numpy on its own inliers.
	var in [][3]float64
	for _, p := range pts {
		X := [3]float64{float64(p[0]), float64(p[1]), float64(p[2])}
		if math.Abs(fit.Plane.Height(X)) <= 1 {
			in = append(in, X)
		}
	}
	var ref struct {
		Normal [3]float64 `json:"normal"`
		Offset float64    `json:"offset"`
	}
	pyRun(t, `
import json, sys
import numpy as np
p = np.array(json.load(open(sys.argv[1]))['points'])
c = p.mean(axis=0)
_, _, vt = np.linalg.svd(p - c, full_matrices=False)
n = vt[-1]
off = -n @ c
if off < 0:
    n, off = -n, -off
print(json.dumps(dict(normal=n.tolist(), offset=float(off))))
`, map[string]any{"points": in}, &ref)
	for i := 0; i < 3; i++ {
		if math.Abs(ref.Normal[i]-fit.Plane.Normal[i]) > 1e-7 {
			t.Errorf("normal %v differs from numpy's %v", fit.Plane.Normal, ref.Normal)
			break
		}
	}
	if math.Abs(ref.Offset-fit.Plane.OffsetM) > 1e-5 {
		t.Errorf("offset %.7f differs from numpy's %.7f", fit.Plane.OffsetM, ref.Offset)
	}
	if _, err := FitPlane(pts[:2], 10, 1, 1); err == nil {
		t.Error("FitPlane accepted two points")
	}
}

// TestLargestRectangle against exhaustive search (the definition) on random
// masks.
func TestLargestRectangle(t *testing.T) {
	rng := rand.New(rand.NewPCG(5, 6))
	for trial := 0; trial < 200; trial++ {
		nx, ny := 1+rng.IntN(9), 1+rng.IntN(9)
		mask := make([]bool, nx*ny)
		for i := range mask {
			mask[i] = rng.Float64() < 0.75
		}
		best := 0
		for j0 := 0; j0 < ny; j0++ {
			for j1 := j0 + 1; j1 <= ny; j1++ {
				for i0 := 0; i0 < nx; i0++ {
					for i1 := i0 + 1; i1 <= nx; i1++ {
						full := true
						for j := j0; j < j1 && full; j++ {
							for i := i0; i < i1; i++ {
								if !mask[j*nx+i] {
									full = false
									break
								}
							}
						}
						if full {
							best = max(best, (j1-j0)*(i1-i0))
						}
					}
				}
			}
		}
		i0, i1, j0, j1 := largestRectangle(mask, nx, ny)
		got := (i1 - i0) * (j1 - j0)
		if best == 0 {
			got = 0
		}
		if got != best {
			t.Fatalf("trial %d: area %d, exhaustive search %d", trial, got, best)
		}
		for j := j0; j < j1; j++ {
			for i := i0; i < i1; i++ {
				if !mask[j*nx+i] {
					t.Fatalf("trial %d: rectangle [%d,%d)×[%d,%d) holds an uncovered cell", trial, i0, i1, j0, j1)
				}
			}
		}
	}
}

// TestNiceSpacing: rounding up to two significant digits (the definition).
func TestNiceSpacing(t *testing.T) {
	for _, c := range []struct{ in, want float64 }{
		{0.627, 0.63}, {0.63, 0.63}, {1, 1}, {1.001, 1.1}, {12.01, 13}, {0.0999, 0.1}, {0.1101, 0.12},
	} {
		if got := niceSpacing(c.in); math.Abs(got-c.want) > 1e-12 {
			t.Errorf("niceSpacing(%g) = %g, want %g", c.in, got, c.want)
		}
	}
}

// TestPlaneDisparityAndPrewarpGeometry checks the prewarp algebra against
// the camera model: points of the sea plane projected into both cameras
// (calib's Brown–Conrady projection) and rectified (calib.Rectification)
// have the disparity PlaneDisparity gives; and a residual disparity of zero
// reprojects (through the prewarped Q) onto the plane at the pixel's own
// ray.
func TestPlaneDisparityAndPrewarpGeometry(t *testing.T) {
	rig := testRig()
	r, err := New(rig, DefaultOptions())
	if err != nil {
		t.Fatal(err)
	}
	defer r.Close()
	if !r.Prewarped() {
		t.Fatal("the default options with a sea plane should prewarp")
	}
	rc := r.Rectification()
	w := r.World()
	worst, worstQ := 0.0, 0.0
	for _, xy := range [][2]float64{{15, 0}, {25, -5}, {40, 8}, {60, -15}, {30, 12}} {
		X := w.ToCamera([3]float64{xy[0], xy[1], 0})
		pl, okl := rc.RectifyLeft(rig.ProjectLeft(X))
		pr, okr := rc.RectifyRight(rig.ProjectRight(X))
		if !okl || !okr {
			t.Fatalf("point %v cannot be rectified", xy)
		}
		d := pl[0] - pr[0]
		dp := r.PlaneDisparity(pl[0], pl[1])
		worst = math.Max(worst, math.Abs(d-dp))
		// Zero residual disparity through qWorld: the point of the plane.
		q := &r.qWorld
		v := [4]float64{pl[0], pl[1], 0, 1}
		var h [4]float64
		for i := 0; i < 4; i++ {
			for k := 0; k < 4; k++ {
				h[i] += q[4*i+k] * v[k]
			}
		}
		for i := 0; i < 3; i++ {
			h[i] /= h[3]
		}
		worstQ = math.Max(worstQ, math.Hypot(math.Hypot(h[0]-xy[0], h[1]-xy[1]), h[2]))
	}
	t.Logf("plane disparity: largest difference %.2e px; zero residual reprojects within %.2e m", worst, worstQ)
	// Rectification is exact up to the iterative undistortion (≈1e-6 px).
	if worst > 1e-3 {
		t.Errorf("PlaneDisparity differs from the projected disparity by %g px", worst)
	}
	if worstQ > 1e-3 {
		t.Errorf("zero residual disparity reprojects %g m from the plane point", worstQ)
	}
	minD, numD := r.DisparityRange()
	if !(minD < 0 && minD+numD > 0 && numD%16 == 0) {
		t.Errorf("residual disparity range %d + %d does not straddle zero", minD, numD)
	}
}

// TestOptionsValidate: each bad setting is one error naming it.
func TestOptionsValidate(t *testing.T) {
	if err := DefaultOptions().Validate(); err != nil {
		t.Fatalf("defaults: %v", err)
	}
	x := 1.0
	for name, mod := range map[string]func(*Options){
		"block":     func(o *Options) { o.Matcher.BlockSize = 4 },
		"num":       func(o *Options) { o.Matcher.NumDisparities = 20 },
		"mode":      func(o *Options) { o.Matcher.Mode = "fast" },
		"points":    func(o *Options) { o.MinPoints = 0 },
		"partial":   func(o *Options) { o.Grid.X0 = &x },
		"coverage":  func(o *Options) { o.Grid.Coverage = 0 },
		"threshold": func(o *Options) { o.Plane.ThresholdM = 0 },
		"alpha":     func(o *Options) { o.RectifyAlpha = 2 },
	} {
		o := DefaultOptions()
		mod(&o)
		if err := o.Validate(); err == nil {
			t.Errorf("%s: accepted", name)
		}
	}
}

// TestSeaSigma: σ_η of points whose heights about a known plane are
// normal with σ = 0.2 m (plus a stereo error growing with the square of
// the range, as the depth-error law σ_Z ∝ Z² has it, and 10 % gross
// mismatches spread over ±8 m) is recovered. Reference: the normal
// distribution. Of the mismatches about 0.75 % fall within the 3σ clip
// (uniform over ±0.6 m, variance 0.12 m²) and add about 1.3 % to the
// estimate, the stereo error (mean square about 0.0006 m², in quadrature)
// about 0.8 %, and the estimate's standard error over N = 90000 points,
// σ/√(2N), is 0.2 %: bound 5 %.
func TestSeaSigma(t *testing.T) {
	truth := calib.PlaneFromPose(12, 30, 0.5)
	w, err := truth.World()
	if err != nil {
		t.Fatal(err)
	}
	rng := rand.New(rand.NewPCG(7, 8))
	const sigma = 0.2
	var pts [][3]float32
	for i := 0; i < 100000; i++ {
		x, y := 10+50*rng.Float64(), -20+40*rng.Float64()
		R := math.Hypot(x, y)
		z := sigma*rng.NormFloat64() + 0.05*(R/60)*(R/60)*rng.NormFloat64()
		if i%10 == 0 {
			z = -8 + 16*rng.Float64()
		}
		X := w.ToCamera([3]float64{x, y, z})
		pts = append(pts, [3]float32{float32(X[0]), float32(X[1]), float32(X[2])})
	}
	got, n := SeaSigma(pts, truth, 10)
	t.Logf("σ_η %.4f m from %d points (truth %.2f m)", got, n, sigma)
	// Used: the points less the mismatches outside the clip (about 9.2 %).
	if math.Abs(got/sigma-1) > 0.05 || n < 89000 || n > 93000 {
		t.Errorf("σ_η %.4f m from %d points; want %.2f m within 5 %% from about 90800", got, n, sigma)
	}
	if s, n := SeaSigma(pts[:50], truth, 10); s != 0 || n != 0 {
		t.Errorf("50 points gave σ_η %g from %d", s, n)
	}
}

// TestStripsCoverTheSeaBand checks the strip plan against the camera
// model: points of the water ±h about the mean plane, projected into both
// cameras (calib's Brown–Conrady projection) and rectified, have residual
// disparities (their disparity minus the plane's, over 1 − a) inside the
// used range of the strip that keeps their row, right of the columns it
// leaves unmatched; the plan does less work
// than one range over the whole image; and one strip with Band.Strips off.
func TestStripsCoverTheSeaBand(t *testing.T) {
	rig := testRig()
	r, err := New(rig, DefaultOptions())
	if err != nil {
		t.Fatal(err)
	}
	defer r.Close()
	const h = 0.9
	if err := r.setBand(h, nil); err != nil {
		t.Fatal(err)
	}
	st := r.Strips()
	rc := r.Rectification()
	w := r.World()
	worst := math.Inf(1)
	checked := 0
	for x := 8.0; x <= 80; x += 0.5 {
		for y := -40.0; y <= 40; y += 0.5 {
			for _, z := range []float64{-h, 0, h} {
				X := w.ToCamera([3]float64{x, y, z})
				pl, okl := rc.RectifyLeft(rig.ProjectLeft(X))
				pr, okr := rc.RectifyRight(rig.ProjectRight(X))
				if !okl || !okr || pl[0] < 0 || pl[1] < 0 || pl[0] > float64(rig.Size.X-1) || pl[1] > float64(rig.Size.Y-1) || pr[0] < 0 || pr[0] > float64(rig.Size.X-1) {
					continue
				}
				e := (pl[0] - pr[0] - r.PlaneDisparity(pl[0], pl[1])) / (1 - r.pa)
				row := int(math.Round(pl[1]))
				k := slices.IndexFunc(st, func(s cvshim.Strip) bool { return row >= s.Row0 && row < s.Row1 })
				if k < 0 {
					t.Fatalf("row %d (point %v) is in no strip %v", row, [3]float64{x, y, z}, st)
				}
				s := st[k]
				// The matcher leaves the first max(0, min + num) columns of
				// a strip without a disparity.
				if first := s.Col0 + max(0, s.MinDisparity+s.NumDisparities); pl[0] < float64(first) {
					t.Fatalf("point %v at column %.1f lies left of strip %v's first matched column %d", [3]float64{x, y, z}, pl[0], s, first)
				}
				lo, hi := float64(s.MinDisparity+1), float64(s.MinDisparity+s.NumDisparities-1)
				worst = math.Min(worst, math.Min(e-lo, hi-e))
				checked++
			}
		}
	}
	t.Logf("%d strips %v; %d points checked, closest to a range end %.2f px; work %.2f of one range", len(st), st, checked, worst, stripWork(st, rig.Size.X, rig.Size.Y))
	if worst < 0.5 || checked < 1000 {
		t.Errorf("a sea point lies %.2f px from its strip's range end (want ≥ 0.5 px for the matcher's noise)", worst)
	}
	if len(st) < 2 || stripWork(st, rig.Size.X, rig.Size.Y) >= 0.9 {
		t.Errorf("the plan of %d strips does %.2f of the work of one range", len(st), stripWork(st, rig.Size.X, rig.Size.Y))
	}
	opt := DefaultOptions()
	opt.Band.Strips = false
	r1, err := New(rig, opt)
	if err != nil {
		t.Fatal(err)
	}
	defer r1.Close()
	if err := r1.setBand(h, nil); err != nil {
		t.Fatal(err)
	}
	one := r1.Strips()
	minD, numD := unionRange(st)
	if len(one) != 1 || one[0].Row0 != 0 || one[0].Row1 != rig.Size.Y || one[0].MinDisparity > minD || one[0].MinDisparity+one[0].NumDisparities < minD+numD {
		t.Errorf("strips off: %v, want one strip over the image covering %d+%d", one, minD, numD)
	}
}

// TestMedianTest: the normalised median test (Westerweel & Scarano 2005,
// Exp. Fluids 39) on a tilted plane of elevations with noise flags the
// spikes put in it and nothing else; and one cell against the formula
// worked by hand.
func TestMedianTest(t *testing.T) {
	const nx, ny = 40, 30
	rng := rand.New(rand.NewPCG(9, 10))
	eta := make([]float32, nx*ny)
	for j := 0; j < ny; j++ {
		for i := 0; i < nx; i++ {
			eta[j*nx+i] = float32(0.05*float64(i) - 0.03*float64(j) + 0.005*rng.NormFloat64())
		}
	}
	spikes := map[int]bool{5*nx + 7: true, 20*nx + 30: true, 21*nx + 30: true, 0: true}
	for c := range spikes {
		eta[c] += 0.8
	}
	eta[10*nx+10] = float32(math.NaN())
	flags := make([]bool, len(eta))
	n := medianTest(eta, nx, ny, 2, 0.02, flags)
	for c, f := range flags {
		if f != spikes[c] {
			t.Errorf("cell (%d, %d): flagged %v, spike %v", c%nx, c/nx, f, spikes[c])
		}
	}
	if n != len(spikes) {
		t.Errorf("%d cells flagged, %d spikes", n, len(spikes))
	}
	// By hand: neighbours 1..8 (median 4.5, deviations 3.5 2.5 1.5 0.5
	// 0.5 1.5 2.5 3.5, median 2), centre 11: |11 − 4.5| / (2 + 0.25) =
	// 2.89, above 2.5 but not 3.
	h := []float32{1, 2, 3, 4, 11, 5, 6, 7, 8}
	f := make([]bool, 9)
	for _, c := range []struct {
		ratio float64
		want  bool
	}{{2.5, true}, {3, false}} {
		medianTest(h, 3, 3, c.ratio, 0.25, f)
		if f[4] != c.want {
			t.Errorf("ratio %g: centre flagged %v, want %v", c.ratio, f[4], c.want)
		}
	}
}

// TestLargestComponent against a flood fill by hand on a small mask.
func TestLargestComponent(t *testing.T) {
	const nx, ny = 6, 5
	rows := []string{
		"11.0..",
		"1..0.1",
		"1.00.1",
		"..0..1",
		"000.11",
	}
	mask := make([]bool, nx*ny)
	for j, r := range rows {
		for i, ch := range r {
			mask[j*nx+i] = ch != '.'
		}
	}
	keep, i0, i1, j0, j1 := largestComponent(mask, nx, ny)
	// The largest 4-connected set is the eight cells marked 0 (the 1s form
	// sets of 4 and 5).
	for j, r := range rows {
		for i, ch := range r {
			if keep[j*nx+i] != (ch == '0') {
				t.Errorf("cell (%d, %d) kept %v", i, j, keep[j*nx+i])
			}
		}
	}
	if i0 != 0 || i1 != 4 || j0 != 0 || j1 != 5 {
		t.Errorf("bounding box [%d, %d) × [%d, %d), want [0, 4) × [0, 5)", i0, i1, j0, j1)
	}
}
