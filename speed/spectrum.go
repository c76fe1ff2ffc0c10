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
	w := hann(nperseg)
	var sw2 float64
	for _, v := range w {
		sw2 += v * v
	}
	scale := 1 / (fs * sw2)
	nf := nperseg/2 + 1
	noverlap := nperseg / 2
	step := nperseg - noverlap
	nseg := (len(x) - noverlap) / step

	fft := fourier.NewFFT(nperseg)
	seg := make([]float64, nperseg)
	coef := make([]complex128, nf)
	psd = make([]float64, nf)
	for s := 0; s < nseg; s++ {
		src := x[s*step : s*step+nperseg]
		var mean float64
		for _, v := range src {
			mean += v
		}
		mean /= float64(nperseg)
		for i, v := range src {
			seg[i] = (v - mean) * w[i]
		}
		fft.Coefficients(coef, seg)
		for i, c := range coef {
			psd[i] += real(c)*real(c) + imag(c)*imag(c)
		}
	}
	last := nf
	if nperseg%2 == 0 {
		last = nf - 1 // Nyquist bin is not doubled
	}
	for i := range psd {
		p := psd[i] * scale / float64(nseg)
		if i > 0 && i < last {
			p *= 2
		}
		psd[i] = p
	}
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
