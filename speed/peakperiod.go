package speed

import "math"

// IntervalLevel is the coverage of the intervals the sea-state estimate
// reports (TpLow–TpHigh, FpLow–FpHigh, and the c_p interval): 90 %, the
// level of the report's bootstrap intervals.
const IntervalLevel = 0.90

// zInterval is the two-sided standard normal quantile of IntervalLevel,
// Φ⁻¹(0.95) = 1.6449 (scipy.stats.norm.ppf(0.95)).
const zInterval = 1.6448536269514722

// welchDOF returns the equivalent degrees of freedom of a Welch estimate
// averaging k half-overlapping Hann-windowed segments of a Gaussian series,
// ν = 36k²/(19k − 1) (Welch 1967, IEEE Trans. Audio Electroacoust. 15, with
// the Hann-window overlap correlation of 1/6 at 50 % overlap, Harris 1978,
// Proc. IEEE 66; the closed form as in Percival & Walden 1993, Spectral
// Analysis for Physical Applications — from memory). ν = 2 for k = 1.
func welchDOF(k int) float64 {
	if k < 1 {
		return 0
	}
	kf := float64(k)
	return 36 * kf * kf / (19*kf - 1)
}

// sinc is sin(πx)/(πx).
func sinc(x float64) float64 {
	if x == 0 {
		return 1
	}
	return math.Sin(math.Pi*x) / (math.Pi * x)
}

// hannCorrelation returns the correlation of two periodogram ordinates of
// one Hann-windowed segment d bins apart (d in bins of the unpadded
// segment, not necessarily whole), for a locally white Gaussian series:
// ρ(d) = |W₂(d)|², W₂ the normalised transform of the squared window
// (Percival & Walden 1993, §6.6 — from memory). For the periodic Hann
// window w² = 3/8 − ½cos + ⅛cos2, which gives, for segments much longer
// than d,
//
//	W₂(d) = [3/8 sinc d + 1/4 (sinc(d−1) + sinc(d+1)) + 1/16 (sinc(d−2) + sinc(d+2))] / (3/8),
//
// so ρ(0) = 1, ρ(1) = 4/9, ρ(2) = 1/36 and ρ = 0 at whole d ≥ 3.
func hannCorrelation(d float64) float64 {
	w := (0.375*sinc(d) + 0.25*(sinc(d-1)+sinc(d+1)) + 0.0625*(sinc(d-2)+sinc(d+2))) / 0.375
	return w * w
}

// hannCorrelationReach is the bin distance beyond which hannCorrelation is
// below 2·10⁻⁴ and is neglected.
const hannCorrelationReach = 4

// youngStd returns the standard uncertainty of the peak frequency fp =
// youngPeak(freqs, s, lo, hi) by the delta method: F_p is a smooth function
// of the spectral ordinates S_i, ∂F_p/∂S_i = 4 S_i³ (f_i − F_p) / Σ S⁴, and
// each ordinate of an estimate with ν equivalent degrees of freedom has
// Var S_i = 2 S_i²/ν, with the correlation hannCorrelation between
// ordinates (the spectral resolution), so
//
//	Var F_p = (2/ν) Σ_i Σ_j (∂F_p/∂S_i) S_i (∂F_p/∂S_j) S_j ρ((f_i − f_j)/Δf)
//
// (the linearised variance of a ratio estimator of χ²_ν ordinates; the
// approach of Young 1995, Ocean Eng. 22, 669–686, who tabulates the
// resulting confidence limits). s is sampled pad times finer than the
// segment's resolution Δf (pad = 1: unpadded). Ordinates whose weight S⁴ is
// below 10⁻¹² of the largest are left out; they change nothing.
func youngStd(freqs, s []float64, lo, hi int, fp float64, pad int, nu float64) float64 {
	if !(nu > 0) || hi-lo < 1 {
		return math.NaN()
	}
	var smax float64
	for i := lo; i < hi; i++ {
		smax = math.Max(smax, s[i])
	}
	if !(smax > 0) {
		return math.NaN()
	}
	// a_i = (∂F/∂S_i)·S_i = 4 r_i⁴ (f_i − F)/Σ r⁴ with r = S/Smax.
	var den float64
	idx := make([]int, 0, 64)
	a := make([]float64, 0, 64)
	for i := lo; i < hi; i++ {
		if !(s[i] > 0) {
			continue
		}
		r := s[i] / smax
		r4 := r * r * r * r
		den += r4
		if r4 > 1e-12 {
			idx = append(idx, i)
			a = append(a, 4*r4*(freqs[i]-fp))
		}
	}
	reach := hannCorrelationReach * pad
	rho := make([]float64, reach+1)
	for d := range rho {
		rho[d] = hannCorrelation(float64(d) / float64(pad))
	}
	var v float64
	for p, i := range idx {
		v += a[p] * a[p]
		for q := p + 1; q < len(idx) && idx[q]-i <= reach; q++ {
			v += 2 * a[p] * a[q] * rho[idx[q]-i]
		}
	}
	return math.Sqrt(2/nu*v) / den
}

// noisePlateau is the white floor found at the high-frequency end of a
// spectrum.
type noisePlateau struct {
	level float64 // mean density over the plateau, units of the spectrum
	first int     // first bin of the plateau
	found bool
}

// Settings of findNoisePlateau.
const (
	// plateauBlocks is the number of blocks the search range is cut into.
	plateauBlocks = 16
	// plateauMinBins is the fewest bins a block may have.
	plateauMinBins = 4
	// plateauMinTol is the smallest relative rise of a block over the
	// plateau below it that ends the plateau.
	plateauMinTol = 0.1
)

// findNoisePlateau looks for a white (flat) floor at the top of the
// one-sided spectrum s, above bin start: reconstruction noise that is
// independent from frame to frame is white in time, with density
// N = σ²/f_Nyquist, and a wave spectrum falls steeply (as f⁻⁴ to f⁻⁵)
// towards high frequencies, so where the measured spectrum stops falling it
// is the noise floor (common practice in wave-gauge and altimeter
// processing). The bins from start up are cut into blocks of equal width
// (about plateauBlocks, each at least plateauMinBins); beginning with the
// highest block, lower blocks join the plateau while their mean exceeds the
// plateau's mean by less than the tolerance, the larger of plateauMinTol and
// three standard deviations of a block mean of white noise with nu degrees of
// freedom per bin (adjacent Hann bins are correlated: the variance of an
// M-bin mean is taken as (1 + 2·4/9 + 2/36)/M of one bin's). The plateau
// must span at least two blocks; its level is the mean over its bins.
func findNoisePlateau(s []float64, start int, nu float64) noisePlateau {
	top := len(s) - 1 // the Nyquist bin (or last bin) is kept: it is white too
	n := top - start + 1
	if start < 1 || n < 2*plateauMinBins {
		return noisePlateau{}
	}
	m := max(plateauMinBins, n/plateauBlocks)
	nb := n / m
	if nb < 2 {
		return noisePlateau{}
	}
	tol := plateauMinTol
	if nu > 0 {
		tol = math.Max(tol, 3*math.Sqrt(2/nu*(1+8.0/9+2.0/36)/float64(m)))
	}
	blockMean := func(b int) float64 { // block b counted from the top
		hiBin := top - b*m
		var sum float64
		for i := hiBin - m + 1; i <= hiBin; i++ {
			sum += s[i]
		}
		return sum / float64(m)
	}
	sum := blockMean(0) * float64(m)
	cnt := m
	b := 1
	for ; b < nb; b++ {
		bm := blockMean(b)
		if bm > (1+tol)*sum/float64(cnt) {
			break
		}
		sum += bm * float64(m)
		cnt += m
	}
	if b < 2 || !(sum > 0) {
		return noisePlateau{}
	}
	return noisePlateau{level: sum / float64(cnt), first: top - cnt + 1, found: true}
}

// hannWindowPower returns the power response |W(d)|² of the periodic Hann
// window at d bins from its centre, normalised to 1 at d = 0 (Harris 1978,
// Proc. IEEE 66): W(d) = sinc(d) / (1 − d²), with W(±1) = ½.
func hannWindowPower(d float64) float64 {
	a := math.Abs(d)
	var w float64
	if math.Abs(a-1) < 1e-9 {
		w = 0.5
	} else {
		w = sinc(a) / (1 - a*a)
	}
	return w * w
}

// smoothWithWindow convolves the spectrum s, sampled pad times per
// unpadded bin, over bins lo ≤ i < hi with the Hann window's power response
// (to ±hannCorrelationReach bins, normalised to unit sum, renormalised at
// the ends), which is what a Welch estimate does once more to the true
// spectrum: the result is smoothed twice as much as s.
func smoothWithWindow(s []float64, lo, hi, pad int) []float64 {
	reach := hannCorrelationReach * pad
	k := make([]float64, 2*reach+1)
	for j := range k {
		k[j] = hannWindowPower(float64(j-reach) / float64(pad))
	}
	out := make([]float64, len(s))
	for i := lo; i < hi; i++ {
		var num, den float64
		for j := max(lo, i-reach); j <= min(hi-1, i+reach); j++ {
			w := k[j-i+reach]
			num += w * math.Max(s[j], 0)
			den += w
		}
		out[i] = num / den
	}
	return out
}
