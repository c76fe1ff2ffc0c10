package speed

import (
	"errors"
	"fmt"
	"math"

	"gonum.org/v1/gonum/dsp/fourier"
)

// hann returns the periodic Hann window of length n, w_i = 0.5 − 0.5
// cos(2πi/n), the form scipy.signal.get_window('hann', n) returns for
// spectral analysis (Harris 1978, Proc. IEEE 66).
func hann(n int) []float64 {
	w := make([]float64, n)
	for i := range w {
		w[i] = 0.5 - 0.5*math.Cos(2*math.Pi*float64(i)/float64(n))
	}
	return w
}

// welchPlan holds the window, transform and scratch of Welch's method for
// segments of nper samples, each zero-padded to nfft = pad·nper samples
// before its transform (padding samples the same periodogram on a pad
// times finer frequency grid; every pad-th padded bin is a bin of the
// unpadded periodogram).
type welchPlan struct {
	nper, pad, nfft, nf, step int
	scale                     float64 // 1/(fs Σw²)
	w, seg                    []float64
	coef                      []complex128
	fft                       *fourier.FFT
}

func newWelchPlan(nper, pad int, fs float64) *welchPlan {
	p := &welchPlan{nper: nper, pad: pad, nfft: nper * pad, w: hann(nper)}
	p.nf = p.nfft/2 + 1
	p.step = nper - nper/2
	var sw2 float64
	for _, v := range p.w {
		sw2 += v * v
	}
	p.scale = 1 / (fs * sw2)
	p.seg = make([]float64, p.nfft)
	p.coef = make([]complex128, p.nf)
	p.fft = fourier.NewFFT(p.nfft)
	return p
}

// segments returns the number of half-overlapping segments that fit in a
// series of n samples (trailing samples that do not fill one are unused).
func (p *welchPlan) segments(n int) int { return (n - p.nper/2) / p.step }

// transform removes the mean of the segment src (nper samples), applies the
// window, zero-pads and leaves the one-sided transform in p.coef.
func (p *welchPlan) transform(src []float64) {
	var mean float64
	for _, v := range src {
		mean += v
	}
	mean /= float64(p.nper)
	for i, v := range src {
		p.seg[i] = (v - mean) * p.w[i]
	}
	p.fft.Coefficients(p.coef, p.seg)
}

// binScale is the factor that turns |X_i|² of padded bin i into a one-sided
// density: 1/(fs Σw²), doubled except at zero frequency and, for an even
// transform length, the Nyquist frequency.
func (p *welchPlan) binScale(i int) float64 {
	if i == 0 || (p.nfft%2 == 0 && i == p.nf-1) {
		return p.scale
	}
	return 2 * p.scale
}

// Welch returns the one-sided power spectral density of the series x sampled
// at fs Hz by Welch's method of averaged modified periodograms (Welch 1967,
// IEEE Trans. Audio Electroacoust. 15): segments of nperseg samples with 50 %
// overlap (step nperseg − nperseg/2), each with its mean removed (constant
// detrend), multiplied by a periodic Hann window and Fourier transformed.
// The periodograms are scaled as a density, |X|²/(fs Σw²), doubled except at
// zero frequency and (for even nperseg) the Nyquist frequency, and averaged.
// This is what scipy.signal.welch(x, fs, window='hann', nperseg=nperseg)
// returns with its other defaults. freqs are k·fs/nperseg, k = 0..nperseg/2;
// psd is in units of x² per Hz. Trailing samples that do not fill a segment
// are not used, as in scipy.
//
// An error is returned when fs is not positive, nperseg is below 2 or above
// len(x), or x holds NaN or Inf (fill gaps before calling Welch).
func Welch(x []float64, fs float64, nperseg int) (freqs, psd []float64, err error) {
	if math.IsNaN(fs) || fs <= 0 || math.IsInf(fs, 0) {
		return nil, nil, fmt.Errorf("speed: Welch sampling frequency fs = %g Hz is not positive; give the frame rate", fs)
	}
	if nperseg < 2 {
		return nil, nil, fmt.Errorf("speed: Welch segment length %d is too short; use at least 2 samples", nperseg)
	}
	if nperseg > len(x) {
		return nil, nil, fmt.Errorf("speed: Welch segment length %d exceeds the series length %d; use a shorter segment or a longer record", nperseg, len(x))
	}
	for i, v := range x {
		if math.IsNaN(v) || math.IsInf(v, 0) {
			return nil, nil, fmt.Errorf("speed: Welch input sample %d is %g; fill or drop missing samples before computing a spectrum", i, v)
		}
	}
	wp := newWelchPlan(nperseg, 1, fs)
	nseg := wp.segments(len(x))
	psd = make([]float64, wp.nf)
	for s := 0; s < nseg; s++ {
		wp.transform(x[s*wp.step : s*wp.step+nperseg])
		for i, c := range wp.coef {
			psd[i] += real(c)*real(c) + imag(c)*imag(c)
		}
	}
	for i := range psd {
		psd[i] *= wp.binScale(i) / float64(nseg)
	}
	nf := wp.nf
	freqs = make([]float64, nf)
	for i := range freqs {
		freqs[i] = float64(i) * fs / float64(nperseg)
	}
	return freqs, psd, nil
}

// checkSpectrum validates a frequency grid and spectrum pair.
func checkSpectrum(freqs, psd []float64) error {
	if len(freqs) != len(psd) {
		return fmt.Errorf("speed: spectrum has %d frequencies but %d densities; pass the pair returned by Welch", len(freqs), len(psd))
	}
	if len(freqs) < 2 {
		return errors.New("speed: spectrum has fewer than 2 frequencies; use a longer segment")
	}
	for i := range freqs {
		if math.IsNaN(freqs[i]) || math.IsNaN(psd[i]) {
			return fmt.Errorf("speed: spectrum bin %d is NaN; compute the spectrum from gap-free data", i)
		}
		if i > 0 && !(freqs[i] > freqs[i-1]) {
			return fmt.Errorf("speed: spectrum frequencies are not increasing at bin %d; pass the frequency grid returned by Welch", i)
		}
	}
	return nil
}

// PeakParabola returns the peak frequency of the spectrum psd on the uniform
// grid freqs, refined by the vertex of a parabola through the logarithm of
// the spectrum at the largest bin and its two neighbours (Gaussian
// interpolation of a spectral peak; e.g. Gasior & Gonzalez 2004, AIP Conf.
// Proc. 732 — from memory). The zero-frequency bin is never chosen.
// When the largest bin is the last one, or a neighbour is zero, its own
// frequency is returned. An error is returned for a spectrum with no positive
// density above zero frequency.
func PeakParabola(freqs, psd []float64) (float64, error) {
	if err := checkSpectrum(freqs, psd); err != nil {
		return 0, err
	}
	im := -1
	for i := 1; i < len(psd); i++ {
		if psd[i] > 0 && (im < 0 || psd[i] > psd[im]) {
			im = i
		}
	}
	if im < 0 {
		return 0, errors.New("speed: spectrum has no energy above zero frequency; check that the elevation record is not constant")
	}
	if im == len(psd)-1 || psd[im-1] <= 0 || psd[im+1] <= 0 {
		return freqs[im], nil
	}
	ym, y0, yp := math.Log(psd[im-1]), math.Log(psd[im]), math.Log(psd[im+1])
	den := ym - 2*y0 + yp
	if den >= 0 {
		return freqs[im], nil
	}
	d := 0.5 * (ym - yp) / den
	if d < 0 {
		return freqs[im] + d*(freqs[im]-freqs[im-1]), nil
	}
	return freqs[im] + d*(freqs[im+1]-freqs[im]), nil
}

// SpectralMoment returns the n-th spectral moment m_n = ∫ f^n S(f) df of
// a one-sided spectrum on the frequency grid of Welch, computed by the
// rectangle rule Σ f_i^n S_i Δf_i with Δf_i the spacing of the grid. For the
// density-scaled Welch spectrum the rectangle rule makes m0 equal to the
// mean-square of the windowed segments (Parseval's theorem), which the
// trapezoid rule would not. Moments are in (units of S)·Hz^(n+1).
func SpectralMoment(freqs, psd []float64, n int) (float64, error) {
	if err := checkSpectrum(freqs, psd); err != nil {
		return 0, err
	}
	var m float64
	for i := range freqs {
		var df float64
		if i+1 < len(freqs) {
			df = freqs[i+1] - freqs[i]
		} else {
			df = freqs[i] - freqs[i-1]
		}
		fn := 1.0
		if n != 0 {
			fn = math.Pow(freqs[i], float64(n))
		}
		m += fn * psd[i] * df
	}
	return m, nil
}

// Hm0 returns the spectral significant wave height 4√m0 in metres of an
// elevation spectrum in m²/Hz (common practice; e.g. IAHR working group, List of
// Sea-State Parameters, 1989 — from memory).
func Hm0(freqs, psd []float64) (float64, error) {
	m0, err := SpectralMoment(freqs, psd, 0)
	if err != nil {
		return 0, err
	}
	if m0 < 0 {
		return 0, errors.New("speed: spectrum has negative zeroth moment; pass a power spectral density")
	}
	return 4 * math.Sqrt(m0), nil
}

// YoungExponent is the power q of the weighted-spectrum peak frequency
// F_p = ∫ f S^q df / ∫ S^q df that Young (1995) recommends, q = 4.
const YoungExponent = 4

// PeakYoung returns the peak frequency of the spectrum psd on the grid
// freqs as the weighted mean F_p = ∫ f S⁴ df / ∫ S⁴ df (Young 1995, "The
// determination of confidence limits associated with estimates of the
// spectral peak frequency", Ocean Eng. 22, 669–686), by the rectangle rule of
// SpectralMoment. Because it weighs every ordinate instead of picking the
// largest one, it is far less noisy than the raw or interpolated peak of a
// measured spectrum, and for a peak that is symmetric about its centre it is
// the centre itself, wherever the centre falls between bins. The weighting is
// normalised by the largest density, so no power overflows. The
// zero-frequency bin is not used. An error is returned for a spectrum with
// no positive density above zero frequency.
func PeakYoung(freqs, psd []float64) (float64, error) {
	if err := checkSpectrum(freqs, psd); err != nil {
		return 0, err
	}
	fp, ok := youngPeak(freqs, psd, 1, len(psd))
	if !ok {
		return 0, errors.New("speed: spectrum has no energy above zero frequency; check that the elevation record is not constant")
	}
	return fp, nil
}

// youngPeak is PeakYoung over the bins lo ≤ i < hi, with negative densities
// counted as zero; ok is false when no density there is positive.
func youngPeak(freqs, psd []float64, lo, hi int) (fp float64, ok bool) {
	var smax float64
	for i := lo; i < hi; i++ {
		smax = math.Max(smax, psd[i])
	}
	if !(smax > 0) {
		return 0, false
	}
	var num, den float64
	for i := lo; i < hi; i++ {
		if !(psd[i] > 0) {
			continue
		}
		var df float64
		if i+1 < len(freqs) {
			df = freqs[i+1] - freqs[i]
		} else {
			df = freqs[i] - freqs[i-1]
		}
		r := psd[i] / smax
		r2 := r * r
		w := r2 * r2 * df
		num += freqs[i] * w
		den += w
	}
	return num / den, true
}
