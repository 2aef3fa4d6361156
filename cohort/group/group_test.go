package group

import (
	"context"
	"math"
	"math/rand/v2"
	"reflect"
	"slices"
	"strings"
	"testing"

	"github.com/cohortmix/cohortmix/cohort/note"

	"gonum.org/v1/gonum/mat"

	"github.com/cohortmix/cohortmix/cluster"
	"github.com/cohortmix/cohortmix/cohort"
)

// plantedShares draws n signatures over five states around g planted mixtures (synthetic).
func plantedShares(n, g int, seed uint64) ([][]float64, []int) {
	protos := [][]float64{{0.5, 0.3, 0.1, 0.05, 0.05}, {0.1, 0.1, 0.5, 0.2, 0.1}, {0.1, 0.3, 0.1, 0.2, 0.3}, {0.25, 0.05, 0.05, 0.6, 0.05}}
	rng := rand.New(rand.NewPCG(seed, 0))
	out := make([][]float64, n)
	truth := make([]int, n)
	for i := range out {
		truth[i] = i % g
		s := make([]float64, 5)
		var sum float64
		for j, p := range protos[truth[i]] {
			s[j] = p * math.Exp(rng.NormFloat64()*0.15)
			sum += s[j]
		}
		for j := range s {
			s[j] /= sum
		}
		out[i] = s
	}
	return out, truth
}

func TestGroupingMethodsRecoverPlantedGroups(t *testing.T) {
	t.Parallel()
	shares, truth := plantedShares(120, 3, 1)
	for _, m := range []Method{WardHellinger, PAMAitchison, PAMJensenShannon, KMeansCLR} {
		t.Run(m.String(), func(t *testing.T) {
			g, err := Signatures(context.Background(), shares, Options{Method: m, Groups: []int{2, 3, 4, 5}, Bootstrap: 10, Seed: 1})
			if err != nil {
				t.Fatal(err)
			}
			ari, _ := cluster.AdjustedRand(g.Labels, truth)
			if g.K != 3 || ari < 0.95 {
				t.Errorf("k = %d, ARI %.3f; want 3 groups and ARI ≥ 0.95", g.K, ari)
			}
			for i, d := range g.Distance {
				if math.IsNaN(d) || math.IsNaN(g.Silhouette[i]) {
					t.Fatalf("participant %d: distance %v silhouette %v", i, d, g.Silhouette[i])
				}
			}
		})
	}
}

func TestAutoSwitchesForLargeCohorts(t *testing.T) {
	t.Parallel()
	if testing.Short() {
		t.Skip("groups 10,050 signatures")
	}
	shares, truth := plantedShares(LargeCohort+50, 3, 2)
	g, err := Signatures(context.Background(), shares, Options{Method: Auto, Groups: []int{3}, Seed: 1})
	if err != nil {
		t.Fatal(err)
	}
	want := note.Note{Kind: NoteAutoKMeans, Ints: []int{LargeCohort + 50, LargeCohort}, Option: "group.Options.Method"}
	if g.Method != KMeansCLR || !slices.ContainsFunc(g.Notes, func(n note.Note) bool { return reflect.DeepEqual(n, want) }) {
		t.Errorf("method %v, notes %+v; want the switch to k-means on CLR, said in a note %+v", g.Method, g.Notes, want)
	}
	if ari, _ := cluster.AdjustedRand(g.Labels, truth); ari < 0.95 {
		t.Errorf("ARI %.3f", ari)
	}
	// With a range, the gap and the stability work on a sample of LargeCohort participants, and
	// the gap still finds the three planted groups.
	g, err = Signatures(context.Background(), shares, Options{Method: Auto, Groups: []int{2, 3, 4}, Bootstrap: 5, Seed: 1})
	if err != nil {
		t.Fatal(err)
	}
	sampled := note.Note{Kind: NoteCriteriaSample, Ints: []int{LargeCohort, LargeCohort + 50}}
	if g.K != 3 || !slices.ContainsFunc(g.Notes, func(n note.Note) bool { return reflect.DeepEqual(n, sampled) }) {
		t.Errorf("k %d, notes %+v; want 3 groups and the sample said in a note", g.K, g.Notes)
	}
}

func TestMatchNamesGroups(t *testing.T) {
	t.Parallel()
	prev := Previous{StateNames: []string{"S1", "S2", "S3"}, StateMeans: [][]float64{{0, 0}, {1, 0}, {0, 1}}, Scale: []float64{1, 1},
		GroupNames: []string{"G1", "G2", "G3"}, GroupShares: [][]float64{{0.8, 0.1, 0.1}, {0.1, 0.8, 0.1}, {0.1, 0.1, 0.8}}, Cut: 0.2, Method: WardHellinger}
	// New fit: states in another order; G2 is the same, G1 has merged into it, G3 is gone, one group is new.
	next := Next{StateMeans: [][]float64{{0, 1}, {0.02, 0}, {1, 0}},
		GroupShares: [][]float64{{0.1, 0.1, 0.8}, {0.3, 0.3, 0.4}},
		PrevGroup:   []int{1, 1, 1, 0, 0, -1, -1},
		Labels:      []int{0, 0, 0, 0, 0, 1, 1}}
	m, err := Match(prev, next)
	if err != nil {
		t.Fatal(err)
	}
	if strings.Join(m.StateNames, ",") != "S3,S1,S2" {
		t.Errorf("state names %v, want S3,S1,S2", m.StateNames)
	}
	if m.GroupNames[0] != "G2" || m.GroupNames[1] != "G4" {
		t.Errorf("group names %v, want G2 and a new G4", m.GroupNames)
	}
	if !strings.HasPrefix(m.PrevStatus[0], "merged into G2") || m.PrevStatus[2] != "gone" || m.NewStatus[1] != "new" {
		t.Errorf("previous %q, new %q", m.PrevStatus, m.NewStatus)
	}
}

// A new group that holds all of a previous group's returning members, and only them, keeps
// that group's name even when its centre moved nearer another previous group (as when the
// states are fitted anew on a cohort whose mix changed); the other previous group, whose
// members did not return, is gone, and a group of newcomers far from both is new.
func TestMatchNamesGroupsByTheirPeopleFirst(t *testing.T) {
	t.Parallel()
	prev := Previous{StateNames: []string{"S1", "S2"}, StateMeans: [][]float64{{0, 0}, {1, 0}}, Scale: []float64{1, 1},
		GroupNames: []string{"G1", "G2"}, GroupShares: [][]float64{{0.9, 0.1}, {0.6, 0.4}}, Cut: 0.2, Method: WardHellinger}
	next := Next{StateMeans: [][]float64{{0, 0}, {1, 0}},
		GroupShares: [][]float64{{0.88, 0.12}, {0.05, 0.95}},
		PrevGroup:   []int{1, 1, 1, -1, -1},
		Labels:      []int{0, 0, 0, 1, 1}}
	m, err := Match(prev, next)
	if err != nil {
		t.Fatal(err)
	}
	if m.GroupNames[0] != "G2" || m.GroupNames[1] != "G3" {
		t.Errorf("group names %v, want G2 (its people) and a new G3", m.GroupNames)
	}
	if m.PrevStatus[0] != "gone" || m.PrevStatus[1] != "continues as G2" || m.NewStatus[1] != "new" {
		t.Errorf("previous %q, new %q", m.PrevStatus, m.NewStatus)
	}
	// Without returning members, the centres decide: the first new group is G1's.
	next.PrevGroup = []int{-1, -1, -1, -1, -1}
	if m, err = Match(prev, next); err != nil {
		t.Fatal(err)
	}
	if m.GroupNames[0] != "G1" || m.GroupNames[1] != "G3" {
		t.Errorf("without returning members: group names %v, want G1 (its centre) and a new G3", m.GroupNames)
	}
}

func TestThousands(t *testing.T) {
	t.Parallel()
	for n, want := range map[int]string{0: "0", 999: "999", 1000: "1,000", 38146: "38,146", 100000: "100,000", 1234567: "1,234,567", -1500: "-1,500"} {
		if got := cohort.Thousands(n); got != want {
			t.Errorf("Thousands(%d) = %q, want %q", n, got, want)
		}
	}
}

// Signatures reports each step it counts (one grouping per candidate number, then the
// gap's reference sets and the stability's resamples), each counting up to its total; the
// reports do not change the result.
func TestGroupReportsProgress(t *testing.T) {
	t.Parallel()
	shares, _ := plantedShares(60, 3, 2)
	type call struct {
		step        string
		done, total int
	}
	var calls []call
	opts := Options{Method: KMeansCLR, Groups: []int{2, 3, 4}, Bootstrap: 5, Seed: 1}
	quiet, err := Signatures(context.Background(), shares, opts)
	if err != nil {
		t.Fatal(err)
	}
	opts.Progress = func(step string, done, total int) { calls = append(calls, call{step, done, total}) }
	g, err := Signatures(context.Background(), shares, opts)
	if err != nil {
		t.Fatal(err)
	}
	want := []call{{"grouping for each number of groups", 3, 3}, {"gap statistic: reference sets", 5, 5}, {"stability: resamples", 5, 5}, {"stability of each group: resamples", 5, 5}}
	var ends []call
	for i, c := range calls {
		if i+1 == len(calls) || calls[i+1].step != c.step {
			ends = append(ends, c)
		}
		if c.done < 1 || c.done > c.total || (i > 0 && calls[i-1].step == c.step && calls[i-1].done+1 != c.done) {
			t.Fatalf("call %d: %+v after %+v", i, c, calls[max(i-1, 0)])
		}
	}
	if len(ends) != len(want) {
		t.Fatalf("steps %+v, want %+v", ends, want)
	}
	for i := range want {
		if ends[i] != want[i] {
			t.Errorf("step %d ends at %+v, want %+v", i, ends[i], want[i])
		}
	}
	if g.K != quiet.K || !slices.Equal(g.Labels, quiet.Labels) {
		t.Errorf("with progress: k %d, without: k %d (or other labels)", g.K, quiet.K)
	}
}

// The valley cap lowers a number of groups that cut one mode in two (planted structure: two
// normal blobs 10 s.d. apart, each cut in two along the other axis), and keeps a number whose
// groups are all parted by a valley.
func TestValleyCapMergesOneModeCutInTwo(t *testing.T) {
	t.Parallel()
	rng := rand.New(rand.NewPCG(4, 0))
	n := 200
	x := mat.NewDense(n, 2, nil)
	two, three, four := make([]int, n), make([]int, n), make([]int, n)
	for i := 0; i < n; i++ {
		blob := i / 100
		y := rng.NormFloat64()
		x.SetRow(i, []float64{10*float64(blob) + rng.NormFloat64(), y})
		half := 0
		if y > 0 {
			half = 1
		}
		two[i] = blob
		four[i] = 2*blob + half
		three[i] = blob
		if blob == 0 {
			three[i] = half * 2 // blob 0 cut in two (0 and 2), blob 1 whole (1)
		}
	}
	labels := map[int][]int{2: two, 3: three, 4: four}
	for _, c := range []struct {
		chosen, want int
	}{{4, 2}, {3, 2}, {2, 2}} {
		k, err := valleyCap(x, labels, []int{2, 3, 4}, c.chosen, 0.5)
		if err != nil {
			t.Fatal(err)
		}
		if k != c.want {
			t.Errorf("chosen %d: kept %d groups, want %d", c.chosen, k, c.want)
		}
	}
}

// Every grouping method's name reads back as the method, and the help names them all.
func TestMethodsReadBack(t *testing.T) {
	t.Parallel()
	for _, r := range methods {
		m, err := ParseMethod(r.name)
		if err != nil || m != r.m || m.String() != r.name || !strings.Contains(MethodHelp(), r.name+" (") {
			t.Errorf("%s: %v %v, help %q", r.name, m, err, MethodHelp())
		}
	}
}

// Choose on hand-made scores. The gap rule is Tibshirani, Walther & Hastie (2001), eq. 13 with
// the one-standard-error step: the smallest k with Gap(k) ≥ Gap(k+1) − s(k+1).
func TestChoose(t *testing.T) {
	t.Parallel()
	scores := func(gap, se, stab []float64) []KScore {
		var out []KScore
		for i := range gap {
			out = append(out, KScore{K: i + 2, Gap: gap[i], GapSE: se[i], Stability: stab[i], Silhouette: stab[i] / 2})
		}
		return out
	}
	cases := []struct {
		name string
		s    []KScore
		c    Criterion
		want int
	}{
		{"gap: first k within one s.e. of the next", scores([]float64{0.5, 0.9, 0.95, 1.0}, []float64{0.1, 0.1, 0.1, 0.1}, []float64{1, 1, 1, 1}), ByGap, 3},
		{"gap: still rising, the largest", scores([]float64{0.5, 0.7, 0.9}, []float64{0.05, 0.05, 0.05}, []float64{1, 1, 1}), ByGap, 4},
		{"gap-stable: one fewer is more stable by more than 0.1", scores([]float64{0.5, 0.9, 0.95, 1.0}, []float64{0.1, 0.1, 0.1, 0.1}, []float64{0.9, 0.99, 0.62, 0.7}), ByGapStable, 3},
		{"gap-stable: down two steps", scores([]float64{0.5, 0.7, 0.9}, []float64{0.05, 0.05, 0.05}, []float64{1.0, 0.85, 0.6}), ByGapStable, 2},
		{"gap-stable: a gain of 0.1 or less is no step", scores([]float64{0.5, 0.7, 0.9}, []float64{0.05, 0.05, 0.05}, []float64{0.7, 0.79, 0.7}), ByGapStable, 4},
		{"gap-stable-firm: a stable grouping is kept as gap-stable chose it", scores([]float64{0.5, 0.9, 0.95, 1.0}, []float64{0.1, 0.1, 0.1, 0.1}, []float64{0.9, 0.99, 0.82, 0.7}), ByGapSteady, 3},
		{"gap-stable-firm: a tentative grouping gives way to the largest smaller stable one", scores([]float64{0.5, 0.7, 0.9, 1.1}, []float64{0.05, 0.05, 0.05, 0.05}, []float64{0.98, 0.81, 0.75, 0.66}), ByGapSteady, 3},
		{"gap-stable-firm: stable at 0.8 exactly", scores([]float64{0.5, 0.7, 0.9}, []float64{0.05, 0.05, 0.05}, []float64{0.95, 0.8, 0.72}), ByGapSteady, 3},
		{"gap-stable-firm: no smaller stable grouping keeps gap-stable's number", scores([]float64{0.5, 0.7, 0.9}, []float64{0.05, 0.05, 0.05}, []float64{0.7, 0.79, 0.7}), ByGapSteady, 4},
		{"stability: the largest", scores([]float64{0, 0, 0}, []float64{0, 0, 0}, []float64{0.7, 0.9, 0.8}), ByStability, 3},
		{"silhouette: the largest", scores([]float64{0, 0, 0}, []float64{0, 0, 0}, []float64{0.9, 0.7, 0.8}), BySilhouette, 2},
	}
	for _, c := range cases {
		if got := Choose(c.s, c.c); got != c.want {
			t.Errorf("%s: Choose = %d, want %d", c.name, got, c.want)
		}
	}
	for _, c := range []Criterion{ByGap, ByStability, BySilhouette, ByGapStable, ByGapSteady} {
		if got, err := ParseCriterion(c.String()); err != nil || got != c {
			t.Errorf("ParseCriterion(%s) = %v, %v", c, got, err)
		}
	}
	// gap-steady, the name before 2026-12 (too close to gap-stable), still reads.
	if got, err := ParseCriterion("gap-steady"); err != nil || got != ByGapSteady || got.String() != "gap-stable-firm" {
		t.Errorf("ParseCriterion(gap-steady) = %v, %v", got, err)
	}
}
