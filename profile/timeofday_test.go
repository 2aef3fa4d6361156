package profile

import (
	"testing"
	"time"
)

// Hours and weekends by the calendar (2026-12-05 is a Saturday, 12-07 a Monday).
func TestTimeOfDayOf(t *testing.T) {
	t.Parallel()
	at := func(s string) int64 {
		v, err := time.Parse("2006-01-02T15:04", s)
		if err != nil {
			t.Fatal(err)
		}
		return v.UnixNano()
	}
	td := TimeOfDayOf([]int64{at("2026-12-05T00:30"), at("2026-12-06T23:59"), at("2026-12-07T07:00"), at("1969-12-31T23:00")}, []int{0, 1, 1, 0}, 2)
	if td.ByHour[0*2+0] != 1 || td.ByHour[23*2+1] != 1 || td.ByHour[7*2+1] != 1 || td.ByHour[23*2+0] != 1 {
		t.Errorf("by hour %v", td.ByHour)
	}
	if td.Weekend[0] != 1 || td.Weekend[1] != 1 { // Saturday's and Sunday's; 1969-12-31 was a Wednesday
		t.Errorf("weekend %v", td.Weekend)
	}
}

func TestDayParts(t *testing.T) {
	t.Parallel()
	for _, tc := range []struct {
		p    DayParts
		want string // the part of each hour 0–23
		ok   bool
	}{
		{DefaultDayParts, "000000111111222222333333", true},
		{DayParts{22, 6, 12, 18}, "000000111111222222333300", true},
		{DayParts{23, 7}, "000000011111111111111110", true},
		{DayParts{6, 6}, "", false},
		{DayParts{0, 12, 6}, "", false},
		{DayParts{12, 6, 18}, "", false},
		{DayParts{0, 24}, "", false},
	} {
		if err := tc.p.Check(); (err == nil) != tc.ok {
			t.Errorf("%v: check %v", tc.p, err)
			continue
		}
		if !tc.ok {
			continue
		}
		got := ""
		for h := 0; h < 24; h++ {
			got += string(rune('0' + tc.p.Part(h)))
		}
		if got != tc.want {
			t.Errorf("%v: parts %s, want %s", tc.p, got, tc.want)
		}
	}
	td := TimeOfDay{ByHour: make([]int, 48), Weekend: make([]int, 2)}
	td.ByHour[5*2+1], td.ByHour[20*2+0] = 3, 4
	if got := td.ByPart(DefaultDayParts); got[0*2+1] != 3 || got[3*2+0] != 4 {
		t.Errorf("by part %v", got)
	}
}
