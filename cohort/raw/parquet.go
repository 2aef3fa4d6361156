package raw

import (
	"errors"
	"fmt"
	"io"
	"os"
	"time"

	"github.com/cohortmix/cohortmix/cohort/pqframe"
	"github.com/parquet-go/parquet-go"
	"github.com/parquet-go/parquet-go/format"
)

// scanParquet is scan for a flat Parquet recording: the time a TIMESTAMP column, epoch seconds
// or milliseconds (numbers, as in text), or ISO-8601 text; x, y, z numeric; the id text or an
// integer. Positions in messages are the row (as the line, the first row being line 2) and the
// column number.
func scanParquet(path string, o Options, each func(l *layout, s sample) error) (err error) {
	defer func() { // parquet-go can panic on a damaged file: a damaged input for us
		if v := recover(); v != nil {
			err = fmt.Errorf("%s: the Parquet file is damaged (%v); write it again, or export CSV: %w", path, v, ErrInput)
		}
	}()
	f, err := os.Open(path)
	if err != nil {
		return fmt.Errorf("%s: cannot open: %w", path, err)
	}
	defer f.Close()
	st, err := f.Stat()
	if err != nil {
		return fmt.Errorf("%s: cannot open: %w", path, err)
	}
	if err := pqframe.Check(f, st.Size()); err != nil {
		return fmt.Errorf("%s: %v: %w", path, err, ErrInput)
	}
	pf, err := parquet.OpenFile(f, st.Size())
	if err != nil {
		return fmt.Errorf("%s: not a readable Parquet file (%v); write it again, or export CSV: %w", path, err, ErrInput)
	}
	var names []string
	var kinds []parquet.Type
	for _, p := range pf.Schema().Columns() {
		leaf, _ := pf.Schema().Lookup(p...)
		names = append(names, p[len(p)-1])
		kinds = append(kinds, leaf.Node.Type())
	}
	l, err := findLayout(path, joinNames(names), o)
	if err != nil {
		return err
	}
	l.delim = 0
	var unit time.Duration // of a TIMESTAMP time column
	if lt := kinds[l.t].LogicalType(); lt != nil {
		if ts, ok := lt.Value.(*format.TimestampType); ok {
			if u, ok := ts.Unit.Value.(interface{ Duration() time.Duration }); ok {
				unit = u.Duration()
			}
		}
	}
	buf := make([]parquet.Row, 4096)
	row := 0
	for _, rg := range pf.RowGroups() {
		rows := rg.Rows()
		for {
			n, rerr := rows.ReadRows(buf)
			for _, r := range buf[:n] {
				row++
				s := sample{id: l.fileID, line: row + 1}
				if l.id >= 0 {
					s.id = r[l.id].String()
				}
				tv := r[l.t]
				zoned := true
				switch {
				case tv.IsNull():
					rows.Close()
					return fmt.Errorf("%s:%d:%d: an empty time: %w", path, row+1, l.t+1, ErrInput)
				case unit > 0:
					s.t = tv.Int64() * int64(unit)
				case tv.Kind() == parquet.ByteArray:
					var err error
					if s.t, zoned, err = parseTime(tv.ByteArray()); err != nil {
						rows.Close()
						return fmt.Errorf("%s:%d:%d: %v: %w", path, row+1, l.t+1, err, ErrInput)
					}
				default:
					var err error
					if s.t, _, err = parseTime([]byte(tv.String())); err != nil {
						rows.Close()
						return fmt.Errorf("%s:%d:%d: %v: %w", path, row+1, l.t+1, err, ErrInput)
					}
				}
				if !l.kindKnown {
					l.zoned, l.kindKnown = zoned, true
				} else if zoned != l.zoned {
					rows.Close()
					return fmt.Errorf("%s:%d:%d: a time %s where the file's first time was %s; give every time in one form: %w", path, row+1, l.t+1, zoneWord(zoned), zoneWord(l.zoned), ErrInput)
				}
				for a, c := range []int{l.x, l.y, l.z} {
					v := r[c]
					var x float64
					switch v.Kind() {
					case parquet.Double:
						x = v.Double()
					case parquet.Float:
						x = float64(v.Float())
					case parquet.Int32, parquet.Int64:
						x = float64(v.Int64())
					default:
						rows.Close()
						return fmt.Errorf("%s:%d:%d: %q is not a number of acceleration: %w", path, row+1, c+1, v.String(), ErrInput)
					}
					if v.IsNull() || x != x || x > 1e6 || x < -1e6 {
						rows.Close()
						return fmt.Errorf("%s:%d:%d: %v is not a number of acceleration: %w", path, row+1, c+1, v, ErrInput)
					}
					s.a[a] = x
				}
				if err := each(l, s); err != nil {
					rows.Close()
					return err
				}
			}
			if errors.Is(rerr, io.EOF) {
				break
			}
			if rerr != nil {
				rows.Close()
				return fmt.Errorf("%s: reading row %d failed (%v); the file may be damaged: %w", path, row+2, rerr, ErrInput)
			}
		}
		rows.Close()
	}
	return nil
}

// joinNames is the column names as a comma-separated header, for findLayout.
func joinNames(names []string) string {
	out := ""
	for i, n := range names {
		if i > 0 {
			out += ","
		}
		out += n
	}
	return out
}
