package profile

import (
	"fmt"
	"time"
)

// TimeOfDay is when in the day and week one participant's windows fall, per state: the
// windows in each state by hour of the wall clock, and those on Saturdays and Sundays.
type TimeOfDay struct {
	ByHour  []int // 24·k: windows in state j in hour h at ByHour[h·k+j]
	Weekend []int // k: windows in each state on a Saturday or a Sunday
}

// TimeOfDayOf counts a participant's windows by hour and weekday. wall are the windows' start
// times on the wall clock held as UTC Unix ns (times without an offset as read; times with one
// moved by clock.Clock.Wall), labels their states among k.
func TimeOfDayOf(wall []int64, labels []int, k int) TimeOfDay {
	td := TimeOfDay{ByHour: make([]int, 24*k), Weekend: make([]int, k)}
	for i, t := range wall {
		h := floorDiv(t, int64(time.Hour))
		hour := int(h - floorDiv(h, 24)*24)
		td.ByHour[hour*k+labels[i]]++
		// 1970-01-01 was a Thursday: day 0 is weekday 4 (Sunday 0).
		if wd := (floorDiv(h, 24)%7 + 7 + 4) % 7; wd == 0 || wd == 6 {
			td.Weekend[labels[i]]++
		}
	}
	return td
}

// DayParts are the hours at which the parts of the day begin, in order through the day from
// the first; the last part runs on past midnight to the first (with 22 first, night is
// 22:00–06:00 when morning begins at 6).
type DayParts []int

// DefaultDayParts are night 00–06, morning 06–12, afternoon 12–18 and evening 18–24.
var DefaultDayParts = DayParts{0, 6, 12, 18}

// DayPartNames names the parts of DefaultDayParts and of any other four parts.
var DayPartNames = []string{"night", "morning", "afternoon", "evening"}

// Check tells whether the parts are 2 to 6 hours of the day, 0–23, rising (one wrap past
// midnight allowed at the start: the first may be later than the rest only if it is the
// night's start, as 22,6,12,18).
func (p DayParts) Check() error {
	if len(p) < 2 || len(p) > 6 {
		return fmt.Errorf("profile: %d parts of the day: %w; give 2 to 6 starting hours", len(p), ErrOption)
	}
	for i, h := range p {
		if h < 0 || h > 23 {
			return fmt.Errorf("profile: a part of the day starting at hour %d: %w; give hours 0–23", h, ErrOption)
		}
		if i >= 2 && h <= p[i-1] || i == 1 && h == p[0] {
			return fmt.Errorf("profile: parts of the day starting at %v: %w; give the hours in order through the day", []int(p), ErrOption)
		}
	}
	if p[0] > p[1] && p[0] <= p[len(p)-1] {
		return fmt.Errorf("profile: parts of the day starting at %v: %w; only the first may start before midnight, after the last", []int(p), ErrOption)
	}
	return nil
}

// Part is the part of the day that holds hour h: the one that began last at or before h, or,
// for the hours before every start, the one that began latest the evening before.
func (p DayParts) Part(h int) int {
	best, latest := -1, 0
	for i, start := range p {
		if start <= h && (best < 0 || start > p[best]) {
			best = i
		}
		if start > p[latest] {
			latest = i
		}
	}
	if best < 0 {
		return latest
	}
	return best
}

// Name is the name of part i: DayPartNames' with four parts, else "hours a–b".
func (p DayParts) Name(i int) string {
	if len(p) == len(DayPartNames) {
		return DayPartNames[i]
	}
	return fmt.Sprintf("hours %02d–%02d", p[i], p[(i+1)%len(p)])
}

// ByPart is the participant's windows in each state by part of the day: parts·k counts, state
// j of part i at i·k+j.
func (td TimeOfDay) ByPart(p DayParts) []float64 {
	k := len(td.Weekend)
	out := make([]float64, len(p)*k)
	for h := 0; h < 24; h++ {
		i := p.Part(h)
		for j := 0; j < k; j++ {
			out[i*k+j] += float64(td.ByHour[h*k+j])
		}
	}
	return out
}
