// Package clock reads the wall-clock day, hour and weekday of the windows' start times, for the
// valid-day rule, the time-of-day signatures and the rest–activity measures.
//
// Times are held as Unix nanoseconds. A time read without a UTC offset is held as if it were UTC,
// so its wall clock is read back in UTC unchanged; a time read with an offset is an instant, and
// its wall clock is read in the study's time zone (an IANA name such as Europe/Berlin), or in UTC
// when none is given. Read in a time zone, a day on which daylight saving time begins or ends
// keeps its true length: 23 or 25 hours of windows fall on it.
package clock

import (
	"fmt"
	"time"
	_ "time/tzdata" // the zone database inside the binary, so that a zone name works on any machine
)

// Stamp is where one instant falls on the wall clock.
type Stamp struct {
	Day     int64        // the date, as days since 1970-01-01
	Hour    int          // hour of the day, 0–23
	Weekday time.Weekday // day of the week
}

// Weekend tells whether the stamp falls on a Saturday or a Sunday.
func (s Stamp) Weekend() bool { return s.Weekday == time.Saturday || s.Weekday == time.Sunday }

// Date is the stamp's date as ISO-8601 (2026-03-01).
func (s Stamp) Date() string {
	return time.Unix(s.Day*86400, 0).UTC().Format("2006-01-02")
}

// Clock reads stamps in one time zone; its zero value reads them in UTC. A Clock remembers the
// hour it read last, so reading the times of a recording in order costs one zone lookup an hour;
// it is not safe for use by several goroutines at once (give each its own copy).
type Clock struct {
	loc        *time.Location
	from, to   int64 // the instants [from, to) of the hour last read
	last       Stamp
	offset     int64 // the zone's offset from UTC in that hour, in ns
	haveCached bool
}

// In is a clock in the named zone: "" or "UTC" for UTC, else an IANA name (Europe/Berlin).
func In(zone string) (Clock, error) {
	if zone == "" || zone == "UTC" {
		return Clock{}, nil
	}
	loc, err := time.LoadLocation(zone)
	if err != nil {
		return Clock{}, fmt.Errorf("time zone %q is not known; give an IANA name such as Europe/Berlin or America/New_York, or UTC", zone)
	}
	return Clock{loc: loc}, nil
}

// Zone is the clock's zone name ("UTC" for UTC).
func (c *Clock) Zone() string {
	if c.loc == nil {
		return "UTC"
	}
	return c.loc.String()
}

// At is the stamp of the instant t (Unix ns).
func (c *Clock) At(t int64) Stamp {
	if c.haveCached && t >= c.from && t < c.to {
		return c.last
	}
	tt := time.Unix(0, t).UTC()
	if c.loc != nil {
		tt = tt.In(c.loc)
	}
	y, m, d := tt.Date()
	// The hour runs from the instant its wall clock read hh:00:00 to an hour later: zones change
	// their offset on a wall-clock hour, so no change falls inside it.
	within := int64(tt.Minute())*int64(time.Minute) + int64(tt.Second())*int64(time.Second) + int64(tt.Nanosecond())
	c.from = t - within
	c.to = c.from + int64(time.Hour)
	c.last = Stamp{Day: time.Date(y, m, d, 0, 0, 0, 0, time.UTC).Unix() / 86400, Hour: tt.Hour(), Weekday: tt.Weekday()}
	_, off := tt.Zone()
	c.offset = int64(off) * int64(time.Second)
	c.haveCached = true
	return c.last
}

// Wall is the instant t (Unix ns) moved by the zone's offset, so that read in UTC it shows the
// wall clock: how times without an offset are held. Where daylight saving time ends, the
// repeated hour's two instants each map onto the same wall-clock hour.
func (c *Clock) Wall(t int64) int64 {
	c.At(t)
	return t + c.offset
}
