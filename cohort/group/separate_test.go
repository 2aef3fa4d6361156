package group

import (
	"math"
	"testing"

	"github.com/cohortmix/cohortmix/cluster/groupstat"
)

// A participant without a value (NaN, a bout length of a state never entered) is left out of
// its variable's test, which is then the test of the values that exist; a group left with none
// takes no part and has empty quartiles. The reference is groupstat.KruskalWallis on the values
// kept, itself checked against scipy.stats.kruskal (testdata/pipeline/golden.json).
func TestSeparateLeavesOutMissingValues(t *testing.T) {
	t.Parallel()
	nan := math.NaN()
	labels := []int{0, 0, 0, 1, 1, 1, 2, 2}
	cases := []struct {
		name   string
		values []float64
		kept   [][]float64
		empty  int // the group with no value left, or −1
	}{
		{"one missing", []float64{1, 2, nan, 5, 6, 7, 3, 4}, [][]float64{{1, 2}, {5, 6, 7}, {3, 4}}, -1},
		{"a group with none", []float64{1, 2, 3, 5, 6, 7, nan, nan}, [][]float64{{1, 2, 3}, {5, 6, 7}, nil}, 2},
	}
	for _, c := range cases {
		seps, notes, err := Separate([]Variable{{Name: "bout S1", Kind: "bout length", Values: c.values}}, labels, 3, 1)
		if err != nil || len(seps) != 1 || len(notes) != 0 {
			t.Fatalf("%s: %v separations, notes %v, error %v", c.name, len(seps), notes, err)
		}
		want, err := groupstat.KruskalWallis(c.kept)
		if err != nil {
			t.Fatal(err)
		}
		if s := seps[0]; s.H != want.H || s.P != want.P {
			t.Errorf("%s: H %v p %v, the kept values give %v %v", c.name, s.H, s.P, want.H, want.P)
		}
		for g, m := range seps[0].Median {
			if math.IsNaN(m) != (g == c.empty) {
				t.Errorf("%s: group %d median %v", c.name, g, m)
			}
		}
	}
}

// A variable whose values all fall in one group cannot be tested: it comes back as a reason,
// with the number of groups its values fall in, not as a separation.
func TestSeparateSaysWhyAVariableIsNotTested(t *testing.T) {
	t.Parallel()
	nan := math.NaN()
	labels := []int{0, 0, 0, 1, 1, 1}
	seps, left, err := Separate([]Variable{{Name: "bout S2", Values: []float64{1, 2, 3, nan, nan, nan}}}, labels, 2, 1)
	if err != nil || len(seps) != 0 || len(left) != 1 {
		t.Fatalf("%d separations, %v left out, error %v", len(seps), left, err)
	}
	if r := left[0].Reason; left[0].Name != "bout S2" || r.Kind != NotTestedFewGroups || len(r.Ints) != 1 || r.Ints[0] != 1 {
		t.Errorf("left out %+v", left[0])
	}
}
