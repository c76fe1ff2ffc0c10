package analysis

import (
	"math"

	"crestspeed/speed"
	"crestspeed/tracking"
)

// Reasons a track is split at a step (tracking.LinkOptions.Step).
const (
	// SplitAdvance: the crest line's advance is one no linear crest makes
	// in the frame interval — the detection is another crest segment, a
	// merge or split of crests, or a new maximum ahead of the old one.
	SplitAdvance = "advance outside the linear crest-speed range"
	// SplitElevation: the crest elevation changed by more than a crest
	// changes in the frame interval.
	SplitElevation = "crest elevation jump"
)

// stepGate returns the physical gate of a track's frame-to-frame steps.
//
// Advance. A crest of local wavenumber k moves along its normal at the
// phase speed c about which, within a wave group, it speeds up and slows
// down: crests pass through a group at c − c_g relative to the envelope
// that moves at c_g, so the crest speed swings by about c − c_g (linear
// group kinematics; Dean & Dalrymple 1991; half of c in deep water). Along
// θ0 at fixed cross-position an oblique crest line (ds/dn = m) moves
// √(1+m²) times faster. The measured advance in Δt must therefore lie
// within (c − c_g)·√(1+m²)·Δt + e of c·√(1+m²)·Δt, e the position
// uncertainty of a crest point, one sampling step (common practice).
//
// Elevation. A linear crest's elevation changes at the rate of its
// group's envelope, a small fraction of Hm0 per wave period; a change of
// more than 0.3 Hm0 from one frame to the next, at frame intervals up to
// Tp/8, is another crest (common practice; the threshold the tracking
// quality statistic uses), scaled up for longer intervals.
func stepGate(ref speed.References, hm0, tp, step float64) func(prev, next tracking.Crest, adv float64) string {
	return func(prev, next tracking.Crest, adv float64) string {
		dt := next.Time - prev.Time
		c := ref.Predict(prev)
		// c_g/c: the intrinsic ratio at the crest's local wavenumber,
		// carried to the nominal c; deep water's 1/2 without a wavelength.
		cg := c / 2
		if prev.Wavelength > 0 {
			k := 2 * math.Pi / prev.Wavelength
			cg = c * speed.GroupSpeed(k, ref.DepthM) / speed.PhaseSpeed(k, ref.DepthM)
		}
		obl := math.Sqrt(1 + prev.SlopeSN*prev.SlopeSN)
		if math.Abs(adv-c*obl*dt) > math.Abs(c-cg)*obl*dt+step {
			return SplitAdvance
		}
		if math.Abs(next.Elevation-prev.Elevation) > 0.3*hm0*math.Max(1, dt/(tp/8)) {
			return SplitElevation
		}
		return ""
	}
}
