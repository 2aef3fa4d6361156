package reports

import (
	"context"
	"path/filepath"
	"regexp"
	"strconv"
	"strings"
	"testing"

	"github.com/cohortmix/cohortmix/cohort/group"
	"github.com/cohortmix/cohortmix/cohort/job"
	"github.com/cohortmix/cohortmix/cohort/synth"
)

// A group's bout length is averaged over the members who enter the state, so no group line
// gives a bout shorter than one window (a mean over all members, with 0 for those who never
// enter a state, did: "0.53 windows"). Scenario 397 of the family has rarely entered states.
func TestGroupLinesGiveNoBoutShorterThanAWindow(t *testing.T) {
	t.Parallel()
	path := filepath.Join(t.TempDir(), "c.csv")
	if _, err := synth.WriteFile(path, synth.Options{Scenario: 397, Seed: 1, Participants: 80, Windows: 1000}); err != nil {
		t.Fatal(err)
	}
	o := job.Defaults(path)
	o.Bootstrap, o.NoSensitivity = 5, true
	res, err := job.Analyze(context.Background(), o)
	if err != nil {
		t.Fatal(err)
	}
	bout := regexp.MustCompile(`bouts of [^(]*\([^,]*, ([0-9.]+) windows against ([0-9.]+) windows\)`)
	seen, lines := 0, GroupLines(res)
	for _, line := range lines {
		for _, m := range bout.FindAllStringSubmatch(line, -1) {
			seen++
			for _, x := range m[1:] {
				if v, _ := strconv.ParseFloat(x, 64); v < 1 {
					t.Errorf("a bout of %s windows in %q", x, line)
				}
			}
		}
	}
	if seen == 0 {
		t.Fatalf("no group line speaks of bouts: %q", lines)
	}
}

// Issue 29: a difference whose numbers print alike ("<1% against <1%") is not told; one that
// prints apart is.
func TestGroupLinesTellOnlyPrintedDifferences(t *testing.T) {
	t.Parallel()
	unit := func(id string, group int, shares ...float64) job.UnitRow {
		return job.UnitRow{ID: id, Group: group, Share: shares, Bout: []float64{10, 10, 10}, Windows: 100}
	}
	// Group 1 has 0.4 % in S3 against 0.2 % on average (twice as much, both "<1%"), and 60 %
	// in S1 against 50 %.
	units := []job.UnitRow{unit("A", 0, 0.6, 0.396, 0.004), unit("B", 0, 0.6, 0.396, 0.004), unit("C", 1, 0.4, 0.6, 0), unit("D", 1, 0.4, 0.6, 0)}
	r := &job.Result{Units: units, GroupNames: []string{"G1", "G2"}, Grouping: &group.Grouping{K: 2}}
	lines := groupLines(r, []string{"S1", "S2", "S3"})
	if strings.Contains(lines[0], "S3") || !strings.Contains(lines[0], "more time in S1 (60% of their time against 50% on average)") {
		t.Errorf("group 1: %s", lines[0])
	}
}
