package mixture_test

import (
	"context"
	"fmt"

	"gonum.org/v1/gonum/mat"

	"github.com/cohortmix/cohortmix/cluster/mixture"
)

// Six participants' windows in three movement states, synthetic: two who sit most of the time
// and four who move. One component or two? BIC says two.
func ExampleFitDMM() {
	counts := mat.NewDense(6, 3, []float64{
		80, 15, 5,
		75, 20, 5,
		10, 40, 50,
		12, 38, 50,
		8, 45, 47,
		11, 41, 48,
	})
	for k := 1; k <= 2; k++ {
		m, err := mixture.FitDMM(context.Background(), counts, mixture.DMMOptions{K: k, Seed: 1})
		if err != nil {
			panic(err)
		}
		fmt.Printf("K = %d: BIC %.1f, labels %v\n", k, m.BIC, m.Labels)
	}
	// Output:
	// K = 1: BIC 107.1, labels [0 0 0 0 0 0]
	// K = 2: BIC 91.3, labels [0 0 1 1 1 1]
}
