package profile

import (
	"encoding/csv"
	"encoding/json"
	"math"
	"os"
	"strconv"
	"testing"
)

// RhythmOf against numpy on the same series (testdata/rhythm/make_golden.py: the definitions of
// Van Someren et al. 1999 written again with numpy, on an invented five-day series with a gap
// and missing windows). Tolerance 1e-9 relative: numpy sums pairwise, Go in order.
func TestRhythmMatchesNumpy(t *testing.T) {
	t.Parallel()
	f, err := os.Open("../testdata/rhythm/series.csv")
	if err != nil {
		t.Fatal(err)
	}
	defer f.Close()
	rows, err := csv.NewReader(f).ReadAll()
	if err != nil {
		t.Fatal(err)
	}
	var times []int64
	var act []float64
	for _, r := range rows[1:] {
		ts, _ := strconv.ParseInt(r[0], 10, 64)
		v := math.NaN()
		if r[1] != "" {
			v, _ = strconv.ParseFloat(r[1], 64)
		}
		times, act = append(times, ts), append(act, v)
	}
	b, err := os.ReadFile("../testdata/rhythm/golden.json")
	if err != nil {
		t.Fatal(err)
	}
	var want Rhythm
	if err := json.Unmarshal(b, &want); err != nil {
		t.Fatal(err)
	}
	got := RhythmOf(times, act)
	for _, c := range []struct {
		name      string
		got, want float64
	}{{"IS", got.IS, want.IS}, {"IV", got.IV, want.IV}, {"L5", got.L5, want.L5}, {"M10", got.M10, want.M10}, {"RA", got.RA, want.RA}} {
		if math.Abs(c.got-c.want) > 1e-9*math.Abs(c.want) {
			t.Errorf("%s = %.15g, numpy %.15g", c.name, c.got, c.want)
		}
	}
	if got.L5Onset != want.L5Onset || got.M10Onset != want.M10Onset || got.Hours != want.Hours {
		t.Errorf("onsets %d, %d over %d hours; numpy %d, %d over %d", got.L5Onset, got.M10Onset, got.Hours, want.L5Onset, want.M10Onset, want.Hours)
	}
	// Too short a recording: no measures.
	if r := RhythmOf(times[:600], act[:600]); !math.IsNaN(r.IS) || r.L5Onset != -1 {
		t.Errorf("ten hours gave %+v", r)
	}
}
