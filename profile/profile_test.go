package profile

import (
	"context"
	"errors"
	"fmt"
	"math"
	"math/rand/v2"
	"testing"

	"github.com/cohortmix/cohortmix/cluster"
	"github.com/cohortmix/cohortmix/normalize"
)

func TestSignatures(t *testing.T) {
	t.Parallel()
	s := Signatures([]int{0, 0, 1, 1, 1, 0, 2, 2, 0, 0}, 4)
	want := Signature{Share: []float64{0.5, 0.3, 0.2, 0}, MeanBout: []float64{5.0 / 3, 3, 2, 0}, Bouts: []int{3, 1, 1, 0}, Windows: 10}
	for j := range want.Share {
		if math.Abs(s.Share[j]-want.Share[j]) > 1e-15 || math.Abs(s.MeanBout[j]-want.MeanBout[j]) > 1e-15 || s.Bouts[j] != want.Bouts[j] {
			t.Errorf("state %d: share %v bout %v runs %d, want %v %v %d", j, s.Share[j], s.MeanBout[j], s.Bouts[j], want.Share[j], want.MeanBout[j], want.Bouts[j])
		}
	}
}

// Planted structure: four well-separated states in three dimensions, spread over ten blocks.
func plantedBlocks() ([][]float64, [][]int) {
	centres := [][]float64{{0, 0, 0}, {6, 0, 0}, {0, 6, 0}, {0, 0, 6}}
	rng := rand.New(rand.NewPCG(3, 3))
	var blocks [][]float64
	var truth [][]int
	for u := 0; u < 10; u++ {
		var b []float64
		var tr []int
		for w := 0; w < 400; w++ {
			s := (w / 20) % 4
			for _, c := range centres[s] {
				b = append(b, c+rng.NormFloat64())
			}
			tr = append(tr, s)
		}
		blocks, truth = append(blocks, b), append(truth, tr)
	}
	return blocks, truth
}

func TestFitStatesRecoversPlantedStates(t *testing.T) {
	t.Parallel()
	blocks, truth := plantedBlocks()
	sample := Sample(normalize.SliceBlocks(blocks), 3, 2000, 4000, 1)
	// The valley rule fits 6 states and merges the two pairs that split a planted state (one
	// progress step for the fit and one per merge); Calinski–Harabasz scores the 5 candidates.
	for _, c := range []struct {
		rule     Rule
		progress string
		cands    int
		merges   int
	}{{ByValley, "[1 2 3]", 0, 2}, {ByCalinskiHarabasz, "[1 2 3 4 5]", 5, 0}} {
		var reported []int
		s, err := FitStates(context.Background(), sample, Options{States: []int{2, 3, 4, 5, 6}, Rule: c.rule, Seed: 1, Progress: func(_ string, done, total int) {
			reported = append(reported, done)
		}})
		if err != nil {
			t.Fatal(err)
		}
		if fmt.Sprint(reported) != c.progress {
			t.Errorf("%v: progress %v, want %s", c.rule, reported, c.progress)
		}
		if s.K != 4 || len(s.Candidates) != c.cands || len(s.Merges) != c.merges {
			t.Fatalf("%v: chose %d states, %d candidates, %d merges; want 4, %d, %d", c.rule, s.K, len(s.Candidates), len(s.Merges), c.cands, c.merges)
		}
		var got, want []int
		for u, b := range blocks {
			got = append(got, s.Assign(b)...)
			want = append(want, truth[u]...)
		}
		if ari, _ := cluster.AdjustedRand(got, want); ari < 0.99 {
			t.Errorf("%v: ARI %.4f against the planted states", c.rule, ari)
		}
	}
	s, err := FitStates(context.Background(), sample, Options{States: []int{4}, Seed: 1})
	if err != nil {
		t.Fatal(err)
	}
	if _, err := Describe(blocks, [][]int{s.Assign(blocks[0])}, 3, 4); !errors.Is(err, ErrData) {
		t.Errorf("mismatched lengths: %v", err)
	}
	desc, err := Describe(blocks[:1], [][]int{s.Assign(blocks[0])}, 3, 4)
	if err != nil {
		t.Fatal(err)
	}
	if math.Abs(desc[0].Share+desc[1].Share+desc[2].Share+desc[3].Share-1) > 1e-12 {
		t.Error("state shares do not sum to 1")
	}
}

func TestFitStatesErrors(t *testing.T) {
	t.Parallel()
	blocks, _ := plantedBlocks()
	if _, err := FitStates(context.Background(), Sample(normalize.SliceBlocks(blocks), 3, 0, 4000, 1), Options{States: []int{4, 3}}); !errors.Is(err, ErrOption) {
		t.Errorf("decreasing range: %v", err)
	}
	if _, err := FitStates(context.Background(), Sample(normalize.SliceBlocks(blocks[:1]), 3, 100, 400, 1), Options{States: []int{300}}); !errors.Is(err, ErrData) {
		t.Errorf("too few windows: %v", err)
	}
}

func ExampleSignatures() {
	s := Signatures([]int{0, 0, 0, 1, 1, 0, 2}, 3)
	fmt.Printf("shares %.4f, mean bouts %.4f\n", s.Share, s.MeanBout)
	// Output: shares [0.5714 0.2857 0.1429], mean bouts [2.0000 2.0000 1.0000]
}

// Describing participants apart and merging the parts gives the same means and shares as
// describing them in one Describer (sums in another order: equal to rounding).
func TestDescriberMergeMatchesOneDescriber(t *testing.T) {
	t.Parallel()
	a, b := []float64{1, 2, 3, 4, 5, 6}, []float64{7, 8, 9, 10.5}
	la, lb := []int{0, 1, 1}, []int{0, 0}
	one := NewDescriber(2, 2)
	if one.Add(a, la) != nil || one.Add(b, lb) != nil {
		t.Fatal("Add failed")
	}
	merged, pa, pb := NewDescriber(2, 2), NewDescriber(2, 2), NewDescriber(2, 2)
	if pa.Add(a, la) != nil || pb.Add(b, lb) != nil {
		t.Fatal("Add failed")
	}
	merged.Merge(pa)
	merged.Merge(pb)
	x, y := one.Descriptions(), merged.Descriptions()
	for s := range x {
		if math.Abs(x[s].Share-y[s].Share) > 1e-15 {
			t.Errorf("state %d share %v, merged %v", s, x[s].Share, y[s].Share)
		}
		for j := range x[s].Mean {
			if math.Abs(x[s].Mean[j]-y[s].Mean[j]) > 1e-12 {
				t.Errorf("state %d mean %d: %v, merged %v", s, j, x[s].Mean[j], y[s].Mean[j])
			}
		}
	}
}

// Issue 30: a bout does not run across an interruption of the recording. States 0 0 | 0 1 1:
// without the gap state 0 has one bout of 3 windows, with it two of 1.5.
func TestSignaturesBrokenByGaps(t *testing.T) {
	t.Parallel()
	labels := []int{0, 0, 0, 1, 1}
	whole := Signatures(labels, 2)
	broken := SignaturesBroken(labels, 2, []bool{false, false, true, false, false})
	if whole.Bouts[0] != 1 || whole.MeanBout[0] != 3 || whole.Gaps != 0 {
		t.Errorf("without the gap: %+v", whole)
	}
	if broken.Bouts[0] != 2 || broken.MeanBout[0] != 1.5 || broken.Gaps != 1 || broken.Share[0] != whole.Share[0] || broken.Bouts[1] != 1 {
		t.Errorf("with the gap: %+v", broken)
	}
}
