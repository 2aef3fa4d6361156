package group

import (
	"fmt"
	"math"
	"sort"

	"github.com/cohortmix/cohortmix/cluster/groupstat"
	"github.com/cohortmix/cohortmix/cluster/par"
	"github.com/cohortmix/cohortmix/cohort"
	"github.com/cohortmix/cohortmix/cohort/note"
)

// Variable is one participant-level measure tested for separating the groups.
type Variable struct {
	Name   string
	Kind   string    // "share", "bout length", "feature median" or "rest-activity"
	Values []float64 // one per grouped participant; NaN where it does not exist (left out of the test)
}

// Separation is how strongly a variable differs between groups. These tests are descriptive:
// the groups were found on the same data, so the p-values are not confirmatory.
type Separation struct {
	Name, Kind     string
	H, P, Q        float64
	Epsilon2       float64
	Median, Q1, Q3 []float64 // per group
	Delta          []float64 // Cliff's delta of each group against the rest
}

// separateOne tests one variable, or says why it cannot be tested. Participants without a value
// (NaN: a bout length of a state they never entered) are left out of its test; a group left
// with none takes no part in it, and its quartiles and delta are empty.
func separateOne(v Variable, labels []int, k int) (*Separation, *cohort.LeftOut) {
	groups := make([][]float64, k)
	for i, x := range v.Values {
		if !math.IsNaN(x) {
			groups[labels[i]] = append(groups[labels[i]], x)
		}
	}
	kw, err := groupstat.KruskalWallis(groups)
	if err != nil {
		nonEmpty := 0
		for _, g := range groups {
			if len(g) > 0 {
				nonEmpty++
			}
		}
		return nil, &cohort.LeftOut{Name: v.Name, Reason: note.Note{Kind: NotTestedFewGroups, Ints: []int{nonEmpty}}}
	}
	s := Separation{Name: v.Name, Kind: v.Kind, H: kw.H, P: kw.P, Epsilon2: kw.Epsilon2,
		Median: make([]float64, k), Q1: make([]float64, k), Q3: make([]float64, k)}
	for g := 0; g < k; g++ {
		s.Q1[g], s.Median[g], s.Q3[g] = quartiles(groups[g])
	}
	// Each group against the rest, from one sort of the variable.
	if s.Delta, err = groupstat.CliffsDeltaVsRest(groups); err != nil {
		s.Delta = make([]float64, k)
		for g := range s.Delta {
			s.Delta[g] = math.NaN()
		}
	}
	return &s, nil
}

// Separate runs the Kruskal–Wallis test of every variable across the groups, adds BH q-values
// over all tested variables, and ranks them by ε² (largest first). Variables that cannot be
// tested (constant, or values in one group only) are returned as notes. The variables are
// tested on workers goroutines at once (0: one per core).
func Separate(vars []Variable, labels []int, k, workers int) ([]Separation, []cohort.LeftOut, error) {
	for _, v := range vars {
		if len(v.Values) != len(labels) {
			return nil, nil, fmt.Errorf("group: Separate: %s has %d values for %d participants: %w", v.Name, len(v.Values), len(labels), cohort.ErrMismatch)
		}
	}
	// The variables are tested on all cores, each on its own; results keep the variables' order.
	tested := make([]*Separation, len(vars))
	untested := make([]*cohort.LeftOut, len(vars))
	par.Each(len(vars), workers, func(i int) {
		tested[i], untested[i] = separateOne(vars[i], labels, k)
	})
	var out []Separation
	var notes []cohort.LeftOut
	for i := range vars {
		if tested[i] != nil {
			out = append(out, *tested[i])
		} else {
			notes = append(notes, *untested[i])
		}
	}
	p := make([]float64, len(out))
	for i, s := range out {
		p[i] = s.P
	}
	q, err := groupstat.BenjaminiHochberg(p)
	if err != nil {
		return nil, nil, err
	}
	for i := range out {
		out[i].Q = q[i]
	}
	sort.SliceStable(out, func(a, b int) bool { return out[a].Epsilon2 > out[b].Epsilon2 })
	return out, notes, nil
}

// quartiles returns the first quartile, median and third quartile by linear interpolation
// between order statistics (type 7 of Hyndman & Fan 1996, the default of R and numpy).
func quartiles(xs []float64) (float64, float64, float64) {
	if len(xs) == 0 {
		return math.NaN(), math.NaN(), math.NaN()
	}
	s := append([]float64(nil), xs...)
	sort.Float64s(s)
	q := func(p float64) float64 {
		h := p * float64(len(s)-1)
		lo := math.Floor(h)
		if int(lo)+1 >= len(s) {
			return s[len(s)-1]
		}
		return s[int(lo)] + (h-lo)*(s[int(lo)+1]-s[int(lo)])
	}
	return q(0.25), q(0.5), q(0.75)
}
