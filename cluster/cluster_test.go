package cluster

import (
	"context"
	"errors"
	"math"
	"math/rand/v2"
	"strings"
	"testing"

	"gonum.org/v1/gonum/mat"
)

func blobs(seed uint64, n, d, k int, spread float64) (*mat.Dense, []int) {
	rng := rand.New(rand.NewPCG(seed, 1))
	x := mat.NewDense(n, d, nil)
	y := make([]int, n)
	for i := 0; i < n; i++ {
		y[i] = i % k
		for j := 0; j < d; j++ {
			x.Set(i, j, float64(y[i]*5*((j+y[i])%2))+rng.NormFloat64()*spread)
		}
	}
	return x, y
}

func TestKMeansDeterministicAcrossWorkers(t *testing.T) {
	t.Parallel()
	x, _ := blobs(3, 3000, 5, 4, 1.5)
	var first *KMeansResult
	for _, w := range []int{1, 2, 3, 8} {
		r, err := KMeans(context.Background(), x, KMeansOptions{K: 4, Restarts: 7, Seed: 42, Workers: w})
		if err != nil {
			t.Fatal(err)
		}
		if first == nil {
			first = r
			continue
		}
		if r.Inertia != first.Inertia || r.Restart != first.Restart || !equalInts(r.Labels, first.Labels) {
			t.Fatalf("Workers=%d: inertia %v restart %d, Workers=1: %v restart %d", w, r.Inertia, r.Restart, first.Inertia, first.Restart)
		}
	}
}

func TestKMeansRecoversPlantedGroups(t *testing.T) {
	t.Parallel()
	// Planted structure: four well-separated blobs.
	x, y := blobs(5, 800, 4, 4, 0.5)
	for _, fit := range []struct {
		name string
		run  func() (*KMeansResult, error)
	}{
		{"lloyd", func() (*KMeansResult, error) {
			return KMeans(context.Background(), x, KMeansOptions{K: 4, Seed: 1})
		}},
	} {
		t.Run(fit.name, func(t *testing.T) {
			r, err := fit.run()
			if err != nil {
				t.Fatal(err)
			}
			if ari, _ := AdjustedRand(r.Labels, y); ari < 0.99 {
				t.Errorf("ARI %.4f against the planted blobs, want ≥ 0.99", ari)
			}
			lab, _, err := Assign(r.Centroids, x)
			if err != nil || !equalInts(lab, r.Labels) {
				t.Errorf("Assign to the final centroids differs from the labels (%v)", err)
			}
		})
	}
}

func TestErrors(t *testing.T) {
	t.Parallel()
	ctx := context.Background()
	x := mat.NewDense(3, 2, []float64{1, 2, 3, 4, 5, 6})
	bad := mat.NewDense(3, 2, []float64{1, 2, math.NaN(), 4, 5, 6})
	constant := mat.NewDense(3, 2, []float64{1, 1, 1, 1, 1, 1})
	cases := []struct {
		name string
		err  error
		want error
		fix  string
	}{
		{"k too large", func() error { _, e := KMeans(ctx, x, KMeansOptions{K: 4}); return e }(), ErrK, "1 ≤ k ≤ 3"},
		{"k zero", func() error { _, e := KMeans(ctx, x, KMeansOptions{}); return e }(), ErrK, "choose 1 ≤ k"},
		{"NaN", func() error { _, e := KMeans(ctx, bad, KMeansOptions{K: 2}); return e }(), ErrNonFinite, "row 1, column 0"},
		{"labels length", func() error { _, e := Silhouette(x, []int{0, 1}, SilhouetteOptions{}); return e }(), ErrShape, "one label per row"},
		{"one group silhouette", func() error { _, e := Silhouette(x, []int{0, 0, 0}, SilhouetteOptions{}); return e }(), ErrK, "2 ≤ groups"},
		{"condensed size", func() error { _, e := NewCondensed(4, make([]float64, 5)); return e }(), ErrShape, "n(n−1)/2"},
		{"hierarchical size", func() error {
			_, e := Hierarchical(ctx, &Condensed{N: 4, D: make([]float64, 5)}, HierarchicalOptions{})
			return e
		}(), ErrShape, "Pairwise"},
		{"memory guard", func() error { _, e := Pairwise(mat.NewDense(2000, 1, nil), Euclidean, 1<<20, 0); return e }(), ErrTooLarge, "use k-means"},
		{"hierarchical guard", func() error {
			_, e := Hierarchical(ctx, &Condensed{N: 2000, D: make([]float64, 2000*1999/2)}, HierarchicalOptions{MaxBytes: 1 << 20})
			return e
		}(), ErrTooLarge, "k-means"},
		{"pam k", func() error { _, e := PAM(ctx, &Condensed{N: 2, D: []float64{1}}, PAMOptions{K: 3}); return e }(), ErrK, "k = 3"},
		{"pca constant", func() error { _, e := FitPCA(constant, PCAOptions{}); return e }(), ErrZeroVariance, "varying columns"},
		{"pca shape", func() error {
			p, _ := FitPCA(x, PCAOptions{})
			_, e := p.Transform(mat.NewDense(1, 3, nil))
			return e
		}(), ErrShape, "same columns"},
		{"negative composition", func() error { _, e := Pairwise(mat.NewDense(2, 2, []float64{1, -1, 1, 1}), Hellinger, 0, 0); return e }(), ErrDomain, "parts ≥ 0"},
		{"clr delta", func() error { _, e := CLR(nil, []float64{1, 2}, 0.6); return e }(), ErrDomain, "delta < 1/2"},
		{"assign columns", func() error { _, _, e := Assign(x, mat.NewDense(1, 3, nil)); return e }(), ErrShape, "same fit"},
		{"contingency lengths", func() error { _, e := AdjustedRand([]int{1}, []int{1, 2}); return e }(), ErrShape, "same non-empty rows"},
	}
	for _, c := range cases {
		t.Run(c.name, func(t *testing.T) {
			if !errors.Is(c.err, c.want) {
				t.Fatalf("got %v, want errors.Is %v", c.err, c.want)
			}
			if !strings.Contains(c.err.Error(), c.fix) {
				t.Errorf("message %q does not name %q", c.err, c.fix)
			}
		})
	}
}

func TestProperties(t *testing.T) {
	t.Parallel()
	rng := rand.New(rand.NewPCG(9, 9))
	a := make([]int, 200)
	for i := range a {
		a[i] = rng.IntN(5)
	}
	renamed := make([]int, len(a))
	for i, l := range a {
		renamed[i] = 10 - 3*l
	}
	if v, _ := AdjustedRand(a, a); v != 1 {
		t.Errorf("ARI(a, a) = %v, want 1", v)
	}
	if v, _ := AdjustedRand(a, renamed); math.Abs(v-1) > 1e-15 {
		t.Errorf("ARI under renaming = %v, want 1", v)
	}
	if v, _ := NormalizedMutualInfo(a, renamed); math.Abs(v-1) > 1e-12 {
		t.Errorf("NMI under renaming = %v, want 1", v)
	}
	// The variation of information is 0 between a labeling and its renaming, and from one group
	// to a labeling it is that labeling's entropy (Meilă 2007, property of the metric).
	if v, _ := VariationOfInformation(a, renamed); v > 1e-12 {
		t.Errorf("VI under renaming = %v, want 0", v)
	}
	one := make([]int, len(a))
	counts := map[int]float64{}
	for _, l := range a {
		counts[l]++
	}
	var ent float64
	for _, c := range counts {
		p := c / float64(len(a))
		ent -= p * math.Log(p)
	}
	if v, _ := VariationOfInformation(one, a); math.Abs(v-ent) > 1e-12 {
		t.Errorf("VI from one group = %v, want the labeling's entropy %v", v, ent)
	}
	x, y := blobs(2, 300, 3, 3, 2)
	s, _ := Silhouette(x, y, SilhouetteOptions{})
	for i, v := range s.Values {
		if v < -1 || v > 1 {
			t.Fatalf("silhouette %d = %v outside [−1, 1]", i, v)
		}
	}
	// A sample of the silhouette scores rows against all rows, so each sampled value is exact.
	ss, _ := Silhouette(x, y, SilhouetteOptions{SampleSize: 50, Seed: 3})
	for r, i := range ss.Rows {
		if ss.Values[r] != s.Values[i] {
			t.Fatalf("sampled silhouette of row %d: %v, full %v", i, ss.Values[r], s.Values[i])
		}
	}
	p := []float64{0.2, 0, 0.5, 0.3}
	c, _ := CLR(nil, p, 1e-3)
	var sum float64
	for _, v := range c {
		sum += v
	}
	if math.Abs(sum) > 1e-12 {
		t.Errorf("CLR sums to %v, want 0", sum)
	}
	q := []float64{0.1, 0.4, 0.4, 0.1}
	d1, _ := AitchisonDistance(p, q, 1e-3)
	scaled := []float64{20, 0, 50, 30}
	d2, _ := AitchisonDistance(scaled, []float64{1, 4, 4, 1}, 1e-3)
	if math.Abs(d1-d2) > 1e-12 {
		t.Errorf("Aitchison distance changed under rescaling: %v vs %v", d1, d2)
	}
	h, _ := HellingerDistance([]float64{1, 0}, []float64{0, 1})
	if math.Abs(h-1) > 1e-15 {
		t.Errorf("Hellinger of disjoint compositions %v, want 1", h)
	}
}

func TestMatchLabels(t *testing.T) {
	t.Parallel()
	a := []int{0, 0, 1, 1, 2, 2, 2}
	b := []int{5, 5, 3, 3, 9, 9, 3}
	m, err := MatchLabels(a, b)
	if err != nil {
		t.Fatal(err)
	}
	if m[5] != 0 || m[3] != 1 || m[9] != 2 {
		t.Errorf("mapping %v, want 5→0, 3→1, 9→2", m)
	}
	prev := mat.NewDense(3, 2, []float64{0, 0, 10, 0, 0, 10})
	next := mat.NewDense(2, 2, []float64{0.5, 9.5, 9, 1})
	assign, dist, err := MatchCentroids(prev, next)
	if err != nil || assign[0] != 2 || assign[1] != 1 {
		t.Fatalf("centroid matching %v (%v), want [2 1]", assign, err)
	}
	if math.Abs(dist[1]-math.Sqrt2) > 1e-12 {
		t.Errorf("drift %v, want √2", dist[1])
	}
}

func TestHierarchicalOrderAndCancel(t *testing.T) {
	t.Parallel()
	x, _ := blobs(4, 60, 2, 3, 0.3)
	d, _ := Pairwise(x, Euclidean, 0, 0)
	tree, err := Hierarchical(context.Background(), d, HierarchicalOptions{Linkage: Average})
	if err != nil {
		t.Fatal(err)
	}
	order := tree.Order()
	seen := make([]bool, 60)
	for _, i := range order {
		seen[i] = true
	}
	for i, s := range seen {
		if !s || len(order) != 60 {
			t.Fatalf("leaf order misses point %d or has %d entries", i, len(order))
		}
	}
	ctx, cancel := context.WithCancel(context.Background())
	cancel()
	if _, err := Hierarchical(ctx, d, HierarchicalOptions{}); !errors.Is(err, context.Canceled) {
		t.Errorf("cancelled context gave %v", err)
	}
	if _, err := KMeans(ctx, x, KMeansOptions{K: 2}); !errors.Is(err, context.Canceled) {
		t.Errorf("cancelled k-means gave %v", err)
	}
}

func TestWardPointsMatchesMatrix(t *testing.T) {
	t.Parallel()
	for _, spread := range []float64{0.3, 1, 3} {
		x, _ := blobs(11, 400, 3, 4, spread)
		d, _ := Pairwise(x, Euclidean, 0, 0)
		a, err := Hierarchical(context.Background(), d, HierarchicalOptions{Linkage: Ward})
		if err != nil {
			t.Fatal(err)
		}
		for _, w := range []int{1, 2} {
			b, err := WardPoints(context.Background(), x, WardOptions{Workers: w})
			if err != nil {
				t.Fatal(err)
			}
			for s := range a.Merges {
				// Lance–Williams on squared distances vs the centroid form: rounding only, 1e-9 relative.
				if !near(a.Merges[s].Height, b.Merges[s].Height, 1e-9) || a.Merges[s].Size != b.Merges[s].Size {
					t.Fatalf("spread %v, workers %d, merge %d: %+v, matrix form %+v", spread, w, s, b.Merges[s], a.Merges[s])
				}
			}
		}
	}
}

// TransformRows, two rows at a time, gives each row bit for bit what TransformRow gives.
func TestTransformRowsMatchesTransformRow(t *testing.T) {
	t.Parallel()
	rng := rand.New(rand.NewPCG(5, 6))
	x := mat.NewDense(301, 7, nil)
	for i := 0; i < 301; i++ {
		for j := 0; j < 7; j++ {
			x.Set(i, j, rng.NormFloat64()*float64(j+1)+float64(i%3))
		}
	}
	p, err := FitPCA(x, PCAOptions{Components: 4})
	if err != nil {
		t.Fatal(err)
	}
	raw := x.RawMatrix().Data
	got := make([]float64, 301*4)
	p.TransformRows(got, raw)
	for i := 0; i < 301; i++ {
		want := p.TransformRow(nil, raw[i*7:(i+1)*7])
		for c, v := range want {
			if math.Float64bits(v) != math.Float64bits(got[i*4+c]) {
				t.Fatalf("row %d component %d: %v, TransformRow %v", i, c, got[i*4+c], v)
			}
		}
	}
}

// BenchmarkTransformRows projects a week of one-minute windows of 24 features on 8 components.
func BenchmarkTransformRows(b *testing.B) {
	rng := rand.New(rand.NewPCG(7, 8))
	x := mat.NewDense(10080, 24, nil)
	for i := 0; i < 10080; i++ {
		for j := 0; j < 24; j++ {
			x.Set(i, j, rng.NormFloat64()+float64(i%5*j))
		}
	}
	p, err := FitPCA(x, PCAOptions{Components: 8})
	if err != nil {
		b.Fatal(err)
	}
	dst := make([]float64, 10080*8)
	for b.Loop() {
		p.TransformRows(dst, x.RawMatrix().Data)
	}
}

// Valley on planted pairs of groups. A mixture of two normals of equal weight and variance is
// unimodal when their means are at most 2 s.d. apart (Schilling, Watkins & Watkins 2002, Is
// human height bimodal?, Am. Stat. 56:223–229). At 3 s.d. the density midway is
// 2φ(1.5)/(φ(0)+φ(3)) = 0.643 of the density at either mean; the kernel estimate is that density
// smoothed by the kernel (bandwidth 0.9·1.8·4000^(−1/5) ≈ 0.31 here), whose components have
// s.d. √(1+0.31²) ≈ 1.047, so it expects 2φ(1.433)/(φ(0)+φ(2.865)) ≈ 0.708.
func TestValleyOnPlantedPairs(t *testing.T) {
	t.Parallel()
	normal := func(rng *rand.Rand, n int, mx float64) *mat.Dense {
		x := mat.NewDense(n, 2, nil)
		for i := 0; i < n; i++ {
			x.Set(i, 0, mx+rng.NormFloat64())
			x.Set(i, 1, rng.NormFloat64())
		}
		return x
	}
	rng := rand.New(rand.NewPCG(1, 2))
	whole := normal(rng, 4000, 0)
	var left, right [][]float64
	for i := 0; i < 4000; i++ {
		if row := whole.RawRowView(i); row[0] < 0 {
			left = append(left, row)
		} else {
			right = append(right, row)
		}
	}
	rows := func(r [][]float64) *mat.Dense {
		x := mat.NewDense(len(r), 2, nil)
		for i, v := range r {
			x.SetRow(i, v)
		}
		return x
	}
	cases := []struct {
		name   string
		a, b   *mat.Dense
		lo, hi float64
	}{
		// One normal cut in two at its mean: no dip at all; the kernel estimate is flat to a few %.
		{"one normal cut in two", rows(left), rows(right), 0.9, 1.0},
		{"two normals 2 s.d. apart (unimodal)", normal(rng, 2000, 0), normal(rng, 2000, 2), 0.9, 1.0},
		// 0.708 expected of the kernel estimate; ±0.05 for the sampling noise of the densities at
		// the medians and midway with 2,000 rows a group.
		{"two normals 3 s.d. apart", normal(rng, 2000, 0), normal(rng, 2000, 3), 0.708 - 0.05, 0.708 + 0.05},
		// Midway at 4 s.d. of the smoothed components (bandwidth ≈ 0.7): 2φ(3.3)/φ(0) ≈ 0.01.
		{"two normals 8 s.d. apart", normal(rng, 2000, 0), normal(rng, 2000, 8), 0, 0.05},
	}
	for _, c := range cases {
		t.Run(c.name, func(t *testing.T) {
			v, err := Valley(c.a, c.b)
			if err != nil {
				t.Fatal(err)
			}
			if v < c.lo || v > c.hi {
				t.Errorf("valley %.3f, want %.3f to %.3f", v, c.lo, c.hi)
			}
		})
	}
	if _, err := Valley(mat.NewDense(1, 2, nil), normal(rng, 5, 0)); !errors.Is(err, ErrEmpty) {
		t.Errorf("one row: %v, want ErrEmpty", err)
	}
}
