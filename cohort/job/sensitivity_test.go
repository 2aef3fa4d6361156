package job

import (
	"context"
	"math"
	"testing"

	"github.com/cohortmix/cohortmix/cohort/synth"
	"github.com/cohortmix/cohortmix/profile"
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

// The Summary's line on the number of states reads the ensemble: it speaks when the fit kept
// agrees with the other fits below 0.8, and is left off otherwise.
func TestStatesNote(t *testing.T) {
	ens := func(kept float64) []profile.EnsembleFit {
		return []profile.EnsembleFit{{States: 4, Agreement: 0.5}, {States: 5, Agreement: kept, Kept: true}, {States: 7, Agreement: 0.6}}
	}
	for _, c := range []struct {
		name string
		ens  []profile.EnsembleFit
		want string
	}{
		{"one fit", nil, ""},
		{"the fits agree", ens(0.92), ""},
		{"the fits disagree", ens(0.62), "the groups depend on the number of movement states: fitted with 4 to 7 states from several random starts, the groupings of the sampled participants agree with the one kept only to a mean adjusted Rand index of 0.62; read the groups with that in mind"},
	} {
		if got := statesNote(c.ens); got != c.want {
			t.Errorf("%s:\n got %q\nwant %q", c.name, got, c.want)
		}
	}
}
