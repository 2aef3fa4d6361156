package clock

import (
	"testing"
	"time"
)

// TestDaylightSavingDaysKeepTheirLength counts the hours of windows that fall on each day of a
// recording in Europe/Berlin across both changes of 2026 (29 March, clocks forward at 02:00;
// 25 October, back at 03:00: EU rule, common knowledge), from instants one minute apart.
func TestDaylightSavingDaysKeepTheirLength(t *testing.T) {
	t.Parallel()
	c, err := In("Europe/Berlin")
	if err != nil {
		t.Fatal(err)
	}
	for _, tc := range []struct {
		day   string
		hours int
	}{{"2026-03-28", 24}, {"2026-03-29", 23}, {"2026-03-30", 24}, {"2026-10-25", 25}, {"2026-10-26", 24}} {
		loc, _ := time.LoadLocation("Europe/Berlin")
		d, _ := time.ParseInLocation("2006-01-02", tc.day, loc)
		start := d.Add(-6 * time.Hour).UnixNano()
		minutes := map[string]int{}
		hoursSeen := map[int]int{}
		for i := int64(0); i < 36*60; i++ {
			s := c.At(start + i*int64(time.Minute))
			minutes[s.Date()]++
			if s.Date() == tc.day {
				hoursSeen[s.Hour]++
			}
		}
		if got := minutes[tc.day]; got != tc.hours*60 {
			t.Errorf("%s: %d minutes, want %d", tc.day, got, tc.hours*60)
		}
		if tc.hours == 23 && hoursSeen[2] != 0 || tc.hours == 25 && hoursSeen[2] != 120 {
			t.Errorf("%s: hour 2 held %d minutes", tc.day, hoursSeen[2])
		}
	}
}

// TestStampsOfUTC checks the zero clock against the time package, with a weekday of the
// calendar (2026-12-05 is a Saturday).
func TestStampsOfUTC(t *testing.T) {
	t.Parallel()
	var c Clock
	at := time.Date(2026, 12, 5, 13, 59, 59, 0, time.UTC)
	s := c.At(at.UnixNano())
	if s.Date() != "2026-12-05" || s.Hour != 13 || !s.Weekend() || s.Weekday != time.Saturday {
		t.Fatalf("%+v %s", s, s.Date())
	}
	if s2 := c.At(at.Add(time.Second).UnixNano()); s2.Hour != 14 {
		t.Fatalf("the next second is hour %d", s2.Hour)
	}
	if s3 := c.At(time.Date(1969, 12, 31, 23, 0, 0, 0, time.UTC).UnixNano()); s3.Date() != "1969-12-31" || s3.Day != -1 {
		t.Fatalf("before 1970: %+v %s", s3, s3.Date())
	}
	if _, err := In("Mars/Olympus"); err == nil {
		t.Fatal("an unknown zone was accepted")
	}
}

// TestWall moves instants onto the wall clock: 06:30 UTC is 08:30 in Berlin in summer and 07:30
// in winter (CEST +02:00, CET +01:00).
func TestWall(t *testing.T) {
	t.Parallel()
	c, _ := In("Europe/Berlin")
	for _, tc := range []struct {
		at   time.Time
		want string
	}{{time.Date(2026, 7, 1, 6, 30, 0, 0, time.UTC), "2026-07-01T08:30"}, {time.Date(2026, 12, 1, 6, 30, 0, 0, time.UTC), "2026-12-01T07:30"}} {
		if got := time.Unix(0, c.Wall(tc.at.UnixNano())).UTC().Format("2006-01-02T15:04"); got != tc.want {
			t.Errorf("%v: %s, want %s", tc.at, got, tc.want)
		}
	}
	var utc Clock
	if at := time.Date(2026, 7, 1, 6, 30, 0, 0, time.UTC).UnixNano(); utc.Wall(at) != at {
		t.Error("UTC moved a time")
	}
}
