package cluster

import (
	"context"
	"encoding/binary"
	"fmt"
	"math"
	"math/rand/v2"
	"os"
	"path/filepath"
	"testing"

	"gonum.org/v1/gonum/mat"
)

// benchData is n × d unit-normal points around k random centres, from a fixed seed. With
// COHORTMIX_BENCH_DUMP set to a folder, it also writes them there as raw little-endian float64
// (bench-n-d.f64), so that testdata/cluster/bench_reference.py times the references on the
// very same points.
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
	if dir := os.Getenv("COHORTMIX_BENCH_DUMP"); dir != "" {
		buf := make([]byte, 8*len(raw))
		for i, v := range raw {
			binary.LittleEndian.PutUint64(buf[8*i:], math.Float64bits(v))
		}
		if err := os.WriteFile(filepath.Join(dir, fmt.Sprintf("bench-%d-%d.f64", n, d)), buf, 0o644); err != nil {
			panic(err)
		}
	}
	return x
}

// Compare with testdata/cluster/bench_reference.sh, which runs these and the references on the same points.
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
