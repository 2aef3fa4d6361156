package job

import (
	"context"
	"fmt"
	"math"
	"math/rand/v2"
	"os"
	"path/filepath"
	"strings"
	"testing"
	"time"

	"github.com/cohortmix/cohortmix/cluster"
)

// dayPartCohort writes a planted cohort (invented, synthetic) of two groups that spend the same
// share of their waking time in each of three states and differ only in when: the "larks" are
// most active in the morning and the "owls" in the evening. Windows are 15 minutes over 7 days,
// with times carrying a UTC offset (+01:00); everyone sleeps 00–06.
func dayPartCohort(t *testing.T, n int, seed uint64) (string, []int) {
	t.Helper()
	rng := rand.New(rand.NewPCG(seed, 7))
	level := [3][2]float64{{0.002, 0.003}, {0.05, 0.04}, {0.3, 0.2}} // still, light, brisk: vm mean, vm sd
	var b strings.Builder
	b.WriteString("participant,window,vm_mean,vm_sd\n")
	truth := make([]int, n)
	zone := time.FixedZone("", 3600)
	for p := 0; p < n; p++ {
		group := p % 2
		truth[p] = group
		t0 := time.Date(2026, 5, 4, 0, 0, 0, 0, zone)
		for w := 0; w < 7*96; w++ {
			at := t0.Add(time.Duration(w) * 15 * time.Minute)
			h := at.Hour()
			// chance of brisk movement by part of the day: larks 0.6 morning, 0.1 evening; owls
			// the other way round; light otherwise, and both 0.3 in the afternoon.
			brisk := 0.3
			switch {
			case h >= 6 && h < 12:
				brisk = []float64{0.6, 0.1}[group]
			case h >= 18:
				brisk = []float64{0.1, 0.6}[group]
			}
			state := 1
			if h < 6 {
				state = 0
			} else if rng.Float64() < brisk {
				state = 2
			}
			m, s := level[state][0]*math.Exp(0.2*rng.NormFloat64()), level[state][1]*math.Exp(0.2*rng.NormFloat64())
			fmt.Fprintf(&b, "P%03d,%s,%.5f,%.5f\n", p, at.Format(time.RFC3339), m, s)
		}
	}
	path := filepath.Join(t.TempDir(), "dayparts.csv")
	if err := os.WriteFile(path, []byte(b.String()), 0o644); err != nil {
		t.Fatal(err)
	}
	return path, truth
}

// Issue 30, point 6: two groups that differ only in when in the day they move are invisible to
// the whole recording's shares and found by the day-part signature; a table without times is
// refused the day-part signature with a sentence that says why.
func TestDayPartSignatureFindsWhenPeopleMove(t *testing.T) {
	if testing.Short() {
		t.Skip("two whole runs")
	}
	path, truth := dayPartCohort(t, 60, 3)
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
