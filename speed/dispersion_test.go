package speed

import (
	"bytes"
	"fmt"
	"math"
	"os"
	"os/exec"
	"strconv"
	"strings"
	"sync"
	"testing"
)

// referencePython is Debian's interpreter with numpy and scipy; a python3
// earlier on PATH may lack them.
const referencePython = "/usr/bin/python3"

var (
	pythonOnce sync.Once
	pythonErr  error
)

// runPython runs a reference script with Debian's python3, feeding it stdin,
// and returns the whitespace-separated numbers it prints. The test is
// skipped when the interpreter or numpy/scipy are not installed (they come
// with scripts/setup-deps).
func runPython(t *testing.T, script, stdin string) []float64 {
	t.Helper()
	if _, err := os.Stat(referencePython); err != nil {
		t.Skipf("%s not found; run scripts/setup-deps", referencePython)
	}
	pythonOnce.Do(func() {
		pythonErr = exec.Command(referencePython, "-c", "import numpy, scipy.optimize, scipy.signal").Run()
	})
	if pythonErr != nil {
		t.Skipf("%s lacks numpy/scipy (%v); run scripts/setup-deps", referencePython, pythonErr)
	}
	cmd := exec.Command(referencePython, "-c", script)
	cmd.Stdin = strings.NewReader(stdin)
	var stderr bytes.Buffer
	cmd.Stderr = &stderr
	out, err := cmd.Output()
	if err != nil {
		t.Fatalf("reference python failed: %v\n%s", err, stderr.String())
	}
	fields := strings.Fields(string(out))
	vals := make([]float64, len(fields))
	for i, f := range fields {
		v, err := strconv.ParseFloat(f, 64)
		if err != nil {
			t.Fatalf("reference python printed %q: %v", f, err)
		}
		vals[i] = v
	}
	return vals
}

// alphaTable returns n values of α = ω²h/g log-spaced from 1e-3 to 1e2.
func alphaTable(n int) []float64 {
	a := make([]float64, n)
	for i := range a {
		a[i] = math.Pow(10, -3+5*float64(i)/float64(n-1))
	}
	return a
}

const tableDepth = 10.0 // m, depth used with alphaTable

func omegaForAlpha(alpha, h float64) float64 { return math.Sqrt(alpha * G / h) }

func relErr(got, want float64) float64 { return math.Abs(got-want) / math.Abs(want) }

func TestWaveNumberResidual(t *testing.T) {
	// Check: the linear dispersion relation ω² = g k tanh(kh) itself
	// (Dean & Dalrymple 1991) is satisfied to 1e-9 relative.
	for _, h := range []float64{0.5, tableDepth, 400} {
		worst := 0.0
		for _, a := range alphaTable(61) {
			w := omegaForAlpha(a, h)
			k, err := WaveNumber(w, h)
			if err != nil {
				t.Fatal(err)
			}
			res := math.Abs(G*k*math.Tanh(k*h)-w*w) / (w * w)
			worst = math.Max(worst, res)
			if res > 1e-9 {
				t.Errorf("h=%g α=%g: residual %.3g, want < 1e-9", h, a, res)
			}
		}
		t.Logf("h=%g m: worst relative residual %.2g over α in [1e-3, 1e2]", h, worst)
	}
}

func TestWaveNumberLimits(t *testing.T) {
	w := 2 * math.Pi / 8
	// Deep water: ω² = g k (Dean & Dalrymple 1991); depth <= 0 or +Inf is
	// deep by convention, and a very deep finite depth tends to it.
	for _, h := range []float64{0, -1, math.Inf(1), 1e4} {
		k, err := WaveNumber(w, h)
		if err != nil {
			t.Fatal(err)
		}
		if e := relErr(k, w*w/G); e > 1e-12 {
			t.Errorf("deep limit h=%g: k=%.15g want ω²/g=%.15g (rel %.2g)", h, k, w*w/G, e)
		}
	}
	// Shallow water: ω = k √(gh) (Dean & Dalrymple 1991); the relative
	// correction is about (kh)²/6, so α = 1e-8 must agree to 1e-8.
	h := 1e-8 * G / (w * w)
	k, err := WaveNumber(w, h)
	if err != nil {
		t.Fatal(err)
	}
	want := w / math.Sqrt(G*h)
	if e := relErr(k, want); e > 1e-8 {
		t.Errorf("shallow limit: k=%.15g want ω/√(gh)=%.15g (rel %.2g)", k, want, e)
	}
}

func TestFentonMcKeeStart(t *testing.T) {
	// Fenton & McKee (1990, Coastal Engineering 14): explicit approximation
	// with error below 1.7 %.
	worst := 0.0
	for _, a := range alphaTable(61) {
		w := omegaForAlpha(a, tableDepth)
		k, err := WaveNumber(w, tableDepth)
		if err != nil {
			t.Fatal(err)
		}
		e := relErr(FentonMcKeeStart(w, tableDepth), k)
		worst = math.Max(worst, e)
		if e > 0.017 {
			t.Errorf("α=%g: Fenton–McKee error %.3g, want < 1.7 %%", a, e)
		}
	}
	t.Logf("Fenton–McKee worst relative error %.3g %%", 100*worst)

	// Check value α = 1 → kh = 1.19967864 (Fenton & McKee 1990 check value, docs/methods.md; verified here
	// by the residual x tanh x − α of the dispersion relation).
	const khRef = 1.19967864
	if r := math.Abs(khRef*math.Tanh(khRef) - 1); r > 1e-8 {
		t.Fatalf("published kh = %v has residual %.3g; the check value is wrong", khRef, r)
	}
	w := omegaForAlpha(1, tableDepth)
	k, err := WaveNumber(w, tableDepth)
	if err != nil {
		t.Fatal(err)
	}
	if d := math.Abs(k*tableDepth - khRef); d > 1e-8 {
		t.Errorf("α=1: kh = %.10f want %.8f", k*tableDepth, khRef)
	}
}

func TestHuntWaveNumber(t *testing.T) {
	// Hunt (1979) Padé approximation: stated accuracy about 0.2 %.
	worst := 0.0
	for _, a := range alphaTable(201) {
		w := omegaForAlpha(a, tableDepth)
		k, err := WaveNumber(w, tableDepth)
		if err != nil {
			t.Fatal(err)
		}
		e := relErr(HuntWaveNumber(w, tableDepth), k)
		worst = math.Max(worst, e)
		if e > 0.002 {
			t.Errorf("α=%g: Hunt error %.3g, want < 0.2 %%", a, e)
		}
	}
	t.Logf("Hunt worst relative error %.3g %%", 100*worst)
}

func TestWaveNumberAgainstScipy(t *testing.T) {
	// Reference: scipy.optimize.brentq on g k tanh(kh) − ω² = 0.
	as := alphaTable(41)
	var in strings.Builder
	ws := make([]float64, len(as))
	for i, a := range as {
		ws[i] = omegaForAlpha(a, tableDepth)
		fmt.Fprintf(&in, "%.17g %.17g\n", ws[i], tableDepth)
	}
	script := `
import sys, math
from scipy.optimize import brentq
g = 9.80665
for line in sys.stdin:
    w, h = map(float, line.split())
    f = lambda k: g*k*math.tanh(k*h) - w*w
    hi = max(w*w/g, w/math.sqrt(g*h))*2
    k = brentq(f, 1e-12, hi, xtol=1e-300, rtol=4*sys.float_info.epsilon, maxiter=500)
    print(repr(k))
`
	ref := runPython(t, script, in.String())
	if len(ref) != len(ws) {
		t.Fatalf("python returned %d values, want %d", len(ref), len(ws))
	}
	worst := 0.0
	for i, w := range ws {
		k, err := WaveNumber(w, tableDepth)
		if err != nil {
			t.Fatal(err)
		}
		e := relErr(k, ref[i])
		worst = math.Max(worst, e)
		if e > 1e-10 {
			t.Errorf("α=%g: k=%.17g scipy %.17g (rel %.2g)", as[i], k, ref[i], e)
		}
	}
	t.Logf("worst relative difference from scipy brentq: %.2g", worst)
}

func TestGroupSpeedDerivative(t *testing.T) {
	// Check: c_g = dσ/dk (definition of group speed), by central difference.
	for _, h := range []float64{0, 3, 30} {
		for _, k := range []float64{0.005, 0.05, 0.3, 2, 10} {
			dk := 1e-5 * k
			num := (Omega(k+dk, h) - Omega(k-dk, h)) / (2 * dk)
			if e := relErr(GroupSpeed(k, h), num); e > 1e-8 {
				t.Errorf("h=%g k=%g: c_g=%.12g, dσ/dk=%.12g (rel %.2g)", h, k, GroupSpeed(k, h), num, e)
			}
		}
	}
	// Large kh must not overflow sinh: deep-water c/2 (Dean & Dalrymple 1991).
	if cg := GroupSpeed(500, 100); math.Abs(cg-PhaseSpeed(500, 0)/2) > 1e-15 {
		t.Errorf("GroupSpeed at kh=5e4: %g, want c/2", cg)
	}
}

func TestVorticityPhaseSpeed(t *testing.T) {
	type tc struct{ k, h, us, om float64 }
	cases := []tc{
		{0.1, 10, 0.3, 0.2}, {0.1, 10, -0.5, -0.3}, {0.05, 0, 0.2, 0.1},
		{1.0, 5, 0, 0.5}, {0.02, 50, 1.0, -0.05}, {0.3, 0, -0.2, -0.4},
	}
	// Ω → 0: the uniform-current result σ/k + U_s (Dean & Dalrymple 1991).
	for _, c := range cases {
		got := VorticityPhaseSpeed(c.k, c.h, c.us, 1e-13)
		want := PhaseSpeed(c.k, c.h) + c.us
		if e := relErr(got, want); e > 1e-11 {
			t.Errorf("Ω→0 limit k=%g h=%g: %.15g want %.15g", c.k, c.h, got, want)
		}
	}
	// The defining quadratic (c−U_s)² k coth(kh) + Ω(c−U_s) − g = 0
	// (Thompson 1949; Teles da Silva & Peregrine 1988 — from memory),
	// checked by its residual and against numpy.roots (largest root).
	var in strings.Builder
	for _, c := range cases {
		coth := 1.0
		if c.h > 0 {
			coth = 1 / math.Tanh(c.k*c.h)
		}
		s := VorticityPhaseSpeed(c.k, c.h, c.us, c.om) - c.us
		res := s*s*c.k*coth + c.om*s - G
		if math.Abs(res) > 1e-12*G {
			t.Errorf("quadratic residual %g for %+v", res, c)
		}
		fmt.Fprintf(&in, "%.17g %.17g %.17g\n", c.k*coth, c.om, -G)
	}
	ref := runPython(t, `
import sys, numpy as np
for line in sys.stdin:
    a, b, c = map(float, line.split())
    print(repr(float(max(np.roots([a, b, c]).real))))
`, in.String())
	if len(ref) != len(cases) {
		t.Fatalf("python returned %d values", len(ref))
	}
	for i, c := range cases {
		s := VorticityPhaseSpeed(c.k, c.h, c.us, c.om) - c.us
		if e := relErr(s, ref[i]); e > 1e-10 {
			t.Errorf("%+v: c−U_s=%.15g numpy.roots %.15g (rel %.2g)", c, s, ref[i], e)
		}
	}
}

func TestNominalPhaseSpeed(t *testing.T) {
	// Uniform current: σ/k + U·k̂ (Doppler shift; Dean & Dalrymple 1991).
	cur := Current{U: 0.8, V: -0.3}
	k, h, dir := 0.07, 15.0, 2.0
	want := PhaseSpeed(k, h) + 0.8*math.Cos(dir) - 0.3*math.Sin(dir)
	if got := NominalPhaseSpeed(k, dir, h, cur, 0); math.Abs(got-want) > 1e-14 {
		t.Errorf("uniform current: %.15g want %.15g", got, want)
	}
	// Absolute frequency equals k times the nominal speed (definition of
	// phase speed).
	w := DopplerOmega(k*math.Cos(dir), k*math.Sin(dir), h, cur)
	if e := relErr(w, k*want); e > 1e-14 {
		t.Errorf("DopplerOmega %.15g, k·c %.15g", w, k*want)
	}
}

func TestPhaseSpeedFromPeriod(t *testing.T) {
	type tc struct {
		T, h  float64
		cur   Current
		dir   float64
		vort  float64
		label string
	}
	cases := []tc{
		{8, 20, Current{}, 0, 0, "still"},
		{8, 20, Current{U: 1}, 0, 0, "following"},
		{6, 0, Current{U: 0.5, V: -0.7}, math.Pi / 2, 0, "opposing, deep"},
		{10, 8, Current{U: -0.4, V: 0.9}, 0.7, 0, "oblique, shallow"},
		{7, 12, Current{U: 0.5}, 0, 0.1, "shear"},
		{7, 0, Current{U: -0.3}, 0, -0.08, "opposing shear, deep"},
	}
	for _, c := range cases {
		cp, err := PhaseSpeedFromPeriod(c.T, c.h, c.cur, c.dir, c.vort)
		if err != nil {
			t.Fatalf("%s: %v", c.label, err)
		}
		wa := 2 * math.Pi / c.T
		k := wa / cp
		// Check: the absolute frequency of the returned wave equals 2π/T
		// (Doppler relation ω = σ(k) + k·U, or ω = k·c(k) with shear).
		var w float64
		if c.vort == 0 {
			w = DopplerOmega(k*math.Cos(c.dir), k*math.Sin(c.dir), c.h, c.cur)
		} else {
			us := c.cur.U*math.Cos(c.dir) + c.cur.V*math.Sin(c.dir)
			w = k * VorticityPhaseSpeed(k, c.h, us, c.vort)
		}
		if e := relErr(w, wa); e > 1e-12 {
			t.Errorf("%s: ω(k)=%.15g want %.15g (rel %.2g)", c.label, w, wa, e)
		}
	}
	// Deep-water blocking on an opposing current U: the absolute frequency
	// σ − k|U| peaks at g/(4|U|) (k = g/(4U²)); no wave above it travels
	// upstream (Phillips, The Dynamics of the Upper Ocean, 1977 — from
	// memory; follows from the Doppler relation).
	u := 1.5
	wmax := G / (4 * u)
	if _, err := PhaseSpeedFromPeriod(2*math.Pi/(wmax*0.999), 0, Current{U: -u}, 0, 0); err != nil {
		t.Errorf("just below blocking: %v", err)
	}
	if _, err := PhaseSpeedFromPeriod(2*math.Pi/(wmax*1.001), 0, Current{U: -u}, 0, 0); err == nil {
		t.Error("above the blocking frequency: want an error")
	}
}

func TestDispersionBadInput(t *testing.T) {
	// Bad input must give an error, not a panic or a number.
	for _, c := range []struct{ w, h float64 }{{0, 10}, {-1, 10}, {math.NaN(), 10}, {1, math.NaN()}, {math.Inf(1), 5}} {
		if _, err := WaveNumber(c.w, c.h); err == nil {
			t.Errorf("WaveNumber(%g, %g): want error", c.w, c.h)
		}
	}
	if _, err := PhaseSpeedFromPeriod(-3, 10, Current{}, 0, 0); err == nil {
		t.Error("negative period: want error")
	}
	if _, err := PhaseSpeedFromPeriod(8, 10, Current{U: math.NaN()}, 0, 0); err == nil {
		t.Error("NaN current: want error")
	}
	if !math.IsNaN(PhaseSpeed(-1, 10)) || !math.IsNaN(FentonMcKeeStart(0, 10)) || !math.IsNaN(HuntWaveNumber(-2, 1)) {
		t.Error("invalid wavenumber or frequency: want NaN")
	}
}

func BenchmarkWaveNumber(b *testing.B) {
	for i := 0; i < b.N; i++ {
		if _, err := WaveNumber(0.5+float64(i%100)*0.01, 12); err != nil {
			b.Fatal(err)
		}
	}
}
