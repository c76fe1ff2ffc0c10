package speed

import (
	"math"
	"testing"
)

// For a single linear wave η = a cos(k·x − ωt) the surface orbital velocity
// along its direction of travel is u = aσ coth(kh) cos(k·x − ωt), that is
// u = σ coth(kh) η everywhere (Dean & Dalrymple 1991, linear wave theory).
// The estimator must reproduce it within 2 % RMS on the frames it reports,
// for an oblique wave in finite depth whose wavelength does not divide the
// grid (so spectral leakage is present; with five or more wavelengths across
// the grid it stays near 1 %, with under three it reaches 5–8 %).
func TestSurfaceVelocityLinearWave(t *testing.T) {
	// oblique: within the 2 % the breaking-index check asks for
	surfaceVelocityCase(t, 25, 0.02, 0)
	// the same with the band given (the wave's frequency and a half): the
	// frames are decimated by 6 in time and interpolated back, and the
	// estimate must hold the same bound
	surfaceVelocityCase(t, 25, 0.02, 1.5/4.0)
	// Along a grid axis the spatial taper's leakage passes the dispersion
	// gate of a window of about three periods and modulates the estimate by
	// ±5 % along x (measured 6.3 % RMS): a known limit of this estimator,
	// bounded here so that a regression shows.
	surfaceVelocityCase(t, 0, 0.07, 0)
}

func surfaceVelocityCase(t *testing.T, thetaDeg, bound, bandHz float64) {
	nx, ny := 128, 96
	dx, dt := 1.0, 0.1
	depth := 10.0
	a, T := 0.4, 4.0
	omega := 2 * math.Pi / T
	k, err := WaveNumber(omega, depth)
	if err != nil {
		t.Fatal(err)
	}
	theta := thetaDeg * math.Pi / 180
	gain := omega / math.Tanh(k*depth)
	var num, den float64
	reported, valid := 0, 0
	frames := 320
	etaAt := func(f int) []float32 {
		e := make([]float32, nx*ny)
		tt := float64(f) * dt
		for iy := 0; iy < ny; iy++ {
			for ix := 0; ix < nx; ix++ {
				ph := k*(float64(ix)*dx*math.Cos(theta)+float64(iy)*dx*math.Sin(theta)) - omega*tt
				e[iy*nx+ix] = float32(a * math.Cos(ph))
			}
		}
		return e
	}
	u := make([]float32, nx*ny)
	sv, err := NewSurfaceVelocity(nx, ny, dx, dx, dt, SurfaceVelocityOptions{Window: 128, Theta: theta, DepthM: depth, Workers: 2, BandHz: bandHz},
		func(f int, v *VelocityFrame, ok bool) {
			if !ok {
				return
			}
			v.Field(u)
			reported++
			e := etaAt(f)
			// interior cells: the grid is treated as periodic
			for iy := 0; iy < ny; iy++ {
				for ix := 0; ix < nx; ix++ {
					if math.IsNaN(float64(u[iy*nx+ix])) {
						continue
					}
					valid++
					want := gain * float64(e[iy*nx+ix])
					d := float64(u[iy*nx+ix]) - want
					num += d * d
					den += want * want
				}
			}
		})
	if err != nil {
		t.Fatal(err)
	}
	for f := 0; f < frames; f++ {
		sv.Push(etaAt(f))
	}
	sv.Close()
	rel := math.Sqrt(num / den)
	t.Logf("θ = %g°, band %g Hz (decimation %d, window %d frames): frames reported %d of %d, relative RMS error %.4f",
		thetaDeg, bandHz, sv.DecimationFactor(), sv.WindowFrames(), reported, frames, rel)
	if reported < frames-sv.WindowFrames()-2*interpHalf*sv.DecimationFactor()-2 {
		t.Errorf("only %d frames reported", reported)
	}
	if valid < reported*nx*ny*35/100 {
		t.Errorf("only %d of %d cells have a velocity", valid, reported*nx*ny)
	}
	if !(rel <= bound) {
		t.Errorf("θ = %g°: surface velocity RMS error %.3f of σ coth(kh) η, want ≤ %g", thetaDeg, rel, bound)
	}
}
