package cluster

import (
	"context"
	"encoding/json"
	"math"
	"os"
	"path/filepath"
	"sort"
	"strconv"
	"strings"
	"testing"

	"gonum.org/v1/gonum/floats/scalar"
	"gonum.org/v1/gonum/mat"
)

// Golden files in ../testdata/cluster were written by testdata/cluster/make_golden.py from
// Debian's python3-sklearn 1.2.1, python3-scipy 1.10.1 and R 4.2.2 cluster 2.1.4; each file
// records its versions. The iris data (Fisher 1936) is the copy python3-sklearn ships.

func readGolden(t testing.TB, name string, v any) {
	t.Helper()
	b, err := os.ReadFile(filepath.Join("..", "testdata", "cluster", name))
	if err != nil {
		t.Fatal(err)
	}
	if err := json.Unmarshal(b, v); err != nil {
		t.Fatalf("%s: %v", name, err)
	}
}

func irisData(t testing.TB) (*mat.Dense, []int) {
	t.Helper()
	b, err := os.ReadFile(filepath.Join("..", "testdata", "iris.csv"))
	if err != nil {
		t.Fatal(err)
	}
	lines := strings.Split(strings.TrimSpace(string(b)), "\n")[1:]
	x := mat.NewDense(len(lines), 4, nil)
	y := make([]int, len(lines))
	for i, l := range lines {
		f := strings.Split(l, ",")
		for j := 0; j < 4; j++ {
			v, err := strconv.ParseFloat(f[j], 64)
			if err != nil {
				t.Fatal(err)
			}
			x.Set(i, j, v)
		}
		y[i], _ = strconv.Atoi(f[4])
	}
	return x, y
}

func tiesData(t testing.TB) *mat.Dense {
	var g struct {
		TiesData [][]float64 `json:"ties_data"`
	}
	readGolden(t, "pam.json", &g)
	return fromRows(g.TiesData)
}

func fromRows(rows [][]float64) *mat.Dense {
	m := mat.NewDense(len(rows), len(rows[0]), nil)
	for i, r := range rows {
		m.SetRow(i, r)
	}
	return m
}

func dataSet(t testing.TB, name string) *mat.Dense {
	if name == "iris" {
		x, _ := irisData(t)
		return x
	}
	return tiesData(t)
}

// near is got within tol of want, absolutely for values below 1 and relatively above.
func near(got, want, tol float64) bool { return scalar.EqualWithinAbsOrRel(got, want, tol, tol) }

func TestKMeansGolden(t *testing.T) {
	t.Parallel()
	var g struct {
		Cases map[string]struct {
			BestInertia  float64     `json:"best_inertia"`
			Init         [][]float64 `json:"init"`
			LloydInertia float64     `json:"lloyd_inertia"`
			LloydCenters [][]float64 `json:"lloyd_centers"`
			LloydLabels  []int       `json:"lloyd_labels"`
		}
	}
	readGolden(t, "kmeans.json", &g)
	for name, c := range g.Cases {
		t.Run(name, func(t *testing.T) {
			set, kstr, _ := strings.Cut(name, "/k=")
			k, _ := strconv.Atoi(kstr)
			x := dataSet(t, set)
			// Best of 50 restarts against sklearn's best of 100 (sklearn.cluster.KMeans 1.2.1):
			// a global optimum on 150 points, so equal to rounding (1e-9 relative).
			res, err := KMeans(context.Background(), x, KMeansOptions{K: k, Restarts: 50, Seed: 7, Tol: 1e-12, MaxIter: 1000})
			if err != nil {
				t.Fatal(err)
			}
			if !scalar.EqualWithinRel(res.Inertia, c.BestInertia, 1e-9) {
				t.Errorf("best inertia %.12g, sklearn %.12g (tol 1e-9 relative)", res.Inertia, c.BestInertia)
			}
			// Lloyd from the same starting centres: Hamerly's bounds must give plain Lloyd's
			// result, so centres agree to 1e-9 and labels exactly (sklearn lloyd, tol=0).
			data, n, d := rowMajor(x)
			km := newKMRun(data, n, d, k)
			for j, r := range c.Init {
				copy(km.center(j), r)
			}
			if err := km.lloyd(context.Background(), 1000, 0); err != nil {
				t.Fatal(err)
			}
			if !near(km.inertia, c.LloydInertia, 1e-9) {
				t.Errorf("Lloyd inertia %.12g, sklearn %.12g (tol 1e-9)", km.inertia, c.LloydInertia)
			}
			for i, l := range c.LloydLabels {
				if km.labels[i] != l {
					t.Fatalf("Lloyd label of row %d: %d, sklearn %d", i, km.labels[i], l)
				}
			}
			for j, r := range c.LloydCenters {
				for q, v := range r {
					if !near(km.center(j)[q], v, 1e-9) {
						t.Errorf("centre %d[%d]: %.12g, sklearn %.12g", j, q, km.center(j)[q], v)
					}
				}
			}
		})
	}
}

func TestHierarchicalGolden(t *testing.T) {
	t.Parallel()
	var g struct {
		Cases map[string]struct {
			Heights []float64 `json:"heights"`
			Sizes   []int     `json:"sizes"`
			Cut3    []int     `json:"cut3"`
			Cut5    []int     `json:"cut5"`
		}
	}
	readGolden(t, "linkage.json", &g)
	methods := map[string]Linkage{"ward": Ward, "average": Average, "complete": Complete, "single": Single}
	for name, c := range g.Cases {
		t.Run(name, func(t *testing.T) {
			set, m, _ := strings.Cut(name, "/")
			dist, err := Pairwise(dataSet(t, set), Euclidean, 0, 0)
			if err != nil {
				t.Fatal(err)
			}
			tree, err := Hierarchical(context.Background(), dist, HierarchicalOptions{Linkage: methods[m]})
			if err != nil {
				t.Fatal(err)
			}
			if m == "ward" && set == "iris" {
				// The centroid form must give scipy's tree too. Only on iris: the tied set has exact
				// ties between merges, which the two forms break by different roundings, giving
				// other trees that are just as valid (TestWardPointsMatchesMatrix covers ties-free data).
				checkTree(t, tree, c.Heights, c.Sizes, c.Cut3, c.Cut5)
				if tree, err = WardPoints(context.Background(), dataSet(t, set), WardOptions{}); err != nil {
					t.Fatal(err)
				}
			}
			checkTree(t, tree, c.Heights, c.Sizes, c.Cut3, c.Cut5)
		})
	}
}

// checkTree compares a dendrogram with scipy's linkage matrix and fcluster cuts.
func checkTree(t *testing.T, tree *Tree, heights []float64, sizes, cut3, cut5 []int) {
	t.Helper()
	c := struct {
		Heights    []float64
		Sizes      []int
		Cut3, Cut5 []int
	}{heights, sizes, cut3, cut5}
	{
		{
			// scipy.cluster.hierarchy.linkage 1.10.1; heights are sums of a few products, 1e-10 relative.
			for s, h := range c.Heights {
				if !near(tree.Merges[s].Height, h, 1e-10) {
					t.Fatalf("merge %d height %.15g, scipy %.15g (tol 1e-10)", s, tree.Merges[s].Height, h)
				}
			}
			// Sizes may differ only where merges tie in height; compare them as multisets per height.
			got, want := map[float64][]int{}, map[float64][]int{}
			for s, sz := range c.Sizes {
				key := math.Round(c.Heights[s] * 1e8)
				want[key] = append(want[key], sz)
				got[key] = append(got[key], tree.Merges[s].Size)
			}
			for key := range want {
				sort.Ints(got[key])
				sort.Ints(want[key])
				if !equalInts(got[key], want[key]) {
					t.Fatalf("merge sizes at height %g: %v, scipy %v", key/1e8, got[key], want[key])
				}
			}
			for _, cut := range []struct {
				k    int
				want []int
			}{{3, c.Cut3}, {5, c.Cut5}} {
				if tied(c.Heights, len(c.Heights)-cut.k) {
					continue // the cut falls inside a tie: either side of it is correct
				}
				lab, err := tree.Cut(cut.k)
				if err != nil {
					t.Fatal(err)
				}
				if ari, _ := AdjustedRand(lab, cut.want); ari != 1 {
					t.Errorf("cut into %d: ARI %v against scipy fcluster(maxclust)", cut.k, ari)
				}
			}
		}
	}
}

// tied reports whether the merge heights at s and s+1 (0-based) coincide, so that a cut is ambiguous.
func tied(h []float64, s int) bool {
	return s >= 0 && s+1 < len(h) && near(h[s], h[s+1], 1e-12)
}

func equalInts(a, b []int) bool {
	if len(a) != len(b) {
		return false
	}
	for i := range a {
		if a[i] != b[i] {
			return false
		}
	}
	return true
}

func TestValidityGolden(t *testing.T) {
	t.Parallel()
	var g struct {
		Iris map[string]struct {
			Labels            []int     `json:"labels"`
			SilhouetteSamples []float64 `json:"silhouette_samples"`
			Silhouette        float64   `json:"silhouette"`
			CalinskiHarabasz  float64   `json:"calinski_harabasz"`
			DaviesBouldin     float64   `json:"davies_bouldin"`
		}
		Pairs []struct {
			A, B         []int
			ARI, NMI, VI float64
		}
	}
	readGolden(t, "validity.json", &g)
	x, _ := irisData(t)
	for name, c := range g.Iris {
		t.Run("iris/"+name, func(t *testing.T) {
			s, err := Silhouette(x, c.Labels, SilhouetteOptions{})
			if err != nil {
				t.Fatal(err)
			}
			// sklearn.metrics 1.2.1; means of 150 square roots, 1e-12 relative.
			for i, v := range c.SilhouetteSamples {
				if !near(s.Values[i], v, 1e-12) {
					t.Fatalf("silhouette of row %d: %.15g, sklearn %.15g (tol 1e-12)", i, s.Values[i], v)
				}
			}
			if !near(s.Mean, c.Silhouette, 1e-12) {
				t.Errorf("mean silhouette %.15g, sklearn %.15g", s.Mean, c.Silhouette)
			}
			ch, err := CalinskiHarabasz(x, c.Labels)
			if err != nil || !near(ch, c.CalinskiHarabasz, 1e-12) {
				t.Errorf("Calinski–Harabasz %.15g (%v), sklearn %.15g (tol 1e-12)", ch, err, c.CalinskiHarabasz)
			}
			db, err := DaviesBouldin(x, c.Labels)
			if err != nil || !near(db, c.DaviesBouldin, 1e-12) {
				t.Errorf("Davies–Bouldin %.15g (%v), sklearn %.15g (tol 1e-12)", db, err, c.DaviesBouldin)
			}
		})
	}
	for i, p := range g.Pairs {
		ari, err := AdjustedRand(p.A, p.B)
		if err != nil || !near(ari, p.ARI, 1e-12) {
			t.Errorf("pair %d: ARI %.15g (%v), sklearn.metrics.adjusted_rand_score %.15g (tol 1e-12)", i, ari, err, p.ARI)
		}
		nmi, err := NormalizedMutualInfo(p.A, p.B)
		if err != nil || !near(nmi, p.NMI, 1e-12) {
			t.Errorf("pair %d: NMI %.15g (%v), sklearn.metrics.normalized_mutual_info_score %.15g (tol 1e-12)", i, nmi, err, p.NMI)
		}
		// H(a) + H(b) − 2 I(a; b) from scipy.stats.entropy and sklearn's mutual_info_score: sums
		// of a few dozen logarithms, 1e-12 relative.
		vi, err := VariationOfInformation(p.A, p.B)
		if err != nil || !near(vi, p.VI, 1e-12) {
			t.Errorf("pair %d: variation of information %.15g (%v), scipy/sklearn %.15g (tol 1e-12)", i, vi, err, p.VI)
		}
	}
}

func TestPCAGolden(t *testing.T) {
	t.Parallel()
	var g struct {
		Variance, Ratio    []float64
		Components, Scores [][]float64
	}
	readGolden(t, "pca.json", &g)
	x, _ := irisData(t)
	p, err := FitPCA(x, PCAOptions{})
	if err != nil {
		t.Fatal(err)
	}
	// numpy.linalg.svd (LAPACK) against gonum's SVD: both backward stable, 1e-10 relative.
	for c := range g.Variance {
		if !near(p.Variance[c], g.Variance[c], 1e-10) || !near(p.Ratio[c], g.Ratio[c], 1e-10) {
			t.Errorf("component %d: variance %.12g ratio %.12g, numpy %.12g %.12g", c, p.Variance[c], p.Ratio[c], g.Variance[c], g.Ratio[c])
		}
		for j := range g.Components[c] {
			if !near(p.Components.At(j, c), g.Components[c][j], 1e-9) {
				t.Errorf("loading %d of component %d: %.12g, numpy %.12g (tol 1e-9)", j, c, p.Components.At(j, c), g.Components[c][j])
			}
		}
	}
	scores, err := p.Transform(x)
	if err != nil {
		t.Fatal(err)
	}
	for i, r := range g.Scores {
		for c, v := range r {
			if math.Abs(scores.At(i, c)-v) > 1e-9 {
				t.Fatalf("score %d,%d: %.12g, numpy %.12g (tol 1e-9 absolute)", i, c, scores.At(i, c), v)
			}
		}
	}
	// A target of 95 % keeps two components on iris (ratios 0.9246, 0.0531 above).
	p2, err := FitPCA(x, PCAOptions{VarianceTarget: 0.95})
	if err != nil || len(p2.Variance) != 2 {
		t.Errorf("variance target 0.95 kept %d components (%v), want 2", len(p2.Variance), err)
	}
}

func TestAssignmentGolden(t *testing.T) {
	t.Parallel()
	var g struct {
		Cases []struct {
			Cost  [][]float64
			Rows  []int
			Cols  []int
			Total float64
		}
	}
	readGolden(t, "assignment.json", &g)
	for i, c := range g.Cases {
		assign, total, err := MinCostMatching(fromRows(c.Cost))
		if err != nil {
			t.Fatal(err)
		}
		// scipy.optimize.linear_sum_assignment 1.10.1; the optimum total is unique, sums of one-decimal costs.
		if !near(total, c.Total, 1e-12) {
			t.Errorf("case %d: total %.12g, scipy %.12g", i, total, c.Total)
		}
		used := map[int]bool{}
		matched := 0
		for r, col := range assign {
			if col < 0 {
				continue
			}
			matched++
			if used[col] {
				t.Errorf("case %d: column %d used twice", i, col)
			}
			used[col] = true
			_ = r
		}
		if matched != len(c.Rows) {
			t.Errorf("case %d: %d pairs, scipy %d", i, matched, len(c.Rows))
		}
	}
}

func TestDistanceGolden(t *testing.T) {
	t.Parallel()
	var g struct {
		Comp                                                        [][]float64
		Delta                                                       float64
		Jensenshannon, Hellinger, Aitchison, Euclidean, Sqeuclidean []float64
	}
	readGolden(t, "distance.json", &g)
	x := fromRows(g.Comp)
	for _, c := range []struct {
		metric Metric
		want   []float64
		src    string
	}{
		{JensenShannon, g.Jensenshannon, "scipy.spatial.distance.jensenshannon"},
		{Hellinger, g.Hellinger, "numpy: pdist(sqrt(p))/sqrt(2)"},
		{Aitchison, g.Aitchison, "numpy: pdist of the CLR with multiplicative replacement, delta 1e-4"},
		{Euclidean, g.Euclidean, "scipy pdist euclidean"},
		{SqEuclidean, g.Sqeuclidean, "scipy pdist sqeuclidean"},
	} {
		t.Run(c.metric.String(), func(t *testing.T) {
			d, err := Pairwise(x, c.metric, 0, 0)
			if err != nil {
				t.Fatal(err)
			}
			for i, v := range c.want {
				// a few logs and roots of values in (0, 1]: 1e-12 relative
				if !near(d.D[i], v, 1e-12) {
					t.Fatalf("entry %d: %.15g, %s %.15g (tol 1e-12)", i, d.D[i], c.src, v)
				}
			}
		})
	}
}

func TestPAMGolden(t *testing.T) {
	t.Parallel()
	var g struct {
		Cases map[string]struct {
			Medoids        []int
			ObjectiveBuild float64 `json:"objective_build"`
			ObjectiveSwap  float64 `json:"objective_swap"`
			Clustering     []int
		}
	}
	readGolden(t, "pam.json", &g)
	for name, c := range g.Cases {
		t.Run(name, func(t *testing.T) {
			set, kstr, _ := strings.Cut(name, "/k=")
			k, _ := strconv.Atoi(kstr)
			dist, err := Pairwise(dataSet(t, set), Euclidean, 0, 0)
			if err != nil {
				t.Fatal(err)
			}
			res, err := PAM(context.Background(), dist, PAMOptions{K: k})
			if err != nil {
				t.Fatal(err)
			}
			n := float64(dist.N)
			// R cluster::pam 2.1.4 reports mean distances; sums of n square roots, 1e-12 relative.
			if !near(res.BuildCost/n, c.ObjectiveBuild, 1e-12) {
				t.Errorf("BUILD objective %.15g, R %.15g", res.BuildCost/n, c.ObjectiveBuild)
			}
			if !near(res.Cost/n, c.ObjectiveSwap, 1e-12) {
				t.Errorf("SWAP objective %.15g, R %.15g", res.Cost/n, c.ObjectiveSwap)
			}
			got := append([]int(nil), res.Medoids...)
			want := append([]int(nil), c.Medoids...)
			sort.Ints(got)
			sort.Ints(want)
			if !equalInts(got, want) {
				t.Errorf("medoids %v, R %v (0-based)", got, want)
			}
			if ari, _ := AdjustedRand(res.Labels, c.Clustering); ari != 1 {
				t.Errorf("clustering ARI %v against R's", ari)
			}
		})
	}
}

// The rotation that best turns one set of vectors onto another, against
// scipy.spatial.transform.Rotation.align_vectors (Debian's python3-scipy 1.10.1), through
// testdata/cluster/rotation.json written by testdata/cluster/make_rotation.py.
func TestRotation3Golden(t *testing.T) {
	t.Parallel()
	var g struct {
		Cases []struct {
			Name        string
			M, Rotation []float64
		}
	}
	readGolden(t, "rotation.json", &g)
	for _, c := range g.Cases {
		t.Run(c.Name, func(t *testing.T) {
			r, err := Rotation3(c.M)
			if err != nil {
				t.Fatal(err)
			}
			for i := range r {
				// scipy solves the same problem by Markley's quaternion method, gonum by the SVD:
				// both to machine precision on well-conditioned M, 1e-9 absolute.
				if math.Abs(r[i]-c.Rotation[i]) > 1e-9 {
					t.Fatalf("entry %d: %.12g, scipy %.12g (tol 1e-9)\n%v\n%v", i, r[i], c.Rotation[i], r, c.Rotation)
				}
			}
		})
	}
}
