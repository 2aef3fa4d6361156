package cluster

import "math"

// SphereFit fits one device's per-axis scale and offset so that its windows' axis means
// m (x, y, z as read), calibrated as scale·m + offset, lie on the sphere of radius gravity: the
// autocalibration of van Hees et al. (2014, J Appl Physiol 117:738), which takes each
// calibrated point to its nearest point on the sphere and fits a least-squares line per axis
// to those targets, again until the scales and offsets stop moving. The mean of a window's
// acceleration is gravity whatever the device does over the window, so every window serves.
// It reports false, and leaves the device as read, when the windows do not reach far enough to
// both sides of an axis (below −0.3 and above +0.3 of gravity: a device held in few postures
// cannot be calibrated) or when the fit lands outside a plausible calibration (scales from 0.7
// to 1.4, offsets within 0.3 of gravity).
func SphereFit(means [][3]float64, gravity float64) (scale, offset [3]float64, ok bool) {
	scale = [3]float64{1, 1, 1}
	if len(means) < 10 || !(gravity > 0) {
		return scale, offset, false
	}
	for i := 0; i < 3; i++ {
		lo, hi := math.Inf(1), math.Inf(-1)
		for _, m := range means {
			lo, hi = math.Min(lo, m[i]), math.Max(hi, m[i])
		}
		if lo > -0.3*gravity || hi < 0.3*gravity {
			return scale, offset, false
		}
	}
	n := float64(len(means))
	for iter := 0; iter < sphereIterations; iter++ {
		var smm, sm, st, smt [3]float64
		for _, m := range means {
			var c [3]float64
			var norm float64
			for i := range c {
				c[i] = scale[i]*m[i] + offset[i]
				norm += c[i] * c[i]
			}
			norm = math.Sqrt(norm)
			if !(norm > 0) {
				continue
			}
			for i := range c {
				t := c[i] * gravity / norm
				smm[i] += m[i] * m[i]
				sm[i] += m[i]
				st[i] += t
				smt[i] += m[i] * t
			}
		}
		change := 0.0
		for i := 0; i < 3; i++ {
			det := smm[i]*n - sm[i]*sm[i]
			if !(det > 0) {
				return [3]float64{1, 1, 1}, [3]float64{}, false
			}
			a := (smt[i]*n - sm[i]*st[i]) / det
			b := (st[i] - a*sm[i]) / n
			change = math.Max(change, math.Max(math.Abs(a-scale[i]), math.Abs(b-offset[i])/gravity))
			scale[i], offset[i] = a, b
		}
		if change < 1e-7 {
			break
		}
	}
	for i := 0; i < 3; i++ {
		if !(scale[i] >= 0.7 && scale[i] <= 1.4) || !(math.Abs(offset[i]) <= 0.3*gravity) {
			return [3]float64{1, 1, 1}, [3]float64{}, false
		}
	}
	return scale, offset, true
}

// sphereIterations bounds SphereFit's alternations (it usually stops in a few dozen).
const sphereIterations = 200
