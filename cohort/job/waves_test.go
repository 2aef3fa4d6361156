package job

import (
	"math"
	"testing"

	"github.com/cohortmix/cohortmix/cohort/modelfile"
)

// A participant-wave finds its group in the model by id and wave, else by id (a returning
// participant in a new wave); a new one has none. Moved follows.
func TestLookupPreviousAndMoved(t *testing.T) {
	t.Parallel()
	m := &modelfile.Model{Members: []modelfile.Member{{ID: "P1", Wave: "1", Group: "G1"}, {ID: "P1", Wave: "2", Group: "G2"}, {ID: "P2", Wave: "1", Group: "G1"}}}
	byKey, byID := PreviousGroups(m)
	for _, c := range []struct{ id, wave, now, previous, moved string }{
		{"P1", "1", "G1", "G1", "no"},
		{"P1", "2", "G1", "G2", "yes"},
		{"P2", "3", "G2", "G1", "yes"}, // a new wave of a returning participant: by id
		{"P3", "1", "G1", "", "new participant"},
	} {
		got := LookupPrevious(byKey, byID, c.id, c.wave)
		if got != c.previous || moved(got, c.now) != c.moved {
			t.Errorf("%s wave %s: previous %q, moved %q", c.id, c.wave, got, moved(got, c.now))
		}
	}
	if a := returningAgreement([]int{0}, []int{1}); !math.IsNaN(a) {
		t.Errorf("one returning participant: agreement %v, want NaN", a)
	}
}
