package tracking

import (
	"fmt"
	"math"
	"math/rand/v2"
	"os/exec"
	"strings"
	"testing"
)

// sinusoidFrame fills a grid with η = a cos(k(x cosθ + y sinθ) − ωt).
func sinusoidFrame(g Geometry, a, k, omega, t float64) []float32 {
	f := make([]float32, g.Nx*g.Ny)
	c, s := math.Cos(g.Theta), math.Sin(g.Theta)
	for iy := 0; iy < g.Ny; iy++ {
		for ix := 0; ix < g.Nx; ix++ {
			x := g.X0 + float64(ix)*g.Dx
			y := g.Y0 + float64(iy)*g.Dy
			f[iy*g.Nx+ix] = float32(a * math.Cos(k*(x*c+y*s)-omega*t))
		}
	}
	return f
}

// For a sinusoid of amplitude a and wavenumber k the crest elevation is a,
// the zero-crossing width half a wavelength, the down-to-down distance one
// wavelength and S_c = a·k exactly (geometry of the cosine).
func TestDetectSinusoidGeometry(t *testing.T) {
	for _, thetaDeg := range []float64{0, 30, 135, -100} {
		g := Geometry{Nx: 160, Ny: 120, Dx: 0.5, Dy: 0.5, Theta: thetaDeg * math.Pi / 180}
		a, lambda := 0.8, 17.0
		k := 2 * math.Pi / lambda
		eta := sinusoidFrame(g, a, k, 0, 0)
		d := NewDetector(g, DetectOptions{MinElevation: 0.1, MinLength: 5})
		cr := d.Detect(eta, nil, 0, 0, d.NewScratch())
		if len(cr) < 3 {
			t.Fatalf("θ = %g°: %d crests", thetaDeg, len(cr))
		}
		for _, c := range cr {
			if math.Abs(c.Elevation-a) > 0.005*a {
				t.Errorf("θ = %g°: a_c = %.4f, want %.4f", thetaDeg, c.Elevation, a)
			}
			if math.Abs(c.Width-lambda/2) > 0.01*lambda {
				t.Errorf("θ = %g°: w_c = %.3f, want λ/2 = %.3f", thetaDeg, c.Width, lambda/2)
			}
			if !math.IsNaN(c.Wavelength) && math.Abs(c.Wavelength-lambda) > 0.01*lambda {
				t.Errorf("θ = %g°: wavelength %.3f, want %.3f", thetaDeg, c.Wavelength, lambda)
			}
			if math.Abs(c.Steepness()-a*k) > 0.02*a*k {
				t.Errorf("θ = %g°: S_c = %.4f, want a·k = %.4f", thetaDeg, c.Steepness(), a*k)
			}
			// the tip lies on a crest line: k·x ≡ 0 (mod 2π)
			ph := math.Remainder(k*c.S, 2*math.Pi)
			if math.Abs(ph) > 0.02 {
				t.Errorf("θ = %g°: crest phase %.3f rad off the crest line", thetaDeg, ph)
			}
		}
	}
}

// Masked cells (NaN) must not produce crests and must not crash detection.
func TestDetectWithMask(t *testing.T) {
	g := Geometry{Nx: 80, Ny: 60, Dx: 1, Dy: 1, Theta: 0.3}
	eta := sinusoidFrame(g, 1, 2*math.Pi/20, 0, 0)
	for iy := 10; iy < 40; iy++ {
		for ix := 20; ix < 50; ix++ {
			eta[iy*g.Nx+ix] = float32(math.NaN())
		}
	}
	d := NewDetector(g, DetectOptions{MinElevation: 0.1, MinLength: 3})
	for _, c := range d.Detect(eta, nil, 0, 0, d.NewScratch()) {
		if c.X > 20 && c.X < 49 && c.Y > 10 && c.Y < 39 {
			t.Errorf("crest inside the masked block at (%.1f, %.1f)", c.X, c.Y)
		}
		if math.Abs(c.Elevation-1) > 0.01 {
			t.Errorf("a_c %.3f", c.Elevation)
		}
	}
}

// The assignment must be optimal: checked against exhaustive enumeration of
// all permutations (the definition) and against scipy's
// linear_sum_assignment (Debian python3-scipy).
func TestHungarianOptimal(t *testing.T) {
	rng := rand.New(rand.NewPCG(3, 4))
	for trial := 0; trial < 200; trial++ {
		n := 1 + rng.IntN(6)
		cost := make([]float64, n*n)
		for i := range cost {
			cost[i] = math.Round(rng.Float64()*100) / 10
		}
		got := hungarian(cost, n)
		var sum float64
		seen := map[int]bool{}
		for i, j := range got {
			sum += cost[i*n+j]
			seen[j] = true
		}
		if len(seen) != n {
			t.Fatalf("not a permutation: %v", got)
		}
		best := math.Inf(1)
		permute(n, func(p []int) {
			var s float64
			for i, j := range p {
				s += cost[i*n+j]
			}
			best = math.Min(best, s)
		})
		if math.Abs(sum-best) > 1e-9 {
			t.Fatalf("trial %d: cost %g, optimum %g", trial, sum, best)
		}
	}
	// scipy cross-check on a larger matrix
	py := "/usr/bin/python3"
	if _, err := exec.LookPath(py); err != nil {
		t.Skip("no /usr/bin/python3")
	}
	n := 40
	cost := make([]float64, n*n)
	var sb strings.Builder
	for i := range cost {
		cost[i] = rng.Float64()
		fmt.Fprintf(&sb, "%.17g ", cost[i])
	}
	got := hungarian(cost, n)
	var sum float64
	for i, j := range got {
		sum += cost[i*n+j]
	}
	cmd := exec.Command(py, "-c", `import sys, numpy as np
from scipy.optimize import linear_sum_assignment
c = np.array(sys.stdin.read().split(), dtype=float).reshape(40, 40)
r, k = linear_sum_assignment(c)
print(repr(c[r, k].sum()))`)
	cmd.Stdin = strings.NewReader(sb.String())
	out, err := cmd.Output()
	if err != nil {
		t.Fatalf("scipy: %v", err)
	}
	var want float64
	fmt.Sscan(string(out), &want)
	if math.Abs(sum-want) > 1e-9 {
		t.Fatalf("Hungarian cost %.12g, scipy linear_sum_assignment %.12g", sum, want)
	}
}

func permute(n int, f func([]int)) {
	p := make([]int, n)
	for i := range p {
		p[i] = i
	}
	var rec func(k int)
	rec = func(k int) {
		if k == n {
			f(p)
			return
		}
		for i := k; i < n; i++ {
			p[k], p[i] = p[i], p[k]
			rec(k + 1)
			p[k], p[i] = p[i], p[k]
		}
	}
	rec(0)
}

// A regular wave's crests, linked over frames, form one track per crest,
// each moving at the prescribed speed; a two-frame gap is bridged.
func TestLinkRegularWave(t *testing.T) {
	g := Geometry{Nx: 120, Ny: 40, Dx: 1, Dy: 1, Theta: 0}
	lambda := 30.0
	k := 2 * math.Pi / lambda
	c := 6.0
	omega := c * k
	d := NewDetector(g, DetectOptions{MinElevation: 0.1, MinLength: 5})
	sc := d.NewScratch()
	l := NewLinker(LinkOptions{MaxGapFrames: 2, GateS: 0.2 * lambda, GateN: lambda, Speed: func(Crest) float64 { return c }})
	dt := 0.1
	for f := 0; f < 50; f++ {
		if f == 20 || f == 21 {
			continue // dropped frames
		}
		tt := float64(f) * dt
		l.Push(f, tt, d.Detect(sinusoidFrame(g, 1, k, omega, tt), nil, f, tt, sc))
	}
	tracks, st := l.Finish()
	if st.GapsBridged == 0 {
		t.Errorf("the two-frame gap was not bridged: %+v", st)
	}
	long := 0
	for _, tr := range tracks {
		if len(tr.Crests) < 10 {
			continue
		}
		long++
		a, b := tr.Crests[0], tr.Crests[len(tr.Crests)-1]
		v := (b.S - a.S) / (b.Time - a.Time)
		if math.Abs(v-c) > 0.01*c {
			t.Errorf("track %d moves at %.3f m/s, want %.3f", tr.ID, v, c)
		}
		for i := 1; i < len(tr.Crests); i++ {
			if tr.Crests[i].Frame <= tr.Crests[i-1].Frame {
				t.Fatalf("track %d frames out of order", tr.ID)
			}
		}
	}
	// 120 m of grid, 30 m wavelength, 5 s of record at 6 m/s: the crests
	// present at some time are at least 4; each crossing crest is one track.
	if long < 4 {
		t.Errorf("only %d long tracks", long)
	}
}

// With OnEnd the linker hands every track over once, when it ends (its
// last crest is older than the frame being pushed, except at Finish), keeps
// none itself, and the tracks are those it returns without OnEnd.
func TestLinkOnEndHandsOverEndedTracks(t *testing.T) {
	g := Geometry{Nx: 120, Ny: 40, Dx: 1, Dy: 1, Theta: 0}
	lambda := 30.0
	k := 2 * math.Pi / lambda
	c := 6.0
	d := NewDetector(g, DetectOptions{MinElevation: 0.1, MinLength: 5})
	sc := d.NewScratch()
	opt := LinkOptions{MaxGapFrames: 1, GateS: 0.2 * lambda, GateN: lambda, Speed: func(Crest) float64 { return c }}
	var frames [][]Crest
	dt := 0.1
	for f := 0; f < 80; f++ {
		tt := float64(f) * dt
		frames = append(frames, d.Detect(sinusoidFrame(g, 1, k, c*k, tt), nil, f, tt, sc))
	}
	plain := NewLinker(opt)
	for f, cr := range frames {
		plain.Push(f, float64(f)*dt, cr)
	}
	want, wantStats := plain.Finish()

	var got []Track
	pushing := -1
	duringRecord := 0
	opt.OnEnd = func(tr Track) {
		if pushing >= 0 {
			duringRecord++
			if last := tr.Crests[len(tr.Crests)-1].Frame; last >= pushing {
				t.Errorf("track %d handed over at frame %d with a crest of frame %d", tr.ID, pushing, last)
			}
		}
		got = append(got, tr)
	}
	l := NewLinker(opt)
	for f, cr := range frames {
		pushing = f
		l.Push(f, float64(f)*dt, cr)
	}
	pushing = -1
	rest, st := l.Finish()
	if len(rest) != 0 {
		t.Errorf("Finish returned %d tracks with OnEnd set", len(rest))
	}
	if duringRecord == 0 {
		t.Errorf("no track ended before the end of the record (in 8 s at 6 m/s the crests within 48 m of the far edge leave the 120 m grid)")
	}
	sortTracks(got)
	// compared as printed, where NaN (an unknown wavelength) equals NaN
	if fmt.Sprintf("%+v", got) != fmt.Sprintf("%+v", want) {
		t.Errorf("OnEnd handed over %d tracks, not the %d the linker returns without it", len(got), len(want))
	}
	if st.Births != wantStats.Births || st.Deaths != wantStats.Deaths || st.Steps != wantStats.Steps {
		t.Errorf("link counts %+v, want %+v", st, wantStats)
	}
}
