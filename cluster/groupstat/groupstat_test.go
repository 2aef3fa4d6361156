package groupstat

import (
	"encoding/json"
	"errors"
	"fmt"
	"math"
	"math/rand/v2"
	"os"
	"path/filepath"
	"slices"
	"sort"
	"strings"
	"testing"

	"gonum.org/v1/gonum/floats/scalar"
)

type kwGolden struct {
	Cases []struct {
		Groups [][]float64
		H, P   float64
	}
	Cliff []struct {
		X, Y     []float64
		U, Delta float64
	}
}

func readKW(t *testing.T) kwGolden {
	var g kwGolden
	b, err := os.ReadFile(filepath.Join("..", "..", "testdata", "cluster", "kruskal.json"))
	if err != nil {
		t.Fatal(err)
	}
	if err := json.Unmarshal(b, &g); err != nil {
		t.Fatal(err)
	}
	return g
}

func near(got, want, tol float64) bool { return scalar.EqualWithinRel(got, want, tol) }

func TestKruskalWallisGolden(t *testing.T) {
	t.Parallel()
	// scipy.stats.kruskal 1.10.1 via testdata/cluster/make_golden.py: iris features by species and
	// tied integers. H is a sum of rank ratios (1e-12 relative); p is a χ² tail from two different
	// incomplete-gamma implementations (cephes vs gonum), 1e-9 relative.
	for i, c := range readKW(t).Cases {
		r, err := KruskalWallis(c.Groups)
		if err != nil {
			t.Fatal(err)
		}
		if !near(r.H, c.H, 1e-12) {
			t.Errorf("case %d: H %.15g, scipy %.15g (tol 1e-12)", i, r.H, c.H)
		}
		if !near(r.P, c.P, 1e-9) {
			t.Errorf("case %d: p %.15g, scipy %.15g (tol 1e-9)", i, r.P, c.P)
		}
		if want := c.H / float64(r.N-1); !near(r.Epsilon2, want, 1e-12) {
			t.Errorf("case %d: ε² %.15g, H/(n−1) from scipy's H %.15g", i, r.Epsilon2, want)
		}
	}
}

func TestCliffsDeltaGolden(t *testing.T) {
	t.Parallel()
	// δ = 2U/(mn) − 1 with U from scipy.stats.mannwhitneyu 1.10.1 (ties count one half): exact counts.
	for i, c := range readKW(t).Cliff {
		d, err := CliffsDelta(c.X, c.Y)
		if err != nil {
			t.Fatal(err)
		}
		if math.Abs(d-c.Delta) > 1e-12 {
			t.Errorf("case %d: δ %.15g, from scipy's U %.15g", i, d, c.Delta)
		}
	}
}

// TestBenjaminiHochbergGolden checks the q-values against R's p.adjust(method = "BH")
// (testdata/cluster/make_padjust.R, r-base-core 4.2.2): the fifteen p-values of Benjamini &
// Hochberg (1995, section 4), and invented ones with ties and ones in no particular order. Both
// are the same few divisions and running minima, so 1e-12 relative.
func TestBenjaminiHochbergGolden(t *testing.T) {
	t.Parallel()
	b, err := os.ReadFile(filepath.Join("..", "..", "testdata", "cluster", "padjust.json"))
	if err != nil {
		t.Fatal(err)
	}
	var g struct {
		Cases []struct {
			Name string
			P, Q []float64
		}
	}
	if err := json.Unmarshal(b, &g); err != nil || len(g.Cases) != 2 {
		t.Fatalf("padjust.json: %v, %d cases", err, len(g.Cases))
	}
	for _, c := range g.Cases {
		q, err := BenjaminiHochberg(c.P)
		if err != nil {
			t.Fatalf("%s: %v", c.Name, err)
		}
		for i := range c.Q {
			if !scalar.EqualWithinAbsOrRel(q[i], c.Q[i], 1e-15, 1e-12) {
				t.Errorf("%s: q[%d] = %.15g, R %.15g", c.Name, i, q[i], c.Q[i])
			}
		}
	}
}

func TestBenjaminiHochbergPublished(t *testing.T) {
	t.Parallel()
	// The fifteen p-values of Benjamini & Hochberg (1995), section 4 (as R's p.adjust gives them,
	// TestBenjaminiHochbergGolden): at q = 0.05 the step-up procedure rejects the four smallest,
	// where Bonferroni rejects three.
	p := []float64{0.0001, 0.0004, 0.0019, 0.0095, 0.0201, 0.0278, 0.0298, 0.0344, 0.0459, 0.3240, 0.4262, 0.5719, 0.6528, 0.7590, 1.000}
	q, err := BenjaminiHochberg(p)
	if err != nil {
		t.Fatal(err)
	}
	rejected := 0
	for _, v := range q {
		if v <= 0.05 {
			rejected++
		}
	}
	if rejected != 4 {
		t.Errorf("rejected %d at q = 0.05, the paper rejects 4; q = %v", rejected, q)
	}
	// q₍₄₎ = 15·0.0095/4 = 0.035625 by the definition; q₍₅₎ = min over j ≥ 5 of 15·p₍ⱼ₎/j = 15·0.0201/5 = 0.0603.
	for _, c := range []struct {
		i    int
		want float64
	}{{3, 0.035625}, {4, 0.0603}, {14, 1}} {
		if math.Abs(q[c.i]-c.want) > 1e-12 {
			t.Errorf("q[%d] = %.15g, want %.15g", c.i, q[c.i], c.want)
		}
	}
}

func TestErrors(t *testing.T) {
	t.Parallel()
	for _, c := range []struct {
		name string
		err  error
		want error
		fix  string
	}{
		{"one group", func() error { _, e := KruskalWallis([][]float64{{1, 2}, {}}); return e }(), ErrInput, "at least two"},
		{"constant", func() error { _, e := KruskalWallis([][]float64{{1, 1}, {1}}); return e }(), ErrInput, "constant"},
		{"NaN", func() error { _, e := KruskalWallis([][]float64{{1, math.NaN()}, {1}}); return e }(), ErrNaN, "drop missing"},
		{"p above 1", func() error { _, e := BenjaminiHochberg([]float64{0.5, 1.5}); return e }(), ErrInput, "[0, 1]"},
		{"empty group", func() error { _, e := CliffsDelta(nil, []float64{1}); return e }(), ErrInput, "both need"},
	} {
		t.Run(c.name, func(t *testing.T) {
			if !errors.Is(c.err, c.want) || !strings.Contains(c.err.Error(), c.fix) {
				t.Errorf("got %v, want %v naming %q", c.err, c.want, c.fix)
			}
		})
	}
}

func TestCliffsDeltaProperties(t *testing.T) {
	t.Parallel()
	x := []float64{1, 2, 2, 5, 9}
	y := []float64{2, 3, 3, 4}
	d, _ := CliffsDelta(x, y)
	e, _ := CliffsDelta(y, x)
	if d != -e {
		t.Errorf("δ(x, y) = %v, δ(y, x) = %v; they must be opposite", d, e)
	}
	// Against the definition, a direct count over all pairs, on random groups with many ties;
	// the counts are integers, so the check is exact.
	rng := rand.New(rand.NewPCG(11, 12))
	cases := [][2][]float64{{x, y}}
	for _, size := range [][2]int{{1, 1}, {1, 50}, {37, 5}, {200, 300}, {1000, 999}} {
		for _, levels := range []int{2, 10, 1 << 30} {
			var c [2][]float64
			for g, n := range size {
				for i := 0; i < n; i++ {
					c[g] = append(c[g], float64(rng.IntN(levels)+g))
				}
			}
			cases = append(cases, c)
		}
	}
	for _, c := range cases {
		var more, less int
		for _, a := range c[0] {
			for _, b := range c[1] {
				if a > b {
					more++
				} else if a < b {
					less++
				}
			}
		}
		want := float64(more-less) / float64(len(c[0])*len(c[1]))
		if got, _ := CliffsDelta(c[0], c[1]); got != want {
			t.Errorf("%d and %d values: δ = %v, pairwise count gives %v", len(c[0]), len(c[1]), got, want)
		}
	}
}

func ExampleKruskalWallis() {
	r, _ := KruskalWallis([][]float64{{2.1, 3.4, 1.9, 2.8}, {4.5, 5.1, 3.9, 4.8}, {2.5, 3.0, 2.2, 3.6}})
	fmt.Printf("H = %.4f, df = %d, p = %.4f, ε² = %.4f\n", r.H, r.DF, r.P, r.Epsilon2)
	// Output: H = 7.7308, df = 2, p = 0.0210, ε² = 0.7028
}

// Median selects; it must give what the definition gives on a sorted copy (the middle value, or
// the mean of the two middle ones, as numpy.median), on random values with many ties and on
// the orders that defeat a naive pivot (sorted, reversed, all equal, organ pipe).
func TestMedianSelectsLikeASort(t *testing.T) {
	t.Parallel()
	rng := rand.New(rand.NewPCG(1, 2))
	var cases [][]float64
	for n := 1; n <= 300; n++ {
		x := make([]float64, n)
		for i := range x {
			x[i] = float64(rng.IntN(1 + n/3))
		}
		cases = append(cases, x)
	}
	for _, n := range []int{511, 512, 513, 2000, 2001, 10080} { // both selection paths: signs, zeros, ties
		x := make([]float64, n)
		for i := range x {
			switch rng.IntN(4) {
			case 0:
				x[i] = rng.NormFloat64()
			case 1:
				x[i] = -rng.ExpFloat64() * 1e-3
			case 2:
				x[i] = float64(rng.IntN(5)) - 2
			default:
				x[i] = rng.NormFloat64() * 1e6
			}
		}
		cases = append(cases, x)
	}
	for _, n := range []int{1000, 1001, 5000} {
		sorted, reversed, equal, pipe := make([]float64, n), make([]float64, n), make([]float64, n), make([]float64, n)
		for i := 0; i < n; i++ {
			sorted[i], reversed[i], equal[i], pipe[i] = float64(i), float64(n-i), 7, float64(min(i, n-i))
		}
		cases = append(cases, sorted, reversed, equal, pipe)
	}
	for _, x := range cases {
		want := append([]float64(nil), x...)
		sort.Float64s(want)
		m := len(want) / 2
		w := want[m]
		if len(want)%2 == 0 {
			w = (want[m-1] + want[m]) / 2
		}
		if got := Median(append([]float64(nil), x...)); got != w {
			t.Fatalf("n %d: median %v, sorted copy gives %v", len(x), got, w)
		}
	}
	if !math.IsNaN(Median(nil)) {
		t.Error("median of nothing should be NaN")
	}
	// SelectKth leaves no larger value before place k and no smaller one after it.
	for _, x := range cases {
		k := rng.IntN(len(x))
		v := SelectKth(x, k)
		for i, y := range x {
			if (i < k && y > v) || (i > k && y < v) {
				t.Fatalf("n %d, k %d: value %v at %d against %v", len(x), k, y, i, v)
			}
		}
	}
}

// CliffsDeltaVsRest must give exactly what CliffsDelta gives for each group against the others
// put together (the same integer counts), on random groups with ties, and NaN for an empty group.
func TestCliffsDeltaVsRestMatchesPairwise(t *testing.T) {
	t.Parallel()
	rng := rand.New(rand.NewPCG(13, 14))
	for trial := 0; trial < 40; trial++ {
		k := 2 + trial%4
		groups := make([][]float64, k)
		for g := range groups {
			n := rng.IntN(60)
			if trial%7 == 0 && g == 1 {
				n = 0
			}
			for i := 0; i < n; i++ {
				groups[g] = append(groups[g], float64(rng.IntN(3+trial)+g))
			}
		}
		got, err := CliffsDeltaVsRest(groups)
		if err != nil {
			t.Fatal(err)
		}
		for g := range groups {
			var rest []float64
			for h := range groups {
				if h != g {
					rest = append(rest, groups[h]...)
				}
			}
			want, err := CliffsDelta(groups[g], rest)
			if err != nil {
				want = math.NaN()
			}
			if math.Float64bits(got[g]) != math.Float64bits(want) && !(math.IsNaN(got[g]) && math.IsNaN(want)) {
				t.Fatalf("trial %d, group %d of %d: %v, CliffsDelta against the rest %v", trial, g, k, got[g], want)
			}
		}
	}
}

// Quantiles as numpy.quantile gives them with its default linear method (numpy 1.24, Debian's
// python3-numpy): np.quantile([3, 1, 4, 1, 5, 9, 2, 6], [0, 0.1, 0.25, 0.5, 0.99, 1]) =
// [1, 1, 1.75, 3.5, 8.79, 9]; NaN is left out here (numpy.nanquantile).
func TestQuantileMatchesNumpy(t *testing.T) {
	t.Parallel()
	xs := []float64{3, 1, 4, 1, 5, 9, 2, 6, math.NaN()}
	for _, c := range []struct{ p, want float64 }{{0, 1}, {0.1, 1}, {0.25, 1.75}, {0.5, 3.5}, {0.99, 8.79}, {1, 9}} {
		if got := Quantile(xs, c.p); math.Abs(got-c.want) > 1e-12 {
			t.Errorf("quantile %v: %v, numpy %v", c.p, got, c.want)
		}
	}
	if !math.IsNaN(Quantile([]float64{math.NaN()}, 0.5)) || !math.IsNaN(xs[8]) || xs[0] != 3 {
		t.Error("Quantile of no number is not NaN, or the input was changed")
	}
}

func TestGroupMeans(t *testing.T) {
	t.Parallel()
	rows := [][]float64{{1, 10}, {3, 30}, {5, 50}, {100, 100}}
	means, sizes := GroupMeans(rows, []int{0, 0, 1, -1}, 3)
	want := [][]float64{{2, 20}, {5, 50}, {0, 0}}
	for g := range want {
		if !slices.Equal(means[g], want[g]) {
			t.Errorf("group %d: %v, want %v", g, means[g], want[g])
		}
	}
	if !slices.Equal(sizes, []int{2, 1, 0}) {
		t.Errorf("sizes %v", sizes)
	}
}

// GroupMeansOfPositive averages each column over the rows of a group whose value is above 0,
// leaves out rows with a negative label, and gives NaN where a group has no such row.
func TestGroupMeansOfPositive(t *testing.T) {
	t.Parallel()
	rows := [][]float64{{2, 0}, {4, 0}, {0, 3}, {6, 5}, {100, 100}}
	labels := []int{0, 0, 1, 1, -1}
	got := GroupMeansOfPositive(rows, labels, 3)
	want := [][]float64{{3, math.NaN()}, {6, 4}, {math.NaN(), math.NaN()}}
	for g := range want {
		for j := range want[g] {
			w, v := want[g][j], got[g][j]
			if (math.IsNaN(w) != math.IsNaN(v)) || (!math.IsNaN(w) && v != w) {
				t.Errorf("group %d column %d: %v, want %v", g, j, v, w)
			}
		}
	}
}
