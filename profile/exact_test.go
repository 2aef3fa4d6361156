package profile

import (
	"math"
	"math/big"
	"math/rand/v2"
	"slices"
	"testing"
)

// The exact sum is checked against math/big (Go's standard library), which adds at 4,000 bits
// here, far more than any sum of these numbers needs, and rounds to nearest even.
func TestExactSumIsCorrectlyRoundedInAnyOrder(t *testing.T) {
	t.Parallel()
	rng := rand.New(rand.NewPCG(1, 2))
	cases := map[string][]float64{
		"cancelling":   {1e16, 1, -1e16},
		"half-way":     {1, 1e-16, 1e-16 * 1e-16},
		"tiny and big": {1e300, 1, -1e300, 1e-300},
	}
	for i := 0; i < 20; i++ {
		xs := make([]float64, 200)
		for j := range xs {
			xs[j] = (rng.Float64() - 0.5) * math.Pow(10, float64(rng.IntN(30)-15))
		}
		cases["random "+string(rune('a'+i))] = xs
	}
	for name, xs := range cases {
		ref := new(big.Float).SetPrec(4000)
		for _, x := range xs {
			ref.Add(ref, new(big.Float).SetPrec(4000).SetFloat64(x))
		}
		want, _ := ref.Float64()
		for trial := 0; trial < 5; trial++ {
			ys := slices.Clone(xs)
			rng.Shuffle(len(ys), func(a, b int) { ys[a], ys[b] = ys[b], ys[a] })
			var e exactSum
			for _, y := range ys {
				e.add(y)
			}
			if got := e.value(); got != want {
				t.Errorf("%s, order %d: %v, want %v (math/big)", name, trial, got, want)
			}
		}
	}
}

// Describers merged in any grouping and order give the same bits, and a piece read back is the
// Describer it was written from.
func TestDescriberMergesExactly(t *testing.T) {
	t.Parallel()
	rng := rand.New(rand.NewPCG(3, 4))
	const d, k, units = 3, 2, 12
	parts := make([]*Describer, units)
	for u := range parts {
		n := 5 + rng.IntN(20)
		raw, lab := make([]float64, n*d), make([]int, n)
		for i := range raw {
			raw[i] = rng.NormFloat64() * math.Pow(10, float64(rng.IntN(8)))
		}
		for i := range lab {
			lab[i] = rng.IntN(k)
		}
		parts[u] = NewDescriber(d, k)
		if err := parts[u].Add(raw, lab); err != nil {
			t.Fatal(err)
		}
	}
	whole := NewDescriber(d, k)
	for _, p := range parts {
		whole.Merge(p)
	}
	want := whole.Descriptions()
	// In reverse, in two halves merged through pieces.
	a, b := NewDescriber(d, k), NewDescriber(d, k)
	for u := units - 1; u >= 0; u-- {
		if u%2 == 0 {
			a.Merge(parts[u])
		} else {
			b.Merge(parts[u])
		}
	}
	pa, err := a.Piece().Describer()
	if err != nil {
		t.Fatal(err)
	}
	pb, err := b.Piece().Describer()
	if err != nil {
		t.Fatal(err)
	}
	pb.Merge(pa)
	got := pb.Descriptions()
	for s := range want {
		if !slices.Equal(got[s].Mean, want[s].Mean) || got[s].Share != want[s].Share {
			t.Errorf("state %d: %v (%v) merged otherwise, %v (%v) in order", s, got[s].Mean, got[s].Share, want[s].Mean, want[s].Share)
		}
	}
	if _, err := (DescriberPiece{D: d, K: k}).Describer(); err == nil {
		t.Error("a piece without sums was read back")
	}
}
