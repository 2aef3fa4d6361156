package groupstat

import (
	"math/rand/v2"
	"sort"
	"testing"
)

// The bracketed selection must give what a sorted copy gives, both when its sample brackets the
// wanted values and when it misses and falls back to selecting on the whole slice. The check is
// exact: a selection returns one of the input values.
func TestBracketedSelectionIsExact(t *testing.T) {
	rng := rand.New(rand.NewPCG(3, 4))
	type tc struct {
		name  string
		x     []float64
		taken int // whether the sampled bracket should hold the median: 1 yes, 0 no, -1 either
	}
	var cases []tc
	for _, n := range []int{2048, 2049, 10080, 60000} {
		normal, ties, sorted := make([]float64, n), make([]float64, n), make([]float64, n)
		for i := range normal {
			normal[i] = float64(float32(rng.NormFloat64()))
			ties[i] = float64(rng.IntN(7))
			sorted[i] = float64(i / 3)
		}
		// Every sampled place holds a value above all others, so the bracket sits above the
		// median and must miss.
		fooled := append([]float64(nil), normal...)
		for i := 0; i < 1024; i++ {
			fooled[(2*i+1)*n/2048] = 1e9 + float64(i)
		}
		// Seven values tie in thousands: the bracket may hold too many and miss.
		cases = append(cases, tc{"normal", normal, 1}, tc{"ties", ties, -1}, tc{"sorted", sorted, 1}, tc{"fooled", fooled, 0})
	}
	for _, c := range cases {
		want := append([]float64(nil), c.x...)
		sort.Float64s(want)
		for _, k := range []int{0, 1, len(c.x) / 10, len(c.x)/2 - 1, len(c.x) / 2, len(c.x) - 1} {
			_, _, ok := bracketed(c.x, k, true)
			if k == len(c.x)/2 && c.taken >= 0 && ok != (c.taken == 1) {
				t.Errorf("%s, n %d, k %d: bracket held the values: %v, want %v", c.name, len(c.x), k, ok, c.taken)
			}
			prev, kth := kthPair(append([]float64(nil), c.x...), k, true)
			if kth != want[k] || (k > 0 && prev != want[k-1]) {
				t.Fatalf("%s, n %d, k %d: got (%v, %v), sorted copy gives (%v, %v)", c.name, len(c.x), k, prev, kth, want[max(k-1, 0)], want[k])
			}
			if got := Kth(append([]float64(nil), c.x...), k); got != want[k] {
				t.Fatalf("%s, n %d: Kth(%d) = %v, sorted copy gives %v", c.name, len(c.x), k, got, want[k])
			}
		}
	}
}

// BenchmarkMedian10080 is the per-participant median of a week of one-minute windows, through
// the bracketed path and through selection on the whole slice.
func BenchmarkMedian10080(b *testing.B) {
	rng := rand.New(rand.NewPCG(1, 2))
	x := make([]float64, 10080)
	for i := range x {
		x[i] = float64(float32(rng.NormFloat64()*0.3 + 1))
	}
	y := make([]float64, len(x))
	b.Run("bracketed", func(b *testing.B) {
		for b.Loop() {
			copy(y, x)
			Median(y)
		}
	})
	b.Run("select", func(b *testing.B) {
		for b.Loop() {
			copy(y, x)
			SelectKth(y, len(y)/2)
		}
	})
}
