package cohort

import (
	"context"
	"errors"
	"fmt"
	"slices"
	"strings"
	"testing"
	"time"

	"github.com/cohortmix/cohortmix/cohort/note"
)

// wearDay is one day of a planted recording: hours of wear, then the device off (zero counts)
// for the rest of the day.
type wearDay struct{ worn int }

// wearCohort writes one-minute windows of activity counts for participants, each a list of days
// from 2026-10-19 (a Monday) in Europe/Berlin, with times carrying their UTC offset, so the
// week holds the end of daylight saving time (Sunday 25 October: 25 hours).
func wearCohort(t *testing.T, people map[string][]int) string {
	t.Helper()
	loc, err := time.LoadLocation("Europe/Berlin")
	if err != nil {
		t.Fatal(err)
	}
	var b strings.Builder
	b.WriteString("participant,window,counts\n")
	for _, id := range []string{"A", "B", "C", "D"} {
		days, ok := people[id]
		if !ok {
			continue
		}
		for d, worn := range days {
			start := time.Date(2026, 10, 19+d, 0, 0, 0, 0, loc)
			end := time.Date(2026, 10, 20+d, 0, 0, 0, 0, loc)
			m := 0
			for at := start; at.Before(end); at = at.Add(time.Minute) {
				c := 0
				if m >= 7*60 && m < (7+worn)*60 { // worn from 07:00 for worn hours
					c = 50 + (m*37)%400
				}
				fmt.Fprintf(&b, "%s,%s,%d\n", id, at.Format(time.RFC3339), c)
				m++
			}
		}
	}
	return write(t, t.TempDir(), "wear.csv", []byte(b.String()))
}

// The valid-day rule (common practice: a day counts with 10 hours of wear, a participant with 4
// such days): days of too little wear are left out and counted, participants short of valid
// days are excluded with the reason, the accounting adds up, and days are read on the study's
// wall clock, so the day daylight saving time ends has 25 hours.
func TestValidDays(t *testing.T) {
	t.Parallel()
	p := wearCohort(t, map[string][]int{
		"A": {12, 12, 12, 12, 12, 12, 12}, // 7 valid days, Saturday and Sunday among them
		"B": {12, 12, 12, 6, 6, 6, 6},     // 3 valid days
		"C": {12, 12, 12, 12, 12, 2, 2},   // 5 valid weekdays, no valid weekend day
		"D": {12, 12, 12, 12, 11, 12, 9},  // 6 valid, one short day (Sunday, 9 h)
	})
	for _, tc := range []struct {
		name     string
		opts     ReadOptions
		kept     []string
		excluded map[string]note.Note // id: the reason's kind and counts
	}{
		{"four valid days", ReadOptions{NonWear: NonWearChoi, ValidDay: DefaultValidDay, TimeZone: "Europe/Berlin"},
			[]string{"A", "C", "D"}, map[string]note.Note{"B": {Kind: ExcludedFewValidDays, Ints: []int{3, 4}, Floats: []float64{10}}}},
		{"a weekend day too", ReadOptions{NonWear: NonWearChoi, ValidDay: DefaultValidDay, WeekendDay: true, TimeZone: "Europe/Berlin"},
			[]string{"A", "D"}, map[string]note.Note{"B": {Kind: ExcludedFewValidDays, Ints: []int{3, 4}, Floats: []float64{10}}, "C": {Kind: ExcludedNoWeekendDay, Ints: []int{5}}}},
		{"a 24-hour protocol", ReadOptions{NonWear: NonWearChoi, ValidDay: 16 * time.Hour, ValidDays: 1, TimeZone: "Europe/Berlin"},
			nil, nil}, // nobody wears it 16 h: refused with advice
		{"auto without a non-wear rule", ReadOptions{ValidDay: DefaultValidDay, ValidDayAuto: true},
			[]string{"A", "B", "C", "D"}, nil},
	} {
		t.Run(tc.name, func(t *testing.T) {
			tab, err := Read(context.Background(), []string{p}, tc.opts)
			if tc.kept == nil {
				if !errors.Is(err, ErrTooFew) || !strings.Contains(err.Error(), "the most any has is 0") {
					t.Fatalf("want a refusal naming the valid days, got %v", err)
				}
				return
			}
			if err != nil {
				t.Fatal(err)
			}
			defer tab.Close()
			var kept []string
			used := 0
			for _, u := range tab.Units {
				kept = append(kept, u.ID)
				used += u.Windows()
			}
			if strings.Join(kept, ",") != strings.Join(tc.kept, ",") {
				t.Errorf("kept %v, want %v", kept, tc.kept)
			}
			for _, e := range tab.Quality.Excluded {
				if want, got := tc.excluded[e.ID], e.Reason; got.Kind != want.Kind || !slices.Equal(got.Ints, want.Ints) || !slices.Equal(got.Floats, want.Floats) {
					t.Errorf("%s excluded: %+v, want %+v", e.ID, got, want)
				}
			}
			q := tab.Quality
			if q.WindowsUsed() != used {
				t.Errorf("accounting: %d windows used by the counts, %d in the units", q.WindowsUsed(), used)
			}
			if tc.opts.ValidDayAuto {
				if q.ValidDayRule != nil || q.WindowsInvalidDays != 0 {
					t.Errorf("auto applied the rule without a non-wear rule: %+v", q.ValidDayRule)
				}
				return
			}
			d := tab.Units[len(tab.Units)-1].Wear // D
			// D wears from 07:00, so its days of 12, 11 and 9 hours are read whole; the 25-hour
			// Sunday is its worst day.
			if d.Days != 7 || d.ValidDays != 6 || d.Worst != "2026-10-25" || d.WorstHours != 9 || d.LeftOut != 9*60 || !d.WeekendOK {
				t.Errorf("D's wear %+v", d)
			}
			if !slices.ContainsFunc(q.Notes, func(n note.Note) bool {
				return n.Kind == NoteValidDays && len(n.Floats) == 1 && n.Floats[0] == 10 && n.Ints[1] == DefaultValidDays
			}) {
				t.Errorf("notes %v", q.Notes)
			}
		})
	}
}

// Read in UTC, the same instants fall on other days: Berlin's midnight is 22:00 or 23:00 UTC, so
// each day's first hour of recording belongs to the day before; a zone that is not known is
// refused.
func TestValidDaysInUTC(t *testing.T) {
	t.Parallel()
	p := wearCohort(t, map[string][]int{"A": {12, 12, 12, 12, 12, 12, 12}})
	tab, err := Read(context.Background(), []string{p}, ReadOptions{NonWear: NonWearChoi, ValidDay: DefaultValidDay})
	if err != nil {
		t.Fatal(err)
	}
	defer tab.Close()
	if w := tab.Units[0].Wear; w.Days != 8 || w.ValidDays != 7 || w.WorstHours != 0 { // 2026-10-18 22:00 UTC starts it, without wear
		t.Errorf("in UTC: %+v", w)
	}
	if _, err := Read(context.Background(), []string{p}, ReadOptions{TimeZone: "Berlin"}); !errors.Is(err, ErrBadOption) || !strings.Contains(err.Error(), "IANA name") {
		t.Errorf("an unknown zone: %v", err)
	}
}

// A wear column (the device's own wear flags) takes the rule's place: its 0 windows are left
// out as non-wear, it is no feature, it works in a shard too, and a value other than 0 or 1 is
// an error naming the line.
func TestWearColumn(t *testing.T) {
	t.Parallel()
	dir := t.TempDir()
	var b strings.Builder
	b.WriteString("participant,window,vm,sd,worn\n")
	for _, id := range []string{"A", "B"} {
		for i := 0; i < 100; i++ {
			worn := 1
			if id == "A" && i >= 40 && i < 70 {
				worn = 0
			}
			fmt.Fprintf(&b, "%s,%d,%d.5,%d,%d\n", id, i, i%7, i%3, worn)
		}
	}
	p := write(t, dir, "w.csv", []byte(b.String()))
	for _, shard := range []Shard{{}, {Index: ShardOf("A", 2), Count: 2}} {
		tab, err := Read(context.Background(), []string{p}, ReadOptions{WearColumn: "worn", Shard: shard})
		if err != nil {
			t.Fatal(err)
		}
		if tab.Units[0].ID != "A" || tab.Units[0].NonWear != 30 || tab.Units[0].Windows() != 70 || strings.Join(tab.Features, ",") != "vm,sd" || tab.Quality.NonWearRule != NonWearColumn {
			t.Errorf("shard %v: %s %d non-wear, %d windows, features %v", shard, tab.Units[0].ID, tab.Units[0].NonWear, tab.Units[0].Windows(), tab.Features)
		}
		if shard.Count > 0 && len(tab.Constancy.Constant) != 2 {
			t.Errorf("the shard's constancy covers %d features", len(tab.Constancy.Constant))
		}
		x, err := tab.Block(0, nil)
		if err != nil || x[2*40] != 0.5 || x[2*40+1] != 1 { // window 70 of A: vm 70%7+.5, sd 70%3
			t.Errorf("A's 41st kept window %v (%v)", x[2*40:2*40+2], err)
		}
		tab.Close()
	}
	bad := write(t, dir, "bad.csv", []byte("participant,window,vm,worn\nA,1,0.5,1\nA,2,0.7,2\n"))
	if _, err := Read(context.Background(), []string{bad}, ReadOptions{WearColumn: "worn", MinWindows: 1}); !errors.Is(err, ErrNotNumber) || !strings.Contains(err.Error(), ":3") || !strings.Contains(err.Error(), "holds 2") {
		t.Errorf("a wear value of 2: %v", err)
	}
	if _, err := Read(context.Background(), []string{bad}, ReadOptions{WearColumn: "on", MinWindows: 1}); !errors.Is(err, ErrNoColumn) {
		t.Errorf("a wear column that is not there: %v", err)
	}
}

// Times without an offset repeat an hour where daylight saving time ends; the duplicate is an
// error that says so and what to give instead.
func TestRepeatedHourIsExplained(t *testing.T) {
	t.Parallel()
	var b strings.Builder
	b.WriteString("participant,window,vm\n")
	t0 := time.Date(2026, 10, 25, 1, 0, 0, 0, time.UTC)
	for i := 0; i < 180; i++ {
		at := t0.Add(time.Duration(i) * time.Minute)
		if i >= 120 { // 03:00 on the wall clock became 02:00 again
			at = at.Add(-time.Hour)
		}
		fmt.Fprintf(&b, "A,%s,%d\n", at.Format("2006-01-02T15:04:05"), i%9)
	}
	p := write(t, t.TempDir(), "dst.csv", []byte(b.String()))
	_, err := Read(context.Background(), []string{p}, ReadOptions{})
	if !errors.Is(err, ErrDuplicate) || !strings.Contains(err.Error(), "daylight saving time ended") || !strings.Contains(err.Error(), "+01:00") {
		t.Errorf("a repeated hour: %v", err)
	}
}
