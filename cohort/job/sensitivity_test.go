package job

import (
	"context"
	"math"
	"slices"
	"testing"

	"github.com/cohortmix/cohortmix/cohort/note"
	"github.com/cohortmix/cohortmix/cohort/synth"
	"github.com/cohortmix/cohortmix/profile"
)

// The sensitivity table has a row for each alternative, in a fixed order, with the same values
// on one worker or two (its rows are fitted side by side); the row for the align step turning the
// axis means alone is there only when the fit turned more features with them.
func TestSensitivityRowsWhateverTheWorkers(t *testing.T) {
	t.Parallel()
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

// The Summary's line on the number of states reads the ensemble: it speaks when a number of
// states the data support about as well as the one kept (a fit whose agreement with all the
// others is at most 0.05 below the kept fit's) groups the participants otherwise (below 0.8
// with the kept fit), and is left off otherwise, as for numbers of states voted down.
func TestStatesNote(t *testing.T) {
	t.Parallel()
	ens := func(agree4, with4 float64) []profile.EnsembleFit {
		return []profile.EnsembleFit{
			{States: 5, Agreement: 0.70, Kept: true, WithKept: 1},
			{States: 5, Agreement: 0.69, WithKept: 0.95},
			{States: 4, Agreement: agree4, WithKept: with4},
			{States: 3, Agreement: 0.40, WithKept: 0.20}, // voted down: never a doubt
		}
	}
	for _, c := range []struct {
		name string
		ens  []profile.EnsembleFit
		want note.Note
	}{
		{"one fit", nil, note.Note{}},
		{"a credible number of states that groups alike", ens(0.68, 0.90), note.Note{}},
		{"a number of states voted down", ens(0.60, 0.30), note.Note{}},
		{"a credible number of states that groups otherwise", ens(0.68, 0.55), note.Note{Kind: NoteStatesDepend, Ints: []int{5, 4}, Floats: []float64{0.55}}},
	} {
		if got := statesNote(c.ens); got.Kind != c.want.Kind || !slices.Equal(got.Ints, c.want.Ints) || !slices.Equal(got.Floats, c.want.Floats) {
			t.Errorf("%s:\n got %+v\nwant %+v", c.name, got, c.want)
		}
	}
}
