package raw

import (
	"math"
	"math/cmplx"

	"gonum.org/v1/gonum/dsp/fourier"
)

// The features of one window, in the order written (FeatureNames), each with a published
// definition where the trade has one:
//   - enmo_mg: the Euclidean norm minus one, negatives set to zero, averaged over the window,
//     in milli-g (van Hees et al. 2013, PLoS ONE 8:e61691); no filter;
//   - mad_mg: the mean amplitude deviation, the mean absolute difference of the vector magnitude
//     from its window mean, in milli-g (Vähä-Ypyä et al. 2015, Clin Physiol Funct Imaging 35:64);
//   - anglez_deg: the arm's angle to the horizontal plane, atan(z / √(x² + y²)), averaged over
//     the window, in degrees (after van Hees et al. 2015, PLoS ONE 10:e0142533);
//   - mean_x, mean_y, mean_z, sd_x, sd_y, sd_z: each axis's mean and standard deviation (the
//     population s.d., dividing by n), in g;
//   - corr_xy, corr_xz, corr_yz: the Pearson correlations of the axes (empty where an axis is
//     constant);
//   - vm_mean, vm_sd, vm_peak: the vector magnitude's mean, s.d. and largest value, in g;
//   - dom_freq_hz, dom_power_share: the frequency of the largest peak of the vector magnitude's
//     periodogram (its mean removed, no window function) at 0.3 Hz or above, and that bin's share
//     of the power above 0 Hz;
//   - power_0_3_to_3hz, power_3_to_10hz: the shares of that power in 0.3–3 Hz (most human
//     movement) and 3–10 Hz;
//   - spectral_entropy: the Shannon entropy of the normalized periodogram above 0 Hz, divided by
//     the log of its number of bins (0: one frequency; 1: flat).
var FeatureNames = []string{"enmo_mg", "mad_mg", "anglez_deg", "mean_x", "mean_y", "mean_z", "sd_x", "sd_y", "sd_z",
	"corr_xy", "corr_xz", "corr_yz", "vm_mean", "vm_sd", "vm_peak", "dom_freq_hz", "dom_power_share",
	"power_0_3_to_3hz", "power_3_to_10hz", "spectral_entropy"}

// windowFeatures computes the features of one window's calibrated samples x, y, z (in g), taken
// at rate Hz, into out (len(FeatureNames)); spectra is reused between windows of one length.
func windowFeatures(x, y, z []float64, rate float64, out []float64, sp *spectrum) {
	n := len(x)
	fn := float64(n)
	var mx, my, mz float64
	for i := 0; i < n; i++ {
		mx += x[i]
		my += y[i]
		mz += z[i]
	}
	mx, my, mz = mx/fn, my/fn, mz/fn
	var sxx, syy, szz, sxy, sxz, syz float64
	var enmo, angle, vmSum, peak float64
	vm := sp.vm(n)
	for i := 0; i < n; i++ {
		dx, dy, dz := x[i]-mx, y[i]-my, z[i]-mz
		sxx += dx * dx
		syy += dy * dy
		szz += dz * dz
		sxy += dx * dy
		sxz += dx * dz
		syz += dy * dz
		r := math.Sqrt(x[i]*x[i] + y[i]*y[i] + z[i]*z[i])
		vm[i] = r
		vmSum += r
		enmo += math.Max(r-1, 0)
		if h := math.Sqrt(x[i]*x[i] + y[i]*y[i]); h > 0 {
			angle += math.Atan(z[i] / h)
		} else {
			angle += math.Atan2(z[i], h) // straight up or down, or no signal at all
		}
		peak = math.Max(peak, r)
	}
	vmMean := vmSum / fn
	var mad, vss float64
	for _, r := range vm {
		mad += math.Abs(r - vmMean)
		vss += (r - vmMean) * (r - vmMean)
	}
	corr := func(sab, saa, sbb float64) float64 {
		if saa <= 0 || sbb <= 0 {
			return math.NaN()
		}
		return sab / math.Sqrt(saa*sbb)
	}
	out[0], out[1], out[2] = 1000*enmo/fn, 1000*mad/fn, angle/fn*180/math.Pi
	out[3], out[4], out[5] = mx, my, mz
	out[6], out[7], out[8] = math.Sqrt(sxx/fn), math.Sqrt(syy/fn), math.Sqrt(szz/fn)
	out[9], out[10], out[11] = corr(sxy, sxx, syy), corr(sxz, sxx, szz), corr(syz, syy, szz)
	out[12], out[13], out[14] = vmMean, math.Sqrt(vss/fn), peak
	sp.features(vm, vmMean, rate, out[15:20])
}

// spectrum holds the buffers of the periodogram for windows of one length.
type spectrum struct {
	n     int
	fft   *fourier.FFT
	in    []float64
	coeff []complex128
	vmBuf []float64
}

func (s *spectrum) vm(n int) []float64 {
	if cap(s.vmBuf) < n {
		s.vmBuf = make([]float64, n)
	}
	return s.vmBuf[:n]
}

// features fills dominant frequency, its share, the two band shares and the spectral entropy
// of the vector magnitude vm (mean m) at rate Hz.
func (s *spectrum) features(vm []float64, m, rate float64, out []float64) {
	n := len(vm)
	if s.n != n {
		s.n, s.fft = n, fourier.NewFFT(n)
		s.in, s.coeff = make([]float64, n), make([]complex128, n/2+1)
	}
	for i, v := range vm {
		s.in[i] = v - m
	}
	s.coeff = s.fft.Coefficients(s.coeff, s.in)
	var total, low, high, best float64
	dom := -1
	for k := 1; k < len(s.coeff); k++ {
		p := real(s.coeff[k] * cmplx.Conj(s.coeff[k]))
		f := float64(k) * rate / float64(n)
		total += p
		switch {
		case f >= 0.3 && f < 3:
			low += p
		case f >= 3 && f < 10:
			high += p
		}
		if f >= 0.3 && p > best {
			best, dom = p, k
		}
	}
	for i := range out {
		out[i] = math.NaN()
	}
	if !(total > 0) {
		return
	}
	var h float64
	for k := 1; k < len(s.coeff); k++ {
		if p := real(s.coeff[k]*cmplx.Conj(s.coeff[k])) / total; p > 0 {
			h -= p * math.Log(p)
		}
	}
	if dom > 0 {
		out[0], out[1] = float64(dom)*rate/float64(n), best/total
	}
	out[2], out[3] = low/total, high/total
	if bins := len(s.coeff) - 1; bins > 1 {
		out[4] = h / math.Log(float64(bins))
	}
}
