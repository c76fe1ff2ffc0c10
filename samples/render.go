package samples

// Stereo renderings of a synthetic sea.
//
// A [Renderer] photographs a [LinearSea] with both cameras of a calibrated
// rig posed above the water (the rig's SeaPlane gives the pose; see
// calib.WorldFrame for the world frame). It is a ray caster on a height
// field:
//
//   - Surface. The rendered surface is the sea plus a small-scale
//     roughness ([Roughness]): short free waves of small amplitude that give
//     the images texture a stereo matcher can lock onto and that move with
//     the surface. Per frame the sea is evaluated, with its analytic
//     gradient, on a world grid covering the cameras' footprint (spacing a
//     sixteenth of the sea's shortest wave: 0.19 m for the demo), and the
//     roughness on a periodic tile (512² nodes 2.5 cm apart by default; its
//     wavenumbers lie on the tile's lattice, so the tile repeats exactly);
//     heights and gradients between nodes are interpolated bilinearly.
//     Beyond the sea grid (past RenderOptions.MaxRangeM) the sea is flat,
//     roughness only.
//   - Ray casting. The ray through each pixel (calib.Camera.Unproject, so
//     lens distortion is honoured) is marched in steps no longer than its
//     height above the surface divided by the Lipschitz bound
//     |d_z| + G|d_h| of that height along the ray, G the largest slope of
//     the interpolated surface, so that a step cannot cross the surface
//     (sphere tracing on a height field, Hart 1996, The Visual Computer
//     12): first against the sea alone lifted by the highest roughness,
//     then against the whole surface with a floor of minStepM (4 cm) on
//     the step; the crossing is then refined by bisection with a final
//     secant step. The floor trades exactness for speed: a crest top that
//     rises above a grazing ray for less than 4 cm along it may be stepped
//     over. Rays start at the plane above the highest crest, or at the hit
//     of the pixel below when that is proven safe (see
//     [Renderer.RenderPair]).
//   - Shading. Water is a specular reflector: the radiance reaching the
//     camera is L = L_w + ρ(θ) L_sky(r) (Mobley 1999, Applied Optics 38),
//     with ρ the unpolarised Fresnel reflectance of water (n = 1.34; Born &
//     Wolf, Principles of Optics, §1.5), r the mirror direction about the
//     surface normal, L_sky the CIE standard clear-sky gradation
//     φ(Z) = 1 − exp(−0.32 / cos Z) of the zenith angle Z (CIE S 011/E:2003,
//     without the sun's indicatrix), brightest at the horizon, and L_w a
//     constant water-leaving (upwelling) radiance. Rays that miss the sea
//     see the sky itself. Optional natural vignetting multiplies by cos⁴ of
//     the field angle (the cosine-fourth law), the result is gamma-encoded
//     like a camera's 8-bit output (exponent 1/2.2, common practice), and
//     seeded Gaussian sensor noise is added in grey levels.
//
// One ray per pixel: texture finer than a pixel at long range aliases, as
// it would in a camera without an optical low-pass filter. Rays are cast
// in parallel by strips of columns and encoded by rows; the bytes do not
// depend on the number of workers.

import (
	"context"
	"fmt"
	"image"
	"math"
	"math/rand/v2"
	"sync"
	"sync/atomic"

	"crestspeed/calib"
	"crestspeed/speed"
)

// Side names one camera of the rig.
type Side int

// The two cameras.
const (
	LeftSide Side = iota
	RightSide
)

func (s Side) String() string {
	if s == RightSide {
		return "right"
	}
	return "left"
}

// Roughness is the small-scale texture of the rendered surface: Components
// free linear waves with wavenumbers on the lattice of a square periodic
// tile TileM metres wide, wavelengths log-uniformly distributed between
// MinWavelengthM and MaxWavelengthM, directions uniform, every component
// with the same slope amplitude a·k (a slope spectrum flat in log k, the
// form of Phillips' saturation range: Phillips 1958, J. Fluid Mech. 4), so
// that the roughness has the given RMS slope. Each obeys the linear
// dispersion relation on the sea's depth and Current, so the texture
// travels like short waves on the sea.
//
// The roughness is part of the rendered surface but not of the truth: the
// truth elevation of a synthetic deployment is the sea alone, and the
// roughness (about 1.3 cm RMS with the defaults) is recorded beside it.
type Roughness struct {
	Off            bool          `json:"off,omitempty" yaml:"off"`                 // no roughness at all
	Components     int           `json:"components" yaml:"components"`             // default 64
	MinWavelengthM float64       `json:"min_wavelength_m" yaml:"min_wavelength_m"` // default 0.15
	MaxWavelengthM float64       `json:"max_wavelength_m" yaml:"max_wavelength_m"` // default 1.5
	RMSSlope       float64       `json:"rms_slope" yaml:"rms_slope"`               // RMS of |∇η| of the roughness, default 0.12
	TileM          float64       `json:"tile_m" yaml:"tile_m"`                     // side of the periodic tile, default 12.8
	TileCells      int           `json:"tile_cells" yaml:"tile_cells"`             // grid nodes per tile side, a power of two, default 512
	Current        speed.Current `json:"current_mps" yaml:"current"`               // uniform current the roughness rides on
	Seed           uint64        `json:"seed" yaml:"seed"`
}

func (r *Roughness) defaults() {
	if r.Components == 0 {
		r.Components = 64
	}
	if r.MinWavelengthM == 0 {
		r.MinWavelengthM = 0.15
	}
	if r.MaxWavelengthM == 0 {
		r.MaxWavelengthM = 1.5
	}
	if r.RMSSlope == 0 {
		r.RMSSlope = 0.12
	}
	if r.TileM == 0 {
		r.TileM = 12.8
	}
	if r.TileCells == 0 {
		r.TileCells = 512
	}
}

// Validate reports the first absurd setting.
func (r Roughness) Validate() error {
	if r.Off {
		return nil
	}
	r.defaults()
	switch {
	case r.Components < 1 || r.Components > 4096:
		return fmt.Errorf("roughness components %d is outside 1–4096", r.Components)
	case !(r.MinWavelengthM > 0 && r.MaxWavelengthM > r.MinWavelengthM):
		return fmt.Errorf("roughness wavelengths %g–%g m are not an increasing positive range", r.MinWavelengthM, r.MaxWavelengthM)
	case !(r.RMSSlope > 0 && r.RMSSlope < 1):
		return fmt.Errorf("roughness RMS slope %g is outside (0, 1)", r.RMSSlope)
	case !(r.TileM >= 2*r.MaxWavelengthM):
		return fmt.Errorf("roughness tile of %g m is shorter than two of its longest waves (%g m); enlarge tile_m", r.TileM, r.MaxWavelengthM)
	case r.TileCells < 16 || r.TileCells > 8192 || r.TileCells&(r.TileCells-1) != 0:
		return fmt.Errorf("roughness tile_cells %d is not a power of two in 16–8192", r.TileCells)
	case r.TileM/float64(r.TileCells) > r.MinWavelengthM/4:
		return fmt.Errorf("roughness tile spacing %.3g m is coarser than a quarter of the shortest roughness wave (%g m); raise tile_cells", r.TileM/float64(r.TileCells), r.MinWavelengthM)
	}
	return nil
}

// Sea draws the roughness components as a LinearSea with origin (0, 0) and
// time origin 0, on water of the given depth (0 = deep). The same seed gives
// the same components.
func (r Roughness) Sea(depthM float64) (*LinearSea, error) {
	if err := r.Validate(); err != nil {
		return nil, err
	}
	sea := &LinearSea{DepthM: depthM}
	if r.Off {
		return sea, nil
	}
	r.defaults()
	rng := rand.New(rand.NewPCG(r.Seed, 0x726f7567686e)) // second word: stream of this generator
	dk := 2 * math.Pi / r.TileM
	kmin, kmax := 2*math.Pi/r.MaxWavelengthM, 2*math.Pi/r.MinWavelengthM
	slope := r.RMSSlope * math.Sqrt(2/float64(r.Components)) // a·k of each component
	seen := map[[2]int]bool{}
	for attempt := 0; len(sea.Components) < r.Components; attempt++ {
		if attempt > 100*r.Components {
			return nil, fmt.Errorf("the roughness tile of %g m holds only %d distinct waves of %g–%g m; enlarge tile_m or widen the wavelength range", r.TileM, len(sea.Components), r.MinWavelengthM, r.MaxWavelengthM)
		}
		k := kmin * math.Pow(kmax/kmin, rng.Float64())
		th := 2 * math.Pi * rng.Float64()
		phase := 2 * math.Pi * rng.Float64()
		m, n := int(math.Round(k*math.Cos(th)/dk)), int(math.Round(k*math.Sin(th)/dk))
		kk := dk * math.Hypot(float64(m), float64(n))
		if seen[[2]int{m, n}] || kk < kmin*(1-1e-9) || kk > kmax*(1+1e-9) {
			continue
		}
		seen[[2]int{m, n}] = true
		kx, ky := dk*float64(m), dk*float64(n)
		sea.Components = append(sea.Components, Component{
			Amp:   slope / kk,
			K:     kk,
			Omega: speed.DopplerOmega(kx, ky, depthM, r.Current),
			Dir:   math.Atan2(ky, kx),
			Phase: phase,
		})
	}
	return sea, nil
}

// Shading sets the light and the sensor. Radiances are in units of the
// sensor's saturation (1 gives grey level 255).
type Shading struct {
	RefractiveIndex float64 `json:"refractive_index" yaml:"refractive_index"`         // of sea water, default 1.34
	SkyHorizon      float64 `json:"sky_horizon_radiance" yaml:"sky_horizon_radiance"` // radiance of the horizon sky, default 2 (the open sky saturates)
	Water           float64 `json:"water_radiance" yaml:"water_radiance"`             // water-leaving radiance L_w, default 0.01
	Gamma           float64 `json:"gamma" yaml:"gamma"`                               // encoding: grey = 255·L^(1/Gamma), default 2.2
	NoiseDN         float64 `json:"noise_dn" yaml:"noise_dn"`                         // σ of Gaussian noise, grey levels; default 0.7; negative = none
	Vignetting      bool    `json:"vignetting" yaml:"vignetting"`                     // cos⁴ fall-off toward the corners
}

func (s *Shading) defaults() {
	if s.RefractiveIndex == 0 {
		s.RefractiveIndex = 1.34
	}
	if s.SkyHorizon == 0 {
		s.SkyHorizon = 2
	}
	if s.Water == 0 {
		s.Water = 0.01
	}
	if s.Gamma == 0 {
		s.Gamma = 2.2
	}
	if s.NoiseDN == 0 {
		s.NoiseDN = 0.7
	}
}

// Validate reports the first absurd setting.
func (s Shading) Validate() error {
	s.defaults()
	switch {
	case !(s.RefractiveIndex > 1 && s.RefractiveIndex < 3):
		return fmt.Errorf("refractive index %g is outside (1, 3)", s.RefractiveIndex)
	case !(s.SkyHorizon > 0 && s.SkyHorizon < 1000):
		return fmt.Errorf("sky radiance %g is outside (0, 1000)", s.SkyHorizon)
	case !(s.Water >= 0 && s.Water < 1000):
		return fmt.Errorf("water radiance %g is outside [0, 1000)", s.Water)
	case !(s.Gamma >= 1 && s.Gamma <= 4):
		return fmt.Errorf("gamma %g is outside 1–4", s.Gamma)
	case !(s.NoiseDN < 100) || math.IsNaN(s.NoiseDN):
		return fmt.Errorf("noise of %g grey levels is above 100", s.NoiseDN)
	}
	return nil
}

// RenderOptions configure a [Renderer]. The zero value gives the defaults.
type RenderOptions struct {
	Roughness Roughness `json:"roughness" yaml:"roughness"`
	Shading   Shading   `json:"shading" yaml:"shading"`
	// GridSpacingM is the node spacing of the world grid on which the sea
	// is evaluated each frame; default a sixteenth of the shortest wave of
	// the sea, within 0.05–0.5 m.
	GridSpacingM float64 `json:"grid_spacing_m" yaml:"grid_spacing_m"`
	// MaxRangeM is the farthest horizontal distance from the left camera
	// at which the sea is evaluated; beyond it the sea is flat with its
	// roughness, and rays meeting the mean plane beyond four times this
	// distance (near the horizon) are not marched but meet the plane
	// itself (default 200 m).
	MaxRangeM float64 `json:"max_range_m" yaml:"max_range_m"`
	// Seed of the sensor noise.
	Seed uint64 `json:"noise_seed" yaml:"noise_seed"`
}

// Renderer renders stereo image pairs of one sea seen by one posed rig.
// Make it with [NewRenderer]; it is safe for concurrent use once made.
type Renderer struct {
	rig     *calib.Rig
	world   calib.WorldFrame
	sea     *LinearSea
	rough   *LinearSea
	opt     RenderOptions
	workers int

	origin [2][3]float64 // camera centres, world frame
	camToW [2][9]float64 // rotation of each camera's frame to the world
	rays   [2][]float32  // per pixel: world direction (unit) and vignetting factor
	w, h   int

	long    gridEval    // the sea on the world grid
	tile    gridEval    // the roughness on its tile
	gamma   []float32   // gamma-encoding table, linear radiance → grey level
	fresnel []float32   // Fresnel reflectance against the cosine of incidence
	sky     []float32   // sky gradation against the cosine of the zenith angle
	foam    *foamShader // foam patches painted on the surface (render_foam.go); nil: none
}

// Marching constants.
const (
	nearSurfaceM = 0.02  // phase 1 (sea only) stops this close above the surface
	minStepM     = 0.04  // shortest step along a ray near the surface
	bisectTolM   = 0.008 // bracket length at which bisection hands over to a secant step
	maxMarch     = 20000 // steps before a ray is declared lost (never reached in practice)
	gammaTable   = 8192
	shadeTable   = 4096 // samples of the Fresnel and sky tables over cos ∈ [0, 1]
)

// NewRenderer prepares rendering of sea by rig, whose SeaPlane must be set:
// it computes every pixel's ray, the footprint of the cameras on the sea and
// the grids the surface is evaluated on. workers ≤ 0 means one.
func NewRenderer(rig *calib.Rig, sea *LinearSea, opt RenderOptions, workers int) (*Renderer, error) {
	if rig == nil || sea == nil {
		return nil, fmt.Errorf("renderer needs a rig and a sea")
	}
	if err := rig.Validate(); err != nil {
		return nil, fmt.Errorf("rig cannot be rendered: %v", err)
	}
	if rig.SeaPlane == nil {
		return nil, fmt.Errorf("rig has no sea plane; pose it above the water (calib.PlaneFromPose) before rendering")
	}
	if !(rig.SeaPlane.OffsetM > 0.5) {
		return nil, fmt.Errorf("left camera is %g m above the sea; it must be at least 0.5 m above the water", rig.SeaPlane.OffsetM)
	}
	if err := opt.settle(sea); err != nil {
		return nil, err
	}
	world, err := rig.SeaPlane.World()
	if err != nil {
		return nil, err
	}
	rough, err := opt.Roughness.Sea(sea.DepthM)
	if err != nil {
		return nil, err
	}
	r := &Renderer{
		rig: rig, world: world, sea: sea, rough: rough, opt: opt,
		workers: max(workers, 1), w: rig.Size.X, h: rig.Size.Y,
	}
	// Camera centres and rotations. Right camera: X_r = R X_l + T, so its
	// centre is −Rᵀ T in the left frame and its axes rotate to the left
	// frame by Rᵀ.
	rt := rdTranspose(rig.R)
	r.origin[0] = world.ToWorld([3]float64{})
	r.origin[1] = world.ToWorld(rdMatVec(rt, [3]float64{-rig.T[0], -rig.T[1], -rig.T[2]}))
	r.camToW[0] = world.R
	r.camToW[1] = rdMul(world.R, rt)
	if err := r.computeRays(); err != nil {
		return nil, err
	}
	// Bounds of the surface, for the footprint: the sum of the amplitudes
	// bounds |η| strictly.
	var bound float64
	for _, c := range sea.Components {
		bound += math.Abs(c.Amp)
	}
	for _, c := range rough.Components {
		bound += math.Abs(c.Amp)
	}
	x0, x1, y0, y1 := r.footprint(bound)
	hs := opt.GridSpacingM
	nx := int(math.Ceil((x1-x0)/hs)) + 2
	ny := int(math.Ceil((y1-y0)/hs)) + 2
	if float64(nx)*float64(ny) > 32e6 {
		return nil, fmt.Errorf("the cameras see %.0f m × %.0f m of sea, %d × %d nodes at %g m spacing; lower max_range_m or coarsen grid_spacing_m", x1-x0, y1-y0, nx, ny, hs)
	}
	r.long = newGridEval(sea, x0, y0, hs, nx, ny, false)
	nt := opt.Roughness.TileCells
	if opt.Roughness.Off {
		nt = 2
	}
	r.tile = newGridEval(rough, 0, 0, opt.Roughness.TileM/float64(nt), nt, nt, true)
	r.buildTables()
	return r, nil
}

// settle validates the render options against the sea and fills in the
// defaults (range, grid spacing) the caller left at zero.
func (opt *RenderOptions) settle(sea *LinearSea) error {
	if err := opt.Roughness.Validate(); err != nil {
		return err
	}
	if err := opt.Shading.Validate(); err != nil {
		return err
	}
	opt.Roughness.defaults()
	opt.Shading.defaults()
	if opt.MaxRangeM == 0 {
		opt.MaxRangeM = 200
	}
	if !(opt.MaxRangeM > 1 && opt.MaxRangeM <= 5000) {
		return fmt.Errorf("maximum range %g m is outside (1, 5000]", opt.MaxRangeM)
	}
	for i, c := range sea.Components {
		if math.IsNaN(c.Amp+c.K+c.Omega+c.Dir+c.Phase) || math.IsInf(c.Amp+c.K+c.Omega+c.Dir+c.Phase, 0) || c.K < 0 {
			return fmt.Errorf("sea component %d has a non-finite or negative value", i)
		}
	}
	if opt.GridSpacingM == 0 {
		opt.GridSpacingM = 0.25
		if k := sea.MaxWavenumber(); k > 0 {
			opt.GridSpacingM = math.Max(0.05, math.Min(0.5, 2*math.Pi/k/16))
		}
	}
	if !(opt.GridSpacingM >= 0.005 && opt.GridSpacingM <= 5) {
		return fmt.Errorf("sea grid spacing %g m is outside 0.005–5 m", opt.GridSpacingM)
	}
	if k := sea.MaxWavenumber(); k*opt.GridSpacingM > math.Pi/4 {
		return fmt.Errorf("sea grid spacing %g m is too coarse for the sea's shortest waves (%.3g m); use at most an eighth of them", opt.GridSpacingM, 2*math.Pi/k)
	}
	return nil
}

// buildTables fills the renderer's lookup tables: the Fresnel reflectance,
// the sky gradation and the gamma encoding.
func (r *Renderer) buildTables() {
	// Tables of the shading functions (smooth on [0, 1]; linear
	// interpolation between 4097 samples is exact to about 1e-6).
	nw := r.opt.Shading.RefractiveIndex
	r.fresnel = tabulate(func(c float64) float64 { return FresnelReflectance(c, nw) })
	r.sky = tabulate(SkyGradation)
	// Gamma-encoding table over linear radiance [0, 1].
	r.gamma = make([]float32, gammaTable+2)
	for i := range r.gamma {
		r.gamma[i] = float32(255 * math.Pow(math.Min(1, float64(i)/gammaTable), 1/r.opt.Shading.Gamma))
	}
}

// World returns the world frame the renderer works in.
func (r *Renderer) World() calib.WorldFrame { return r.world }

// Roughness returns the roughness components as a LinearSea (origin and
// time origin 0).
func (r *Renderer) Roughness() *LinearSea { return r.rough }

// SeaGrid returns the world-grid extent of the evaluated sea: the first
// node (x0, y0), the spacing and the node counts.
func (r *Renderer) SeaGrid() (x0, y0, spacing float64, nx, ny int) {
	return r.long.x0, r.long.y0, r.long.h, r.long.nx, r.long.ny
}

// CameraCentre returns the centre of one camera in the world frame.
func (r *Renderer) CameraCentre(side Side) [3]float64 { return r.origin[side&1] }

// computeRays fills the per-pixel ray table of both cameras.
func (r *Renderer) computeRays() error {
	var firstErr error
	var mu sync.Mutex
	var next atomic.Int64
	var wg sync.WaitGroup
	for side := range 2 {
		r.rays[side] = make([]float32, 4*r.w*r.h)
	}
	for range r.workers {
		wg.Add(1)
		go func() {
			defer wg.Done()
			for {
				j := int(next.Add(1) - 1)
				if j >= 2*r.h {
					return
				}
				side, py := j/r.h, j%r.h
				cam := r.rig.Left
				if side == 1 {
					cam = r.rig.Right
				}
				row := r.rays[side][4*py*r.w : 4*(py+1)*r.w]
				for px := 0; px < r.w; px++ {
					xy, ok := cam.Unproject([2]float64{float64(px), float64(py)})
					if !ok {
						mu.Lock()
						if firstErr == nil {
							firstErr = fmt.Errorf("the %s camera's lens model cannot be inverted at pixel (%d, %d); check its distortion coefficients", Side(side), px, py)
						}
						mu.Unlock()
						return
					}
					d := rdMatVec(r.camToW[side], [3]float64{xy[0], xy[1], 1})
					n := math.Sqrt(d[0]*d[0] + d[1]*d[1] + d[2]*d[2])
					c2 := 1 / (1 + xy[0]*xy[0] + xy[1]*xy[1]) // cos² of the field angle
					row[4*px] = float32(d[0] / n)
					row[4*px+1] = float32(d[1] / n)
					row[4*px+2] = float32(d[2] / n)
					row[4*px+3] = float32(c2 * c2)
				}
			}
		}()
	}
	wg.Wait()
	return firstErr
}

// footprint returns the world rectangle holding every point where a pixel
// ray of either camera can meet a surface within ±bound of the mean plane,
// out to MaxRangeM, with a 1 m margin.
func (r *Renderer) footprint(bound float64) (x0, x1, y0, y1 float64) {
	x0, y0 = math.Inf(1), math.Inf(1)
	x1, y1 = math.Inf(-1), math.Inf(-1)
	add := func(x, y float64) {
		x0, x1 = math.Min(x0, x), math.Max(x1, x)
		y0, y1 = math.Min(y0, y), math.Max(y1, y)
	}
	rmax := r.opt.MaxRangeM
	const stride = 8
	for side := range 2 {
		o := r.origin[side]
		for py := 0; py < r.h; py += min(stride, max(r.h-1-py, 1)) {
			for px := 0; px < r.w; px += min(stride, max(r.w-1-px, 1)) {
				k := 4 * (py*r.w + px)
				d := [3]float64{float64(r.rays[side][k]), float64(r.rays[side][k+1]), float64(r.rays[side][k+2])}
				dh := math.Hypot(d[0], d[1])
				for _, z := range []float64{-bound, bound} {
					s := math.Inf(1)
					if d[2] < 0 {
						s = (o[2] - z) / -d[2]
					}
					if s*dh > rmax || math.IsInf(s, 1) {
						if dh == 0 {
							continue
						}
						s = rmax / dh
					}
					add(o[0]+s*d[0], o[1]+s*d[1])
				}
				if px == r.w-1 {
					break
				}
			}
			if py == r.h-1 {
				break
			}
		}
	}
	return x0 - 1, x1 + 1, y0 - 1, y1 + 1
}

// gridEval evaluates a LinearSea and its gradient on a regular grid of
// nodes (x0 + i·h, y0 + j·h) by the separable factorisation
// e^{i(kx x + ky y)} = e^{i kx x} e^{i ky y} (as FrameEvaluator does), so
// a frame costs a complex multiply-add per component per node and no
// trigonometric call in the inner loop. A periodic grid (the roughness
// tile) is one period of the field; its first row and column are repeated
// after the last so that interpolation never wraps an index.
type gridEval struct {
	sea      *LinearSea
	periodic bool
	x0, y0   float64
	h, inv   float64
	nx, ny   int       // nodes evaluated
	stride   int       // nodes per stored row: nx, or nx+1 when periodic
	exr, exi []float64 // [n*nx+ix]
	eyr, eyi []float64 // [n*ny+iy]
}

func newGridEval(sea *LinearSea, x0, y0, h float64, nx, ny int, periodic bool) gridEval {
	n := len(sea.Components)
	e := gridEval{sea: sea, periodic: periodic, x0: x0, y0: y0, h: h, inv: 1 / h, nx: nx, ny: ny, stride: nx,
		exr: make([]float64, n*nx), exi: make([]float64, n*nx),
		eyr: make([]float64, n*ny), eyi: make([]float64, n*ny)}
	if periodic {
		e.stride = nx + 1
	}
	for i, c := range sea.Components {
		kx, ky := c.K*math.Cos(c.Dir), c.K*math.Sin(c.Dir)
		for ix := range nx {
			s, co := math.Sincos(kx * (x0 + float64(ix)*h - sea.X0))
			e.exr[i*nx+ix], e.exi[i*nx+ix] = co, s
		}
		for iy := range ny {
			s, co := math.Sincos(ky * (y0 + float64(iy)*h - sea.Y0))
			e.eyr[i*ny+iy], e.eyi[i*ny+iy] = co, s
		}
	}
	return e
}

// rows returns the number of stored rows.
func (e *gridEval) rows() int {
	if e.periodic {
		return e.ny + 1
	}
	return e.ny
}

// field is one frame of a gridEval: heights, gradients and their bounds.
type field struct {
	eta      []float32 // [iy*stride+ix]
	grad     []float32 // [2*(iy*stride+ix)], [..+1]: ∂η/∂x, ∂η/∂y
	min, max float64   // extreme node heights
	lip      float64   // largest slope of the bilinear interpolant of eta
}

// eval fills f with the field at time t. For η = Σ Re(A_n e^{i k_n·x}),
// the gradient is Σ Re(i k_n A_n e^{i k_n·x}) = −Σ k_n Im(A_n e^{i k_n·x}).
// Rows are shared among workers; the result does not depend on their
// number.
func (e *gridEval) eval(t float64, f *field, workers int) {
	nc := len(e.sea.Components)
	size := e.stride * e.rows()
	if len(f.eta) != size {
		f.eta = make([]float32, size)
		f.grad = make([]float32, 2*size)
	}
	cr := make([]float64, nc)
	ci := make([]float64, nc)
	kx := make([]float64, nc)
	ky := make([]float64, nc)
	for i, c := range e.sea.Components {
		s, co := math.Sincos(c.Phase - c.Omega*(t-e.sea.T0))
		cr[i], ci[i] = c.Amp*co, c.Amp*s
		kx[i], ky[i] = c.K*math.Cos(c.Dir), c.K*math.Sin(c.Dir)
	}
	nw := max(workers, 1)
	var next atomic.Int64
	var wg sync.WaitGroup
	for range nw {
		wg.Add(1)
		go func() {
			defer wg.Done()
			re := make([]float64, e.nx)
			gx := make([]float64, e.nx)
			gy := make([]float64, e.nx)
			for {
				iy := int(next.Add(1) - 1)
				if iy >= e.ny {
					return
				}
				clear(re)
				clear(gx)
				clear(gy)
				for i := 0; i < nc; i++ {
					yr, yi := e.eyr[i*e.ny+iy], e.eyi[i*e.ny+iy]
					ar := cr[i]*yr - ci[i]*yi
					ai := cr[i]*yi + ci[i]*yr
					xr := e.exr[i*e.nx : (i+1)*e.nx]
					xi := e.exi[i*e.nx : (i+1)*e.nx]
					kxi, kyi := kx[i], ky[i]
					for ix := range re {
						vr := ar*xr[ix] - ai*xi[ix]
						vi := ar*xi[ix] + ai*xr[ix]
						re[ix] += vr
						gx[ix] -= kxi * vi
						gy[ix] -= kyi * vi
					}
				}
				row := f.eta[iy*e.stride : (iy+1)*e.stride]
				g := f.grad[2*iy*e.stride : 2*(iy+1)*e.stride]
				for ix, v := range re {
					row[ix] = float32(v)
					g[2*ix] = float32(gx[ix])
					g[2*ix+1] = float32(gy[ix])
				}
				if e.periodic {
					row[e.nx] = row[0]
					g[2*e.nx], g[2*e.nx+1] = g[0], g[1]
				}
			}
		}()
	}
	wg.Wait()
	if e.periodic {
		copy(f.eta[e.ny*e.stride:], f.eta[:e.stride])
		copy(f.grad[2*e.ny*e.stride:], f.grad[:2*e.stride])
	}
	// Bounds: extreme heights, and the largest slope of the bilinear
	// interpolant. Within a cell its x-slope is a blend of the
	// x-differences of the cell's two x-edges, and likewise in y, so its
	// gradient never exceeds √(dx² + dy²)/h with dx, dy the larger edge
	// differences of that cell.
	lo, hi := math.Inf(1), math.Inf(-1)
	var lip2 float64
	nr := e.rows()
	for iy := 0; iy < nr; iy++ {
		row := f.eta[iy*e.stride : (iy+1)*e.stride]
		for _, v := range row {
			lo, hi = min(lo, float64(v)), max(hi, float64(v))
		}
		if iy+1 == nr {
			break
		}
		below := f.eta[(iy+1)*e.stride : (iy+2)*e.stride]
		for ix := 0; ix+1 < len(row); ix++ {
			a0, a1 := float64(row[ix]), float64(row[ix+1])
			b0, b1 := float64(below[ix]), float64(below[ix+1])
			dx := max(math.Abs(a1-a0), math.Abs(b1-b0))
			dy := max(math.Abs(b0-a0), math.Abs(b1-a1))
			lip2 = max(lip2, dx*dx+dy*dy)
		}
	}
	f.min, f.max = lo, hi
	f.lip = math.Sqrt(lip2) * e.inv
}

// Surface is the rendered sea surface at one instant: the sea on the world
// grid and the roughness on its tile. Make it with [Renderer.Surface].
type Surface struct {
	r          *Renderer
	t          float64
	sea, rough field
	zTop       float64      // above every point of the surface
	lipSea     float64      // slope bound of the sea alone
	lipAll     float64      // slope bound of sea plus roughness
	flatBeyond float64      // rays reaching the mean plane farther than this meet it there, metres
	lin        [2][]float32 // radiance of the last rendering, per camera

	// Lookup constants, copied from the renderer's grids.
	sx0, sy0, sInv, sxMax, syMax float64
	sStride                      int
	tInv                         float64
	tStride, tMask               int
}

// Time returns the instant of the surface, seconds.
func (s *Surface) Time() float64 { return s.t }

// Surface evaluates the rendered surface at time t (seconds), reusing the
// buffers of reuse when it is not nil.
func (r *Renderer) Surface(t float64, reuse *Surface) (*Surface, error) {
	if math.IsNaN(t) || math.IsInf(t, 0) {
		return nil, fmt.Errorf("surface time %g is not a finite number of seconds", t)
	}
	s := reuse
	if s == nil || s.r != r {
		s = &Surface{r: r,
			sx0: r.long.x0, sy0: r.long.y0, sInv: r.long.inv,
			sxMax: float64(r.long.nx - 1), syMax: float64(r.long.ny - 1), sStride: r.long.stride,
			tInv: r.tile.inv, tStride: r.tile.stride, tMask: r.tile.nx - 1,
		}
	}
	s.t = t
	r.long.eval(t, &s.sea, r.workers)
	r.tile.eval(t, &s.rough, r.workers)
	// Outside the sea grid the sea is flat (η = 0), so 0 joins the bounds.
	s.zTop = max(s.sea.max, 0) + s.rough.max + 1e-3
	s.lipSea = s.sea.lip
	s.lipAll = s.sea.lip + s.rough.lip
	s.flatBeyond = 4 * r.opt.MaxRangeM
	return s, nil
}

// seaCell locates (x, y) on the sea grid: the index of the cell's first
// node and the fractions across it; ok is false outside the grid.
func (s *Surface) seaCell(x, y float64) (i int, tx, ty float64, ok bool) {
	fx := (x - s.sx0) * s.sInv
	fy := (y - s.sy0) * s.sInv
	if !(fx >= 0 && fy >= 0 && fx < s.sxMax && fy < s.syMax) {
		return 0, 0, 0, false
	}
	ix, iy := int(fx), int(fy)
	return iy*s.sStride + ix, fx - float64(ix), fy - float64(iy), true
}

// tileCell locates (x, y) on the roughness tile.
func (s *Surface) tileCell(x, y float64) (i int, tx, ty float64) {
	fx, fy := x*s.tInv, y*s.tInv
	flx, fly := math.Floor(fx), math.Floor(fy)
	return (int(fly)&s.tMask)*s.tStride + int(flx)&s.tMask, fx - flx, fy - fly
}

// bilinear interpolates the cell of e whose first node is i.
func bilinear(e []float32, i, stride int, tx, ty float64) float64 {
	c := e[i : i+stride+2]
	a0, a1 := float64(c[0]), float64(c[1])
	b0, b1 := float64(c[stride]), float64(c[stride+1])
	a := a0 + tx*(a1-a0)
	b := b0 + tx*(b1-b0)
	return a + ty*(b-a)
}

// seaHeight returns the sea's height at (x, y), bilinear between nodes;
// 0 outside the grid.
func (s *Surface) seaHeight(x, y float64) float64 {
	i, tx, ty, ok := s.seaCell(x, y)
	if !ok {
		return 0
	}
	return bilinear(s.sea.eta, i, s.sStride, tx, ty)
}

// roughHeight returns the roughness at (x, y), bilinear on the tile.
func (s *Surface) roughHeight(x, y float64) float64 {
	i, tx, ty := s.tileCell(x, y)
	return bilinear(s.rough.eta, i, s.tStride, tx, ty)
}

// Height returns the rendered surface (sea plus roughness) at world (x, y),
// metres above the mean sea plane.
func (s *Surface) Height(x, y float64) float64 { return s.seaHeight(x, y) + s.roughHeight(x, y) }

// gradBilinear interpolates the gradient pairs of g in the cell whose first
// node is i.
func gradBilinear(g []float32, i, stride int, tx, ty float64) (gx, gy float64) {
	c := g[2*i : 2*(i+stride+2)]
	w00, w01, w10, w11 := (1-tx)*(1-ty), tx*(1-ty), (1-tx)*ty, tx*ty
	j := 2 * stride
	gx = w00*float64(c[0]) + w01*float64(c[2]) + w10*float64(c[j]) + w11*float64(c[j+2])
	gy = w00*float64(c[1]) + w01*float64(c[3]) + w10*float64(c[j+1]) + w11*float64(c[j+3])
	return gx, gy
}

// Gradient returns (∂η/∂x, ∂η/∂y) of the rendered surface at world (x, y):
// the analytic gradients at the grid nodes, interpolated bilinearly.
func (s *Surface) Gradient(x, y float64) (gx, gy float64) {
	if i, tx, ty, ok := s.seaCell(x, y); ok {
		gx, gy = gradBilinear(s.sea.grad, i, s.sStride, tx, ty)
	}
	i, tx, ty := s.tileCell(x, y)
	rx, ry := gradBilinear(s.rough.grad, i, s.tStride, tx, ty)
	return gx + rx, gy + ry
}

// cast marches the ray o + s·d (d a unit vector, world frame) onto the
// surface and returns the ray parameter of the first crossing, or false
// when the ray does not descend.
func (s *Surface) cast(o, d [3]float64) (float64, bool) { return s.castFrom(o, d, 0) }

// castFrom is cast with the march starting no earlier than the ray
// parameter start, which the caller has proven to precede the first
// crossing.
func (s *Surface) castFrom(o, d [3]float64, start float64) (float64, bool) {
	ox, oy, oz := o[0], o[1], o[2]
	dx, dy, dzv := d[0], d[1], d[2]
	dz := -dzv
	if !(dz > 1e-9) {
		return 0, false
	}
	dh := math.Sqrt(dx*dx + dy*dy)
	if oz*dh > s.flatBeyond*dz {
		// A ray that reaches the mean plane far beyond the evaluated sea
		// (near the horizon) meets it there: marching at grazing
		// incidence would take thousands of steps for a few pixels.
		return oz / dz, true
	}
	rmax := s.rough.max
	// z1 is the height of the ray point at t above the sea lifted by the
	// highest roughness, z2 its height above the rendered surface.
	z1 := func(t float64) float64 { return oz + t*dzv - s.seaHeight(ox+t*dx, oy+t*dy) - rmax }
	z2 := func(t float64) float64 {
		x, y := ox+t*dx, oy+t*dy
		return oz + t*dzv - s.seaHeight(x, y) - s.roughHeight(x, y)
	}
	// Phase 1: the sea alone, lifted by the highest roughness, is a
	// surface that lies above the rendered one; march on it with its own
	// slope bound: from a point f above it, the ray cannot meet it within
	// f / (|d_z| + G|d_h|).
	t := max(0, (oz-s.zTop)/dz, start)
	inv1 := 1 / (dz + s.lipSea*dh)
	for it := 0; it < maxMarch; it++ {
		f1 := z1(t)
		if f1 < nearSurfaceM {
			break
		}
		t += f1 * inv1
	}
	// Phase 2: the whole surface, steps bounded by its slope, floored at
	// minStepM. Steps are over-relaxed by k (Keinert et al. 2014,
	// "Enhanced sphere tracing", STAG): a longer step is kept when the
	// safe intervals at its two ends overlap, else the plain step is
	// taken; k is chosen so that over a flat surface the check passes with
	// a margin.
	inv2 := 1 / (dz + s.lipAll*dh)
	k2 := 2.5 / (dz*inv2 + 1.5)
	a := t
	fa := z2(a)
	if fa <= 0 {
		// Only rounding (or a ray starting below the crests) lands here:
		// step back to the plane above every crest.
		a = max(0, (oz-s.zTop)/dz)
		fa = z2(a)
		if fa <= 0 {
			return a, true
		}
	}
	var b, fb float64
	found := false
	for it := 0; it < maxMarch; it++ {
		plain := max(fa*inv2, minStepM)
		b = a + max(k2*fa*inv2, minStepM)
		fb = z2(b)
		if b-a > plain && (fb <= 0 || b-a > plain+fb*inv2) {
			// The long step is not proven free of crossings before b:
			// take the plain one. If b was below the surface, the
			// crossing is then bracketed by the plain step or by b.
			bp := a + plain
			fp := z2(bp)
			if fp <= 0 {
				b, fb = bp, fp
				found = true
				break
			}
			if fb <= 0 {
				a, fa = bp, fp
				found = true
				break
			}
			a, fa = bp, fp
			continue
		}
		if fb <= 0 {
			found = true
			break
		}
		a, fa = b, fb
	}
	if !found {
		return b, true
	}
	// Phase 3: bisection, then a secant step inside the last bracket.
	for b-a > bisectTolM {
		m := 0.5 * (a + b)
		fm := z2(m)
		if fm > 0 {
			a, fa = m, fm
		} else {
			b, fb = m, fm
		}
	}
	return a + fa/(fa-fb)*(b-a), true
}

// Cast traces the ray through pixel px (fractional pixel coordinates, the
// centre of the top-left pixel at (0, 0)) of one camera onto the surface
// and returns the world point where it meets it; ok is false for a ray
// that does not descend to the sea or a pixel the lens model cannot
// invert.
func (r *Renderer) Cast(s *Surface, side Side, px [2]float64) (hit [3]float64, ok bool) {
	cam := r.rig.Left
	if side == RightSide {
		cam = r.rig.Right
	}
	xy, ok := cam.Unproject(px)
	if !ok {
		return hit, false
	}
	d := rdMatVec(r.camToW[side&1], [3]float64{xy[0], xy[1], 1})
	n := math.Sqrt(d[0]*d[0] + d[1]*d[1] + d[2]*d[2])
	d = [3]float64{d[0] / n, d[1] / n, d[2] / n}
	o := r.origin[side&1]
	t, ok := s.cast(o, d)
	if !ok {
		return hit, false
	}
	return [3]float64{o[0] + t*d[0], o[1] + t*d[1], o[2] + t*d[2]}, true
}

// FresnelReflectance returns the reflectance of unpolarised light at a
// smooth interface from air into a medium of refractive index n, for the
// cosine cosI of the angle of incidence: ρ = (r_s² + r_p²)/2 with
// r_s = (cos i − n cos t)/(cos i + n cos t),
// r_p = (n cos i − cos t)/(n cos i + cos t), sin t = sin i / n
// (Fresnel equations; Born & Wolf, Principles of Optics, §1.5).
func FresnelReflectance(cosI, n float64) float64 {
	cosI = max(0, min(1, cosI))
	sin2t := (1 - cosI*cosI) / (n * n)
	cosT := math.Sqrt(1 - sin2t)
	rs := (cosI - n*cosT) / (cosI + n*cosT)
	rp := (n*cosI - cosT) / (n*cosI + cosT)
	return 0.5 * (rs*rs + rp*rp)
}

// SkyGradation returns the relative radiance of the sky at zenith angle Z
// (given as cos Z ≥ 0), normalised to 1 at the horizon: the gradation
// function φ(Z) = 1 + a·exp(b / cos Z) of the CIE standard clear sky,
// a = −1, b = −0.32 (CIE S 011/E:2003, ISO 15469; values from memory), which
// brightens toward the horizon.
func SkyGradation(cosZ float64) float64 {
	if !(cosZ > 0) {
		return 1
	}
	return 1 - math.Exp(-0.32/cosZ)
}

// shade returns the linear radiance seen along the unit ray d from a
// surface point with gradient (gx, gy); hit false means the ray sees the
// sky.
func (r *Renderer) shade(d [3]float64, gx, gy float64, hit bool) float64 {
	sh := &r.opt.Shading
	if !hit {
		return sh.SkyHorizon * lookup(r.sky, d[2])
	}
	inv := 1 / math.Sqrt(1+gx*gx+gy*gy)
	n := [3]float64{-gx * inv, -gy * inv, inv}
	cosI := -(d[0]*n[0] + d[1]*n[1] + d[2]*n[2])
	if cosI < 1e-4 {
		// The interpolated normal faces away from the camera (only at
		// grazing views of steep slopes): treat as grazing incidence.
		cosI = 1e-4
	}
	// Mirror direction r = d + 2 cos i · n; a mirror ray that dips below
	// the horizon would meet the sea again, and is given the horizon sky
	// (common practice for single-bounce water shading).
	rz := d[2] + 2*cosI*n[2]
	return sh.Water + lookup(r.fresnel, cosI)*sh.SkyHorizon*lookup(r.sky, rz)
}

// tabulate samples f on [0, 1] at shadeTable+1 evenly spaced points.
func tabulate(f func(float64) float64) []float32 {
	t := make([]float32, shadeTable+2)
	for i := range t {
		t[i] = float32(f(min(1, float64(i)/shadeTable)))
	}
	return t
}

// lookup interpolates a table of tabulate linearly; u is clamped to [0, 1].
func lookup(t []float32, u float64) float64 {
	u = max(0, min(1, u)) * shadeTable
	i := int(u)
	f := u - float64(i)
	return float64(t[i]) + f*float64(t[i+1]-t[i])
}

// RenderPair renders surface s with both cameras into left and right,
// which are allocated when nil and must otherwise have the rig's image
// size. frame keys the sensor noise, so that every frame of a sequence has
// its own; the result does not depend on the number of workers. A Surface
// must not be rendered by two calls at once.
//
// Rays are cast column by column from the bottom row up. Where the ray of
// the pixel above (B) descends less steeply than the ray below (A) by
// more than the surface can rise between their vertical planes
// (tan e_A − tan e_B ≥ G·|u_A − u_B|, e the depression, u the horizontal
// unit direction, G the slope bound), B cannot meet the surface before
// A's horizontal hit distance, and its march starts there: both rays
// leave the same centre, and at every horizontal distance short of A's
// hit, B is higher than A, which is above the surface, by more than the
// surface can differ between the two rays. Otherwise B starts from the
// plane above every crest.
func (r *Renderer) RenderPair(ctx context.Context, s *Surface, frame int, left, right *image.Gray) (*image.Gray, *image.Gray, error) {
	if s == nil || s.r != r {
		return nil, nil, fmt.Errorf("surface was not made by this renderer; use Renderer.Surface")
	}
	imgs := [2]*image.Gray{left, right}
	for i, im := range imgs {
		if im == nil {
			imgs[i] = image.NewGray(image.Rect(0, 0, r.w, r.h))
			continue
		}
		if b := im.Bounds(); b.Dx() != r.w || b.Dy() != r.h {
			return nil, nil, fmt.Errorf("%s image is %d×%d px but the rig's cameras are %d×%d px", Side(i), b.Dx(), b.Dy(), r.w, r.h)
		}
	}
	for side := range 2 {
		if len(s.lin[side]) != r.w*r.h {
			s.lin[side] = make([]float32, r.w*r.h)
		}
	}
	// Pass 1: radiance, by strips of columns.
	strips := (r.w + stripWidth - 1) / stripWidth
	var next atomic.Int64
	var wg sync.WaitGroup
	for range r.workers {
		wg.Add(1)
		go func() {
			defer wg.Done()
			for {
				j := int(next.Add(1) - 1)
				if j >= 2*strips || ctx.Err() != nil {
					return
				}
				side, x0 := j/strips, (j%strips)*stripWidth
				r.traceStrip(s, side, x0, min(x0+stripWidth, r.w), s.lin[side], nil, true)
			}
		}()
	}
	wg.Wait()
	if err := ctx.Err(); err != nil {
		return nil, nil, err
	}
	// Pass 2: vignetting, encoding and noise, by rows.
	sh := &r.opt.Shading
	next.Store(0)
	for range r.workers {
		wg.Add(1)
		go func() {
			defer wg.Done()
			pcg := rand.NewPCG(0, 0)
			rng := rand.New(pcg)
			for {
				j := int(next.Add(1) - 1)
				if j >= 2*r.h {
					return
				}
				side, py := j/r.h, j%r.h
				// Noise stream of this row of this image of this frame.
				pcg.Seed(r.opt.Seed, uint64(frame)<<32^uint64(side)<<31^uint64(py)^0x6e6f697365)
				im := imgs[side]
				out := im.Pix[(py-im.Rect.Min.Y)*im.Stride : (py-im.Rect.Min.Y)*im.Stride+r.w]
				lin := s.lin[side][py*r.w : (py+1)*r.w]
				rays := r.rays[side][4*py*r.w : 4*(py+1)*r.w]
				for px := range out {
					L := float64(lin[px])
					if sh.Vignetting {
						L *= float64(rays[4*px+3])
					}
					v := r.encode(L)
					if sh.NoiseDN > 0 {
						v += sh.NoiseDN * rng.NormFloat64()
					}
					out[px] = uint8(max(0, min(255, math.Round(v))))
				}
			}
		}()
	}
	wg.Wait()
	return imgs[0], imgs[1], nil
}

// stripWidth is the number of image columns one worker casts at a time.
const stripWidth = 16

// traceStrip casts the rays of columns [x0, x1) of one camera, bottom row
// first, and writes their radiance into lin (row-major, the full image);
// hits, when not nil, receives each ray's parameter at the surface (NaN
// for sky). coherent enables the start from the hit of the pixel below
// (see RenderPair).
func (r *Renderer) traceStrip(s *Surface, side, x0, x1 int, lin []float32, hits []float64, coherent bool) {
	var (
		have   [stripWidth]bool
		rho    [stripWidth]float64 // horizontal hit distance of the pixel below
		tanE   [stripWidth]float64 // tangent of its depression
		ux, uy [stripWidth]float64 // its horizontal unit direction
	)
	o := r.origin[side]
	tab := r.rays[side]
	for py := r.h - 1; py >= 0; py-- {
		for px := x0; px < x1; px++ {
			c := px - x0
			k := 4 * (py*r.w + px)
			d := [3]float64{float64(tab[k]), float64(tab[k+1]), float64(tab[k+2])}
			dz := -d[2]
			dh := math.Sqrt(d[0]*d[0] + d[1]*d[1])
			start := 0.0
			if coherent && have[c] && dz > 1e-9 && dh > 0 {
				tb := dz / dh
				sep := math.Hypot(d[0]/dh-ux[c], d[1]/dh-uy[c])
				if tanE[c]-tb >= s.lipAll*sep {
					// 1 cm short of the hit below, for its rounding.
					start = max(rho[c]-0.01, 0) / dh
				}
			}
			var L float64
			t, ok := s.castFrom(o, d, start)
			if ok {
				gx, gy := s.Gradient(o[0]+t*d[0], o[1]+t*d[1])
				L = r.shade(d, gx, gy, true)
				if r.foam != nil {
					L = r.foam.radiance(L, o[0]+t*d[0], o[1]+t*d[1], s.t)
				}
				have[c], rho[c], tanE[c], ux[c], uy[c] = dh > 0, t*dh, dz/dh, d[0]/dh, d[1]/dh
			} else {
				L = r.shade(d, 0, 0, false)
				have[c] = false
				t = math.NaN()
			}
			lin[py*r.w+px] = float32(L)
			if hits != nil {
				hits[py*r.w+px] = t
			}
		}
	}
}

// encode maps linear radiance to a grey level through the gamma table.
func (r *Renderer) encode(L float64) float64 {
	if !(L > 0) {
		return 0
	}
	u := L * gammaTable
	if u >= gammaTable {
		return 255
	}
	i := int(u)
	f := u - float64(i)
	return float64(r.gamma[i]) + f*float64(r.gamma[i+1]-r.gamma[i])
}

// Small 3×3 helpers (row-major).

func rdMatVec(m [9]float64, v [3]float64) [3]float64 {
	return [3]float64{
		m[0]*v[0] + m[1]*v[1] + m[2]*v[2],
		m[3]*v[0] + m[4]*v[1] + m[5]*v[2],
		m[6]*v[0] + m[7]*v[1] + m[8]*v[2],
	}
}

func rdMul(a, b [9]float64) [9]float64 {
	var c [9]float64
	for i := range 3 {
		for j := range 3 {
			c[3*i+j] = a[3*i]*b[j] + a[3*i+1]*b[3+j] + a[3*i+2]*b[6+j]
		}
	}
	return c
}

func rdTranspose(a [9]float64) [9]float64 {
	return [9]float64{a[0], a[3], a[6], a[1], a[4], a[7], a[2], a[5], a[8]}
}
