package mixture

import "math"

// lnGammaTerms returns log Γ(z), ψ(z) and, with second, ψ′(z) for z > 0, sharing one logarithm:
// the recurrences Γ(z + 1) = z Γ(z), ψ(z + 1) = ψ(z) + 1/z and ψ′(z + 1) = ψ′(z) − 1/z² carry z
// to at least 10, where the asymptotic (Stirling) series, to the term in z⁻¹¹, hold to about 1e-15 (Abramowitz &
// Stegun 6.1.41, 6.3.18, 6.4.12). The fits spend most of their time here.
func lnGammaTerms(z float64, second bool) (lg, psi, tri float64) {
	prod := 1.0
	for z < 10 {
		prod *= z
		psi -= 1 / z
		if second {
			tri += 1 / (z * z)
		}
		z++
	}
	lz := math.Log(z)
	r := 1 / z
	r2 := r * r
	lg = (z-0.5)*lz - z + 0.91893853320467274178 + r*(1.0/12-r2*(1.0/360-r2*(1.0/1260-r2*(1.0/1680-r2/1188))))
	if prod != 1 { // log 1 is exactly 0: z began at 10 or more, as most counts do, and one logarithm is spared
		lg -= math.Log(prod)
	}
	psi += lz - 0.5*r - r2*(1.0/12-r2*(1.0/120-r2*(1.0/252-r2*(1.0/240-r2/132))))
	if second {
		tri += r + 0.5*r2 + r*r2*(1.0/6-r2*(1.0/30-r2*(1.0/42-r2*(1.0/30-r2*5/66))))
	}
	return lg, psi, tri
}

// lnGamma is log Γ(z) for z > 0 (lnGammaTerms).
func lnGamma(z float64) float64 {
	if z >= 10 {
		lz := math.Log(z)
		r := 1 / z
		r2 := r * r
		return (z-0.5)*lz - z + 0.91893853320467274178 + r*(1.0/12-r2*(1.0/360-r2*(1.0/1260-r2*(1.0/1680-r2/1188))))
	}
	lg, _, _ := lnGammaTerms(z, false)
	return lg
}

// membershipsInto writes into dst the memberships of one row from its log-probabilities under
// each component (lp, top their largest), exp(lp − top) normalized, and returns the row's log
// of Σ exp(lp) (the log-sum-exp, shifted by top so that no exponential overflows).
func membershipsInto(dst, lp []float64, top float64) float64 {
	var s float64
	for _, v := range lp {
		s += math.Exp(v - top)
	}
	for c, v := range lp {
		dst[c] = math.Exp(v-top) / s
	}
	return top + math.Log(s)
}
