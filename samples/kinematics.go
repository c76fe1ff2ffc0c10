package samples

import "math"

// CrestSpeedAlong returns the exact instantaneous linear speed, along the
// direction theta (radians counter-clockwise from +x) at fixed
// cross-position, of the crest (local maximum along theta) through the
// point (x, y) at time t: c = −η_st/η_ss, with s the coordinate along
// theta. It follows from differentiating η_s(s(t), t) = 0 along the
// moving maximum: η_ss·ds/dt + η_st = 0 (the kinematics of a moving
// maximum of a linear superposition; Dean & Dalrymple 1991 for the
// components). For one component of wavenumber k travelling along theta
// it is ω/k, the phase speed. The second return is η_ss, negative at a
// maximum; c is NaN where η_ss is zero.
func (s *LinearSea) CrestSpeedAlong(x, y, t, theta float64) (c, etaSS float64) {
	ct, st := math.Cos(theta), math.Sin(theta)
	var ss, sT float64
	for _, cp := range s.Components {
		kx, ky := cp.K*math.Cos(cp.Dir), cp.K*math.Sin(cp.Dir)
		ks := kx*ct + ky*st // wavenumber along theta
		psi := kx*(x-s.X0) + ky*(y-s.Y0) - cp.Omega*(t-s.T0) + cp.Phase
		cs := math.Cos(psi)
		// η = a cos ψ: η_ss = −a k_s² cos ψ, η_st = a k_s ω cos ψ.
		ss -= cp.Amp * ks * ks * cs
		sT += cp.Amp * ks * cp.Omega * cs
	}
	if ss == 0 {
		return math.NaN(), 0
	}
	return -sT / ss, ss
}

// SlopeAlong returns η_s, the slope along theta at (x, y, t): zero at a
// crest of the sections along theta.
func (s *LinearSea) SlopeAlong(x, y, t, theta float64) float64 {
	ct, st := math.Cos(theta), math.Sin(theta)
	var v float64
	for _, cp := range s.Components {
		kx, ky := cp.K*math.Cos(cp.Dir), cp.K*math.Sin(cp.Dir)
		psi := kx*(x-s.X0) + ky*(y-s.Y0) - cp.Omega*(t-s.T0) + cp.Phase
		v -= cp.Amp * (kx*ct + ky*st) * math.Sin(psi)
	}
	return v
}
