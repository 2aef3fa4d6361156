package mixture

import (
	"math"
	"testing"
)

// lnGammaTerms against handbook values (Abramowitz & Stegun 6.1.8, 6.3.2, 6.3.3, 6.4.2, 6.4.4:
// Γ(½) = √π, ψ(1) = −γ, ψ(½) = −γ − 2 ln 2, ψ′(1) = π²/6, ψ′(½) = π²/2), the standard library's
// Lgamma over the range the fits meet (α from 1e-6, counts to 1e6), and the recurrences across
// the switch to the asymptotic series at 10, which must hold to rounding.
func TestLnGammaTermsMatchHandbookValues(t *testing.T) {
	t.Parallel()
	const euler = 0.57721566490153286061
	for _, tt := range []struct {
		name      string
		z         float64
		lg, psi   float64
		tri       float64
		tolerance float64
	}{
		{"1/2", 0.5, 0.5 * math.Log(math.Pi), -euler - 2*math.Ln2, math.Pi * math.Pi / 2, 1e-13},
		{"1", 1, 0, -euler, math.Pi * math.Pi / 6, 1e-13},
	} {
		lg, psi, tri := lnGammaTerms(tt.z, true)
		if math.Abs(lg-tt.lg) > tt.tolerance || math.Abs(psi-tt.psi) > tt.tolerance || math.Abs(tri-tt.tri) > tt.tolerance {
			t.Errorf("z = %s: %.16g %.16g %.16g, want %.16g %.16g %.16g", tt.name, lg, psi, tri, tt.lg, tt.psi, tt.tri)
		}
	}
	for _, z := range []float64{1e-6, 1e-3, 0.1, 2.5, 9.99, 10, 10.5, 37, 123.4, 2016, 1e6} {
		want, _ := math.Lgamma(z)
		if lg, _, _ := lnGammaTerms(z, false); math.Abs(lg-want) > 1e-12*math.Max(1, math.Abs(want)) || math.Abs(lnGamma(z)-want) > 1e-12*math.Max(1, math.Abs(want)) {
			t.Errorf("log Γ(%g) = %.16g, want %.16g (math.Lgamma)", z, lg, want)
		}
	}
	for _, z := range []float64{9.2, 9.5, 9.999} {
		_, p0, t0 := lnGammaTerms(z, true)
		_, p1, t1 := lnGammaTerms(z+1, true)
		if math.Abs(p1-p0-1/z) > 1e-13 || math.Abs(t0-t1-1/(z*z)) > 1e-13 {
			t.Errorf("z = %g: ψ(z+1) − ψ(z) = %.16g, ψ′(z) − ψ′(z+1) = %.16g; want 1/z and 1/z²", z, p1-p0, t0-t1)
		}
	}
}
