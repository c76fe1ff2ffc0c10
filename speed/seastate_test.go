package speed

import (
	"math"
	"testing"
)

// testWave is a linear regular wave a cos(k(x cosθ + y sinθ) − ωt + φ).
type testWave struct {
	a, lambda, thetaDeg, phase float64
}

// scene describes a synthetic record fed frame by frame to an estimator.
type scene struct {
	nx, ny    int
	dx, dt, h float64
	frames    int
	waves     []testWave
	// masked, if set, reports whether cell (i, j) of frame n is invalid.
	masked func(n, i, j int) bool
	// gapAt, gapLen: frames gapAt..gapAt+gapLen−1 are dropped (AddGap).
	gapAt, gapLen int
}

// omegaLinear is the linear dispersion relation ω = √(g k tanh kh) (Dean &
// Dalrymple 1991), written out here so that the synthetic truth does not
// depend on the code under test.
func omegaLinear(k, h float64) float64 { return math.Sqrt(9.80665 * k * math.Tanh(k*h)) }

// run synthesises the record one frame at a time (no frame is stored) and
// returns the estimator's result.
func (s scene) run(t *testing.T, opt SeaStateOptions) SeaState {
	t.Helper()
	e := NewSeaStateEstimator(s.nx, s.ny, s.dx, s.dx, s.dt, opt)
	eta := make([]float32, s.nx*s.ny)
	var valid []bool
	if s.masked != nil {
		valid = make([]bool, len(eta))
	}
	for n := 0; n < s.frames; n++ {
		if s.gapLen > 0 && n == s.gapAt {
			e.AddGap(s.gapLen)
		}
		if s.gapLen > 0 && n >= s.gapAt && n < s.gapAt+s.gapLen {
			continue
		}
		tt := float64(n) * s.dt
		for j := 0; j < s.ny; j++ {
			y := float64(j) * s.dx
			for i := 0; i < s.nx; i++ {
				x := float64(i) * s.dx
				v := 0.0
				for _, w := range s.waves {
					k := 2 * math.Pi / w.lambda
					th := w.thetaDeg * math.Pi / 180
					v += w.a * math.Cos(k*(x*math.Cos(th)+y*math.Sin(th))-omegaLinear(k, s.h)*tt+w.phase)
				}
				eta[j*s.nx+i] = float32(0.05 + v) // offset: the caller removes nothing
				if valid != nil {
					valid[j*s.nx+i] = !s.masked(n, i, j)
					if !valid[j*s.nx+i] && (i+j)%2 == 0 {
						eta[j*s.nx+i] = float32(math.NaN())
					}
				}
			}
		}
		e.Add(eta, valid)
	}
	st, err := e.Result()
	if err != nil {
		t.Fatal(err)
	}
	return st
}

// angleDiffDeg returns the difference a − b of two angles in degrees,
// wrapped to (−180, 180].
func angleDiffDeg(a, b float64) float64 {
	d := math.Mod(a-b, 360)
	if d > 180 {
		d -= 360
	}
	if d <= -180 {
		d += 360
	}
	return d
}

// circularMeanDeg is the energy-weighted circular mean direction of waves
// (energy a²/2; definition of the circular mean, e.g. Mardia & Jupp,
// Directional Statistics, 2000).
func circularMeanDeg(ws []testWave) float64 {
	var s, c float64
	for _, w := range ws {
		e := w.a * w.a / 2
		s += e * math.Sin(w.thetaDeg*math.Pi/180)
		c += e * math.Cos(w.thetaDeg*math.Pi/180)
	}
	return math.Atan2(s, c) * 180 / math.Pi
}

func TestSeaStateRegularWave(t *testing.T) {
	const a, h = 0.4, 15.0
	worstDir, worstH, worstF := 0.0, 0.0, 0.0
	for _, lambda := range []float64{18, 26} {
		for _, thDeg := range []float64{30, 135, -100, 0, 90, 200} {
			s := scene{nx: 64, ny: 64, dx: 2, dt: 0.25, h: h, frames: 320,
				waves: []testWave{{a: a, lambda: lambda, thetaDeg: thDeg, phase: 0.3}}}
			st := s.run(t, SeaStateOptions{})
			// Truth: the direction of travel of the synthetic wave.
			dDir := math.Abs(angleDiffDeg(st.MeanDirectionRad*180/math.Pi, thDeg))
			// Linear theory: m0 = a²/2, so Hm0 = 4a/√2 (Hm0 = 4√m0 common practice).
			dH := relErr(st.Hm0, 4*a/math.Sqrt2)
			// Truth: the wave frequency ω/2π of the synthesis.
			f0 := omegaLinear(2*math.Pi/lambda, h) / (2 * math.Pi)
			df := st.Freqs[1] - st.Freqs[0]
			dF := math.Abs(st.Fp-f0) / df
			worstDir, worstH, worstF = math.Max(worstDir, dDir), math.Max(worstH, dH), math.Max(worstF, dF)
			if dDir > 2 {
				t.Errorf("λ=%g θ=%g°: direction %.2f°, off by %.2f° (want < 2°)", lambda, thDeg, st.MeanDirectionRad*180/math.Pi, dDir)
			}
			if dH > 0.03 {
				t.Errorf("λ=%g θ=%g°: Hm0 %.4f m, want %.4f within 3 %%", lambda, thDeg, st.Hm0, 4*a/math.Sqrt2)
			}
			if dF > 1 || math.Abs(st.Tp-1/st.Fp) > 1e-12 {
				t.Errorf("λ=%g θ=%g°: Fp %.4f Hz (Tp %.3f s), want %.4f Hz within one bin (%.4f Hz)", lambda, thDeg, st.Fp, st.Tp, f0, df)
			}
			if st.NProbes != 64 || st.Frames != 320 || st.Pairs != 319 {
				t.Errorf("λ=%g θ=%g°: %d probes, %d frames, %d pairs; want 64, 320, 319", lambda, thDeg, st.NProbes, st.Frames, st.Pairs)
			}
		}
	}
	t.Logf("regular waves: worst direction error %.3f°, Hm0 error %.2f %%, Fp error %.3f bin", worstDir, 100*worstH, worstF)
}

func TestSeaStateTwoWaves(t *testing.T) {
	for _, ws := range [][]testWave{
		{{a: 0.5, lambda: 24, thetaDeg: 20}, {a: 0.3, lambda: 16, thetaDeg: 80, phase: 1}},
		{{a: 0.3, lambda: 30, thetaDeg: -150}, {a: 0.35, lambda: 20, thetaDeg: 160, phase: 2}},
	} {
		s := scene{nx: 64, ny: 64, dx: 2, dt: 0.2, h: 25, frames: 300, waves: ws}
		st := s.run(t, SeaStateOptions{})
		want := circularMeanDeg(ws)
		d := math.Abs(angleDiffDeg(st.MeanDirectionRad*180/math.Pi, want))
		t.Logf("two waves: direction %.2f°, energy-weighted mean %.2f°, spread %.3f rad", st.MeanDirectionRad*180/math.Pi, want, st.DirectionSpread)
		if d > 2 {
			t.Errorf("two waves %+v: direction %.2f°, want %.2f° within 2°", ws, st.MeanDirectionRad*180/math.Pi, want)
		}
		// Linear superposition: m0 = Σ a²/2 (Hm0 = 4√m0, common practice).
		var m0 float64
		for _, w := range ws {
			m0 += w.a * w.a / 2
		}
		if e := relErr(st.Hm0, 4*math.Sqrt(m0)); e > 0.03 {
			t.Errorf("two waves: Hm0 %.4f want %.4f", st.Hm0, 4*math.Sqrt(m0))
		}
	}
}

func TestSeaStateMaskAndGap(t *testing.T) {
	const a, lambda, h, th = 0.4, 22.0, 15.0, 135.0
	s := scene{nx: 64, ny: 48, dx: 2, dt: 0.25, h: h, frames: 320,
		waves: []testWave{{a: a, lambda: lambda, thetaDeg: th}},
		// A corner that is never seen (its probes are dropped), a band that
		// flickers every 7th frame (its probes are filled), and a gap of 5
		// dropped frames.
		masked: func(n, i, j int) bool {
			return (i < 12 && j < 12) || (n%7 == 3 && j >= 20 && j < 26)
		},
		gapAt: 100, gapLen: 5}
	st := s.run(t, SeaStateOptions{})
	if d := math.Abs(angleDiffDeg(st.MeanDirectionRad*180/math.Pi, th)); d > 2 {
		t.Errorf("masked record: direction off by %.2f°", d)
	}
	if e := relErr(st.Hm0, 4*a/math.Sqrt2); e > 0.03 {
		t.Errorf("masked record: Hm0 %.4f want %.4f", st.Hm0, 4*a/math.Sqrt2)
	}
	f0 := omegaLinear(2*math.Pi/lambda, h) / (2 * math.Pi)
	if df := st.Freqs[1] - st.Freqs[0]; math.Abs(st.Fp-f0) > df {
		t.Errorf("masked record: Fp %.4f want %.4f within %.4f", st.Fp, f0, df)
	}
	if st.DroppedProbes == 0 || st.FilledSamples == 0 || st.GapFrames != 5 || st.Frames != 315 {
		t.Errorf("bookkeeping: dropped %d probes, filled %d samples, %d gap frames, %d frames", st.DroppedProbes, st.FilledSamples, st.GapFrames, st.Frames)
	}
	// 320 time steps, 5 missing frames: pairs spanning or next to the gap
	// are not formed (319 − 6).
	if st.Pairs != 313 {
		t.Errorf("pairs %d, want 313", st.Pairs)
	}
	t.Logf("masked record: %d probes used, %d dropped, %d samples filled, direction %.2f°, Hm0 %.4f m",
		st.NProbes, st.DroppedProbes, st.FilledSamples, st.MeanDirectionRad*180/math.Pi, st.Hm0)
}

func TestSeaStatePairStride(t *testing.T) {
	// Thinned direction pairs still recover the direction (truth: the
	// synthetic wave's direction).
	s := scene{nx: 48, ny: 64, dx: 2.5, dt: 0.25, h: 200, frames: 200,
		waves: []testWave{{a: 0.3, lambda: 25, thetaDeg: -60}}}
	st := s.run(t, SeaStateOptions{PairStride: 10, Probes: 16, SegmentSeconds: 12})
	if st.Pairs != 19 || st.SegmentSamples != 48 || st.NProbes != 16 {
		t.Errorf("pairs %d segment %d probes %d; want 19, 48, 16", st.Pairs, st.SegmentSamples, st.NProbes)
	}
	if d := math.Abs(angleDiffDeg(st.MeanDirectionRad*180/math.Pi, -60)); d > 2 {
		t.Errorf("strided pairs: direction off by %.2f°", d)
	}
}

func TestSeaStateBadInput(t *testing.T) {
	if _, err := NewSeaStateEstimator(2, 64, 1, 1, 0.1, SeaStateOptions{}).Result(); err == nil {
		t.Error("tiny grid: want error")
	}
	if _, err := NewSeaStateEstimator(16, 16, 1, 1, 0, SeaStateOptions{}).Result(); err == nil {
		t.Error("dt = 0: want error")
	}
	e := NewSeaStateEstimator(16, 16, 1, 1, 0.1, SeaStateOptions{})
	e.Add(make([]float32, 10), nil)
	if _, err := e.Result(); err == nil {
		t.Error("wrong frame size: want error")
	}
	if _, err := NewSeaStateEstimator(16, 16, 1, 1, 0.1, SeaStateOptions{DirectionCells: 2}).Result(); err == nil {
		t.Error("DirectionCells = 2: want error")
	}
	// A constant record has no spectrum to find a peak in.
	e = NewSeaStateEstimator(16, 16, 1, 1, 0.1, SeaStateOptions{})
	for i := 0; i < 64; i++ {
		e.Add(make([]float32, 256), nil)
	}
	if _, err := e.Result(); err == nil {
		t.Error("constant frames: want error")
	}
	e = NewSeaStateEstimator(16, 16, 1, 1, 0.1, SeaStateOptions{})
	for i := 0; i < 5; i++ {
		e.Add(make([]float32, 256), nil)
	}
	if _, err := e.Result(); err == nil {
		t.Error("5 frames: want error")
	}
}

func BenchmarkSeaStateAdd512(b *testing.B) {
	const n = 512
	e := NewSeaStateEstimator(n, n, 1, 1, 0.1, SeaStateOptions{})
	eta := make([]float32, n*n)
	for i := range eta {
		eta[i] = float32(math.Sin(0.1*float64(i%n)) * math.Cos(0.07*float64(i/n)))
	}
	b.ResetTimer()
	for i := 0; i < b.N; i++ {
		e.Add(eta, nil)
	}
}
