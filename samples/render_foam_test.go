package samples

import (
	"context"
	"image"
	"math"
	"testing"
)

// Foam painted on the rendered surface: a pixel whose ray meets the
// surface inside an active patch is foam-bright in both cameras, and the
// patch is absent before it starts. The foam radiance without texture is
// ρ·2∫₀¹ L(μ)μ dμ (Lambert's law for a horizontal diffuse surface under
// the sky dome), compared here with the same integral by numpy's
// trapezoidal rule over the sky model SkyGradation (1 − exp(−0.32/μ)),
// times SkyHorizon 2 and ρ 0.8:
//
//	/usr/bin/python3 -c "import numpy as np; mu=np.linspace(1e-9,1,200001);
//	print(0.8*2*2*np.trapz((1-np.exp(-0.32/mu))*mu, mu))"  → 0.6693
func TestRenderedFoamInBothCameras(t *testing.T) {
	d := DemoDeployment()
	d.ImageSize = image.Pt(320, 256)
	d.DepressionDeg = 45
	d.Sea.JONSWAP.HsM = 0.6
	d.Sea.JONSWAP.TpS = 2.8
	d, err := d.withDefaults()
	if err != nil {
		t.Fatal(err)
	}
	sea, err := d.Sea.Sea()
	if err != nil {
		t.Fatal(err)
	}
	opt := d.Render
	opt.Shading.NoiseDN = -1
	r, err := NewRenderer(d.Rig, sea, opt, 2)
	if err != nil {
		t.Fatal(err)
	}
	patch := FoamPatch{StartS: 0.5, FrontXM: 16, FrontYM: 1, DirectionDeg: 180, SpeedMPS: 2, FrontLengthM: 3, LengthM: 1.5, DurationS: 10}
	if err := r.SetFoam([]FoamPatch{patch}, FoamShading{Texture: -1}); err != nil {
		t.Fatal(err)
	}
	if want := 0.6693; math.Abs(r.foam.base-want) > 1e-3 {
		t.Errorf("foam radiance %.4f; numpy's trapezoid gives %.4f", r.foam.base, want)
	}
	foam := r.foam
	foamGrey := r.encode(r.foam.base)
	for _, tt := range []float64{0, 1} {
		s, err := r.Surface(tt, nil)
		if err != nil {
			t.Fatal(err)
		}
		r.foam = nil
		left0, right0, err := r.RenderPair(context.Background(), s, 0, nil, nil)
		if err != nil {
			t.Fatal(err)
		}
		r.foam = foam
		left, right, err := r.RenderPair(context.Background(), s, 0, nil, nil)
		if err != nil {
			t.Fatal(err)
		}
		plain := []*image.Gray{left0, right0}
		// Every pixel whose hit lies 0.1 m or more inside the patch must
		// be foam-grey (no noise, no texture, no vignetting); every pixel
		// hitting 0.1 m or more outside, as rendered without foam.
		fx, fy := patch.FrontAt(tt)
		for side, im := range []*image.Gray{left, right} {
			in, out := 0, 0
			for py := 0; py < r.h; py += 2 {
				for px := 0; px < r.w; px += 2 {
					hit, ok := r.Cast(s, Side(side), [2]float64{float64(px), float64(py)})
					if !ok {
						continue
					}
					// the patch travels along −x: foam from its front to
					// LengthM behind it, along +x
					u, v := hit[0]-fx, hit[1]-fy
					g := float64(im.Pix[py*im.Stride+px])
					inside := patch.Active(tt) && u > 0.1 && u < patch.LengthM-0.1 && math.Abs(v) < patch.FrontLengthM/2-0.1
					outside := !patch.Active(tt) || u < -0.1 || u > patch.LengthM+0.1 || math.Abs(v) > patch.FrontLengthM/2+0.1
					switch {
					case inside:
						in++
						if math.Abs(g-foamGrey) > 1 {
							t.Fatalf("t=%g %s (%d,%d): grey %g inside the patch; want the foam's %.1f", tt, Side(side), px, py, g, foamGrey)
						}
					case outside && im.Pix[py*im.Stride+px] != plain[side].Pix[py*im.Stride+px]:
						out++
					}
				}
			}
			if patch.Active(tt) && in < 20 {
				t.Errorf("t=%g %s: only %d sampled pixels inside the patch", tt, Side(side), in)
			}
			if out > 0 {
				t.Errorf("t=%g %s: %d pixels outside the patch differ from the render without foam", tt, Side(side), out)
			}
		}
	}
}
