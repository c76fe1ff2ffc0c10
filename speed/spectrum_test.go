package speed

import (
	"fmt"
	"math"
	"math/rand/v2"
	"strings"
	"testing"

	"gonum.org/v1/gonum/stat"
)

func TestWelchAgainstScipy(t *testing.T) {
	// Reference: scipy.signal.welch(x, fs, window='hann', nperseg=n,
	// noverlap=n//2, detrend='constant', scaling='density').
	rng := rand.New(rand.NewPCG(1, 2))
	const fs = 4.0
	x := make([]float64, 1001)
	for i := range x {
		tt := float64(i) / fs
		x[i] = 0.3 + 0.7*math.Sin(2*math.Pi*0.37*tt) + 0.4*rng.NormFloat64() + 0.001*float64(i)
	}
	var data strings.Builder
	for _, v := range x {
		fmt.Fprintf(&data, "%.17g\n", v)
	}
	npers := []int{64, 100, 63, 1001}
	// One python run for all segment lengths: lines of "f psd", the
	// spectra one after the other.
	script := fmt.Sprintf(`
import sys, numpy as np
from scipy.signal import welch
x = np.array([float(v) for v in sys.stdin.read().split()])
for n in %s:
    f, p = welch(x, fs=%g, window='hann', nperseg=n, noverlap=n//2, detrend='constant', scaling='density')
    for a, b in zip(f, p):
        print(repr(float(a)), repr(float(b)))
`, strings.ReplaceAll(fmt.Sprint(npers), " ", ","), fs)
	out := runPython(t, script, data.String())
	for _, nper := range npers {
		nf := nper/2 + 1
		if len(out) < 2*nf {
			t.Fatalf("nperseg=%d: scipy output too short", nper)
		}
		ref := out[:2*nf]
		out = out[2*nf:]
		f, p, err := Welch(x, fs, nper)
		if err != nil {
			t.Fatal(err)
		}
		if len(ref) != 2*len(f) {
			t.Fatalf("nperseg=%d: scipy gave %d bins, Welch %d", nper, len(ref)/2, len(f))
		}
		pmax := 0.0
		for _, v := range p {
			pmax = math.Max(pmax, v)
		}
		worst := 0.0
		for i := range f {
			if math.Abs(f[i]-ref[2*i]) > 1e-12*fs {
				t.Errorf("nperseg=%d bin %d: f=%g scipy %g", nper, i, f[i], ref[2*i])
			}
			// The zero-frequency bin is zero up to rounding after the
			// per-segment mean removal: compare it against pmax.
			e := math.Abs(p[i]-ref[2*i+1]) / math.Max(math.Abs(ref[2*i+1]), 1e-6*pmax)
			worst = math.Max(worst, e)
			if e > 1e-10 {
				t.Errorf("nperseg=%d bin %d: psd=%.15g scipy %.15g (rel %.2g)", nper, i, p[i], ref[2*i+1], e)
			}
		}
		t.Logf("nperseg=%d: worst relative difference from scipy.signal.welch %.2g", nper, worst)
	}
}

func TestWelchParseval(t *testing.T) {
	// Parseval's theorem: the integral of the density-scaled spectrum of a
	// long white-noise series equals its variance; the one-sided white
	// level is 2σ²/fs.
	rng := rand.New(rand.NewPCG(7, 11))
	const fs, sigma = 10.0, 1.5
	x := make([]float64, 1<<16)
	for i := range x {
		x[i] = sigma * rng.NormFloat64()
	}
	f, p, err := Welch(x, fs, 256)
	if err != nil {
		t.Fatal(err)
	}
	m0, err := SpectralMoment(f, p, 0)
	if err != nil {
		t.Fatal(err)
	}
	v := stat.Variance(x, nil)
	if e := relErr(m0, v); e > 0.01 {
		t.Errorf("∫psd = %g, variance %g (rel %.3g)", m0, v, e)
	}
	t.Logf("white noise: ∫psd/variance − 1 = %.2g", m0/v-1)
	mean := stat.Mean(p[1:len(p)-1], nil)
	if e := relErr(mean, 2*v/fs); e > 0.01 {
		t.Errorf("white level %g, want 2σ²/fs = %g", mean, 2*v/fs)
	}
}

func TestPeakParabolaSinusoid(t *testing.T) {
	// Source: the sinusoid's known frequency; Hm0 = 4√(a²/2) for a
	// sinusoid of amplitude a (linear theory m0 = a²/2, Hm0 = 4√m0 common
	// practice).
	const fs, nper, a = 8.0, 128, 0.6
	df := fs / nper
	worstF, worstH := 0.0, 0.0
	for _, frac := range []float64{0, 0.1, 0.25, 0.37, 0.5, 0.73, 0.9} {
		f0 := (11 + frac) * df
		x := make([]float64, 16*nper)
		for i := range x {
			x[i] = a * math.Cos(2*math.Pi*f0*float64(i)/fs+0.4)
		}
		f, p, err := Welch(x, fs, nper)
		if err != nil {
			t.Fatal(err)
		}
		fp, err := PeakParabola(f, p)
		if err != nil {
			t.Fatal(err)
		}
		e := math.Abs(fp-f0) / df
		worstF = math.Max(worstF, e)
		if e > 0.1 {
			t.Errorf("f0=%g: peak %g, off by %.3g bins (want < 0.1)", f0, fp, e)
		}
		h, err := Hm0(f, p)
		if err != nil {
			t.Fatal(err)
		}
		eh := relErr(h, 4*a/math.Sqrt2)
		worstH = math.Max(worstH, eh)
		if eh > 0.01 {
			t.Errorf("f0=%g: Hm0 %g want %g", f0, h, 4*a/math.Sqrt2)
		}
	}
	t.Logf("sinusoid: worst peak error %.3g bin, worst Hm0 error %.2g %%", worstF, 100*worstH)
}

func TestSpectrumBadInput(t *testing.T) {
	x := make([]float64, 100)
	x[40] = math.NaN()
	if _, _, err := Welch(x, 1, 32); err == nil {
		t.Error("NaN sample: want error")
	}
	x[40] = 0
	if _, _, err := Welch(x, 1, 200); err == nil {
		t.Error("segment longer than series: want error")
	}
	if _, _, err := Welch(x, 0, 32); err == nil {
		t.Error("fs = 0: want error")
	}
	f, p, err := Welch(x, 1, 32)
	if err != nil {
		t.Fatal(err)
	}
	if _, err := PeakParabola(f, p); err == nil {
		t.Error("zero spectrum: want error")
	}
	if _, err := Hm0(f, p[:3]); err == nil {
		t.Error("mismatched lengths: want error")
	}
}

func BenchmarkWelch(b *testing.B) {
	x := make([]float64, 36000)
	for i := range x {
		x[i] = math.Sin(0.3 * float64(i))
	}
	b.ResetTimer()
	for i := 0; i < b.N; i++ {
		if _, _, err := Welch(x, 10, 1024); err != nil {
			b.Fatal(err)
		}
	}
}
