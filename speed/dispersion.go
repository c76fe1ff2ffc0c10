package speed

import (
	"errors"
	"fmt"
	"math"
)

// G is standard gravity in m/s², the value fixed by the 3rd CGPM (1901).
const G = 9.80665

// deepKH is the value of kh above which tanh(kh) equals 1 and
// 2kh/sinh(2kh) is zero to double precision; beyond it deep-water formulas
// are used (which also avoids overflow of sinh).
const deepKH = 20.0

// newtonMaxIter bounds the Newton iterations of WaveNumber. From the
// Fenton–McKee start the iteration converges in 2 to 4 steps; the bound is a
// guard only.
const newtonMaxIter = 50

// isDeep reports whether depth follows the deep-water convention of this
// package: depth <= 0 or +Inf.
func isDeep(depth float64) bool { return depth <= 0 || math.IsInf(depth, 1) }

// tanhKH returns tanh(k·depth) under the depth convention of this package.
func tanhKH(k, depth float64) float64 {
	if isDeep(depth) {
		return 1
	}
	return math.Tanh(k * depth)
}

// checkDepth returns an error for a depth that is NaN.
func checkDepth(depth float64) error {
	if math.IsNaN(depth) {
		return errors.New("speed: water depth is NaN; give a depth in metres, or 0 for deep water")
	}
	return nil
}

// WaveNumber returns the wavenumber k (rad/m) of a linear surface gravity wave
// of radian frequency omega (rad/s) on still water of the given depth (m;
// depth <= 0 or +Inf means deep water), the root of the linear dispersion
// relation ω² = g k tanh(kh) (e.g. Dean & Dalrymple, Water Wave Mechanics for
// Engineers and Scientists, 1991).
//
// Deep water gives k = ω²/g. In finite depth the explicit approximation of
// Fenton & McKee (1990, Coastal Engineering 14) is the start of Newton
// iterations on f(x) = x tanh x − α with x = kh and α = ω²h/g, stopped when a
// step is below 1e-12 relative (and then one more step is taken). An error is
// returned for omega <= 0, NaN input, or if the iteration does not converge.
func WaveNumber(omega, depth float64) (float64, error) {
	if math.IsNaN(omega) || omega <= 0 || math.IsInf(omega, 0) {
		return 0, fmt.Errorf("speed: wave frequency omega = %g rad/s is not a positive finite number; give the radian frequency 2π/T of the wave", omega)
	}
	if err := checkDepth(depth); err != nil {
		return 0, err
	}
	if isDeep(depth) {
		return omega * omega / G, nil
	}
	alpha := omega * omega * depth / G
	x := fentonMcKeeKH(alpha)
	for i := 0; i < newtonMaxIter; i++ {
		t := math.Tanh(x)
		f := x*t - alpha
		// d/dx (x tanh x) = tanh x + x sech²x = tanh x + x (1 − tanh²x).
		fp := t + x*(1-t*t)
		dx := f / fp
		x -= dx
		if math.Abs(dx) <= 1e-12*x {
			// One more step: Newton converges quadratically, so this
			// leaves x at rounding level.
			t = math.Tanh(x)
			x -= (x*t - alpha) / (t + x*(1-t*t))
			return x / depth, nil
		}
	}
	return 0, fmt.Errorf("speed: dispersion relation did not converge for omega = %g rad/s and depth = %g m; check that both are physical", omega, depth)
}

// fentonMcKeeKH is the explicit approximation kh ≈ α coth(α^{3/4})^{2/3}
// of Fenton & McKee (1990, Coastal Engineering 14), error below 1.7 %.
func fentonMcKeeKH(alpha float64) float64 {
	return alpha * math.Pow(1/math.Tanh(math.Pow(alpha, 0.75)), 2.0/3.0)
}

// FentonMcKeeStart returns the explicit approximation of the wavenumber k
// (rad/m) for radian frequency omega and depth h of Fenton & McKee (1990,
// Coastal Engineering 14): kh ≈ α coth(α^{3/4})^{2/3}, α = ω²h/g, error below
// 1.7 %. Deep water (depth <= 0 or +Inf) gives ω²/g. It returns NaN when omega
// is not positive or an argument is NaN.
func FentonMcKeeStart(omega, depth float64) float64 {
	if math.IsNaN(omega) || omega <= 0 || math.IsNaN(depth) {
		return math.NaN()
	}
	if isDeep(depth) {
		return omega * omega / G
	}
	return fentonMcKeeKH(omega*omega*depth/G) / depth
}

// HuntWaveNumber returns the Padé-type explicit approximation of the
// wavenumber attributed to Hunt (1979, J. Waterway Port Coastal Ocean Div.
// ASCE 105), in the form quoted by Dean & Dalrymple (1991):
//
//	(kh)² = α (α + 1/(1 + 0.6522α + 0.4622α² + 0.0864α⁴ + 0.0675α⁵)),  α = ω²h/g,
//
// accurate to about 0.2 % (coefficients and accuracy from memory; the tests
// check the accuracy against the exact root). Deep water (depth <= 0 or +Inf)
// gives ω²/g. It returns NaN when omega is not positive or an argument is NaN.
func HuntWaveNumber(omega, depth float64) float64 {
	if math.IsNaN(omega) || omega <= 0 || math.IsNaN(depth) {
		return math.NaN()
	}
	if isDeep(depth) {
		return omega * omega / G
	}
	a := omega * omega * depth / G
	a2 := a * a
	a4 := a2 * a2
	den := 1 + 0.6522*a + 0.4622*a2 + 0.0864*a4 + 0.0675*a4*a
	return math.Sqrt(a*(a+1/den)) / depth
}

// Omega returns the intrinsic (still-water) radian frequency σ = √(g k tanh kh)
// of wavenumber k (rad/m) on water of the given depth (linear dispersion
// relation; Dean & Dalrymple 1991). It returns NaN for k < 0 or NaN input.
func Omega(k, depth float64) float64 {
	if math.IsNaN(k) || k < 0 || math.IsNaN(depth) {
		return math.NaN()
	}
	return math.Sqrt(G * k * tanhKH(k, depth))
}

// PhaseSpeed returns the still-water linear phase speed c = σ/k =
// √((g/k) tanh kh) in m/s (Dean & Dalrymple 1991). Deep water gives √(g/k).
// It returns NaN for k <= 0 or NaN input.
func PhaseSpeed(k, depth float64) float64 {
	if math.IsNaN(k) || k <= 0 || math.IsNaN(depth) {
		return math.NaN()
	}
	return math.Sqrt(G / k * tanhKH(k, depth))
}

// GroupSpeed returns the still-water linear group speed dσ/dk =
// (c/2)(1 + 2kh/sinh 2kh) in m/s (Dean & Dalrymple 1991); for kh above 20,
// and in deep water, c/2. It returns NaN for k <= 0 or NaN input.
func GroupSpeed(k, depth float64) float64 {
	c := PhaseSpeed(k, depth)
	if math.IsNaN(c) {
		return c
	}
	if isDeep(depth) || k*depth > deepKH {
		return c / 2
	}
	kh2 := 2 * k * depth
	return c / 2 * (1 + kh2/math.Sinh(kh2))
}

// Current is a depth-uniform current in m/s: U is the east (x) component and
// V the north (y) component.
type Current struct{ U, V float64 }

// along returns the component of the current along the unit vector at angle
// dirRad, counter-clockwise from +x.
func (c Current) along(dirRad float64) float64 {
	return c.U*math.Cos(dirRad) + c.V*math.Sin(dirRad)
}

// DopplerOmega returns the absolute radian frequency ω = σ(|k|) + k·U seen by
// a fixed observer for the wavenumber vector (kx, ky) in rad/m on a uniform
// current (Doppler shift of linear waves; e.g. Dean & Dalrymple 1991).
func DopplerOmega(kx, ky, depth float64, cur Current) float64 {
	return Omega(math.Hypot(kx, ky), depth) + kx*cur.U + ky*cur.V
}

// VorticityPhaseSpeed returns the linear phase speed in m/s, seen by a fixed
// observer, of waves of wavenumber k (rad/m) travelling on the shear current
// U(z) = us + omegaShear·z (z up, surface at z = 0; us and the shear are the
// components along the direction of travel). It is the + root of
//
//	(c − U_s)² k coth(kh) + Ω (c − U_s) − g = 0,
//	c = U_s − (Ω/2k) tanh(kh) + √((Ω tanh(kh)/2k)² + (g/k) tanh(kh)),
//
// the classical constant-vorticity result (Thompson 1949; Teles da Silva &
// Peregrine 1988, J. Fluid Mech. 195) — from memory. Deep water uses
// tanh(kh) = 1. Sign convention: positive omegaShear means the current grows
// toward the surface in the direction the waves travel; such a shear slows
// the waves relative to the surface current. omegaShear = 0 gives
// PhaseSpeed(k, depth) + us. It returns NaN for k <= 0 or NaN input.
func VorticityPhaseSpeed(k, depth, us, omegaShear float64) float64 {
	if math.IsNaN(k) || k <= 0 || math.IsNaN(depth) || math.IsNaN(us) || math.IsNaN(omegaShear) {
		return math.NaN()
	}
	t := tanhKH(k, depth)
	b := omegaShear * t / (2 * k)
	return us - b + math.Sqrt(b*b+G/k*t)
}

// NominalPhaseSpeed returns the phase speed in m/s of waves of wavenumber
// magnitude k (rad/m) travelling along the unit vector at angle dirRad
// (counter-clockwise from +x), as seen by a fixed camera: σ/k + U·k̂ on a
// uniform current (vorticity = 0), or, for vorticity ≠ 0, the
// constant-vorticity speed VorticityPhaseSpeed with U_s = U·k̂ and shear
// dU/dz = vorticity along k̂ (positive: the current grows toward the surface
// in the direction of travel).
func NominalPhaseSpeed(k, dirRad, depth float64, cur Current, vorticity float64) float64 {
	us := cur.along(dirRad)
	if vorticity == 0 {
		return PhaseSpeed(k, depth) + us
	}
	return VorticityPhaseSpeed(k, depth, us, vorticity)
}

// WaveNumberFromAbsolute returns the wavenumber magnitude k (rad/m) of waves
// travelling along dirRad whose absolute radian frequency, seen by a fixed
// observer, is omegaAbs: the root of ω_abs = k·c(k) with c the nominal phase
// speed of NominalPhaseSpeed (uniform current: ω_abs = σ(k) + k U·k̂, the
// Doppler relation; vorticity ≠ 0: the constant-vorticity relation).
//
// On an opposing current k·c(k) rises to a maximum and falls again; the
// root on the rising branch (smaller k, waves that still make headway) is
// returned, and an error when ω_abs exceeds the maximum (the waves are
// blocked by the current). The root is bracketed on a geometric scan of k and
// refined by bisection to rounding level.
func WaveNumberFromAbsolute(omegaAbs, depth float64, cur Current, dirRad, vorticity float64) (float64, error) {
	k0, err := WaveNumber(omegaAbs, depth)
	if err != nil {
		return 0, err
	}
	for _, v := range []struct {
		name string
		x    float64
	}{{"current U", cur.U}, {"current V", cur.V}, {"direction", dirRad}, {"vorticity", vorticity}} {
		if math.IsNaN(v.x) || math.IsInf(v.x, 0) {
			return 0, fmt.Errorf("speed: %s = %g is not a finite number; give a finite value (0 if unknown)", v.name, v.x)
		}
	}
	if cur.U == 0 && cur.V == 0 && vorticity == 0 {
		return k0, nil
	}
	f := func(k float64) float64 {
		return k*NominalPhaseSpeed(k, dirRad, depth, cur, vorticity) - omegaAbs
	}
	// Geometric scan from far below to far above the still-water root; the
	// first sign change from − to + brackets the root on the rising branch.
	const ratio = 1.05
	lo := k0 * 1e-6
	flo := f(lo)
	if !(flo < 0) {
		return 0, fmt.Errorf("speed: no wave of frequency %g rad/s travels along %g rad on this current and shear; check the sign and size of the current and vorticity", omegaAbs, dirRad)
	}
	hi := 0.0
	for k := lo * ratio; k < k0*1e6; k *= ratio {
		fk := f(k)
		if math.IsNaN(fk) {
			break
		}
		if fk >= 0 {
			hi = k
			break
		}
		lo = k
	}
	if hi == 0 {
		return 0, fmt.Errorf("speed: waves of frequency %g rad/s along %g rad are blocked by the current (no wavenumber solves the Doppler relation); check the current and its direction", omegaAbs, dirRad)
	}
	for i := 0; i < 200; i++ {
		mid := 0.5 * (lo + hi)
		if mid <= lo || mid >= hi {
			break
		}
		if f(mid) < 0 {
			lo = mid
		} else {
			hi = mid
		}
	}
	if math.Abs(f(lo)) < math.Abs(f(hi)) {
		return lo, nil
	}
	return hi, nil
}

// PhaseSpeedFromPeriod returns the nominal phase speed ω_abs/k in m/s of
// waves of period T (s) travelling along dirRad (counter-clockwise from +x)
// on water of the given depth with a uniform current cur and, optionally, a
// constant vorticity (shear dU/dz along the direction of travel, 1/s; 0 for
// a depth-uniform current).
//
// T is the absolute period, the one a fixed camera records: the peak period of
// the record's spectrum is absolute, not intrinsic. The wavenumber is found by
// WaveNumberFromAbsolute; the result equals σ/k + U·k̂ on a uniform current.
func PhaseSpeedFromPeriod(T, depth float64, cur Current, dirRad, vorticity float64) (float64, error) {
	if math.IsNaN(T) || T <= 0 || math.IsInf(T, 0) {
		return 0, fmt.Errorf("speed: wave period T = %g s is not a positive finite number; give the peak period in seconds", T)
	}
	omegaAbs := 2 * math.Pi / T
	k, err := WaveNumberFromAbsolute(omegaAbs, depth, cur, dirRad, vorticity)
	if err != nil {
		return 0, err
	}
	return omegaAbs / k, nil
}
