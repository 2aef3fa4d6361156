package main

import (
	"context"
	"fmt"
	"path/filepath"
	"strings"
	"testing"

	"github.com/cohortmix/cohortmix/cohort"
	"github.com/cohortmix/cohortmix/cohort/synth"
	"github.com/cohortmix/cohortmix/normalize"
)

// The rules for the numbers of states and groups, tried on planted cohorts (synth: five states,
// 2, 3 or 4 planted groups). Each criterion is applied to the same scores, so the comparison is fair.
func TestChoiceRulesOnPlantedCohorts(t *testing.T) {
	if testing.Short() {
		t.Skip("planted-cohort study takes about a minute")
	}
	criteria := []cohort.Criterion{cohort.ByGap, cohort.ByStability, cohort.BySilhouette}
	hits := map[cohort.Criterion]int{}
	var stateCH, stateSil, runs int
	var table strings.Builder
	fmt.Fprintf(&table, "planted seed | gap stability silhouette | states: CH silhouette\n")
	for _, planted := range []int{2, 3, 4} {
		for seed := uint64(1); seed <= 4; seed++ {
			path := filepath.Join(t.TempDir(), "c.csv")
			if _, err := synth.WriteFile(path, synth.Options{Participants: 90, Windows: 600, Groups: planted, Seed: 100*uint64(planted) + seed}); err != nil {
				t.Fatal(err)
			}
			res, err := analyze(context.Background(), analysisOptions{Inputs: []string{path}, Norm: normalize.Options{Within: normalize.WithinRest},
				States: rangeOf(2, 10), Groups: rangeOf(2, 8), Criterion: cohort.ByGap, Bootstrap: 20, Seed: seed})
			if err != nil {
				t.Fatal(err)
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
			bestCH, bestSil := 0, 0
			for i, c := range res.States.Candidates {
				if c.CalinskiHarabasz > res.States.Candidates[bestCH].CalinskiHarabasz {
					bestCH = i
				}
				if c.Silhouette > res.States.Candidates[bestSil].Silhouette {
					bestSil = i
				}
			}
			kCH, kSil := res.States.Candidates[bestCH].K, res.States.Candidates[bestSil].K
			if kCH == len(synth.StateNames) {
				stateCH++
			}
			if kSil == len(synth.StateNames) {
				stateSil++
			}
			fmt.Fprintf(&table, " | %d %d\n", kCH, kSil)
		}
	}
	t.Logf("numbers chosen on %d planted cohorts:\n%s", runs, table.String())
	t.Logf("groups recovered: gap %d, stability %d, silhouette %d of %d; states recovered: Calinski–Harabasz %d, silhouette %d",
		hits[cohort.ByGap], hits[cohort.ByStability], hits[cohort.BySilhouette], runs, stateCH, stateSil)
	// The defaults must be the rules that recover the planted structure best.
	for _, c := range criteria[1:] {
		if hits[c] > hits[cohort.ByGap] {
			t.Errorf("%v recovers %d planted group counts, the default gap statistic %d: change the default", c, hits[c], hits[cohort.ByGap])
		}
	}
	if stateSil > stateCH {
		t.Errorf("silhouette recovers the states %d times, Calinski–Harabasz %d: change the default", stateSil, stateCH)
	}
	if hits[cohort.ByGap] < runs*3/4 || stateCH < runs*3/4 {
		t.Errorf("the default rules recover too little: groups %d, states %d of %d", hits[cohort.ByGap], stateCH, runs)
	}
}
