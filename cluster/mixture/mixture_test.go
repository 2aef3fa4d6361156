package mixture

import (
	"context"
	"errors"
	"math"
	"math/rand/v2"
	"testing"

	"gonum.org/v1/gonum/mat"

	"github.com/cohortmix/cohortmix/cluster"
)

// dirichletCounts draws rows of multinomial counts (size draws each) whose proportions come
// from Dirichlet laws of the given means and precision, one law per group (planted structure).
func dirichletCounts(rng *rand.Rand, groups [][]float64, precision float64, rows, size int) (*mat.Dense, []int) {
	d := len(groups[0])
	x := mat.NewDense(rows, d, nil)
	want := make([]int, rows)
	for i := 0; i < rows; i++ {
		g := i % len(groups)
		want[i] = g
		p := make([]float64, d)
		var s float64
		for j, m := range groups[g] {
			p[j] = gammaDraw(rng, precision*m)
			s += p[j]
		}
		for n := 0; n < size; n++ {
			u, acc := rng.Float64()*s, 0.0
			for j, v := range p {
				acc += v
				if u < acc || j == d-1 {
					x.Set(i, j, x.At(i, j)+1)
					break
				}
			}
		}
	}
	return x, want
}

// gammaDraw is Marsaglia & Tsang's (2000) method, with the boost for shape < 1.
func gammaDraw(rng *rand.Rand, shape float64) float64 {
	if shape < 1 {
		return gammaDraw(rng, shape+1) * math.Pow(rng.Float64(), 1/shape)
	}
	d := shape - 1.0/3
	c := 1 / math.Sqrt(9*d)
	for {
		z := rng.NormFloat64()
		v := 1 + c*z
		if v <= 0 {
			continue
		}
		v = v * v * v
		if math.Log(rng.Float64()) < 0.5*z*z+d-d*v+d*math.Log(v) {
			return d * v
		}
	}
}

// BIC finds the number of planted Dirichlet laws, one among them: a cohort drawn around one
// mixture is one group, and the fits' labels recover the planted ones (planted structure).
func TestDMMFindsThePlantedNumberOfGroups(t *testing.T) {
	t.Parallel()
	for _, tt := range []struct {
		name   string
		groups [][]float64
	}{
		{"one law", [][]float64{{0.5, 0.3, 0.15, 0.05}}},
		{"two laws", [][]float64{{0.5, 0.3, 0.15, 0.05}, {0.2, 0.3, 0.2, 0.3}}},
		{"three laws", [][]float64{{0.5, 0.3, 0.15, 0.05}, {0.2, 0.3, 0.2, 0.3}, {0.1, 0.1, 0.7, 0.1}}},
	} {
		t.Run(tt.name, func(t *testing.T) {
			x, want := dirichletCounts(rand.New(rand.NewPCG(7, 1)), tt.groups, 60, 150, 500)
			best, bestK := math.Inf(1), 0
			var labels []int
			for k := 1; k <= 5; k++ {
				m, err := FitDMM(context.Background(), x, DMMOptions{K: k, Seed: 3})
				if err != nil {
					t.Fatal(err)
				}
				if m.BIC < best {
					best, bestK, labels = m.BIC, k, m.Labels
				}
			}
			if bestK != len(tt.groups) {
				t.Fatalf("BIC chose %d groups, want %d", bestK, len(tt.groups))
			}
			if ari, _ := cluster.AdjustedRand(labels, want); len(tt.groups) > 1 && ari < 0.95 {
				t.Errorf("labels against the planted groups: ARI %.3f, want ≥ 0.95", ari)
			}
		})
	}
}

// The frozen mixture places the rows it was fitted on where the fit put them, and EM started
// from the fit's own memberships stays at the fit (a fixed point); the same seed gives the same
// fit whatever the number of workers.
func TestDMMPlaceAndWarmStartAgreeWithTheFit(t *testing.T) {
	t.Parallel()
	x, _ := dirichletCounts(rand.New(rand.NewPCG(9, 1)), [][]float64{{0.6, 0.3, 0.1}, {0.2, 0.2, 0.6}}, 40, 80, 300)
	m, err := FitDMM(context.Background(), x, DMMOptions{K: 2, Seed: 1, Workers: 1})
	if err != nil {
		t.Fatal(err)
	}
	post, labels, err := m.Place(x)
	if err != nil {
		t.Fatal(err)
	}
	for i := range labels {
		if labels[i] != m.Labels[i] || math.Abs(post[i][0]-m.Posterior[i][0]) > 1e-6 {
			t.Fatalf("row %d placed in %d (%.6f), fitted in %d (%.6f)", i, labels[i], post[i][0], m.Labels[i], m.Posterior[i][0])
		}
	}
	again, err := FitDMMFrom(context.Background(), x, m.Posterior, DMMOptions{})
	if err != nil {
		t.Fatal(err)
	}
	if math.Abs(again.LogLik-m.LogLik) > 1e-6*math.Abs(m.LogLik) {
		t.Errorf("warm start log L %.6f, fit %.6f", again.LogLik, m.LogLik)
	}
	m2, err := FitDMM(context.Background(), x, DMMOptions{K: 2, Seed: 1, Workers: 3})
	if err != nil {
		t.Fatal(err)
	}
	if m2.LogLik != m.LogLik || m2.Start != m.Start {
		t.Errorf("4 workers: log L %v start %d; 1 worker: %v start %d", m2.LogLik, m2.Start, m.LogLik, m.Start)
	}
}

func TestMixtureRefusesBadInput(t *testing.T) {
	t.Parallel()
	ctx := context.Background()
	good := mat.NewDense(3, 2, []float64{1, 2, 3, 4, 5, 6})
	for _, tt := range []struct {
		name string
		err  error
		run  func() error
	}{
		{"K above rows", cluster.ErrK, func() error { _, err := FitDMM(ctx, good, DMMOptions{K: 4}); return err }},
		{"negative count", cluster.ErrDomain, func() error {
			_, err := FitDMM(ctx, mat.NewDense(2, 2, []float64{1, -1, 2, 2}), DMMOptions{K: 1})
			return err
		}},
		{"empty row", cluster.ErrEmpty, func() error {
			_, err := FitDMM(ctx, mat.NewDense(2, 2, []float64{0, 0, 2, 2}), DMMOptions{K: 1})
			return err
		}},
		{"blocks that do not cover the columns", cluster.ErrShape, func() error {
			_, err := FitDMM(ctx, good, DMMOptions{K: 1, Blocks: []int{1}})
			return err
		}},
		{"NaN in the Gaussian's data", cluster.ErrNonFinite, func() error {
			_, err := FitTiedGaussian(ctx, mat.NewDense(2, 1, []float64{1, math.NaN()}), GaussianOptions{K: 1})
			return err
		}},
		{"placing rows of another width", cluster.ErrShape, func() error {
			m, err := FitDMM(ctx, good, DMMOptions{K: 1})
			if err != nil {
				return err
			}
			_, _, err = m.Place(mat.NewDense(1, 3, []float64{1, 1, 1}))
			return err
		}},
	} {
		t.Run(tt.name, func(t *testing.T) {
			if err := tt.run(); !errors.Is(err, tt.err) {
				t.Errorf("error %v, want one wrapping %v", err, tt.err)
			}
		})
	}
}
