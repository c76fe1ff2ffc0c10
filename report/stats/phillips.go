package stats

import "math"

// PhillipsReference is the line Λ = A c⁻⁶ drawn beside a measured Λ(c) for
// comparison: Phillips (1985, J. Fluid Mech. 156, 505–531) derived the c⁻⁶
// form for the equilibrium range of wind-sea breaking. Only the amplitude
// A is fitted; the exponent is fixed, so the line shows how the data
// compare with the c⁻⁶ form and is no estimate of the exponent.
type PhillipsReference struct {
	// Amplitude is A, m⁴ s⁻⁵; NaN when fewer than MinReferenceBins bins
	// above the peak hold fronts.
	Amplitude float64
	// Peak is the index of the bin where Λ is largest (−1 if Λ is zero
	// everywhere); Fitted are the bins the amplitude was fitted to.
	Peak   int
	Fitted []int
	// C and Lambda are the points of the line as drawn, m/s and m⁻² s.
	C, Lambda []float64
}

// MinReferenceBins is the fewest bins above the peak the amplitude of the
// reference line is fitted to (a choice of this tool: one bin would make
// the line pass through it whatever the data).
const MinReferenceBins = 2

// FitPhillipsReference fits the amplitude A of Λ = A c⁻⁶ to the speed bins
// [lo_j, hi_j) above the peak of Λ(c) that hold fronts (Λ > 0), c the bin
// centre, by least squares on log Λ with the slope fixed at −6: log A is
// the mean of log Λ_j + 6 log c_j over those bins (ordinary least squares
// with a known slope, common practice). The line is drawn from the centre
// of the peak bin to that of the last fitted bin.
func FitPhillipsReference(lo, hi, lambda []float64) PhillipsReference {
	ref := PhillipsReference{Amplitude: math.NaN(), Peak: -1}
	for j, l := range lambda {
		if l > 0 && (ref.Peak < 0 || l > lambda[ref.Peak]) {
			ref.Peak = j
		}
	}
	if ref.Peak < 0 {
		return ref
	}
	centre := func(j int) float64 { return 0.5 * (lo[j] + hi[j]) }
	var s float64
	for j := ref.Peak + 1; j < len(lambda); j++ {
		if lambda[j] > 0 {
			s += math.Log(lambda[j]) + 6*math.Log(centre(j))
			ref.Fitted = append(ref.Fitted, j)
		}
	}
	if len(ref.Fitted) < MinReferenceBins {
		return ref
	}
	ref.Amplitude = math.Exp(s / float64(len(ref.Fitted)))
	c0, c1 := centre(ref.Peak), centre(ref.Fitted[len(ref.Fitted)-1])
	const n = 16
	for i := 0; i < n; i++ {
		c := c0 * math.Pow(c1/c0, float64(i)/(n-1))
		ref.C = append(ref.C, c)
		ref.Lambda = append(ref.Lambda, ref.Amplitude*math.Pow(c, -6))
	}
	return ref
}
