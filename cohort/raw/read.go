package raw

import (
	"bufio"
	"bytes"
	"compress/gzip"
	"fmt"
	"io"
	"os"
	"path/filepath"
	"slices"
	"strconv"
	"strings"
	"time"
	"unsafe"

	"github.com/cohortmix/cohortmix/cohort/decimal"
)

// sample is one row of a recording.
type sample struct {
	id   string
	t    int64 // Unix ns; for times without an offset, the wall clock as if in UTC
	a    [3]float64
	line int
}

// layout is where a recording's columns are, and how its times are written.
type layout struct {
	delim          byte
	id, t, x, y, z int  // column index; id −1 without one
	zoned          bool // times with an offset, or epoch numbers (instants)
	kindKnown      bool
	file           string
	fileID         string
}

// openText opens a file for reading, through gzip when its name ends in .gz.
func openText(path string) (io.ReadCloser, error) {
	f, err := os.Open(path)
	if err != nil {
		return nil, fmt.Errorf("%s: cannot open: %w", path, err)
	}
	if !strings.HasSuffix(path, ".gz") {
		return f, nil
	}
	z, err := gzip.NewReader(f)
	if err != nil {
		f.Close()
		return nil, fmt.Errorf("%s: not a gzip file (%v): %w", path, err, ErrInput)
	}
	return struct {
		io.Reader
		io.Closer
	}{z, f}, nil
}

// fileID is a file's name without folder and suffixes: the participant of a one-participant file.
func fileID(path string) string {
	base := filepath.Base(path)
	for _, suf := range []string{".gz", ".csv", ".tsv", ".txt", ".parquet"} {
		base = strings.TrimSuffix(base, suf)
	}
	return base
}

// findLayout reads the header and finds the columns.
func findLayout(path, header string, o Options) (*layout, error) {
	l := &layout{file: path, fileID: fileID(path), id: -1}
	switch {
	case strings.Count(header, "\t") > strings.Count(header, ","):
		l.delim = '\t'
	case strings.Count(header, ";") > strings.Count(header, ","):
		l.delim = ';'
	default:
		l.delim = ','
	}
	var names []string
	for _, h := range strings.Split(header, string(l.delim)) {
		names = append(names, strings.ToLower(strings.Trim(strings.TrimSpace(h), `"`)))
	}
	find := func(given string, role string, alike func(string) bool) (int, error) {
		if given != "" {
			if j := slices.Index(names, strings.ToLower(given)); j >= 0 {
				return j, nil
			}
			return -1, fmt.Errorf("%s:1: no column %q for the %s among %s: %w", path, given, role, strings.Join(names, ", "), ErrInput)
		}
		for j, n := range names {
			if alike(n) {
				return j, nil
			}
		}
		return -1, fmt.Errorf("%s:1: no column for the %s among %s; a raw recording has a time column and x, y, z (name them with the options): %w", path, role, strings.Join(names, ", "), ErrInput)
	}
	var err error
	if l.t, err = find(o.Time, "time", func(n string) bool {
		return n == "time" || n == "timestamp" || n == "datetime" || n == "date_time" || n == "t"
	}); err != nil {
		return nil, err
	}
	for i, p := range []*int{&l.x, &l.y, &l.z} {
		axis := string("xyz"[i])
		given := []string{o.X, o.Y, o.Z}[i]
		if *p, err = find(given, "axis "+axis, func(n string) bool {
			return n == axis || strings.HasSuffix(n, "_"+axis) || n == "acc"+axis || n == "a"+axis || n == "acc_"+axis
		}); err != nil {
			return nil, err
		}
	}
	if o.ID != "" {
		if l.id, err = find(o.ID, "participant id", nil); err != nil {
			return nil, err
		}
	}
	return l, nil
}

// scan reads a recording row by row, calling each with its sample; a row that cannot be read is
// an error naming the file, line and column.
func scan(path string, o Options, each func(l *layout, s sample) error) error {
	rc, err := openText(path)
	if err != nil {
		return err
	}
	defer rc.Close()
	br := bufio.NewReaderSize(rc, 1<<20)
	l, _, err := readHeader(path, br, o)
	if err != nil {
		return err
	}
	return rows(path, br, l, 1, each)
}

// readHeader reads the header line and finds the columns; it returns the header's length in
// bytes.
func readHeader(path string, br *bufio.Reader, o Options) (*layout, int, error) {
	header, err := br.ReadString('\n')
	if err != nil && header == "" {
		return nil, 0, fmt.Errorf("%s: empty file; a raw recording has a header row and one row per sample: %w", path, ErrInput)
	}
	l, err := findLayout(path, strings.TrimRight(header, "\r\n"), o)
	return l, len(header), err
}

// rows reads the rows after line (the number of the line before the first), calling each.
func rows(path string, br *bufio.Reader, l *layout, line int, each func(l *layout, s sample) error) error {
	width := max(l.t, l.x, l.y, l.z, l.id) + 1
	cells := make([][]byte, 0, width)
	lastID := ""
	for {
		row, err := br.ReadSlice('\n')
		if err == bufio.ErrBufferFull {
			return fmt.Errorf("%s:%d: a line longer than 1 MiB; this is not a raw recording: %w", path, line+1, ErrInput)
		}
		if len(row) == 0 && err != nil {
			if err == io.EOF {
				return nil
			}
			return fmt.Errorf("%s:%d: %w", path, line+1, err)
		}
		line++
		row = bytes.TrimRight(row, "\r\n")
		if len(row) == 0 {
			continue
		}
		cells = cells[:0]
		for len(cells) < width {
			i := bytes.IndexByte(row, l.delim)
			if i < 0 {
				cells = append(cells, row)
				row = nil
				break
			}
			cells = append(cells, row[:i])
			row = row[i+1:]
		}
		if len(cells) < width {
			return fmt.Errorf("%s:%d: %d columns where the header has at least %d: %w", path, line, len(cells), width, ErrInput)
		}
		s := sample{id: l.fileID, line: line}
		if l.id >= 0 {
			if c := bytes.TrimSpace(cells[l.id]); string(c) != lastID { // no allocation for the same id
				lastID = string(c)
			}
			s.id = lastID
		}
		var zoned bool
		if s.t, zoned, err = parseTime(cells[l.t]); err != nil {
			return fmt.Errorf("%s:%d:%d: %v: %w", path, line, l.t+1, err, ErrInput)
		}
		if !l.kindKnown {
			l.zoned, l.kindKnown = zoned, true
		} else if zoned != l.zoned {
			return fmt.Errorf("%s:%d:%d: a time %s where the file's first time was %s; give every time in one form: %w", path, line, l.t+1, zoneWord(zoned), zoneWord(l.zoned), ErrInput)
		}
		for a, c := range []int{l.x, l.y, l.z} {
			v, err := parseFloat(bytes.TrimSpace(cells[c]))
			if err != nil || v != v || v > 1e6 || v < -1e6 {
				return fmt.Errorf("%s:%d:%d: %q is not a number of acceleration: %w", path, line, c+1, cells[c], ErrInput)
			}
			s.a[a] = v
		}
		if err := each(l, s); err != nil {
			return err
		}
	}
}

func zoneWord(zoned bool) string {
	if zoned {
		return "with a UTC offset (or in epoch seconds)"
	}
	return "without a UTC offset"
}

// parseTime reads a time cell: epoch seconds (or milliseconds, from 10¹¹ on) as an instant, or
// ISO-8601 with or without a UTC offset, in the years 1900–2200.
func parseTime(b []byte) (int64, bool, error) {
	b = bytes.TrimSpace(b)
	if t, zoned, ok := fastTime(b); ok {
		return t, zoned, nil
	}
	s := string(b)
	if v, err := strconv.ParseFloat(s, 64); err == nil {
		if v >= 1e11 {
			v /= 1000
		}
		if !(v > -2.2e9 && v < 7.3e9) {
			return 0, false, fmt.Errorf("%q is an epoch time outside 1900–2200", s)
		}
		return int64(v * 1e9), true, nil
	}
	for i, layout := range []string{time.RFC3339Nano, "2006-01-02T15:04:05.999999999", "2006-01-02 15:04:05.999999999"} {
		if t, err := time.Parse(layout, s); err == nil {
			if t.Year() < 1900 || t.Year() > 2200 {
				return 0, false, fmt.Errorf("%q is a time outside 1900–2200", s)
			}
			return t.UnixNano(), i == 0, nil
		}
	}
	return 0, false, fmt.Errorf("%q is neither an ISO-8601 time (2026-03-01T08:30:00.010) nor epoch seconds", s)
}

// parseFloat reads a number: a plain decimal exactly and quickly (decimal.Plain), anything else
// by strconv.ParseFloat on the bytes, without copying them into a string.
func parseFloat(b []byte) (float64, error) {
	if v, ok := decimal.Plain(b, false); ok {
		return v, nil
	}
	if len(b) == 0 {
		return 0, strconv.ErrSyntax
	}
	return strconv.ParseFloat(unsafe.String(&b[0], len(b)), 64)
}

// fastTime reads the usual form of a raw recording's times, YYYY-MM-DDTHH:MM:SS with an optional
// fraction and an optional Z or ±hh:mm, without the time package's general parser (whose cost
// per sample is that of the features); anything else, or anything out of range, is left to
// parseTime's general path (ok false).
func fastTime(b []byte) (int64, bool, bool) {
	secs, ok := fastClock(b)
	if !ok {
		return 0, false, false
	}
	frac, i, ok := fastFraction(b, 19)
	if !ok {
		return 0, false, false
	}
	offset, zoned, ok := fastZone(b, i)
	if !ok {
		return 0, false, false
	}
	return (secs-int64(offset))*1e9 + frac, zoned, true
}

// digits is the number written in b[i:i+n], false if a byte is not a digit.
func digits(b []byte, i, n int) (int, bool) {
	v := 0
	for _, c := range b[i : i+n] {
		if c < '0' || c > '9' {
			return 0, false
		}
		v = v*10 + int(c-'0')
	}
	return v, true
}

// fastClock is the seconds since 1970 of the date and time of day in b's first 19 bytes,
// YYYY-MM-DDTHH:MM:SS (or a space for the T), read as UTC.
func fastClock(b []byte) (int64, bool) {
	if len(b) < 19 || b[4] != '-' || b[7] != '-' || (b[10] != 'T' && b[10] != ' ') || b[13] != ':' || b[16] != ':' {
		return 0, false
	}
	y, ok1 := digits(b, 0, 4)
	mo, ok2 := digits(b, 5, 2)
	d, ok3 := digits(b, 8, 2)
	h, ok4 := digits(b, 11, 2)
	mi, ok5 := digits(b, 14, 2)
	sec, ok6 := digits(b, 17, 2)
	if !(ok1 && ok2 && ok3 && ok4 && ok5 && ok6) || y < 1900 || y > 2200 || mo < 1 || mo > 12 || d < 1 {
		return 0, false
	}
	if d > 28 && d > daysIn(y, mo) || h > 23 || mi > 59 || sec > 59 {
		return 0, false
	}
	return daysFromCivil(y, mo, d)*86400 + int64(h*3600+mi*60+sec), true
}

// fastFraction reads an optional fraction of a second at b[i:] (a point and at least one
// digit; digits past the nanosecond are ignored), in nanoseconds, and returns where it ends.
func fastFraction(b []byte, i int) (int64, int, bool) {
	var frac int64
	if i >= len(b) || b[i] != '.' {
		return 0, i, true
	}
	i++
	scale := int64(1e9)
	start := i
	for i < len(b) && b[i] >= '0' && b[i] <= '9' {
		if scale > 1 {
			scale /= 10
			frac += int64(b[i]-'0') * scale
		}
		i++
	}
	return frac, i, i > start
}

// fastZone reads what ends a time at b[i:]: nothing, Z, or ±hh:mm; the offset in seconds east
// of UTC and whether one was written.
func fastZone(b []byte, i int) (offset int, zoned, ok bool) {
	switch {
	case i == len(b):
		return 0, false, true
	case b[i] == 'Z' && i+1 == len(b):
		return 0, true, true
	case (b[i] == '+' || b[i] == '-') && i+6 == len(b) && b[i+3] == ':':
		oh, okh := digits(b, i+1, 2)
		om, okm := digits(b, i+4, 2)
		if !okh || !okm || oh > 23 || om > 59 {
			return 0, false, false
		}
		offset = oh*3600 + om*60
		if b[i] == '-' {
			offset = -offset
		}
		return offset, true, true
	}
	return 0, false, false
}

// daysFromCivil is the days since 1970-01-01 of a date of the proleptic Gregorian calendar
// (H. Hinnant's algorithm, "chrono-compatible low-level date algorithms").
func daysFromCivil(y, m, d int) int64 {
	if m <= 2 {
		y--
	}
	era := y / 400
	if y < 0 && y%400 != 0 {
		era--
	}
	yoe := y - era*400
	mp := (m + 9) % 12
	doy := (153*mp+2)/5 + d - 1
	doe := yoe*365 + yoe/4 - yoe/100 + doy
	return int64(era)*146097 + int64(doe) - 719468
}

// daysIn is the number of days of a month.
func daysIn(y, m int) int {
	return time.Date(y, time.Month(m)+1, 0, 0, 0, 0, 0, time.UTC).Day()
}
