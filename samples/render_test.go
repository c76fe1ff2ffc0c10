package samples

import (
	"bytes"
	"context"
	"encoding/json"
	"fmt"
	"image"
	"image/png"
	"math"
	"os/exec"
	"testing"

	"crestspeed/calib"
)

// testRig is the demo rig scaled to w×h pixels and posed h m above the
// sea, looking dep degrees down with roll degrees of roll.
func testRig(t testing.TB, w, h int, height, dep, roll float64) *calib.Rig {
	t.Helper()
	rig := ScaleRig(DemoRig(), image.Pt(w, h))
	p := calib.PlaneFromPose(height, dep, roll)
	rig.SeaPlane = &p
	if err := rig.Validate(); err != nil {
		t.Fatal(err)
	}
	return rig
}

func testSea(t testing.TB) *LinearSea {
	t.Helper()
	sea, err := JONSWAPSea{HsM: 1.3, TpS: 5.6, Spreading: 12, DirectionDeg: 195, Seed: 5, Components: 96}.Sea()
	if err != nil {
		t.Fatal(err)
	}
	return sea
}

// TestFresnelReflectance checks the unpolarised reflectance against
// Fresnel's sine and tangent laws, r_s = −sin(i−t)/sin(i+t) and
// r_p = tan(i−t)/tan(i+t) (Born & Wolf, Principles of Optics, §1.5.2),
// an independent form of the same equations, and against two of their
// consequences: ((n−1)/(n+1))² at normal incidence and r_p = 0 at
// Brewster's angle tan i = n.
func TestFresnelReflectance(t *testing.T) {
	const n = 1.34
	if got, want := FresnelReflectance(1, n), math.Pow((n-1)/(n+1), 2); math.Abs(got-want) > 1e-15 {
		t.Errorf("normal incidence: ρ = %.10f, want ((n−1)/(n+1))² = %.10f", got, want)
	}
	for _, deg := range []float64{5, 20, 40, 60, 75, 85, 89} {
		i := deg * math.Pi / 180
		tt := math.Asin(math.Sin(i) / n) // Snell's law
		rs := -math.Sin(i-tt) / math.Sin(i+tt)
		rp := math.Tan(i-tt) / math.Tan(i+tt)
		want := (rs*rs + rp*rp) / 2
		if got := FresnelReflectance(math.Cos(i), n); math.Abs(got-want) > 1e-12 {
			t.Errorf("incidence %g°: ρ = %.12f, Fresnel's sine and tangent laws give %.12f", deg, got, want)
		}
	}
	ib := math.Atan(n) // Brewster's angle
	tb := math.Pi/2 - ib
	rs := -math.Sin(ib - tb)
	if got, want := FresnelReflectance(math.Cos(ib), n), rs*rs/2; math.Abs(got-want) > 1e-12 {
		t.Errorf("Brewster's angle: ρ = %.12f, want r_s²/2 = %.12f (r_p = 0)", got, want)
	}
	if got := FresnelReflectance(0, n); math.Abs(got-1) > 1e-12 {
		t.Errorf("grazing incidence: ρ = %g, want 1", got)
	}
}

// TestCastFlatSea casts rays onto a calm sea (no waves, no roughness):
// each world point of the mean plane, projected into a camera with
// calib's forward model, must be hit by the ray through its own pixel
// (collinearity of object point, projection centre and image point, the
// basis of photogrammetry), and the hit must project back onto that pixel.
func TestCastFlatSea(t *testing.T) {
	rig := testRig(t, 320, 256, 13.5, 30, 0.6)
	r, err := NewRenderer(rig, &LinearSea{}, RenderOptions{Roughness: Roughness{Off: true}}, 2)
	if err != nil {
		t.Fatal(err)
	}
	s, err := r.Surface(0, nil)
	if err != nil {
		t.Fatal(err)
	}
	w := r.World()
	for _, P := range [][3]float64{{20, 0, 0}, {35, 6, 0}, {50, -10, 0}, {15, 3, 0}} {
		for _, side := range []Side{LeftSide, RightSide} {
			Xl := w.ToCamera(P)
			px := rig.ProjectLeft(Xl)
			if side == RightSide {
				px = rig.ProjectRight(Xl)
			}
			if !(px[0] >= 0 && px[1] >= 0 && px[0] < 320 && px[1] < 256) {
				t.Fatalf("test point %v is outside the %s image (%v)", P, side, px)
			}
			hit, ok := r.Cast(s, side, px)
			if !ok {
				t.Fatalf("%s ray through %v found no sea", side, px)
			}
			if d := math.Hypot(hit[0]-P[0], math.Hypot(hit[1]-P[1], hit[2]-P[2])); d > 1e-6 {
				t.Errorf("%s ray through %v hits %v, %.3g m from the point %v it images", side, px, hit, d, P)
			}
			back := reproject(rig, w, side, hit)
			if e := math.Hypot(back[0]-px[0], back[1]-px[1]); e > 0.01 {
				t.Errorf("%s: hit point reprojects %.4f px from its pixel", side, e)
			}
		}
	}
}

func reproject(rig *calib.Rig, w calib.WorldFrame, side Side, X [3]float64) [2]float64 {
	Xl := w.ToCamera(X)
	if side == RightSide {
		return rig.ProjectRight(Xl)
	}
	return rig.ProjectLeft(Xl)
}

// TestCastWavySea casts rays of both cameras onto a JONSWAP sea with
// roughness. The hit point must (a) lie on the surface given by direct
// summation of the free-wave components (LinearSea.Eta of the sea plus
// the roughness, the closed form the grids interpolate), within 3 mm;
// (b) project back onto its pixel within 0.01 px (collinearity); and
// (c) be the first crossing: every point of the ray before it, from the
// plane above the highest crest, lies above the summed surface (less the
// 3 mm tolerance).
func TestCastWavySea(t *testing.T) {
	rig := testRig(t, 320, 256, 13.5, 30, 0.6)
	sea := testSea(t)
	r, err := NewRenderer(rig, sea, RenderOptions{}, 2)
	if err != nil {
		t.Fatal(err)
	}
	const tt = 1.7
	s, err := r.Surface(tt, nil)
	if err != nil {
		t.Fatal(err)
	}
	rough := r.Roughness()
	if len(rough.Components) == 0 {
		t.Fatal("no roughness")
	}
	exact := func(x, y float64) float64 { return sea.Eta(x, y, tt) + rough.Eta(x, y, tt) }
	w := r.World()
	const tol = 0.003
	var worst float64
	for _, side := range []Side{LeftSide, RightSide} {
		o := r.CameraCentre(side)
		for py := 4.0; py < 256; py += 31.3 {
			for px := 3.0; px < 320; px += 37.7 {
				hit, ok := r.Cast(s, side, [2]float64{px, py})
				if !ok {
					t.Fatalf("%s ray through (%g, %g) found no sea", side, px, py)
				}
				e := hit[2] - exact(hit[0], hit[1])
				worst = math.Max(worst, math.Abs(e))
				if math.Abs(e) > tol {
					t.Errorf("%s pixel (%g, %g): hit %v lies %.4f m off the summed surface", side, px, py, hit, e)
				}
				back := reproject(rig, w, side, hit)
				if d := math.Hypot(back[0]-px, back[1]-py); d > 0.01 {
					t.Errorf("%s pixel (%g, %g): hit reprojects %.4f px away", side, px, py, d)
				}
				// The renderer's own ray of the nearest whole pixel (from its
				// table of single-precision directions) reprojects onto it.
				ix, iy := int(math.Round(px)), int(math.Round(py))
				k := 4 * (iy*320 + ix)
				tab := r.rays[side]
				dir := [3]float64{float64(tab[k]), float64(tab[k+1]), float64(tab[k+2])}
				if u, ok := s.cast(o, dir); !ok {
					t.Errorf("%s pixel (%d, %d): table ray finds no sea", side, ix, iy)
				} else {
					p := reproject(rig, w, side, [3]float64{o[0] + u*dir[0], o[1] + u*dir[1], o[2] + u*dir[2]})
					if d := math.Hypot(p[0]-float64(ix), p[1]-float64(iy)); d > 0.01 {
						t.Errorf("%s pixel (%d, %d): table ray's hit reprojects %.4f px away", side, ix, iy, d)
					}
				}
				// First crossing: walk the ray in 2 cm steps from the plane
				// above every crest to the hit.
				d := [3]float64{hit[0] - o[0], hit[1] - o[1], hit[2] - o[2]}
				L := math.Sqrt(d[0]*d[0] + d[1]*d[1] + d[2]*d[2])
				start := L * (o[2] - s.zTop) / (o[2] - hit[2])
				for u := math.Max(start, 0); u < L-0.05; u += 0.02 {
					p := [3]float64{o[0] + u*d[0]/L, o[1] + u*d[1]/L, o[2] + u*d[2]/L}
					if h := p[2] - exact(p[0], p[1]); h < -tol {
						t.Fatalf("%s pixel (%g, %g): the ray is %.4f m under the surface at %v, before its hit %v", side, px, py, -h, p, hit)
					}
				}
			}
		}
	}
	t.Logf("largest height error of the hit points: %.2g m", worst)
}

// TestCastAgainstOpenCV casts rays of both cameras onto a JONSWAP sea with
// roughness and hands the hit points, in the left camera's frame, to
// OpenCV's cv2.projectPoints (Debian python3-opencv) with the rig's
// intrinsics, distortion and, for the right camera, its rotation and
// translation: each must land on the pixel whose ray found it, within
// 0.01 px.
func TestCastAgainstOpenCV(t *testing.T) {
	rig := testRig(t, 320, 256, 13.5, 30, 2)
	r, err := NewRenderer(rig, testSea(t), RenderOptions{}, 2)
	if err != nil {
		t.Fatal(err)
	}
	s, err := r.Surface(0.9, nil)
	if err != nil {
		t.Fatal(err)
	}
	w := r.World()
	type sample struct {
		Side  int        `json:"side"`
		Pixel [2]float64 `json:"pixel"`
		X     [3]float64 `json:"x"`
	}
	var samples []sample
	for _, side := range []Side{LeftSide, RightSide} {
		for py := 7.25; py < 256; py += 41 {
			for px := 5.5; px < 320; px += 47 {
				hit, ok := r.Cast(s, side, [2]float64{px, py})
				if !ok {
					t.Fatalf("%s pixel (%g, %g) sees no sea", side, px, py)
				}
				samples = append(samples, sample{int(side), [2]float64{px, py}, w.ToCamera(hit)})
			}
		}
	}
	in, _ := json.Marshal(map[string]any{
		"K":   [2][9]float64{rig.Left.Matrix(), rig.Right.Matrix()},
		"D":   [2][5]float64{rig.Left.Distortion(), rig.Right.Distortion()},
		"R":   rig.R,
		"T":   rig.T,
		"pts": samples,
	})
	const script = `
import json, sys
import numpy as np, cv2
a = json.loads(sys.stdin.read())
out = []
for p in a["pts"]:
    s = p["side"]
    K = np.array(a["K"][s], dtype=float).reshape(3, 3)
    D = np.array(a["D"][s], dtype=float)
    if s == 0:
        rvec, tvec = np.zeros(3), np.zeros(3)
    else:
        rvec, _ = cv2.Rodrigues(np.array(a["R"], dtype=float).reshape(3, 3))
        tvec = np.array(a["T"], dtype=float)
    uv, _ = cv2.projectPoints(np.array([[p["x"]]], dtype=float), rvec, tvec, K, D)
    out.append(uv[0, 0].tolist())
print(json.dumps(out))
`
	cmd := exec.Command("/usr/bin/python3", "-c", script)
	cmd.Stdin = bytes.NewReader(in)
	out, err := cmd.Output()
	if err != nil {
		t.Skipf("Debian python3 with OpenCV is not available: %v", err)
	}
	var uv [][2]float64
	if err := json.Unmarshal(out, &uv); err != nil || len(uv) != len(samples) {
		t.Fatalf("cannot read OpenCV output %q: %v", out, err)
	}
	for k, sm := range samples {
		if d := math.Hypot(uv[k][0]-sm.Pixel[0], uv[k][1]-sm.Pixel[1]); d > 0.01 {
			t.Errorf("%s pixel %v: OpenCV projects its hit point to %v, %.4f px away", Side(sm.Side), sm.Pixel, uv[k], d)
		}
	}
}

// TestColumnCoherence: starting a ray's march at the hit of the pixel
// below (RenderPair) must find the same crossing as marching it from the
// plane above every crest, for every pixel of both cameras, on a rolled
// rig over a sea with roughness. Both marches take steps of at least
// minStepM near the surface and so may step over a crest top that rises
// above a grazing ray for less than that length. Where the two disagree
// (no more than 0.1 % of the pixels), the coherent march's hit is checked
// by walking the ray in 0.5 mm steps: every stretch of the ray under the
// surface before that hit must be shorter than minStepM — a start beyond
// a whole crest would leave a stretch of metres.
func TestColumnCoherence(t *testing.T) {
	for _, roll := range []float64{0.6, 8} {
		rig := testRig(t, 320, 256, 13.5, 30, roll)
		r, err := NewRenderer(rig, testSea(t), RenderOptions{}, 1)
		if err != nil {
			t.Fatal(err)
		}
		s, err := r.Surface(2.3, nil)
		if err != nil {
			t.Fatal(err)
		}
		n := r.w * r.h
		lin := make([]float32, n)
		for side := range 2 {
			a, b := make([]float64, n), make([]float64, n)
			for x0 := 0; x0 < r.w; x0 += stripWidth {
				r.traceStrip(s, side, x0, min(x0+stripWidth, r.w), lin, a, true)
				r.traceStrip(s, side, x0, min(x0+stripWidth, r.w), lin, b, false)
			}
			o := r.origin[side]
			var differ int
			for i := range a {
				if math.IsNaN(a[i]) != math.IsNaN(b[i]) {
					t.Fatalf("roll %g°, %s pixel %d: one march sees sky, the other sea", roll, Side(side), i)
				}
				if !(math.Abs(a[i]-b[i]) > 0.002) {
					continue
				}
				differ++
				d := r.rays[side][4*i : 4*i+3]
				run, longest := 0.0, 0.0
				const step = 0.0005
				for u := (o[2] - s.zTop) / -float64(d[2]); u < a[i]-0.002; u += step {
					x, y, z := o[0]+u*float64(d[0]), o[1]+u*float64(d[1]), o[2]+u*float64(d[2])
					if z <= s.Height(x, y) {
						run += step
						longest = math.Max(longest, run)
					} else {
						run = 0
					}
				}
				if longest >= minStepM {
					t.Errorf("roll %g°, %s pixel (%d, %d): before the coherent march's hit at %.4f m the ray runs %.4f m under the surface", roll, Side(side), i%r.w, i/r.w, a[i], longest)
				}
			}
			if differ > n/1000 {
				t.Errorf("roll %g°, %s camera: the marches disagree at %d of %d pixels", roll, Side(side), differ, n)
			}
		}
	}
}

// TestFlatSeaGradient renders a calm sea without roughness, noise or
// vignetting. Down an image column the line of sight steepens, so the
// incidence angle falls and the mirror ray rises toward the zenith: the
// Fresnel reflectance of water falls with the incidence angle (Born &
// Wolf §1.5) and the CIE standard clear sky darkens away from the horizon
// (CIE S 011/E:2003), so the grey level must never rise from one row to
// the next, and must fall overall.
func TestFlatSeaGradient(t *testing.T) {
	rig := testRig(t, 160, 128, 13.5, 30, 0)
	opt := RenderOptions{Roughness: Roughness{Off: true}, Shading: Shading{NoiseDN: -1}}
	r, err := NewRenderer(rig, &LinearSea{}, opt, 2)
	if err != nil {
		t.Fatal(err)
	}
	s, err := r.Surface(0, nil)
	if err != nil {
		t.Fatal(err)
	}
	left, right, err := r.RenderPair(context.Background(), s, 0, nil, nil)
	if err != nil {
		t.Fatal(err)
	}
	for k, im := range []*image.Gray{left, right} {
		for x := 0; x < 160; x++ {
			for y := 1; y < 128; y++ {
				if im.GrayAt(x, y).Y > im.GrayAt(x, y-1).Y {
					t.Fatalf("%s image, column %d: grey %d at row %d is brighter than %d at row %d", Side(k), x, im.GrayAt(x, y).Y, y, im.GrayAt(x, y-1).Y, y-1)
				}
			}
			if top, bottom := im.GrayAt(x, 0).Y, im.GrayAt(x, 127).Y; int(top)-int(bottom) < 20 {
				t.Errorf("%s image, column %d: grey falls only from %d to %d down the image", Side(k), x, top, bottom)
			}
		}
	}
}

// TestRenderDeterminism: the same seed gives the same PNG bytes with one
// or two workers, and another seed other noise.
func TestRenderDeterminism(t *testing.T) {
	rig := testRig(t, 160, 128, 13.5, 30, 0.6)
	sea := testSea(t)
	render := func(workers int, seed uint64) [2][]byte {
		r, err := NewRenderer(rig, sea, RenderOptions{Seed: seed, Roughness: Roughness{Seed: seed}, Shading: Shading{Vignetting: true}}, workers)
		if err != nil {
			t.Fatal(err)
		}
		s, err := r.Surface(0.3, nil)
		if err != nil {
			t.Fatal(err)
		}
		l, rr, err := r.RenderPair(context.Background(), s, 3, nil, nil)
		if err != nil {
			t.Fatal(err)
		}
		var out [2][]byte
		for k, im := range []*image.Gray{l, rr} {
			var b bytes.Buffer
			if err := png.Encode(&b, im); err != nil {
				t.Fatal(err)
			}
			out[k] = b.Bytes()
		}
		return out
	}
	a, b := render(1, 11), render(2, 11)
	for k := range a {
		if !bytes.Equal(a[k], b[k]) {
			t.Errorf("%s image differs between 1 and 2 workers", Side(k))
		}
	}
	c := render(2, 12)
	if bytes.Equal(a[0], c[0]) {
		t.Error("another seed gave the same left image")
	}
}

func TestRendererErrors(t *testing.T) {
	rig := testRig(t, 160, 128, 13.5, 30, 0)
	noPlane := *rig
	noPlane.SeaPlane = nil
	if _, err := NewRenderer(&noPlane, &LinearSea{}, RenderOptions{}, 1); err == nil {
		t.Error("a rig without a sea plane was accepted")
	}
	if _, err := NewRenderer(rig, &LinearSea{}, RenderOptions{Roughness: Roughness{TileCells: 500}}, 1); err == nil {
		t.Error("a roughness tile of 500 cells (not a power of two) was accepted")
	}
	if _, err := NewRenderer(rig, testSea(t), RenderOptions{GridSpacingM: 2}, 1); err == nil {
		t.Error("a sea grid too coarse for the sea's shortest waves was accepted")
	}
	r, err := NewRenderer(rig, &LinearSea{}, RenderOptions{}, 1)
	if err != nil {
		t.Fatal(err)
	}
	s, _ := r.Surface(0, nil)
	if _, _, err := r.RenderPair(context.Background(), s, 0, image.NewGray(image.Rect(0, 0, 10, 10)), nil); err == nil {
		t.Error("an image of the wrong size was accepted")
	}
}

// BenchmarkRenderPair renders one 1280×1024 stereo pair of the demo
// deployment (surface evaluation included) with 1 and 2 workers.
func BenchmarkRenderPair(b *testing.B) {
	d, err := DemoDeployment().withDefaults()
	if err != nil {
		b.Fatal(err)
	}
	sea, err := d.Sea.Sea()
	if err != nil {
		b.Fatal(err)
	}
	for _, workers := range []int{1, 2} {
		b.Run(fmt.Sprintf("workers=%d", workers), func(b *testing.B) {
			r, err := NewRenderer(d.Rig, sea, d.Render, workers)
			if err != nil {
				b.Fatal(err)
			}
			var s *Surface
			var l, rr *image.Gray
			b.ResetTimer()
			for i := 0; i < b.N; i++ {
				if s, err = r.Surface(float64(i)/10, s); err != nil {
					b.Fatal(err)
				}
				if l, rr, err = r.RenderPair(context.Background(), s, i, l, rr); err != nil {
					b.Fatal(err)
				}
			}
		})
	}
}

// BenchmarkSurface evaluates the demo's rendered surface (sea grid and
// roughness tile) for one frame with 1 and 2 workers.
func BenchmarkSurface(b *testing.B) {
	d, err := DemoDeployment().withDefaults()
	if err != nil {
		b.Fatal(err)
	}
	sea, err := d.Sea.Sea()
	if err != nil {
		b.Fatal(err)
	}
	for _, workers := range []int{1, 2} {
		b.Run(fmt.Sprintf("workers=%d", workers), func(b *testing.B) {
			r, err := NewRenderer(d.Rig, sea, d.Render, workers)
			if err != nil {
				b.Fatal(err)
			}
			var s *Surface
			b.ResetTimer()
			for i := 0; i < b.N; i++ {
				if s, err = r.Surface(float64(i)/10, s); err != nil {
					b.Fatal(err)
				}
			}
		})
	}
}
