package samples

// Foam in rendered images.
//
// A surface point (x, y) hit by a camera ray at time t is foam when it lies
// inside an active FoamPatch (the same half-open rectangle the foam mask of
// FoamPainter samples on the grid). Foam is shaded as a Lambertian
// (diffuse) reflector of albedo FoamShading.Albedo lit by the whole sky
// dome of the renderer's sky model: a horizontal Lambertian surface under
// a sky of radiance L(μ), μ the cosine of the zenith angle, has the
// irradiance E = 2π ∫₀¹ L(μ) μ dμ and the radiance ρE/π = 2ρ ∫₀¹ L(μ) μ dμ
// (Lambert's cosine law; e.g. Mobley 1994, Light and Water, §1.3). A
// texture of relative amplitude FoamShading.Texture, fixed to the world
// (value noise on a lattice of FoamShading.TextureCellM), keeps the foam
// from being a flat field. Because both the foam test and the texture
// depend only on the world point, the two cameras see the same foam.

import (
	"fmt"
	"math"
)

// FoamShading sets how foam is shaded. The zero value gives the defaults.
type FoamShading struct {
	// Albedo is the diffuse reflectance of foam, default 0.8 (fresh
	// whitecap foam reflects about half to 0.8 of the light, from memory).
	Albedo float64 `json:"albedo" yaml:"albedo"`
	// Texture is the relative amplitude of the brightness texture,
	// default 0.15; negative means none.
	Texture float64 `json:"texture" yaml:"texture"`
	// TextureCellM is the lattice spacing of the texture, default 0.1 m.
	TextureCellM float64 `json:"texture_cell_m" yaml:"texture_cell_m"`
}

func (f *FoamShading) defaults() {
	if f.Albedo == 0 {
		f.Albedo = 0.8
	}
	if f.Texture == 0 {
		f.Texture = 0.15
	}
	if f.TextureCellM == 0 {
		f.TextureCellM = 0.1
	}
}

// Validate reports the first absurd setting.
func (f FoamShading) Validate() error {
	f.defaults()
	switch {
	case !(f.Albedo > 0 && f.Albedo <= 1):
		return fmt.Errorf("foam albedo %g is outside (0, 1]", f.Albedo)
	case !(f.Texture < 1) || math.IsNaN(f.Texture):
		return fmt.Errorf("foam texture amplitude %g must be below 1", f.Texture)
	case !(f.TextureCellM > 0 && f.TextureCellM < 100):
		return fmt.Errorf("foam texture cell %g m is outside (0, 100) m", f.TextureCellM)
	}
	return nil
}

// foamShader paints foam patches on rendered surface points.
type foamShader struct {
	patches []FoamPatch
	opt     FoamShading
	base    float64 // radiance of untextured foam
}

// Contains reports whether the world point (x, y) is inside the patch at
// time t (the rectangle of the file notes of foam.go, with the same
// half-open bounds as FoamPainter).
func (p FoamPatch) Contains(x, y, t float64) bool {
	if !p.Active(t) {
		return false
	}
	th := p.DirectionDeg * math.Pi / 180
	c, s := math.Cos(th), math.Sin(th)
	d := p.SpeedMPS * (t - p.StartS)
	rx, ry := x-p.FrontXM, y-p.FrontYM
	u := rx*c + ry*s
	v := -rx*s + ry*c
	return u <= d && u > d-p.LengthM && v >= -p.FrontLengthM/2 && v < p.FrontLengthM/2
}

// SetFoam makes the renderer paint the given patches as foam (nil or none:
// no foam). It must not be called while a pair is being rendered.
func (r *Renderer) SetFoam(patches []FoamPatch, opt FoamShading) error {
	if len(patches) == 0 {
		r.foam = nil
		return nil
	}
	if err := opt.Validate(); err != nil {
		return err
	}
	opt.defaults()
	for i, p := range patches {
		if err := p.Validate(); err != nil {
			return fmt.Errorf("foam patch %d: %v", i, err)
		}
	}
	// 2∫₀¹ L(μ) μ dμ by the midpoint rule on 1000 intervals.
	const n = 1000
	var e float64
	for i := range n {
		mu := (float64(i) + 0.5) / n
		e += SkyGradation(mu) * mu
	}
	e *= 2 * r.opt.Shading.SkyHorizon / n
	r.foam = &foamShader{patches: append([]FoamPatch(nil), patches...), opt: opt, base: opt.Albedo * e}
	return nil
}

// radiance returns the radiance of the surface point (x, y) at time t:
// the foam's when it is inside an active patch, L otherwise.
func (f *foamShader) radiance(L, x, y, t float64) float64 {
	for _, p := range f.patches {
		if p.Contains(x, y, t) {
			if f.opt.Texture <= 0 {
				return f.base
			}
			return f.base * (1 + f.opt.Texture*valueNoise(x/f.opt.TextureCellM, y/f.opt.TextureCellM))
		}
	}
	return L
}

// valueNoise is bilinearly interpolated lattice noise in [−1, 1] with a
// hashed value at every integer lattice point (common practice).
func valueNoise(u, v float64) float64 {
	i, j := math.Floor(u), math.Floor(v)
	fu, fv := u-i, v-j
	ii, jj := int64(i), int64(j)
	a := latticeValue(ii, jj)
	b := latticeValue(ii+1, jj)
	c := latticeValue(ii, jj+1)
	d := latticeValue(ii+1, jj+1)
	return (a*(1-fu)+b*fu)*(1-fv) + (c*(1-fu)+d*fu)*fv
}

// latticeValue hashes a lattice point to [−1, 1] (SplitMix64 finaliser).
func latticeValue(i, j int64) float64 {
	z := uint64(i)*0x9e3779b97f4a7c15 ^ uint64(j)*0xc2b2ae3d27d4eb4f
	z ^= z >> 30
	z *= 0xbf58476d1ce4e5b9
	z ^= z >> 27
	z *= 0x94d049bb133111eb
	z ^= z >> 31
	return float64(z>>11)/float64(1<<52) - 1
}
