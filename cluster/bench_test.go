package cluster

import (
	"context"
	"math/rand/v2"
	"testing"

	"gonum.org/v1/gonum/mat"
)

// benchData is n × d unit-normal points around k random centres, from a fixed seed;
// testdata/cluster/bench_reference.py draws data of the same shape and distribution.
func benchData(n, d, k int) *mat.Dense {
	rng := rand.New(rand.NewPCG(1, 2))
	centres := make([]float64, k*d)
	for i := range centres {
		centres[i] = rng.NormFloat64() * 4
	}
	x := mat.NewDense(n, d, nil)
	raw := x.RawMatrix().Data
	for i := 0; i < n; i++ {
		c := rng.IntN(k)
		for j := 0; j < d; j++ {
			raw[i*d+j] = centres[c*d+j] + rng.NormFloat64()
		}
	}
	return x
}

// Compare with: env -u OPENBLAS_CORETYPE -u OPENBLAS_L2_SIZE /usr/bin/python3 testdata/cluster/bench_reference.py
func BenchmarkKMeans(b *testing.B) {
	x := benchData(1_000_000, 10, 8)
	b.Run("n=1e6,d=10,k=8,restarts=10", func(b *testing.B) {
		b.ReportAllocs()
		for b.Loop() {
			r, err := KMeans(context.Background(), x, KMeansOptions{K: 8, Restarts: 10, Seed: 1})
			if err != nil {
				b.Fatal(err)
			}
			b.ReportMetric(r.Inertia, "inertia")
		}
	})
}

func BenchmarkWard(b *testing.B) {
	x := benchData(10_000, 10, 8)
	b.Run("n=1e4,d=10,centroid-form", func(b *testing.B) {
		b.ReportAllocs()
		for b.Loop() {
			if _, err := WardPoints(context.Background(), x, WardOptions{}); err != nil {
				b.Fatal(err)
			}
		}
	})
	b.Run("n=1e4,d=10,distance-matrix", func(b *testing.B) {
		b.ReportAllocs()
		for b.Loop() {
			d, err := Pairwise(x, Euclidean, 0, 0)
			if err != nil {
				b.Fatal(err)
			}
			if _, err := Hierarchical(context.Background(), d, HierarchicalOptions{Linkage: Ward}); err != nil {
				b.Fatal(err)
			}
		}
	})
}

func BenchmarkSilhouette(b *testing.B) {
	x := benchData(20_000, 10, 8)
	labels := make([]int, 20_000)
	for i := range labels {
		labels[i] = i % 8
	}
	b.Run("n=2e4,d=10", func(b *testing.B) {
		b.ReportAllocs()
		for b.Loop() {
			if _, err := Silhouette(x, labels, SilhouetteOptions{}); err != nil {
				b.Fatal(err)
			}
		}
	})
}
