package samples

import (
	"math"
	"testing"
)

// A regular wave travelling along theta: the crest speed is its phase
// speed ω/k (deep water ω² = gk; Dean & Dalrymple 1991) everywhere.
func TestCrestSpeedAlongRegular(t *testing.T) {
	const g = 9.80665
	k := 2 * math.Pi / 20
	sea := &LinearSea{Components: []Component{{Amp: 0.5, K: k, Omega: math.Sqrt(g * k), Dir: 0.3}}}
	c, ss := sea.CrestSpeedAlong(3, 4, 1.2, 0.3)
	if want := math.Sqrt(g / k); math.Abs(c-want) > 1e-9*want || ss == 0 {
		t.Errorf("crest speed %.12g, want ω/k = %.12g", c, want)
	}
}

// On a directional sea, a maximum found numerically along theta and
// followed over a small time step moves by c·dt (central finite
// difference of the generator's own η), and c matches CrestSpeedAlong.
func TestCrestSpeedAlongFiniteDifference(t *testing.T) {
	sea, err := JONSWAPSea{HsM: 0.45, TpS: 2.6, Gamma: 3.3, Spreading: 10, DirectionDeg: 20, Seed: 3, Components: 128, FMaxRatio: 3}.Sea()
	if err != nil {
		t.Fatal(err)
	}
	theta := 20 * math.Pi / 180
	ct, st := math.Cos(theta), math.Sin(theta)
	// maxAt refines a zero of η_s along theta near s0 at fixed cross n by
	// bisection on the generator's slope.
	maxAt := func(s0, n, tt float64) (float64, bool) {
		f := func(s float64) float64 { return sea.SlopeAlong(s*ct-n*st, s*st+n*ct, tt, theta) }
		a, b := s0-0.3, s0+0.3
		if f(a) <= 0 || f(b) >= 0 {
			return 0, false
		}
		for i := 0; i < 80; i++ {
			m := (a + b) / 2
			if f(m) > 0 {
				a = m
			} else {
				b = m
			}
		}
		return (a + b) / 2, true
	}
	checked := 0
	for i := 0; i < 400 && checked < 20; i++ {
		s0, n, tt := 0.37*float64(i), 1.3*float64(i%7), 0.5*float64(i%11)
		s1, ok := maxAt(s0, n, tt)
		if !ok {
			continue
		}
		c, ss := sea.CrestSpeedAlong(s1*ct-n*st, s1*st+n*ct, tt, theta)
		if ss >= 0 || math.Abs(c) > 20 {
			continue
		}
		const dt = 1e-4
		a, okA := maxAt(s1, n, tt+dt)
		b, okB := maxAt(s1, n, tt-dt)
		if !okA || !okB {
			continue
		}
		fd := (a - b) / (2 * dt)
		if math.Abs(fd-c) > 1e-4*math.Max(1, math.Abs(c)) {
			t.Errorf("crest at s %.4f n %.2f t %.2f: finite difference %.6f m/s, CrestSpeedAlong %.6f m/s", s1, n, tt, fd, c)
		}
		checked++
	}
	if checked < 10 {
		t.Fatalf("only %d crests checked", checked)
	}
}
