package main

import (
	"context"
	"fmt"
	"path/filepath"
	"strings"
	"testing"

	"github.com/cohortmix/cohortmix/cohort/job"

	"github.com/cohortmix/cohortmix/cluster"
	"github.com/cohortmix/cohortmix/cohort/synth"
)

// The defaults on planted cohorts of the demo's scenario (synth: five states, 2, 3 or 4
// planted groups, 90 participants × 600 windows) and on null cohorts of the null family (one
// group, 90 × 600): how often the number of planted groups is found, and whether a cohort
// without groups is called one group. Planted structure; the bounds leave room for the
// scenario's noise and were set below what the defaults reached when this was written (see the
// logged table).
func TestChoiceRulesOnPlantedCohorts(t *testing.T) {
	t.Parallel()
	if testing.Short() {
		t.Skip("planted-cohort study takes about a minute")
	}
	var table strings.Builder
	hits, runs, nulls, nullRuns := 0, 0, 0, 0
	fmt.Fprintf(&table, "planted seed | states groups ARI\n")
	for _, planted := range []int{1, 2, 3, 4} {
		for seed := uint64(1); seed <= 4; seed++ {
			path := filepath.Join(t.TempDir(), "c.csv")
			so := synth.Options{Participants: 90, Windows: 600, Groups: planted, Seed: 100*uint64(planted) + seed, Labels: true}
			if planted == 1 {
				so = synth.Options{Scenario: seed, Family: synth.Null, Seed: seed, Participants: 90, Windows: 600, Labels: true}
			}
			truth, err := synth.WriteFile(path, so)
			if err != nil {
				t.Fatal(err)
			}
			o := variantOptions(t, path, nil, 0, 0)
			if sc, _ := synth.DrawFamily(synth.Null, seed); planted == 1 && sc.Count != nil && sc.Count.Days < 4 {
				o.Read.ValidDays = 1 // the invented study's protocol: recordings of 1 to 3 days
			}
			f, err := job.FitAll(context.Background(), o)
			if err != nil {
				t.Fatal(err)
			}
			want := map[string]int{}
			for _, tr := range truth {
				want[tr.ID] = tr.Group
			}
			var a, b []int
			for i, u := range f.Table.Units {
				a, b = append(a, want[u.ID]), append(b, f.Grouping.Labels[i])
			}
			ari, _ := cluster.AdjustedRand(a, b)
			if planted == 1 {
				nullRuns++
				if f.Grouping.K == 1 {
					nulls++
				}
			} else {
				runs++
				if f.Grouping.K == planted {
					hits++
				}
			}
			fmt.Fprintf(&table, "%7d %4d | %d %d %.2f\n", planted, seed, f.States.K, f.Grouping.K, ari)
		}
	}
	t.Logf("the defaults on planted cohorts:\n%s", table.String())
	t.Logf("planted numbers of groups found in %d of %d cohorts; one group found in %d of %d null cohorts", hits, runs, nulls, nullRuns)
	if hits < 8 || nulls < 3 {
		t.Errorf("planted numbers found in %d of %d cohorts (want at least 8), one group in %d of %d null cohorts (want at least 3)", hits, runs, nulls, nullRuns)
	}
}
