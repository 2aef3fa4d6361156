package main

import (
	"context"
	"encoding/json"
	"math"
	"os"
	"testing"

	"github.com/cohortmix/cohortmix/cohort/job"

	"gonum.org/v1/gonum/floats/scalar"
	"gonum.org/v1/gonum/mat"

	"github.com/cohortmix/cohortmix/cluster"
	"github.com/cohortmix/cohortmix/cohort"
	"github.com/cohortmix/cohortmix/cohort/group"
	"github.com/cohortmix/cohortmix/normalize"
	"github.com/cohortmix/cohortmix/profile"
)

// The stages of the main job against numpy, scipy and scikit-learn (Debian's python3-sklearn
// 1.2.1, python3-scipy 1.10.1, numpy 1.24.2), on the small synthetic cohort in
// testdata/pipeline, through golden.json written by testdata/pipeline/make_golden.py.

type pipelineGolden struct {
	Features       []string
	Units          []string
	ICC            []float64
	Touched        []bool
	Center, Spread []float64
	PCAVariance    []float64   `json:"pca_variance"`
	PCAComponents  [][]float64 `json:"pca_components"`
	ScoresFirst    [][]float64 `json:"scores_first_rows"`
	StateCentroids [][]float64 `json:"state_centroids"`
	Labels         []int
	Shares, Bouts  [][]float64
	WardHeights    []float64 `json:"ward_heights"`
	Groups         []int
	Kruskal        map[string]struct{ H, P float64 }
}

const smallCohort = "../../testdata/pipeline/small-cohort.csv"

func readPipelineGolden(t *testing.T) pipelineGolden {
	var g pipelineGolden
	b, err := os.ReadFile("../../testdata/pipeline/golden.json")
	if err != nil {
		t.Fatal(err)
	}
	if err := json.Unmarshal(b, &g); err != nil {
		t.Fatal(err)
	}
	return g
}

// closeTo is got within tol of want, absolutely for values below 1 and relatively above.
func closeTo(got, want, tol float64) bool { return scalar.EqualWithinAbsOrRel(got, want, tol, tol) }

func TestStagesMatchReference(t *testing.T) {
	t.Parallel()
	g := readPipelineGolden(t)
	tab, err := cohort.Read(context.Background(), []string{smallCohort}, cohort.ReadOptions{})
	if err != nil {
		t.Fatal(err)
	}
	raw := make([][]float64, len(tab.Units))
	for i, u := range tab.Units {
		if raw[i], err = tab.Block(i, nil); err != nil {
			t.Fatal(err)
		}
		if u.ID != g.Units[i] {
			t.Fatalf("unit %d is %s, reference %s", i, u.ID, g.Units[i])
		}
	}
	fit, normed, err := normalize.FitTransform(tab.Features, raw, normalize.Options{Within: normalize.WithinRest, PCAVariance: 0.99})
	if err != nil {
		t.Fatal(err)
	}
	t.Run("normalization", func(t *testing.T) {
		for j := range g.ICC {
			// ICC(1) in numpy from the one-way ANOVA sums: same formula, summation order differs, 1e-9.
			if !closeTo(fit.ICC[j], g.ICC[j], 1e-9) || fit.Touched[j] != g.Touched[j] {
				t.Errorf("%s: ICC %.12g touched %v, numpy %.12g %v", g.Features[j], fit.ICC[j], fit.Touched[j], g.ICC[j], g.Touched[j])
			}
			// sklearn.preprocessing.StandardScaler mean and population s.d. after the rest baseline, 1e-9.
			if !closeTo(fit.Center[j], g.Center[j], 1e-9) || !closeTo(fit.Spread[j], g.Spread[j], 1e-9) {
				t.Errorf("%s: centre %.12g spread %.12g, sklearn %.12g %.12g", g.Features[j], fit.Center[j], fit.Spread[j], g.Center[j], g.Spread[j])
			}
		}
	})
	t.Run("PCA projection", func(t *testing.T) {
		if len(fit.PCA.Variance) != len(g.PCAVariance) {
			t.Fatalf("%d components kept, sklearn.decomposition.PCA(0.99) %d", len(fit.PCA.Variance), len(g.PCAVariance))
		}
		for c, v := range g.PCAVariance {
			// LAPACK (numpy) and gonum SVDs, both backward stable: 1e-8 relative.
			if !closeTo(fit.PCA.Variance[c], v, 1e-8) {
				t.Errorf("component %d variance %.12g, sklearn %.12g", c, fit.PCA.Variance[c], v)
			}
		}
		k := fit.OutDim()
		for i, row := range g.ScoresFirst {
			for c, v := range row {
				if math.Abs(normed[0][i*k+c]-v) > 1e-7 {
					t.Fatalf("score of window %d, component %d: %.10g, sklearn %.10g (tol 1e-7 absolute)", i, c, normed[0][i*k+c], v)
				}
			}
		}
	})
	// States given sklearn's centroids: the signatures must match numpy's exactly.
	cent := mat.NewDense(len(g.StateCentroids), len(g.StateCentroids[0]), nil)
	for i, r := range g.StateCentroids {
		cent.SetRow(i, r)
	}
	states := &profile.States{K: 5, Centroids: cent}
	shares := make([][]float64, len(normed))
	off := 0
	t.Run("signatures", func(t *testing.T) {
		for u, block := range normed {
			lab := states.Assign(block)
			for i, l := range lab {
				if l != g.Labels[off+i] {
					t.Fatalf("participant %s window %d: state %d, sklearn KMeans.predict %d", g.Units[u], i, l, g.Labels[off+i])
				}
			}
			off += len(lab)
			sig := profile.Signatures(lab, 5)
			shares[u] = sig.Share
			for s := 0; s < 5; s++ {
				// counts over 240 windows: exact up to the last bit of a division, 1e-12.
				if !closeTo(sig.Share[s], g.Shares[u][s], 1e-12) || !closeTo(sig.MeanBout[s], g.Bouts[u][s], 1e-12) {
					t.Errorf("participant %s state %d: share %v bout %v, numpy %v %v", g.Units[u], s, sig.Share[s], sig.MeanBout[s], g.Shares[u][s], g.Bouts[u][s])
				}
			}
		}
	})
	t.Run("Ward grouping and separating variables", func(t *testing.T) {
		x := mat.NewDense(len(shares), 5, nil)
		for i, s := range shares {
			x.SetRow(i, group.Embed(group.WardHellinger, s))
		}
		tree, err := cluster.WardPoints(context.Background(), x, cluster.WardOptions{})
		if err != nil {
			t.Fatal(err)
		}
		for s, h := range g.WardHeights {
			// scipy.cluster.hierarchy.linkage(√shares, "ward"): 1e-10 relative.
			if !closeTo(tree.Merges[s].Height, h, 1e-10) {
				t.Fatalf("merge %d height %.12g, scipy %.12g", s, tree.Merges[s].Height, h)
			}
		}
		lab, _ := tree.Cut(3)
		if ari, _ := cluster.AdjustedRand(lab, g.Groups); ari != 1 {
			t.Fatalf("Ward cut ARI %v against scipy fcluster", ari)
		}
		var vars []group.Variable
		for s := 0; s < 5; s++ {
			v := group.Variable{Name: "share S" + string(rune('1'+s)), Kind: "share"}
			b := group.Variable{Name: "bout S" + string(rune('1'+s)), Kind: "bout length"}
			for u := range shares {
				v.Values = append(v.Values, g.Shares[u][s])
				bout := g.Bouts[u][s]
				if bout == 0 { // never in the state: no bout length, left out of the test (as the script does)
					bout = math.NaN()
				}
				b.Values = append(b.Values, bout)
			}
			vars = append(vars, v, b)
		}
		d := len(tab.Features)
		for j, name := range tab.Features {
			v := group.Variable{Name: "median " + name, Kind: "feature median"}
			for i := range tab.Units {
				x := raw[i]
				col := make([]float64, 0, len(x)/d)
				for w := 0; w*d < len(x); w++ {
					col = append(col, x[w*d+j])
				}
				v.Values = append(v.Values, cohort.Median(col))
			}
			vars = append(vars, v)
		}
		seps, _, err := group.Separate(vars, lab, 3, 0)
		if err != nil {
			t.Fatal(err)
		}
		if len(seps) != len(g.Kruskal) {
			t.Errorf("%d variables tested, scipy %d", len(seps), len(g.Kruskal))
		}
		for i, s := range seps {
			want, ok := g.Kruskal[s.Name]
			// scipy.stats.kruskal: H 1e-10 relative, p 1e-8 (cephes vs gonum χ² tails).
			if !ok || !closeTo(s.H, want.H, 1e-10) || !closeTo(s.P, want.P, 1e-8) {
				t.Errorf("%s: H %.12g p %.12g, scipy %.12g %.12g", s.Name, s.H, s.P, want.H, want.P)
			}
			if i > 0 && seps[i-1].Epsilon2 < s.Epsilon2 {
				t.Errorf("ranking by ε² broken at %s", s.Name)
			}
		}
	})
}

func TestSameGroupingAsReferencePipeline(t *testing.T) {
	t.Parallel()
	g := readPipelineGolden(t)
	res, err := job.Analyze(context.Background(), job.Options{Inputs: []string{smallCohort}, Norm: normalize.Options{Within: normalize.WithinRest, PCAVariance: 0.99},
		States: []int{5}, Groups: []int{3}, Method: group.WardHellinger, Seed: 1})
	if err != nil {
		t.Fatal(err)
	}
	got := make([]int, len(res.Units))
	for i, u := range res.Units {
		got[i] = u.Group
	}
	// The whole pipeline in numpy/sklearn/scipy (StandardScaler, PCA, KMeans, linkage): same groups.
	if ari, _ := cluster.AdjustedRand(got, g.Groups); ari != 1 {
		t.Errorf("ARI %v between cohortmix and the reference pipeline, want 1", ari)
	}
}
