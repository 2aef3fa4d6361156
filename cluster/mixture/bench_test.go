package mixture

import (
	"context"
	"math/rand/v2"
	"testing"

	"gonum.org/v1/gonum/mat"
)

// benchCounts is a planted table as the grouping fits it (invented data): 500 participants in
// three groups, their windows in 6 states counted in bouts (one block), then each state's stays
// and leavings (a block of two each).
func benchCounts() (*mat.Dense, []int) {
	rng := rand.New(rand.NewPCG(1, 2))
	const n, s = 500, 6
	x := mat.NewDense(n, 3*s, nil)
	for i := 0; i < n; i++ {
		g := i % 3
		for j := 0; j < s; j++ {
			w := 1 + 4*rng.Float64()
			if j == g {
				w *= 3
			}
			bouts := float64(int(20 * w))
			stays := float64(int(bouts * (2 + float64(g) + rng.Float64())))
			x.Set(i, j, bouts)
			x.Set(i, s+2*j, stays)
			x.Set(i, s+2*j+1, bouts)
		}
	}
	return x, []int{s, 2, 2, 2, 2, 2, 2}
}

// BenchmarkFitDMM fits three groups from five starts, as the grouping does for each number of
// groups (go test -bench FitDMM -benchmem ./cluster/mixture).
func BenchmarkFitDMM(b *testing.B) {
	x, blocks := benchCounts()
	for b.Loop() {
		if _, err := FitDMM(context.Background(), x, DMMOptions{K: 3, Blocks: blocks, Starts: 5, Seed: 1, Workers: 1}); err != nil {
			b.Fatal(err)
		}
	}
}

// BenchmarkLnGammaTerms is the digamma and trigamma with log Γ over the values a fit meets:
// small α and counts, and larger totals.
func BenchmarkLnGammaTerms(b *testing.B) {
	zs := []float64{0.03, 0.4, 1.7, 3.2, 6.5, 9.1, 12, 45, 130, 980}
	var sink float64
	for b.Loop() {
		for _, z := range zs {
			lg, psi, tri := lnGammaTerms(z, true)
			sink += lg + psi + tri + lnGamma(z)
		}
	}
	_ = sink
}
