package normalize

import (
	"context"
	"errors"
	"fmt"
	"math"
	"slices"
	"strings"
	"testing"
)

// Two participants, two features: f0 carries a per-participant offset, f1 does not.
func offsetUnits() [][]float64 {
	a := []float64{10, 1, 10.5, 2, 11, 3, 10, 1.5, 10.2, 2.5}
	b := []float64{20, 1.2, 20.5, 2.1, 21, 2.9, 20, 1.4, 20.2, 2.6}
	return [][]float64{a, b}
}

func TestICCSeparatesOffsetFeatures(t *testing.T) {
	t.Parallel()
	icc := ICC(offsetUnits(), 2)
	// f0: between-participant variance dominates (offset 10); f1: none. Hand check of ICC(1):
	// MSB of f1 is tiny, so ICC(1) is at or below 0; that of f0 is close to 1.
	if icc[0] < 0.95 || icc[1] > 0.1 {
		t.Errorf("ICC %v, want about 1 for the offset feature and about 0 for the other", icc)
	}
}

func TestRestBaselineRemovesOffsets(t *testing.T) {
	t.Parallel()
	fit, out, err := FitTransform([]string{"f0", "f1"}, offsetUnits(), Options{Within: WithinRest, RestShare: 0.2, NoPCA: true, Scale: ScaleZ})
	if err != nil {
		t.Fatal(err)
	}
	if !fit.Touched[0] || fit.Touched[1] {
		t.Fatalf("touched %v, want only f0 (found by ICC)", fit.Touched)
	}
	// After the rest baseline both participants' f0 start from their quietest window: the
	// scaled values of the two participants coincide window by window.
	for w := 0; w < 5; w++ {
		if math.Abs(out[0][2*w]-out[1][2*w]) > 1e-12 {
			t.Errorf("window %d: f0 %v vs %v after the baseline", w, out[0][2*w], out[1][2*w])
		}
	}
	// The offset is gone: after the step, f0's ICC(1) is at or below 0 (the two participants'
	// windows coincide), and untouched f1 keeps the ICC it had.
	if raw := ICC(offsetUnits(), 2); fit.ICCAfter[0] > 0 || fit.ICCAfter[1] != raw[1] {
		t.Errorf("ICC(1) after the step %v, before %v; want f0 at or below 0 and f1 unchanged", fit.ICCAfter, raw)
	}
	// The frozen fit applied to a new participant gives the same as the fitted one.
	again := fit.Apply(offsetUnits()[1])
	for i := range again {
		if math.Abs(again[i]-out[1][i]) > 1e-12 {
			t.Fatalf("Apply differs at %d: %v vs %v", i, again[i], out[1][i])
		}
	}
}

func TestWarnsWhenZScoringEverything(t *testing.T) {
	t.Parallel()
	fit, _, err := FitTransform([]string{"f0", "f1"}, offsetUnits(), Options{Within: WithinRobustZ, WithinFeatures: []string{"*"}, NoPCA: true})
	if err != nil {
		t.Fatal(err)
	}
	if len(fit.Warnings) != 1 || fit.Warnings[0].Kind != WarnWithinEverything {
		t.Errorf("warnings %v", fit.Warnings)
	}
}

func TestOptionErrors(t *testing.T) {
	t.Parallel()
	if _, err := ParseWithin("median"); !errors.Is(err, ErrOption) || !strings.Contains(err.Error(), "use align, rest, centre, robust-z or none") {
		t.Errorf("got %v", err)
	}
	constant := [][]float64{{1, 2, 1, 3}, {1, 4, 1, 5}}
	if _, _, err := FitTransform([]string{"c", "v"}, constant, Options{NoPCA: true}); !errors.Is(err, ErrData) || !strings.Contains(err.Error(), "feature c has no spread") {
		t.Errorf("got %v", err)
	}
}

// Sampled is a keyed hash: the draw at a rate depends on the seed, the participant and the
// window alone, so it is the same in any order and any process; another seed or participant
// draws other windows, and the share drawn is the rate.
func TestSampledIsReproducible(t *testing.T) {
	t.Parallel()
	n, hits, sameOtherSeed, sameOtherUnit := 100000, 0, 0, 0
	first := make([]bool, n)
	for w := 0; w < n; w++ {
		first[w] = Sampled(7, 3, w, 0.1)
	}
	for w := n - 1; w >= 0; w-- { // again, in the other order
		if Sampled(7, 3, w, 0.1) != first[w] {
			t.Fatalf("window %d drawn differently the second time", w)
		}
		if first[w] {
			hits++
			if Sampled(8, 3, w, 0.1) {
				sameOtherSeed++
			}
			if Sampled(7, 4, w, 0.1) {
				sameOtherUnit++
			}
		}
	}
	// Draws under another seed or for another participant are independent of these: about
	// 10 % of the drawn windows are drawn again (binomial(10000, 0.1): 1,000 ± 5 s.d. = ±150).
	for what, k := range map[string]int{"another seed": sameOtherSeed, "another participant": sameOtherUnit} {
		if k < 850 || k > 1150 {
			t.Errorf("%s draws %d of the %d windows drawn, want about a tenth", what, k, hits)
		}
	}
	// A binomial(100000, 0.1) count lies within 5 s.d. (±474) of 10,000 but for 1 in 3 million.
	if hits < 9526 || hits > 10474 {
		t.Errorf("%d of %d sampled at rate 0.1", hits, n)
	}
}

func ExampleICC() {
	// Two invented participants whose first feature differs by a constant offset.
	icc := ICC([][]float64{{1, 5, 2, 6, 3, 7}, {11, 5, 12, 6, 13, 7}}, 2)
	fmt.Printf("%.4f %.4f\n", icc[0], icc[1])
	// By hand: f0 has MSB 150, MSW 1, n₀ 3, so (150 − 1)/(150 + 2·1) = 0.9803; f1 has MSB 0, MSW 1.
	// Output: 0.9803 -0.5000
}

// The baselines kept from the fitting pass give what finding them anew gives, bit for bit, and
// the windows handed to Keep, finished by Cohort, are the sampled rows of Apply's output.
func TestKeptBaselinesAndSampleMatchApply(t *testing.T) {
	t.Parallel()
	units := make([][]float64, 6)
	for u := range units {
		for w := 0; w < 40; w++ {
			units[u] = append(units[u], float64(u)*3+math.Sin(float64(w)), math.Cos(float64(w*u)), float64((w*7+u)%11))
		}
	}
	type key struct{ u, w int }
	kept := map[key][]float64{}
	opts := Options{Within: WithinRest, Seed: 9, KeepRate: 0.3, Keep: func(u, w int, row []float64) {
		kept[key{u, w}] = append([]float64(nil), row...)
	}}
	fit, err := FitBlocks(context.Background(), []string{"a", "b", "c"}, SliceBlocks(units), opts)
	if err != nil {
		t.Fatal(err)
	}
	if len(fit.Units) != len(units) || len(kept) == 0 {
		t.Fatalf("%d baselines for %d participants, %d kept windows", len(fit.Units), len(units), len(kept))
	}
	k := fit.OutDim()
	for u, x := range units {
		want, got := fit.Apply(x), fit.ApplyUnit(u, x)
		for i := range want {
			if math.Float64bits(want[i]) != math.Float64bits(got[i]) {
				t.Fatalf("participant %d value %d: ApplyUnit %v, Apply %v", u, i, got[i], want[i])
			}
		}
		for w := 0; w < 40; w++ {
			row, ok := kept[key{u, w}]
			if ok != Sampled(9, u, w, 0.3) {
				t.Fatalf("participant %d window %d kept %v, Sampled says otherwise", u, w, ok)
			}
			if !ok {
				continue
			}
			done := fit.Cohort(row)
			for j := 0; j < k; j++ {
				if math.Abs(done[j]-want[w*k+j]) > 1e-12 {
					t.Fatalf("participant %d window %d: kept and finished %v, Apply %v", u, w, done, want[w*k:(w+1)*k])
				}
			}
		}
	}
}

// ApplyBaselineInto does both steps in one go, a block of windows at a time; it must give bit for
// bit what the within-participant step followed by Cohort gives, for every within mode, with and
// without the projection, over more windows than one block, and into a reused buffer.
func TestOneGoApplyMatchesTwoSteps(t *testing.T) {
	t.Parallel()
	units := make([][]float64, 5)
	for u := range units {
		for w := 0; w < applyRows+37; w++ {
			units[u] = append(units[u], float64(u)*3+math.Sin(float64(w)), math.Cos(float64(w*u)), float64((w*7+u)%11), math.Sqrt(float64(w+u)))
		}
	}
	cases := []struct {
		name string
		opts Options
	}{
		{"rest baseline, PCA", Options{Within: WithinRest}},
		{"rest baseline, no PCA", Options{Within: WithinRest, NoPCA: true}},
		{"robust z on two features", Options{Within: WithinRobustZ, WithinFeatures: []string{"a", "c"}}},
		{"no within step, robust cohort scale", Options{Within: WithinNone, Scale: ScaleRobustZ}},
		{"log scale, rest baseline", Options{Within: WithinRest, Log: true}},
		{"log scale, align", Options{Within: WithinAlign, Log: true, NoPCA: true}},
	}
	var buf []float64
	for _, c := range cases {
		if c.opts.Log {
			c.opts.Lowest, c.opts.LogStart = LowestOf(units, 4), LogStartOf(units, 4)
		}
		fit, err := FitBlocks(context.Background(), []string{"a", "b", "c", "d"}, SliceBlocks(units), c.opts)
		if err != nil {
			t.Fatalf("%s: %v", c.name, err)
		}
		if c.opts.Log && !slices.Equal(fit.Logged, []bool{false, false, true, true}) {
			t.Fatalf("%s: logged %v; want c and d (a and b take negative values)", c.name, fit.Logged)
		}
		for u, x := range units {
			var base Baseline
			if fit.Units != nil {
				base = fit.Units[u]
			}
			want := fit.Cohort(fit.withinInto(nil, x, base))
			buf = fit.ApplyUnitInto(buf, u, x)
			if len(buf) != len(want) {
				t.Fatalf("%s, participant %d: %d values, two steps give %d", c.name, u, len(buf), len(want))
			}
			for i := range want {
				if math.Float64bits(want[i]) != math.Float64bits(buf[i]) {
					t.Fatalf("%s, participant %d value %d: %v, two steps give %v", c.name, u, i, buf[i], want[i])
				}
			}
		}
	}
}

// Every within step's name reads back as the step, and the help names them all.
func TestWithinStepsReadBack(t *testing.T) {
	t.Parallel()
	for _, s := range withinSteps {
		w, err := ParseWithin(s.name)
		if err != nil || w != s.w || w.String() != s.name || !strings.Contains(WithinHelp(), s.name+" (") {
			t.Errorf("%s: %v %v, help %q", s.name, w, err, WithinHelp())
		}
	}
}
