package speed

import (
	"math"
	"sort"

	"crestspeed/tracking"
)

// LocalQuadraticSlope returns the derivative at t[i] of the least-squares
// quadratic fitted to the samples (t[j], x[j]) with |t[j] − t[i]| ≤ half.
// On evenly spaced samples this is exactly the Savitzky–Golay first-derivative
// filter of polynomial order 2 (Savitzky & Golay 1964, Anal. Chem. 36,
// 1627); written for arbitrary times it also handles frames missing from the
// record. ok is false when the window holds fewer than minPoints samples or
// has none on one side of t[i].
func LocalQuadraticSlope(t, x []float64, i int, half float64, minPoints int) (slope float64, ok bool) {
	lo, hi := i, i
	for lo > 0 && t[i]-t[lo-1] <= half+1e-9 {
		lo--
	}
	for hi < len(t)-1 && t[hi+1]-t[i] <= half+1e-9 {
		hi++
	}
	n := hi - lo + 1
	if n < max(minPoints, 3) || lo == i || hi == i {
		return math.NaN(), false
	}
	// Fit x = b0 + b1 τ + b2 τ², τ = t − t[i]; the slope at τ = 0 is b1.
	return quadraticSlopeAt(t, x, lo, hi, t[i])
}

func det3(a [3][3]float64) float64 {
	return a[0][0]*(a[1][1]*a[2][2]-a[1][2]*a[2][1]) -
		a[0][1]*(a[1][0]*a[2][2]-a[1][2]*a[2][0]) +
		a[0][2]*(a[1][0]*a[2][1]-a[1][1]*a[2][0])
}

// CrestTip is what a crest row keeps of its tracking.Crest: the tip and
// the crest's measures (a row is held for every crest of every frame of the
// record, so it keeps no more than its table and the later passes read).
type CrestTip = tracking.Tip

// TipOf is the part of c a crest row keeps.
func TipOf(c tracking.Crest) CrestTip { return c.Tip }

// CrestRow is one crest tip in one frame with its speed and references.
type CrestRow struct {
	TrackID int
	CrestTip
	Steepness       float64 // S_c = a_c π / w_c
	CrestSpeed      float64 // c_cr along θ0, m/s (NaN where the window is incomplete)
	PhaseSpeedPeak  float64 // c_p, m/s
	PhaseSpeedLocal float64 // c_loc, m/s, smoothed along the track (NaN if no local wavelength)
	RatioPeak       float64 // c_cr / c_p
	RatioLocal      float64 // c_cr / c_loc
	SurfaceSpeed    float64 // u_s, linear surface orbital speed at the tip, m/s (NaN if not computed)
	BreakingIndex   float64 // B_x = u_s / (c_cr cos φ), φ the crest line's angle (NaN if not computed)
	Foam            bool    // the crest carried a whitecap in this frame
}

// References are the reference phase speeds of a record.
type References struct {
	Theta          float64 // mean direction of travel, radians
	DepthM         float64 // 0 = deep
	Current        Current
	Vorticity      float64 // 1/s, see VorticityPhaseSpeed
	PeakPhaseSpeed float64 // c_p, m/s
}

// LocalPhaseSpeed returns the nominal phase speed along θ0 of a wave of the
// given wavelength (linear dispersion with depth, current and vorticity),
// NaN for an unknown wavelength.
func (r References) LocalPhaseSpeed(wavelength float64) float64 {
	if !(wavelength > 0) {
		return math.NaN()
	}
	return NominalPhaseSpeed(2*math.Pi/wavelength, r.Theta, r.DepthM, r.Current, r.Vorticity)
}

// Predict is the speed the linker uses to predict a crest's next position:
// the local phase speed where the crest has a local wavelength, else c_p.
func (r References) Predict(c tracking.Crest) float64 {
	if v := r.LocalPhaseSpeed(c.Wavelength); !math.IsNaN(v) {
		return v
	}
	return r.PeakPhaseSpeed
}

// TrackRows computes, for every crest of a track, the crest speed (local
// quadratic fit of the crest's path along θ0 over a window of ±half
// seconds holding at least three samples, one either side; the path
// advances frame to frame by the displacement of the crest line at the new
// tip's cross-position, see tracking.Crest.Path), the two reference phase
// speeds and the ratios (docs/methods.md, Crests).
// The local reference is the median of the per-frame local phase speeds over
// the same window, which smooths the zero-crossing wavelength along the track
// and resists the occasional jump of a crossing.
func TrackRows(tr tracking.Track, ref References, half float64, dst []CrestRow) []CrestRow {
	n := len(tr.Crests)
	t := make([]float64, n)
	s := make([]float64, n)
	cl := make([]float64, n)
	for i, c := range tr.Crests {
		t[i], s[i] = c.Time, c.Path
		cl[i] = ref.LocalPhaseSpeed(c.Wavelength)
	}
	win := make([]float64, 0, 64)
	for i, c := range tr.Crests {
		row := CrestRow{TrackID: tr.ID, CrestTip: TipOf(c), Steepness: c.Steepness(), PhaseSpeedPeak: ref.PeakPhaseSpeed,
			SurfaceSpeed: math.NaN(), BreakingIndex: math.NaN()}
		row.CrestSpeed, _ = LocalQuadraticSlope(t, s, i, half, 3)
		win = win[:0]
		for j := i; j >= 0 && t[i]-t[j] <= half+1e-9; j-- {
			if !math.IsNaN(cl[j]) {
				win = append(win, cl[j])
			}
		}
		for j := i + 1; j < n && t[j]-t[i] <= half+1e-9; j++ {
			if !math.IsNaN(cl[j]) {
				win = append(win, cl[j])
			}
		}
		row.PhaseSpeedLocal = median(win)
		row.RatioPeak = row.CrestSpeed / row.PhaseSpeedPeak
		row.RatioLocal = row.CrestSpeed / row.PhaseSpeedLocal
		dst = append(dst, row)
	}
	return dst
}

// median of v (reordered in place); NaN when empty.
func median(v []float64) float64 {
	if len(v) == 0 {
		return math.NaN()
	}
	sort.Float64s(v)
	m := len(v) / 2
	if len(v)%2 == 1 {
		return v[m]
	}
	return 0.5 * (v[m-1] + v[m])
}
