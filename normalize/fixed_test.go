package normalize

import (
	"context"
	"math"
	"math/rand/v2"
	"testing"
)

// The align step transforms a participant's windows with one device after another. Doing so
// from their fixed part (FixedLogged, the features no device moves, projected once) must give
// what ApplyLoggedInto gives, for devices that turn, calibrate and offset, with and without the
// projection. The two differ only in the order of the projection's sums, so they agree to
// rounding: 1e-12 of the output's scale (common practice for sums of a few dozen terms of
// order 1 in float64, whose rounding is near 1e-15 each).
func TestFixedPartMatchesLoggedApply(t *testing.T) {
	t.Parallel()
	rng := rand.New(rand.NewPCG(9, 10))
	units := make([][]float64, 3)
	for u := range units {
		for w := 0; w < applyRows+37; w++ {
			m, c := randomWindow(rng)
			units[u] = append(units[u], windowOf(m, c)...)
		}
	}
	d := len(turnNames)
	axes := []int{0, 1, 2}
	turned := FindTurned(turnNames, axes, units[0])
	lowest, start := LowestOf(units, d), LogStartOf(units, d)
	for _, noPCA := range []bool{true, false} {
		fit, err := FitBlocks(context.Background(), turnNames, SliceBlocks(units), Options{Within: WithinAlign, Log: true, Lowest: lowest, LogStart: start, Axes: axes, Turned: turned, NoPCA: noPCA})
		if err != nil {
			t.Fatal(err)
		}
		k := fit.OutDim()
		for u, x := range units {
			xl := fit.LogInto(nil, x)
			fixed := fit.FixedLogged(xl)
			r := randomRotation(rng, 15)
			offset := make([]float64, k)
			for c := range offset {
				offset[c] = 0.1 * rng.NormFloat64()
			}
			for _, dev := range []Device{
				{},
				{Rotation: r[:]},
				{Rotation: r[:], AxisScale: []float64{1.05, 0.97, 1.01}, AxisOffset: []float64{0.02, -0.05, 0.01}, Offset: offset},
			} {
				want := fit.ApplyLoggedInto(nil, xl, dev)
				got := fit.ApplyFixedInto(nil, fixed, xl, dev)
				if len(got) != len(want) {
					t.Fatalf("%d values from the fixed part, %d in one go", len(got), len(want))
				}
				for i := range want {
					if math.Abs(got[i]-want[i]) > 1e-12*(1+math.Abs(want[i])) {
						t.Fatalf("PCA %v, participant %d, device %+v, value %d: %v from the fixed part, %v in one go", !noPCA, u, dev, i, got[i], want[i])
					}
				}
			}
		}
	}
}
