package job

import (
	"context"
	"encoding/csv"
	"os"
	"path/filepath"
	"strconv"
	"testing"
	"time"

	"github.com/cohortmix/cohortmix/cluster"
	"github.com/cohortmix/cohortmix/cohort"
	"github.com/cohortmix/cohortmix/cohort/synth"
)

// Issue 30, point 8: on the planted wear scenario (synth.WriteWear: a week of activity counts
// with nights, hours and days off the wrist, devices resting above 0, gaps and the end of
// daylight saving time), Choi's algorithm finds the non-wear (sensitivity and specificity ≥ 0.95
// against the planted minutes of periods of 90 minutes or more, the algorithm's shortest), the
// log of the counts beside the counts is left out as their twin, the groups are recovered whether or not a third of the
// participants have a day off the wrist (ARI ≥ 0.9), they do not follow the devices' resting
// floors, and every window is accounted for.
func TestGroupsOnPlantedWear(t *testing.T) {
	t.Parallel()
	if testing.Short() {
		t.Skip("whole runs on a week of minutes")
	}
	for _, tc := range []struct {
		name   string
		dayOff float64
	}{{"no day off", 0}, {"a third with a day off", 1.0 / 3}} {
		t.Run(tc.name, func(t *testing.T) {
			path := filepath.Join(t.TempDir(), "wear.csv")
			truth, err := synth.WriteWear(path, synth.WearOptions{Participants: 60, Seed: 11, DayOff: tc.dayOff})
			if err != nil {
				t.Fatal(err)
			}
			// Sensitivity over the planted periods the algorithm is meant to find (90 minutes or
			// more, its stated shortest), and over all of them for the record.
			var tp, fn, tn, fp, shortTP, shortFN int
			times, counts := readWear(t, path)
			for _, tr := range truth {
				marks, err := cohort.NonWearOf(cohort.NonWearChoi, times[tr.ID], counts[tr.ID])
				if err != nil {
					t.Fatal(err)
				}
				long := longRuns(tr.NonWear, 90)
				for i, m := range marks {
					switch off := tr.NonWear[i]; {
					case off && !long[i] && m:
						shortTP++
					case off && !long[i]:
						shortFN++
					case off && m:
						tp++
					case off:
						fn++
					case m:
						fp++
					default:
						tn++
					}
				}
			}
			sens, spec := float64(tp)/float64(tp+fn), float64(tn)/float64(tn+fp)
			t.Logf("non-wear of under 90 minutes: %d of %d minutes found; over all planted minutes, sensitivity %.4f",
				shortTP, shortTP+shortFN, float64(tp+shortTP)/float64(tp+fn+shortTP+shortFN))
			o := Defaults(path)
			o.Read.TimeZone, o.NoSensitivity = "Europe/Berlin", true
			res, err := Analyze(context.Background(), o)
			if err != nil {
				t.Fatal(err)
			}
			ari, byFloor, got := wearAgreement(truth, res)
			q := res.Quality
			t.Logf("non-wear: sensitivity %.4f, specificity %.4f; %d of %d grouped in %d groups over %d states; ARI %.3f, against the floors %.3f; %d windows left out as non-wear, %d on days that were not valid",
				sens, spec, len(got), len(truth), res.Grouping.K, res.States.K, ari, byFloor, q.WindowsNonWear, q.WindowsInvalidDays)
			if sens < 0.95 || spec < 0.95 {
				t.Errorf("non-wear sensitivity %.3f, specificity %.3f; want both ≥ 0.95", sens, spec)
			}
			if ari < 0.9 || byFloor > 0.1 {
				t.Errorf("ARI %.3f (want ≥ 0.9), against the resting floors %.3f (want near 0)", ari, byFloor)
			}
			used := 0
			for _, u := range res.Units {
				used += u.Windows
			}
			if q.WindowsUsed() != used || len(res.Units)+len(q.Excluded) != q.UnitsIn || q.ValidDayRule == nil {
				t.Errorf("accounting: %d used by the counts, %d in the units; %d + %d units of %d; rule %+v", q.WindowsUsed(), used, len(res.Units), len(q.Excluded), q.UnitsIn, q.ValidDayRule)
			}
			if n := q.DroppedFeatures; len(n) != 1 || n[0].Name != "log_counts" {
				t.Errorf("dropped features %v, want log_counts as the twin of counts", n)
			}
			if res.TimeOfDay == nil || res.TimeZone != "Europe/Berlin" {
				t.Errorf("no time of day (%v) or zone %q", res.TimeOfDay == nil, res.TimeZone)
			}
		})
	}
}

// wearAgreement is the ARI of the groups found against the planted ones and against the
// devices' resting floors, over the participants grouped, and those participants' groups.
func wearAgreement(truth []synth.WearTruth, res *Result) (float64, float64, []int) {
	group := map[string]int{}
	for _, u := range res.Units {
		group[u.ID] = u.Group
	}
	var got, want, floor []int
	for _, tr := range truth {
		if g, ok := group[tr.ID]; ok {
			got, want = append(got, g), append(want, tr.Group)
			f := 0
			if tr.Floor {
				f = 1
			}
			floor = append(floor, f)
		}
	}
	ari, _ := cluster.AdjustedRand(got, want)
	byFloor, _ := cluster.AdjustedRand(got, floor)
	return ari, byFloor, got
}

// longRuns marks the windows of runs of set values at least n long.
func longRuns(set []bool, n int) []bool {
	out := make([]bool, len(set))
	for i := 0; i < len(set); {
		j := i
		for j < len(set) && set[j] {
			j++
		}
		if j-i >= n {
			for k := i; k < j; k++ {
				out[k] = true
			}
		}
		i = max(j, i+1)
	}
	return out
}

// readWear reads the wear cohort's times and counts by participant.
func readWear(t *testing.T, path string) (map[string][]int64, map[string][]float64) {
	t.Helper()
	f, err := os.Open(path)
	if err != nil {
		t.Fatal(err)
	}
	defer f.Close()
	rows, err := csv.NewReader(f).ReadAll()
	if err != nil {
		t.Fatal(err)
	}
	times, counts := map[string][]int64{}, map[string][]float64{}
	for _, r := range rows[1:] {
		at, err := time.Parse(time.RFC3339, r[1])
		if err != nil {
			t.Fatal(err)
		}
		c, err := strconv.ParseFloat(r[2], 64)
		if err != nil {
			t.Fatal(err)
		}
		times[r[0]] = append(times[r[0]], at.UnixNano())
		counts[r[0]] = append(counts[r[0]], c)
	}
	return times, counts
}
