package cluster_test

import (
	"context"
	"fmt"

	"gonum.org/v1/gonum/mat"

	"github.com/cohortmix/cohortmix/cluster"
)

// Synthetic points in two tight pairs.
func ExampleKMeans() {
	x := mat.NewDense(4, 2, []float64{0, 0, 0, 1, 10, 10, 10, 11})
	r, _ := cluster.KMeans(context.Background(), x, cluster.KMeansOptions{K: 2, Seed: 1})
	fmt.Printf("inertia %.4f, same group: %v %v\n", r.Inertia, r.Labels[0] == r.Labels[1], r.Labels[2] == r.Labels[3])
	// Output: inertia 1.0000, same group: true true
}

func ExampleHierarchical() {
	x := mat.NewDense(4, 1, []float64{0, 1, 5, 9})
	d, _ := cluster.Pairwise(x, cluster.Euclidean, 0, 0)
	t, _ := cluster.Hierarchical(context.Background(), d, cluster.HierarchicalOptions{Linkage: cluster.Single})
	for _, m := range t.Merges {
		fmt.Printf("%d+%d at %.4f\n", m.A, m.B, m.Height)
	}
	// Output:
	// 0+1 at 1.0000
	// 2+4 at 4.0000
	// 3+5 at 4.0000
}

func ExampleAitchisonDistance() {
	d, _ := cluster.AitchisonDistance([]float64{0.5, 0.3, 0.2}, []float64{0.2, 0.3, 0.5}, cluster.DefaultZeroDelta)
	fmt.Printf("%.4f\n", d)
	// Output: 1.2958
}
