package job

import (
	"context"
	"math"
	"strings"
	"testing"

	"github.com/cohortmix/cohortmix/cohort/synth"
	"github.com/cohortmix/cohortmix/reports"
)

// The sensitivity table has a row for each alternative, in a fixed order, with the same values
// on one worker or two (its rows are fitted side by side); the row for the align step turning the
// axis means alone is there only when the fit turned more features with them.
func TestSensitivityRowsWhateverTheWorkers(t *testing.T) {
	path := syntheticCohort(t, synth.Options{Participants: 60, Windows: 400, Features: 24, Seed: 2})
	for _, noTurn := range []bool{false, true} {
		var first []string
		var firstARI []float64
		for _, workers := range []int{1, 2} {
			o := Defaults(path)
			o.Workers, o.Bootstrap, o.NoTurn = workers, 5, noTurn
			o.Groups = []int{3}                             // a grouping to be sensitive about, whatever this small cohort shows
			o.Axes = []string{"mean_x", "mean_y", "mean_z"} // named: this small cohort's vector length varies too much for the axes to be found by it
			f, err := FitAll(context.Background(), o)
			if err != nil {
				t.Fatal(err)
			}
			f.Table.Close()
			if turned := f.Fit.Turned != nil; turned == noTurn {
				t.Fatalf("--turn means %v: the fit turned %+v", noTurn, f.Fit.Turned)
			}
			var got []string
			var aris []float64
			for _, r := range f.Sensitivity {
				if !(r.ARI >= -1 && r.ARI <= 1) {
					t.Errorf("%s %s: adjusted Rand index %v", r.Choice, r.Alternative, r.ARI)
				}
				got = append(got, r.Choice+": "+r.Alternative)
				aris = append(aris, r.ARI)
			}
			want := []string{"reference: the settings used, on the sampled windows", "within-participant step: rest", "within-participant step: none"}
			if !noTurn {
				want = append(want, "align step turns: the axis means only")
			}
			if !containsInOrder(got, want) {
				t.Errorf("--turn means %v, workers %d: rows %q; want %q among them, in that order", noTurn, workers, got, want)
			}
			if first == nil {
				first, firstARI = got, aris
				continue
			}
			for i := range got {
				if i >= len(first) || got[i] != first[i] || math.Float64bits(aris[i]) != math.Float64bits(firstARI[i]) {
					t.Fatalf("--turn means %v: workers %d give rows %q %v, one worker %q %v", noTurn, workers, got, aris, first, firstARI)
				}
			}
		}
	}
}

// containsInOrder reports whether want appears in got as a subsequence.
func containsInOrder(got, want []string) bool {
	i := 0
	for _, g := range got {
		if i < len(want) && g == want[i] {
			i++
		}
	}
	return i == len(want)
}

// The line that reads the table names each alternative that moved the groups (adjusted Rand
// index below 0.8 and more than 0.2 below the reference refit), says in the number it needs
// whether one choice or several did, and points to the stability marks as the warnings.
func TestSensitivityNoteNamesWhatMoved(t *testing.T) {
	ref := reports.Sensitivity{Choice: "within step", Alternative: "align (used)", Reference: true, ARI: 0.9}
	cases := []struct {
		name    string
		rows    []reports.Sensitivity
		want    []string
		notWant []string
	}{
		{"nothing moved", []reports.Sensitivity{ref, {Choice: "method", Alternative: "pam-js", ARI: 0.85}},
			[]string{"does not hinge"}, []string{"change under"}},
		{"one choice", []reports.Sensitivity{ref, {Choice: "method", Alternative: "pam-js", ARI: 0.65}, {Choice: "within step", Alternative: "none", ARI: 0.75}},
			[]string{"change under method pam-js (adjusted Rand index 0.65)", "this choice", "the tentative mark and the group stability flags"}, []string{"within step none", "these choices"}},
		{"two choices", []reports.Sensitivity{ref, {Choice: "method", Alternative: "pam-js", ARI: 0.65}, {Choice: "number of states", Alternative: "4 (fixed)", ARI: 0.3}},
			[]string{"method pam-js", "number of states 4 (fixed)", "these choices"}, []string{"this choice"}},
	}
	for _, c := range cases {
		got := sensitivityNote(c.rows)
		for _, w := range c.want {
			if !strings.Contains(got, w) {
				t.Errorf("%s: %q does not say %q", c.name, got, w)
			}
		}
		for _, w := range c.notWant {
			if strings.Contains(got, w) {
				t.Errorf("%s: %q says %q", c.name, got, w)
			}
		}
	}
}
