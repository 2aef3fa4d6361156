package normalize

import (
	"math"
	"math/rand/v2"
	"testing"
)

func TestMonotoneTwins(t *testing.T) {
	t.Parallel()
	rng := rand.New(rand.NewPCG(1, 2))
	const n = 2000
	// counts, log1p(counts) to 2 decimals (large counts tie), a 10-window mean of counts,
	// −2·counts, a noisy copy, and a column that is nearly always 0 (too few values to tell).
	d := 6
	rows := make([]float64, n*d)
	counts := make([]float64, n)
	for i := range counts {
		if rng.Float64() < 0.4 {
			counts[i] = 0
		} else {
			counts[i] = math.Round(math.Exp(4 + 1.5*rng.NormFloat64()))
		}
	}
	for i := 0; i < n; i++ {
		var m float64
		for k := max(0, i-9); k <= i; k++ {
			m += counts[k]
		}
		rare := 0.0
		if i%500 == 0 {
			rare = float64(i)
		}
		copy(rows[i*d:], []float64{counts[i], math.Round(100*math.Log1p(counts[i])) / 100, m / 10, -2 * counts[i], counts[i] + rng.NormFloat64(), rare})
	}
	got := MonotoneTwins(rows, d)
	want := []int{-1, 0, -1, 0, -1, -1}
	for j := range want {
		if got[j] != want[j] {
			t.Errorf("feature %d: twin of %d, want %d", j, got[j], want[j])
		}
	}
}
