package main

import (
	"context"
	"fmt"
	"github.com/cohortmix/cohortmix/cohort/job"
	"path/filepath"
	"strings"
	"testing"

	"github.com/cohortmix/cohortmix/cohort"
	"github.com/cohortmix/cohortmix/cohort/synth"
	"github.com/cohortmix/cohortmix/profile"
	"github.com/cohortmix/cohortmix/reports"
)

// The rules for the numbers of states and groups, tried on planted cohorts of the demo's
// scenario (synth: five states, 2, 3 or 4 planted groups). Each group criterion is applied to
// the same scores, so the comparison is fair. The state rules each fit the states: the default
// (aligned states, valley rule) against the Calinski–Harabasz rule of the earlier default
// (rest baseline, features as read).
func TestChoiceRulesOnPlantedCohorts(t *testing.T) {
	if testing.Short() {
		t.Skip("planted-cohort study takes about half a minute")
	}
	criteria := []cohort.Criterion{cohort.ByGapSteady, cohort.ByGapStable, cohort.ByGap, cohort.ByStability, cohort.BySilhouette}
	hits := map[cohort.Criterion]int{}
	var stateValley, stateCH, runs int
	var table strings.Builder
	fmt.Fprintf(&table, "planted seed | gap-steady gap-stable gap stability silhouette | states: valley CH\n")
	for _, planted := range []int{2, 3, 4} {
		for seed := uint64(1); seed <= 4; seed++ {
			path := filepath.Join(t.TempDir(), "c.csv")
			if _, err := synth.WriteFile(path, synth.Options{Participants: 90, Windows: 600, Groups: planted, Seed: 100*uint64(planted) + seed, Labels: true}); err != nil {
				t.Fatal(err)
			}
			ks := map[profile.Rule]int{}
			var res *reports.Result
			for rule, args := range map[profile.Rule][]string{profile.ByCalinskiHarabasz: {"--within", "rest", "--log", "none", "--states-rule", "ch"}, profile.ByValley: nil} {
				o := variantOptions(t, path, append(args, "--seed", fmt.Sprint(seed)), 0, 0)
				r, err := job.Analyze(context.Background(), o)
				if err != nil {
					t.Fatal(err)
				}
				ks[rule] = r.States.K
				if rule == profile.ByValley {
					res = r
				}
			}
			runs++
			fmt.Fprintf(&table, "%7d %4d |", planted, seed)
			for _, c := range criteria {
				k := cohort.Choose(res.Grouping.Scores, c)
				if k == planted {
					hits[c]++
				}
				fmt.Fprintf(&table, " %d", k)
			}
			if ks[profile.ByValley] == len(synth.StateNames) {
				stateValley++
			}
			if ks[profile.ByCalinskiHarabasz] == len(synth.StateNames) {
				stateCH++
			}
			fmt.Fprintf(&table, " | %d %d\n", ks[profile.ByValley], ks[profile.ByCalinskiHarabasz])
		}
	}
	t.Logf("numbers chosen on %d planted cohorts:\n%s", runs, table.String())
	t.Logf("groups recovered: gap-steady %d, gap-stable %d, gap %d, stability %d, silhouette %d of %d; states recovered: valley %d, Calinski–Harabasz %d",
		hits[cohort.ByGapSteady], hits[cohort.ByGapStable], hits[cohort.ByGap], hits[cohort.ByStability], hits[cohort.BySilhouette], runs, stateValley, stateCH)
	// The rule for the number of groups is chosen on the scenario family (TestRecoveryBenchmark,
	// 280 scenarios of many kinds), not on these twelve cohorts of one scenario. Here the default
	// must come within one cohort of the best rule: when this was written gap-stable found 9 and
	// the gap statistic 10, the one cohort between them (4 planted, seed 1) grouping more stably
	// in three groups than in the four planted, by more than 0.1.
	def := job.Defaults().Criterion
	for _, c := range criteria {
		if hits[c] > hits[def]+1 {
			t.Errorf("%v recovers %d planted group counts, the default %v %d: look again at the default", c, hits[c], def, hits[def])
		}
	}
	// The rule for the states is chosen on the scenario family (TestRecoveryBenchmark): there
	// Calinski–Harabasz picks two states where four to eight are planted. On this scenario it
	// recovers the five states more often than the valley rule (12 and 7 of 12 when this was
	// written), which the log above shows; it is not asserted.
	// Groups: the planted number in three cohorts of four. States: the planted five in at least
	// half (7 of 12 when this was written: the valley rule keeps a sixth or seventh state in most
	// cohorts with four planted groups, of 90 participants × 600 windows).
	if hits[def] < runs*3/4 || stateValley < runs/2 {
		t.Errorf("the default rules recover too little: groups %d (%v), states %d of %d", hits[def], def, stateValley, runs)
	}
}
