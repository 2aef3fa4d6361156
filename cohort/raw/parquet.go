package raw

import (
	"bytes"
	"errors"
	"fmt"
	"io"
	"os"
	"slices"
	"strconv"
	"strings"
	"sync"
	"time"

	"github.com/parquet-go/parquet-go"
	"github.com/parquet-go/parquet-go/format"

	"github.com/cohortmix/cohortmix/cohort/pqframe"
)

// pqRecording is an open Parquet recording: its file, its columns' layout and the unit of a
// TIMESTAMP time column.
type pqRecording struct {
	path  string
	file  *os.File
	pf    *parquet.File
	l     *layout
	kinds []parquet.Type
	unit  time.Duration
}

// openParquet opens a flat Parquet recording and finds its columns.
func openParquet(path string, o Options) (*pqRecording, error) {
	f, err := os.Open(path)
	if err != nil {
		return nil, fmt.Errorf("%s: cannot open: %w", path, err)
	}
	r := &pqRecording{path: path, file: f}
	if err := r.open(o); err != nil {
		f.Close()
		return nil, err
	}
	return r, nil
}

func (r *pqRecording) open(o Options) (err error) {
	defer func() { // parquet-go can panic on a damaged file: a damaged input for us
		if v := recover(); v != nil {
			err = fmt.Errorf("%s: the Parquet file is damaged (%v); write it again, or export CSV: %w", r.path, v, ErrInput)
		}
	}()
	st, err := r.file.Stat()
	if err != nil {
		return fmt.Errorf("%s: cannot open: %w", r.path, err)
	}
	if err := pqframe.Check(r.file, st.Size()); err != nil {
		return fmt.Errorf("%s: %v: %w", r.path, err, ErrInput)
	}
	if r.pf, err = parquet.OpenFile(r.file, st.Size()); err != nil {
		return fmt.Errorf("%s: not a readable Parquet file (%v); write it again, or export CSV: %w", r.path, err, ErrInput)
	}
	var names []string
	for _, p := range r.pf.Schema().Columns() {
		leaf, _ := r.pf.Schema().Lookup(p...)
		if len(p) != 1 || leaf.MaxRepetitionLevel > 0 {
			return fmt.Errorf("%s: column %s is nested or repeated; write the recording flat, one value per cell: %w", r.path, strings.Join(p, "."), ErrInput)
		}
		names = append(names, p[0])
		r.kinds = append(r.kinds, leaf.Node.Type())
	}
	if r.l, err = findLayout(r.path, strings.Join(names, ","), o); err != nil {
		return err
	}
	if lt := r.kinds[r.l.t].LogicalType(); lt != nil {
		if ts, ok := lt.Value.(*format.TimestampType); ok {
			if u, ok := ts.Unit.Value.(interface{ Duration() time.Duration }); ok {
				r.unit = u.Duration()
			}
		}
	}
	return nil
}

// parts are the recording's row groups as parts to read apart, each with the line before it
// (row i of the file is line i + 2, the header being line 1).
func (r *pqRecording) parts() []byteRange {
	var out []byteRange
	line := 1
	for i, rg := range r.pf.RowGroups() {
		out = append(out, byteRange{start: int64(i), line: line})
		line += int(rg.NumRows())
	}
	return out
}

// scanParquet is scan for a flat Parquet recording: the time a TIMESTAMP column, epoch seconds
// or milliseconds (numbers, as in text), or ISO-8601 text; x, y, z numeric; the id text or an
// integer. Positions in messages are the row (as the line, the first row being line 2) and the
// column number.
func scanParquet(path string, o Options, each func(l *layout, s sample) error) error {
	r, err := openParquet(path, o)
	if err != nil {
		return err
	}
	defer r.file.Close()
	for _, part := range r.parts() {
		if err := r.scanGroup(part, *r.l, each); err != nil {
			return err
		}
	}
	return nil
}

// groupBuf holds the columns of one row group as read, for the next row group to reuse.
type groupBuf struct {
	axes  [3][]float64
	times []int64
}

var groupBufs sync.Pool

// scanGroup reads one row group, column by column, then hands its rows to each in order.
func (r *pqRecording) scanGroup(part byteRange, l layout, each func(l *layout, s sample) error) (err error) {
	defer func() {
		if v := recover(); v != nil {
			err = fmt.Errorf("%s: the Parquet file is damaged (%v); write it again, or export CSV: %w", r.path, v, ErrInput)
		}
	}()
	rg := r.pf.RowGroups()[part.start]
	n := int(rg.NumRows())
	if n < 0 || n > 1<<28 {
		return fmt.Errorf("%s: a row group of %d rows; the file is damaged: %w", r.path, n, ErrInput)
	}
	chunks := rg.ColumnChunks()
	buf, _ := groupBufs.Get().(*groupBuf)
	if buf == nil {
		buf = new(groupBuf)
	}
	defer groupBufs.Put(buf)
	axes := &buf.axes
	for a, c := range []int{l.x, l.y, l.z} {
		if axes[a], err = r.numbers(chunks[c], n, c, part.line, axes[a]); err != nil {
			return err
		}
	}
	times, timeText, err := r.groupTimes(chunks[l.t], n, l.t, part.line, buf)
	if err != nil {
		return err
	}
	var ids []string
	if l.id >= 0 {
		if ids, err = r.groupIDs(chunks[l.id], n, l.id, part.line); err != nil {
			return err
		}
	}
	for a, vals := range axes {
		for i, v := range vals {
			if v != v || v > 1e6 || v < -1e6 {
				return fmt.Errorf("%s:%d:%d: %v is not a number of acceleration: %w", r.path, part.line+1+i, []int{l.x, l.y, l.z}[a]+1, v, ErrInput)
			}
		}
	}
	if times != nil { // numbers are instants
		if err := r.zone(&l, true, part.line+1); err != nil {
			return err
		}
	}
	for i := 0; i < n; i++ {
		s := sample{id: l.fileID, line: part.line + 1 + i, a: [3]float64{axes[0][i], axes[1][i], axes[2][i]}}
		if ids != nil {
			s.id = ids[i]
		}
		if times != nil {
			s.t = times[i]
		} else {
			var zoned bool
			if s.t, zoned, err = parseTime(timeText[i]); err != nil {
				return fmt.Errorf("%s:%d:%d: %v: %w", r.path, s.line, l.t+1, err, ErrInput)
			}
			if err := r.zone(&l, zoned, s.line); err != nil {
				return err
			}
		}
		if err := each(&l, s); err != nil {
			return err
		}
	}
	return nil
}

// groupTimes reads a row group's time column (column col, its first row at line): instants as
// nanoseconds (INT64 in the file's unit, through the pooled buffer, or other numbers), or the
// texts of times to be parsed row by row.
func (r *pqRecording) groupTimes(chunk parquet.ColumnChunk, n, col, line int, buf *groupBuf) (times []int64, text [][]byte, err error) {
	kind := r.kinds[col].Kind()
	switch {
	case r.unit > 0 && kind == parquet.Int64:
		if buf.times, err = r.ints(chunk, n, col, line, buf.times); err != nil {
			return nil, nil, err
		}
		times = buf.times
		for i := range times {
			times[i] *= int64(r.unit)
		}
		return times, nil, nil
	case r.unit > 0 || kind != parquet.ByteArray:
		vals, err := r.numbers(chunk, n, col, line, nil)
		if err != nil {
			return nil, nil, err
		}
		times = make([]int64, n)
		for i, v := range vals {
			if r.unit > 0 {
				times[i] = int64(v) * int64(r.unit)
				continue
			}
			t, _, err := parseTime([]byte(strconv.FormatFloat(v, 'f', -1, 64)))
			if err != nil {
				return nil, nil, fmt.Errorf("%s:%d:%d: %v: %w", r.path, line+1+i, col+1, err, ErrInput)
			}
			times[i] = t
		}
		return times, nil, nil
	}
	text, err = r.texts(chunk, n, col, line)
	return nil, text, err
}

// groupIDs reads a row group's participant column, one string per run of equal ids.
func (r *pqRecording) groupIDs(chunk parquet.ColumnChunk, n, col, line int) ([]string, error) {
	raw, err := r.texts(chunk, n, col, line)
	if err != nil {
		return nil, err
	}
	ids := make([]string, n)
	for i, b := range raw {
		if i > 0 && string(b) == ids[i-1] {
			ids[i] = ids[i-1]
		} else {
			ids[i] = string(b)
		}
	}
	return ids, nil
}

// zone records whether the recording's times carry an offset, from its first time, and refuses
// a time at line of the other form.
func (r *pqRecording) zone(l *layout, zoned bool, line int) error {
	if !l.kindKnown {
		l.zoned, l.kindKnown = zoned, true
	} else if zoned != l.zoned {
		return fmt.Errorf("%s:%d:%d: a time %s where the file's first time was %s; give every time in one form: %w", r.path, line, l.t+1, zoneWord(zoned), zoneWord(l.zoned), ErrInput)
	}
	return nil
}

// numbers reads the n values of a numeric column chunk (doubles, floats or integers; no empty
// cell) as float64, page by page.
func (r *pqRecording) numbers(chunk parquet.ColumnChunk, n, col, line int, dst []float64) ([]float64, error) {
	out := slices.Grow(dst[:0], n)
	err := r.pages(chunk, col, line, func(page parquet.Page) error {
		if page.NumNulls() > 0 {
			return fmt.Errorf("%s:%d:%d: an empty cell in column %d; every sample needs its time and x, y, z: %w", r.path, line+1+len(out), col+1, col+1, ErrInput)
		}
		vr := page.Values()
		if dr, ok := vr.(parquet.DoubleReader); ok {
			k := int(page.NumValues())
			start := len(out)
			out = slices.Grow(out, k)[:start+k]
			got, err := dr.ReadDoubles(out[start:])
			out = out[:start+got]
			if err != nil && !errors.Is(err, io.EOF) {
				return err
			}
			return nil
		}
		if ir, ok := vr.(parquet.Int64Reader); ok {
			k := int(page.NumValues())
			buf := make([]int64, k)
			got, err := ir.ReadInt64s(buf)
			for _, v := range buf[:got] {
				out = append(out, float64(v))
			}
			if err != nil && !errors.Is(err, io.EOF) {
				return err
			}
			return nil
		}
		return eachValue(vr, func(v parquet.Value) error {
			switch v.Kind() {
			case parquet.Double:
				out = append(out, v.Double())
			case parquet.Float:
				out = append(out, float64(v.Float()))
			case parquet.Int32, parquet.Int64:
				out = append(out, float64(v.Int64()))
			default:
				return fmt.Errorf("%s:%d:%d: %q is not a number: %w", r.path, line+1+len(out), col+1, v.String(), ErrInput)
			}
			return nil
		})
	})
	if err == nil && len(out) != n {
		err = fmt.Errorf("%s: column %d holds %d of its %d rows; the file is damaged: %w", r.path, col+1, len(out), n, ErrInput)
	}
	return out, err
}

// ints reads the n values of an INT64 column chunk (no empty cell), page by page.
func (r *pqRecording) ints(chunk parquet.ColumnChunk, n, col, line int, dst []int64) ([]int64, error) {
	out := slices.Grow(dst[:0], n)
	err := r.pages(chunk, col, line, func(page parquet.Page) error {
		if page.NumNulls() > 0 {
			return fmt.Errorf("%s:%d:%d: an empty cell in column %d; every sample needs its time and x, y, z: %w", r.path, line+1+len(out), col+1, col+1, ErrInput)
		}
		vr := page.Values()
		if ir, ok := vr.(parquet.Int64Reader); ok {
			k := int(page.NumValues())
			start := len(out)
			out = slices.Grow(out, k)[:start+k]
			got, err := ir.ReadInt64s(out[start:])
			out = out[:start+got]
			if err != nil && !errors.Is(err, io.EOF) {
				return err
			}
			return nil
		}
		return eachValue(vr, func(v parquet.Value) error {
			out = append(out, v.Int64())
			return nil
		})
	})
	if err == nil && len(out) != n {
		err = fmt.Errorf("%s: column %d holds %d of its %d rows; the file is damaged: %w", r.path, col+1, len(out), n, ErrInput)
	}
	return out, err
}

// texts reads the n values of a column chunk as text.
func (r *pqRecording) texts(chunk parquet.ColumnChunk, n, col, line int) ([][]byte, error) {
	out := make([][]byte, 0, n)
	err := r.pages(chunk, col, line, func(page parquet.Page) error {
		return eachValue(page.Values(), func(v parquet.Value) error {
			switch {
			case v.IsNull():
				return fmt.Errorf("%s:%d:%d: an empty cell: %w", r.path, line+1+len(out), col+1, ErrInput)
			case v.Kind() == parquet.ByteArray || v.Kind() == parquet.FixedLenByteArray:
				out = append(out, bytes.Clone(v.ByteArray()))
			default:
				out = append(out, []byte(v.String()))
			}
			return nil
		})
	})
	if err == nil && len(out) != n {
		err = fmt.Errorf("%s: column %d holds %d of its %d rows; the file is damaged: %w", r.path, col+1, len(out), n, ErrInput)
	}
	return out, err
}

// eachValue hands each value a page's reader gives to use, in order.
func eachValue(vr parquet.ValueReader, use func(parquet.Value) error) error {
	vals := make([]parquet.Value, 4096)
	for {
		k, err := vr.ReadValues(vals)
		for _, v := range vals[:k] {
			if e := use(v); e != nil {
				return e
			}
		}
		if errors.Is(err, io.EOF) {
			return nil
		}
		if err != nil {
			return err
		}
	}
}

// pages hands each page of a column chunk to read, and releases it.
func (r *pqRecording) pages(chunk parquet.ColumnChunk, col, line int, read func(parquet.Page) error) error {
	pages := chunk.Pages()
	defer pages.Close()
	for {
		page, err := pages.ReadPage()
		if errors.Is(err, io.EOF) {
			return nil
		}
		if err != nil {
			return fmt.Errorf("%s: reading column %d after line %d failed (%v); the file may be damaged: %w", r.path, col+1, line, err, ErrInput)
		}
		err = read(page)
		parquet.Release(page)
		if err != nil {
			if errors.Is(err, ErrInput) {
				return err
			}
			return fmt.Errorf("%s: reading column %d after line %d failed (%v); the file may be damaged: %w", r.path, col+1, line, err, ErrInput)
		}
	}
}
