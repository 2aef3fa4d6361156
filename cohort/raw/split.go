package raw

import (
	"bufio"
	"bytes"
	"context"
	"fmt"
	"io"
	"os"
	"strings"

	"github.com/cohortmix/cohortmix/cluster/par"
)

// A long recording of one participant (a text file, not compressed, without an id column) is
// read in ranges of about Options.RangeBytes on all cores: both passes run on each range, and
// their results are joined in order. The ranges depend on the file alone, never on the number of
// cores, so the table is the same on any number; it can differ from a reading in one piece in
// the last digits, where a 10-second block's or a 15-minute chunk's sums are added in two parts.
const defaultRangeBytes = 64 << 20

// byteRange is a stretch of whole lines of a file, and the number of the line before it.
type byteRange struct {
	start, end int64
	line       int
}

// splits tells whether a file is read in ranges, and gives them.
func splits(ctx context.Context, path string, o Options) ([]byteRange, *layout, error) {
	if o.ID != "" || strings.HasSuffix(path, ".gz") || strings.HasSuffix(strings.ToLower(path), ".parquet") {
		return nil, nil, nil
	}
	rangeBytes := o.RangeBytes
	if rangeBytes <= 0 {
		rangeBytes = defaultRangeBytes
	}
	st, err := os.Stat(path)
	if err != nil || st.Size() < 2*rangeBytes {
		return nil, nil, nil
	}
	f, err := os.Open(path)
	if err != nil {
		return nil, nil, err
	}
	defer f.Close()
	head := make([]byte, 8)
	if n, _ := f.ReadAt(head, 0); n >= 2 && head[0] == 0x1f && head[1] == 0x8b {
		return nil, nil, nil // gzip by its content
	}
	br := bufio.NewReaderSize(io.NewSectionReader(f, 0, st.Size()), 1<<16)
	l, hlen, err := readHeader(path, br, o)
	if err != nil {
		return nil, nil, err
	}
	// Cut at the first line start after each multiple of rangeBytes.
	cuts := []int64{int64(hlen)}
	buf := make([]byte, 1<<20)
	for at := rangeBytes; at < st.Size(); at += rangeBytes {
		n, _ := f.ReadAt(buf, at)
		i := bytes.IndexByte(buf[:n], '\n')
		if i < 0 {
			return nil, nil, fmt.Errorf("%s: no line end within 1 MiB of byte %d; this is not a raw recording: %w", path, at, ErrInput)
		}
		if c := at + int64(i) + 1; c > cuts[len(cuts)-1] && c < st.Size() {
			cuts = append(cuts, c)
		}
	}
	cuts = append(cuts, st.Size())
	ranges := make([]byteRange, len(cuts)-1)
	lines := make([]int, len(ranges))
	err = par.Ordered(ctx, len(ranges), o.Workers, func(i, _ int) (int, error) {
		return countLines(f, cuts[i], cuts[i+1])
	}, func(i, n int) error {
		lines[i] = n
		return nil
	})
	if err != nil {
		return nil, nil, err
	}
	line := 1 // the header
	for i := range ranges {
		ranges[i] = byteRange{start: cuts[i], end: cuts[i+1], line: line}
		line += lines[i]
	}
	return ranges, l, nil
}

// countLines counts the line ends in [start, end).
func countLines(f *os.File, start, end int64) (int, error) {
	buf := make([]byte, 1<<20)
	n := 0
	for at := start; at < end; {
		k, err := f.ReadAt(buf[:min(int64(len(buf)), end-at)], at)
		n += bytes.Count(buf[:k], []byte{'\n'})
		at += int64(k)
		if err != nil && err != io.EOF {
			return 0, err
		}
		if k == 0 {
			break
		}
	}
	return n, nil
}

// scanRange reads the rows of one range.
func scanRange(path string, l layout, r byteRange, each func(l *layout, s sample) error) error {
	f, err := os.Open(path)
	if err != nil {
		return err
	}
	defer f.Close()
	br := bufio.NewReaderSize(io.NewSectionReader(f, r.start, r.end-r.start), 1<<20)
	return rows(path, br, &l, r.line, each)
}

// rangePart is what the second pass makes of one range: its first and last windows' samples,
// which may go on in the ranges beside it, and the rows of the windows between.
type rangePart struct {
	head, tail *window
	rows       *sink
	p          Participant // the counts of the windows written here
	zoned      *bool       // the kind of its times (nil without a sample)
}

// window is one window's samples, calibrated.
type window struct {
	key     int64
	x, y, z []float64
}

// runFileSplit is runFile for a long one-participant recording read in ranges.
//
// scanPart reads part i (a range of a text file, or a row group of a Parquet file) with a copy of
// the file's layout.
func runFileSplit(ctx context.Context, path string, o Options, col map[string]int, ranges []byteRange, l0 *layout, scanPart func(i int, l layout, each func(l *layout, s sample) error) error) (fileResult, error) {
	f, err := firstPassSplit(ctx, path, o, ranges, l0, scanPart)
	if err != nil {
		return fileResult{}, err
	}
	pl, err := f.finish(path, o)
	if err != nil {
		return fileResult{}, err
	}
	res := fileResult{rows: &sink{col: col}}
	j := &rangeJoin{path: path, ranges: ranges, f: f, res: res, join: &secondPass{p: f.p, pl: pl, o: o, out: res.rows}}
	err = par.Ordered(ctx, len(ranges), o.Workers, func(i, _ int) (*rangePart, error) {
		return secondPassRange(i, path, o, col, pl, l0, scanPart)
	}, j.add)
	if err != nil {
		return fileResult{}, err
	}
	j.flush()
	res.people = []Participant{*f.p}
	return res, nil
}

// firstPassSplit is the first pass over every range of one participant's recording, joined in
// order; it refuses a range whose first time is not after the previous one's last.
func firstPassSplit(ctx context.Context, path string, o Options, ranges []byteRange, l0 *layout, scanPart func(i int, l layout, each func(l *layout, s sample) error) error) (*firstPass, error) {
	id := l0.fileID
	var f *firstPass
	err := par.Ordered(ctx, len(ranges), o.Workers, func(i, _ int) (*firstPass, error) {
		part := &firstPass{p: &Participant{ID: id, File: path}}
		l := *l0
		err := scanPart(i, l, func(l *layout, s sample) error { return part.add(s, path) })
		return part, err
	}, func(i int, part *firstPass) error {
		if part.p.Samples == 0 {
			return nil
		}
		if f == nil {
			f = part
			return nil
		}
		switch {
		case part.first == f.last:
			return fmt.Errorf("%s:%d: participant %s has this time twice (also line %d); remove one of the rows: %w", path, part.firstLine, id, f.lastLine, ErrInput)
		case part.first < f.last:
			return fmt.Errorf("%s:%d: participant %s goes back in time from line %d; sort the rows by time: %w", path, part.firstLine, id, f.lastLine, ErrInput)
		}
		f.p.Samples += part.p.Samples
		f.last, f.lastLine = part.last, part.lastLine
		f.blocks = joinSums(f.blocks, part.blocks)
		return nil
	})
	if err != nil {
		return nil, err
	}
	if f == nil {
		return nil, fmt.Errorf("%s: no samples after the header: %w", path, ErrInput)
	}
	return f, nil
}

// secondPassRange makes the windows of range i; its first and last windows, which may go on
// in the ranges beside it, are kept apart for the join.
func secondPassRange(i int, path string, o Options, col map[string]int, pl *plan, l0 *layout, scanPart func(i int, l layout, each func(l *layout, s sample) error) error) (*rangePart, error) {
	part := &rangePart{rows: &sink{col: col}, p: Participant{ID: l0.fileID, File: path}}
	sec := &secondPass{p: &part.p, pl: pl, o: o, out: part.rows}
	l := *l0
	err := scanPart(i, l, func(l *layout, s sample) error {
		if part.zoned == nil {
			part.zoned = new(bool)
			*part.zoned = l.zoned
			sec.zoned = l.zoned
		}
		if part.head == nil && len(sec.x) > 0 && s.t >= sec.end && floorDiv(s.t, int64(o.Window)) != sec.window { // the first window: kept for the join
			part.head = &window{key: sec.window, x: clone(sec.x), y: clone(sec.y), z: clone(sec.z)}
			sec.x, sec.y, sec.z = sec.x[:0], sec.y[:0], sec.z[:0]
		}
		sec.add(s)
		return nil
	})
	if len(sec.x) > 0 { // the last window: kept for the join
		last := &window{key: sec.window, x: clone(sec.x), y: clone(sec.y), z: clone(sec.z)}
		if part.head == nil {
			part.head = last
		} else {
			part.tail = last
		}
	}
	return part, err
}

// rangeJoin joins the ranges' windows in order: a window cut between two ranges is made whole
// before its features are computed.
type rangeJoin struct {
	path     string
	ranges   []byteRange
	f        *firstPass
	res      fileResult
	join     *secondPass
	pending  *window
	seenKind bool
}

func (j *rangeJoin) flush() {
	if j.pending != nil {
		j.join.window, j.join.x, j.join.y, j.join.z = j.pending.key, j.pending.x, j.pending.y, j.pending.z
		j.join.flush()
		j.pending = nil
	}
}

func (j *rangeJoin) add(i int, part *rangePart) error {
	// The kind of the times (with an offset or not) is one through the file.
	if z := part.zoned; z != nil {
		if j.seenKind && *z != j.join.zoned {
			return fmt.Errorf("%s:%d: times %s here where the file's first times were %s; give every time in one form: %w", j.path, j.ranges[i].line+1, zoneWord(*z), zoneWord(j.join.zoned), ErrInput)
		}
		j.join.zoned, j.seenKind = *z, true
	}
	p := j.f.p
	p.Windows += part.p.Windows
	p.Incomplete += part.p.Incomplete
	p.NonWear += part.p.NonWear
	p.Clipped += part.p.Clipped
	if part.head == nil {
		return nil
	}
	if j.pending != nil && j.pending.key == part.head.key {
		j.pending.x, j.pending.y, j.pending.z = append(j.pending.x, part.head.x...), append(j.pending.y, part.head.y...), append(j.pending.z, part.head.z...)
	} else {
		j.flush()
		j.pending = part.head
	}
	if part.tail == nil {
		return nil
	}
	j.flush()
	j.res.rows.text.Write(part.rows.text.Bytes())
	j.res.rows.rows = append(j.res.rows.rows, part.rows.rows...)
	j.pending = part.tail
	return nil
}

// joinSums joins two lists of sums by key, in order: where the second begins with the key the
// first ends with, the two sums are added.
func joinSums(a, b []chunk) []chunk {
	if len(a) > 0 && len(b) > 0 && a[len(a)-1].key == b[0].key {
		last, next := &a[len(a)-1], b[0]
		for i := 0; i < 3; i++ {
			last.sum[i] += next.sum[i]
			last.sum2[i] += next.sum2[i]
			if next.n > 0 {
				if last.n == 0 {
					last.lo[i], last.hi[i] = next.lo[i], next.hi[i]
				}
				last.lo[i], last.hi[i] = min(last.lo[i], next.lo[i]), max(last.hi[i], next.hi[i])
			}
		}
		last.n += next.n
		b = b[1:]
	}
	return append(a, b...)
}

func clone(v []float64) []float64 { return append([]float64(nil), v...) }
