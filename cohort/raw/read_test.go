package raw

import (
	"bytes"
	"context"
	"errors"
	"fmt"
	"math"
	"os"
	"path/filepath"
	"strings"
	"testing"
	"time"
)

// recording writes n samples at rate Hz from 08:00 of a still wrist (x, y, z in g times scale),
// with each row passed through edit (which may change or drop it).
func recording(t *testing.T, name string, n int, rate, scale float64, edit func(i int, row string) string) string {
	t.Helper()
	var b strings.Builder
	b.WriteString("time,x,y,z\n")
	t0 := time.Date(2026, 3, 2, 8, 0, 0, 0, time.UTC)
	for i := 0; i < n; i++ {
		at := t0.Add(time.Duration(float64(i) / rate * float64(time.Second)))
		row := fmt.Sprintf("%s,%.4f,%.4f,%.4f", at.Format("2006-01-02T15:04:05.000Z07:00"), 0.1*scale, -0.2*scale, 0.97*scale+0.01*scale*math.Sin(float64(i)))
		if edit != nil {
			row = edit(i, row)
		}
		if row != "" {
			b.WriteString(row + "\n")
		}
	}
	p := filepath.Join(t.TempDir(), name)
	if err := os.WriteFile(p, []byte(b.String()), 0o644); err != nil {
		t.Fatal(err)
	}
	return p
}

// Bad raw input (issue 31, point 6): each a one-line error naming the file, the line and what to
// change, or a policy whose effect the report counts.
func TestRawInputFaults(t *testing.T) {
	t.Parallel()
	for _, c := range []struct {
		name  string
		path  func(t *testing.T) string
		opts  Options
		want  string // a phrase of the error; "" for a policy
		check func(t *testing.T, p []Participant)
	}{
		{"a time twice", func(t *testing.T) string {
			return recording(t, "dup.csv", 3000, 25, 1, func(i int, r string) string {
				if i == 100 {
					return strings.Replace(r, ".000Z", ".000Z", 1) + "\n" + r
				}
				return r
			})
		}, Options{}, "dup.csv:103: participant dup has this time twice (also line 102)", nil},
		{"time going back", func(t *testing.T) string {
			return recording(t, "back.csv", 3000, 25, 1, func(i int, r string) string {
				if i == 200 {
					return strings.Replace(r, "T08:00:08", "T07:59:08", 1)
				}
				return r
			})
		}, Options{}, "back.csv:202: participant back goes back in time", nil},
		{"a per-window table, not a recording", func(t *testing.T) string {
			p := filepath.Join(t.TempDir(), "windows.csv")
			os.WriteFile(p, []byte("participant,window,enmo\nA,1,3\n"), 0o644)
			return p
		}, Options{}, "windows.csv:1: no column for the time among participant, window, enmo", nil},
		{"milli-g given as g", func(t *testing.T) string { return recording(t, "mg.csv", 3000, 25, 1000, nil) }, Options{Units: "g"},
			"in g the vector magnitude of the first samples has a median of 995.4 g", nil},
		{"milli-g detected", func(t *testing.T) string { return recording(t, "mg.csv", 3000, 25, 1000, nil) }, Options{}, "", func(t *testing.T, p []Participant) {
			if p[0].Units != "mg (detected)" {
				t.Errorf("units %q", p[0].Units)
			}
		}},
		{"m/s² detected", func(t *testing.T) string { return recording(t, "ms2.csv", 3000, 25, gravityMS2, nil) }, Options{}, "", func(t *testing.T, p []Participant) {
			if p[0].Units != "m/s² (detected)" {
				t.Errorf("units %q", p[0].Units)
			}
		}},
		{"a gap: incomplete windows left out and counted", func(t *testing.T) string {
			return recording(t, "gap.csv", 25*60*5, 25, 1, func(i int, r string) string {
				if i >= 25*90 && i < 25*150 { // a minute gone from 01:30
					return ""
				}
				return r
			})
		}, Options{}, "", func(t *testing.T, p []Participant) {
			if p[0].Windows != 3 || p[0].Incomplete != 2 { // minutes 2 and 3 each lose half
				t.Errorf("%d windows, %d incomplete", p[0].Windows, p[0].Incomplete)
			}
		}},
		{"clipped samples counted", func(t *testing.T) string {
			return recording(t, "clip.csv", 3000, 25, 1, func(i int, r string) string {
				if i%100 == 0 {
					f := strings.Split(r, ",")
					return f[0] + ",8.0000," + f[2] + "," + f[3]
				}
				return r
			})
		}, Options{}, "", func(t *testing.T, p []Participant) {
			if p[0].Clipped != 30 {
				t.Errorf("%d clipped samples, want 30", p[0].Clipped)
			}
		}},
		{"too few still periods: left as read, and why", func(t *testing.T) string { return recording(t, "short.csv", 25*60*2, 25, 1, nil) }, Options{}, "", func(t *testing.T, p []Participant) {
			if p[0].OK || !strings.Contains(p[0].Reason, "do not reach both sides of every axis") {
				t.Errorf("calibrated %v: %q", p[0].OK, p[0].Reason)
			}
		}},
		{"a letter for a number", func(t *testing.T) string {
			return recording(t, "text.csv", 300, 25, 1, func(i int, r string) string {
				if i == 10 {
					return strings.Replace(r, ",0.1000,", ",O.1000,", 1)
				}
				return r
			})
		}, Options{}, `text.csv:12:2: "O.1000" is not a number of acceleration`, nil},
		{"times of two forms", func(t *testing.T) string {
			return recording(t, "mixed.csv", 300, 25, 1, func(i int, r string) string {
				if i == 50 {
					return strings.Replace(r, "Z,", ",", 1)
				}
				return r
			})
		}, Options{}, "mixed.csv:52:1: a time without a UTC offset where the file's first time was with a UTC offset", nil},
		{"a window too short", func(t *testing.T) string { return recording(t, "w.csv", 300, 25, 1, nil) }, Options{Window: time.Second}, "window length 1s", nil},
	} {
		t.Run(c.name, func(t *testing.T) {
			p := c.path(t)
			var out bytes.Buffer
			people, err := Run(context.Background(), []string{p}, &out, c.opts)
			if c.want != "" {
				if err == nil || !strings.Contains(err.Error(), c.want) || strings.Contains(err.Error(), "\n") {
					t.Fatalf("got %v, want %q", err, c.want)
				}
				if !errors.Is(err, ErrInput) && !errors.Is(err, ErrOption) {
					t.Errorf("%v is neither ErrInput nor ErrOption", err)
				}
				return
			}
			if err != nil {
				t.Fatal(err)
			}
			c.check(t, people)
		})
	}
}

// FuzzScan feeds the raw reader any text: an error or a table, never a panic.
func FuzzScan(f *testing.F) {
	f.Add("time,x,y,z\n2026-03-02T08:00:00Z,0.1,0.2,0.97\n2026-03-02T08:00:00.04Z,0.1,0.2,0.97\n")
	f.Add("timestamp;acc_x;acc_y;acc_z\n1772438400.00;0;0;1\n1772438400.04;0;0;1\n")
	f.Add("id,t,x,y,z\nA,1772438400000,0,0,9.8\nA,1772438400040,0,0,9.8\nB,1772438400000,0,0,9.8\n")
	f.Fuzz(func(t *testing.T, text string) {
		p := filepath.Join(t.TempDir(), "r.csv")
		if err := os.WriteFile(p, []byte(text), 0o644); err != nil {
			t.Fatal(err)
		}
		var out bytes.Buffer
		_, _ = Run(context.Background(), []string{p}, &out, Options{Window: 5 * time.Second, Workers: 1})
		_, _ = Run(context.Background(), []string{p}, &out, Options{Window: 5 * time.Second, Workers: 1, ID: "id"})
	})
}

// The quick time reader agrees with the time package on every form it takes, and leaves the
// rest to it.
func TestFastTime(t *testing.T) {
	t.Parallel()
	for _, s := range []string{"2026-03-02T08:00:00", "2026-03-02T08:00:00.04Z", "2026-03-02 23:59:59.999999999+01:00", "1969-12-31T23:00:00-05:30",
		"2200-12-31T23:59:59Z", "1900-01-01T00:00:00Z", "2024-02-29T12:00:00Z", "2026-10-25T02:30:00+02:00"} {
		got, zoned, ok := fastTime([]byte(s))
		want, wz, err := parseTimeSlow(s)
		if !ok || err != nil || got != want || zoned != wz {
			t.Errorf("%s: %d %v %v, the time package %d %v %v", s, got, zoned, ok, want, wz, err)
		}
	}
	for _, s := range []string{"2026-02-30T08:00:00", "2026-13-02T08:00:00", "2026-03-02T24:00:00", "2026-03-02T08:00:00+1:00", "2026-03-02T08:00:00.Z", "1899-12-31T23:59:59Z"} {
		if _, _, ok := fastTime([]byte(s)); ok {
			t.Errorf("%s was taken", s)
		}
	}
}

// parseTimeSlow is parseTime's general path alone.
func parseTimeSlow(s string) (int64, bool, error) {
	for i, layout := range []string{time.RFC3339Nano, "2006-01-02T15:04:05.999999999", "2006-01-02 15:04:05.999999999"} {
		if v, err := time.Parse(layout, s); err == nil {
			return v.UnixNano(), i == 0, nil
		}
	}
	s2 := strings.Replace(s, " ", "T", 1)
	if v, err := time.Parse(time.RFC3339Nano, s2); err == nil {
		return v.UnixNano(), true, nil
	}
	return 0, false, fmt.Errorf("%q", s)
}

// FuzzScanParquet feeds the raw reader damaged Parquet recordings: an error or a table, never a
// panic.
func FuzzScanParquet(f *testing.F) {
	pq := filepath.Join(f.TempDir(), "seed.parquet")
	toParquet(f, "../../testdata/raw/small.csv", pq, 1000)
	seed, err := os.ReadFile(pq)
	if err != nil {
		f.Fatal(err)
	}
	f.Add(seed)
	f.Add(seed[:len(seed)/2])
	f.Fuzz(func(t *testing.T, b []byte) {
		p := filepath.Join(t.TempDir(), "r.parquet")
		if err := os.WriteFile(p, b, 0o644); err != nil {
			t.Fatal(err)
		}
		var out bytes.Buffer
		_, _ = Run(context.Background(), []string{p}, &out, Options{Window: 5 * time.Second, Workers: 1})
	})
}
