package job

import (
	"context"
	"flag"
	"fmt"
	"path/filepath"
	"testing"

	"github.com/cohortmix/cohortmix/cohort/synth"
)

var wearSeeds = flag.String("wear.seeds", "", "seeds of the wear scenario to measure the defaults and --keep-twins on, as first-last (101-108 in docs/benchmarks.md); empty skips")

// TestWearScenarioSeeds measures the grouping on members of the planted wear scenario with the
// defaults and with the log twin kept, the ARI against the planted groups and against the
// devices' resting floors (docs/benchmarks.md):
//
//	go test ./cohort/job -run TestWearScenarioSeeds -wear.seeds 101-108 -v
func TestWearScenarioSeeds(t *testing.T) {
	t.Parallel()
	var first, last uint64
	if n, _ := fmt.Sscanf(*wearSeeds, "%d-%d", &first, &last); n != 2 {
		t.Skip("give -wear.seeds first-last")
	}
	for seed := first; seed <= last; seed++ {
		path := filepath.Join(t.TempDir(), "wear.csv")
		truth, err := synth.WriteWear(path, synth.WearOptions{Participants: 60, Seed: seed, DayOff: 1.0 / 3})
		if err != nil {
			t.Fatal(err)
		}
		for _, keep := range []bool{false, true} {
			o := Defaults(path)
			o.Read.TimeZone, o.NoSensitivity, o.KeepTwins = "Europe/Berlin", true, keep
			res, err := Analyze(context.Background(), o)
			if err != nil {
				t.Fatal(err)
			}
			ari, byFloor, _ := wearAgreement(truth, res)
			t.Logf("seed %d, twins kept %v: %d groups over %d states, ARI %.3f, against the floors %.3f", seed, keep, res.Grouping.K, res.States.K, ari, byFloor)
		}
	}
}
