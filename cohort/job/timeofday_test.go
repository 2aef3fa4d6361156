package job

import (
	"context"
	"path/filepath"
	"testing"

	"github.com/cohortmix/cohortmix/cluster"
	"github.com/cohortmix/cohortmix/cohort/synth"
)

// Issue 30, point 6: two groups that differ only in when in the day they move are invisible to
// the whole recording's shares and found by the day-part signature; a table without times is
// refused the day-part signature with a sentence that says why.
func TestDayPartSignatureFindsWhenPeopleMove(t *testing.T) {
	t.Parallel()
	if testing.Short() {
		t.Skip("two whole runs")
	}
	path := filepath.Join(t.TempDir(), "larks.csv")
	truth, err := synth.WriteLarksOwls(path, 60, 3)
	if err != nil {
		t.Fatal(err)
	}
	ari := map[string]float64{}
	for _, sig := range []string{SignatureWhole, SignatureDayParts} {
		o := Defaults(path)
		o.Signature, o.States, o.NoSensitivity = sig, []int{3}, true
		res, err := Analyze(context.Background(), o)
		if err != nil {
			t.Fatal(err)
		}
		labels := make([]int, len(res.Units))
		for i, u := range res.Units {
			labels[i] = u.Group
		}
		if ari[sig], err = cluster.AdjustedRand(labels, truth); err != nil {
			ari[sig] = 0 // one group: the index is not defined, and nothing was found
		}
		if sig == SignatureDayParts && len(res.TimeOfDay) != res.Grouping.K {
			t.Errorf("%d groups' 24-hour profiles for %d groups", len(res.TimeOfDay), res.Grouping.K)
		}
	}
	t.Logf("ARI whole %.3f, day parts %.3f", ari[SignatureWhole], ari[SignatureDayParts])
	if ari[SignatureWhole] > 0.2 || ari[SignatureDayParts] < 0.9 {
		t.Errorf("ARI whole %.3f (want near 0), day parts %.3f (want ≥ 0.9)", ari[SignatureWhole], ari[SignatureDayParts])
	}
}
