package cohort

import (
	"fmt"
	"time"

	"github.com/cohortmix/cohortmix/cohort/clock"
	"github.com/cohortmix/cohortmix/cohort/note"
)

// The valid-day rule of a wear-time protocol (common practice in accelerometry since the
// national surveys of the 2000s; the values are the usual ones, from memory): a day counts when
// the device was worn for at least 10 hours of it (16 hours in protocols that ask for the device
// day and night), and a participant counts when they have at least 4 such days, in some studies
// one of them a Saturday or a Sunday.
const (
	DefaultValidDay  = 10 * time.Hour
	DefaultValidDays = 4
)

// Wear is one participant's wear time by day, under the valid-day rule (all zero when the rule
// was not applied).
type Wear struct {
	Days       int     // calendar days with a window
	ValidDays  int     // of them, days with enough wear
	WeekendOK  bool    // one valid day is a Saturday or a Sunday
	MeanHours  float64 // mean hours of wear on the valid days
	Worst      string  // the day with the least wear (ISO-8601 date)
	WorstHours float64 // its hours of wear
	LeftOut    int     // windows on days that were not valid, left out
}

// wearRule is the valid-day rule as a reading applies it.
type wearRule struct {
	day     time.Duration // wear that makes a day valid
	days    int           // valid days a participant needs
	weekend bool          // one of them a Saturday or Sunday
	clock   clock.Clock
	naive   bool // times without a UTC offset, read as written
}

// wearRule is the valid-day rule for a table read with this non-wear rule and order (nil where
// none applies); it checks the time zone whatever the rule.
func (o ReadOptions) wearRule(nonWear, orderKind string, naive bool) (*wearRule, error) {
	c, err := clock.In(o.TimeZone)
	if err != nil {
		return nil, fmt.Errorf("cohort: %v: %w", err, ErrBadOption)
	}
	if o.ValidDay <= 0 || orderKind != "time" || (o.ValidDayAuto && nonWear == "") {
		return nil, nil
	}
	days := o.ValidDays
	if days <= 0 {
		days = DefaultValidDays
	}
	return &wearRule{day: o.ValidDay, days: days, weekend: o.WeekendDay, clock: c, naive: naive}, nil
}

// wearDays applies the rule to one participant's windows: times are their start times (Unix ns,
// increasing), nonWear marks the windows left out as non-wear (nil: none) and step is the time a
// window stands for. It returns the windows that fall on days that are not valid, the
// participant's wear by day, and why the participant falls short (no note when it does not).
func (w *wearRule) wearDays(times []int64, nonWear []bool, step time.Duration) ([]bool, Wear, note.Note) {
	type day struct {
		key     int64
		date    string
		weekend bool
		wear    time.Duration
	}
	var days []day
	dayOf := make([]int32, len(times))
	for i, t := range times {
		s := w.clock.At(t)
		if len(days) == 0 || days[len(days)-1].key != s.Day {
			days = append(days, day{key: s.Day, date: s.Date(), weekend: s.Weekend()})
		}
		dayOf[i] = int32(len(days) - 1)
		if nonWear == nil || !nonWear[i] {
			days[len(days)-1].wear += step
		}
	}
	var out Wear
	out.Days = len(days)
	var sum time.Duration
	for i, d := range days {
		if d.wear >= w.day {
			out.ValidDays++
			out.WeekendOK = out.WeekendOK || d.weekend
			sum += d.wear
		}
		if i == 0 || d.wear.Hours() < out.WorstHours {
			out.Worst, out.WorstHours = d.date, d.wear.Hours()
		}
	}
	if out.ValidDays > 0 {
		out.MeanHours = sum.Hours() / float64(out.ValidDays)
	}
	invalid := make([]bool, len(times))
	for i := range times {
		if days[dayOf[i]].wear < w.day && (nonWear == nil || !nonWear[i]) {
			invalid[i] = true
			out.LeftOut++
		}
	}
	switch {
	case out.ValidDays < w.days:
		return invalid, out, note.Note{Kind: ExcludedFewValidDays, Ints: []int{out.ValidDays, w.days}, Floats: []float64{w.day.Hours()}, Option: "cohort.ReadOptions.ValidDays"}
	case w.weekend && !out.WeekendOK:
		return invalid, out, note.Note{Kind: ExcludedNoWeekendDay, Ints: []int{out.ValidDays}, Option: "cohort.ReadOptions.WeekendDay"}
	}
	return invalid, out, note.Note{}
}

// hoursText is a duration in hours, as "10 h".
func hoursText(d time.Duration) string {
	return fmt.Sprintf("%g h", d.Hours())
}

// rule is the rule as data, for the reading's quality and notes.
func (w *wearRule) rule() *ValidDayRule {
	r := &ValidDayRule{Hours: w.day.Hours(), Days: w.days, Weekend: w.weekend, Naive: w.naive}
	if !w.naive {
		r.Zone = w.clock.Zone()
	}
	return r
}

// ValidDayRule is the valid-day rule a reading applied: a day counts with Hours or more of wear,
// and a participant with Days or more such days, one of them a Saturday or Sunday with Weekend;
// days are on the wall clock of Zone, or by the clock the times were written in (Naive).
type ValidDayRule struct {
	Hours   float64
	Days    int
	Weekend bool
	Naive   bool
	Zone    string
}

func boolInt(b bool) int {
	if b {
		return 1
	}
	return 0
}

// String is the rule in words, for errors.
func (w *wearRule) String() string {
	s := fmt.Sprintf("a day counts with %s or more of wear, and a participant with %d or more such days", hoursText(w.day), w.days)
	if w.weekend {
		s += ", one of them a Saturday or a Sunday"
	}
	if w.naive {
		return s + " (days by the clock the times were written in)"
	}
	return s + fmt.Sprintf(" (days on the wall clock of %s)", w.clock.Zone())
}
