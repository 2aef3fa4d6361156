package reports

import (
	"math"
	"testing"

	"github.com/cohortmix/cohortmix/profile"
)

// The words a state gets from a feature of a known scale: at its median window with the share
// of its windows in that band, or at its mean where its windows were not counted by value.
func TestAnchorWords(t *testing.T) {
	t.Parallel()
	cases := []struct {
		name string
		rd   profile.StateReading
		want string
	}{
		{"counts by the median", profile.StateReading{Anchor: profile.AnchorCounts, AnchorValue: 54, AnchorMedian: true, AnchorShare: 0.58, Level: profile.LevelStill, Anchored: true},
			"count at a median of 54 counts a minute, 58% of its windows sedentary, by the cut-points of Troiano et al. 2008"},
		{"one count", profile.StateReading{Anchor: profile.AnchorCounts, AnchorValue: 1.2, AnchorMedian: true, AnchorShare: 0.99, Level: profile.LevelStill, Anchored: true},
			"count at a median of 1 count a minute, 99% of its windows sedentary, by the cut-points of Troiano et al. 2008"},
		{"ENMO below the moderate cut", profile.StateReading{Anchor: profile.AnchorENMO, AnchorValue: 35, AnchorMedian: true, AnchorShare: 0.9, Level: profile.LevelLight},
			"count at a median of 35 mg, 90% of its windows below the moderate cut-point, by the wrist cut-points of Hildebrand et al. 2014"},
		{"by the mean", profile.StateReading{Anchor: profile.AnchorCounts, AnchorValue: 423, AnchorShare: math.NaN(), Level: profile.LevelLight, Anchored: true},
			"count at 423 counts a minute, by the cut-points of Troiano et al. 2008"},
	}
	for _, c := range cases {
		if got := anchorWords(c.rd, "count"); got != c.want {
			t.Errorf("%s:\n got %q\nwant %q", c.name, got, c.want)
		}
	}
}
