package groupstat

import (
	"math/rand/v2"
	"slices"
	"sort"
	"testing"
)

// quickSelect must give what a sorted copy gives, leave no larger value before place k and no
// smaller one after it, on values with and without ties, on orders that defeat simple pivots,
// and when its budget of rounds runs out and it sorts the rest (budgets 0 and 1 force that).
// The check is exact: a selection returns one of the input values.
func TestQuickSelectIsExact(t *testing.T) {
	t.Parallel()
	rng := rand.New(rand.NewPCG(3, 4))
	var cases [][]float64
	for _, n := range []int{1, 2, 15, 16, 17, 100, 1260, 10080} {
		normal, ties, sorted, reversed, pipe, equal := make([]float64, n), make([]float64, n), make([]float64, n), make([]float64, n), make([]float64, n), make([]float64, n)
		for i := range normal {
			normal[i] = float64(float32(rng.NormFloat64()))
			ties[i] = float64(rng.IntN(7))
			sorted[i], reversed[i], pipe[i], equal[i] = float64(i/3), float64(n-i), float64(min(i, n-i)), 7
		}
		cases = append(cases, normal, ties, sorted, reversed, pipe, equal)
	}
	for _, x := range cases {
		want := append([]float64(nil), x...)
		sort.Float64s(want)
		n := len(x)
		for _, k := range []int{0, n / 10, n/2 - 1, n / 2, n - 1} {
			if k < 0 {
				continue
			}
			for _, budget := range []int{0, 1, 2 * 64} {
				a := append([]float64(nil), x...)
				got, from := quickSelectWithin(a, k, budget)
				if got != want[k] || a[k] != want[k] {
					t.Fatalf("n %d, k %d, budget %d: got %v (a[k] %v), sorted copy gives %v", n, k, budget, got, a[k], want[k])
				}
				// What selectBelow relies on: nothing before from is larger than what follows it,
				// a[from−1] is the largest before from, and from ≥ k only when a[k−1] is the
				// largest before k.
				if from > 0 && from <= n {
					if below := slices.Max(a[:from]); a[from-1] != below || (from < n && below > slices.Min(a[from:])) {
						t.Fatalf("n %d, k %d, budget %d: from %d does not split a", n, k, budget, from)
					}
				}
				if k > 0 {
					if below := largestBefore(a, k, from); below != want[k-1] {
						t.Fatalf("n %d, k %d, budget %d: the largest value before k is %v (from %d), sorted copy gives %v", n, k, budget, below, from, want[k-1])
					}
				}
				for i, v := range a {
					if (i < k && v > a[k]) || (i > k && v < a[k]) {
						t.Fatalf("n %d, k %d, budget %d: a[%d] = %v on the wrong side of %v", n, k, budget, i, v, a[k])
					}
				}
			}
		}
	}
}

// BenchmarkSelect is the median of a week of one-minute windows (10,080), of the candidates a
// sample would leave (1,260) and of a short record (100), against sorting. Each run takes the
// next of 256 different inputs, so that the branch predictor cannot learn one.
func BenchmarkSelect(b *testing.B) {
	rng := rand.New(rand.NewPCG(1, 2))
	for _, n := range []int{100, 1260, 10080} {
		pool := make([][]float64, 256)
		for p := range pool {
			pool[p] = make([]float64, n)
			for i := range pool[p] {
				pool[p][i] = float64(float32(rng.NormFloat64()))
			}
		}
		y := make([]float64, n)
		for _, alg := range []string{"median", "sort"} {
			b.Run(alg+"/"+itoa(n), func(b *testing.B) {
				p := 0
				for b.Loop() {
					copy(y, pool[p%len(pool)])
					p++
					if alg == "median" {
						Median(y)
					} else {
						sort.Float64s(y)
					}
				}
			})
		}
	}
}

func itoa(n int) string {
	s := ""
	for ; n > 0; n /= 10 {
		s = string(rune('0'+n%10)) + s
	}
	return s
}
