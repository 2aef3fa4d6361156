package cohort

import (
	"errors"
	"fmt"
	"io"
	"math"
	"os"
	"strconv"
	"strings"
	"time"

	"github.com/parquet-go/parquet-go"
	"github.com/parquet-go/parquet-go/format"
)

// readParquet reads a flat Parquet file (github.com/parquet-go/parquet-go) row group by row
// group. Feature columns must be numeric (INT32, INT64, FLOAT, DOUBLE), a null is a missing
// cell; ids, waves and labels may be text or integers; the order column may be integers,
// TIMESTAMP columns or ISO-8601 text. Positions in messages are the row (as the line) and the
// column number.
func (r *reader) readParquet(p string) (err error) {
	// parquet-go can panic on a damaged file (seen in TestDamagedBinaryInputs): that is a damaged
	// input for us, reported like any other.
	defer func() {
		if v := recover(); v != nil {
			err = &InputError{File: p, Msg: fmt.Sprintf("the Parquet file is damaged (%v); write it again, or export CSV", v), Err: ErrNotText}
		}
	}()
	f, err := os.Open(p)
	if err != nil {
		return &InputError{File: p, Msg: "cannot open: " + err.Error(), Err: ErrOpen}
	}
	defer f.Close()
	st, err := f.Stat()
	if err != nil {
		return &InputError{File: p, Msg: "cannot open: " + err.Error(), Err: ErrOpen}
	}
	pf, err := parquet.OpenFile(f, st.Size())
	if err != nil {
		return &InputError{File: p, Msg: "not a readable Parquet file (" + err.Error() + "); write it again, or export CSV", Err: ErrNotText}
	}
	schema := pf.Schema()
	var header []string
	var leaves []parquet.LeafColumn
	for _, path := range schema.Columns() {
		if len(path) != 1 {
			return &InputError{File: p, Field: strings.Join(path, "."), Msg: "is a nested column; write the table flat, one column per variable", Err: ErrRagged}
		}
		leaf, _ := schema.Lookup(path...)
		if leaf.MaxRepetitionLevel > 0 {
			return &InputError{File: p, Field: path[0], Msg: "is a repeated column; write one value per cell", Err: ErrRagged}
		}
		header = append(header, path[0])
		leaves = append(leaves, leaf)
	}
	if len(header) == 0 {
		return &InputError{File: p, Msg: "has no columns", Err: ErrEmpty}
	}
	roles, err := r.assignRoles(p, header)
	if err != nil {
		return err
	}
	numeric := func(c int) bool {
		switch leaves[c].Node.Type().Kind() {
		case parquet.Int32, parquet.Int64, parquet.Float, parquet.Double:
			return true
		}
		return false
	}
	kindName := func(c int) string { return leaves[c].Node.Type().String() }
	if r.features == nil { // the first file: numeric columns are the features
		var keep []int
		for _, c := range roles.features {
			if numeric(c) {
				keep = append(keep, c)
				r.features = append(r.features, header[c])
			} else if len(r.opts.Features) > 0 {
				return &InputError{File: p, Column: c + 1, Field: header[c], Msg: fmt.Sprintf("is %s, not a number, but --features chose it; choose numeric columns", kindName(c)), Err: ErrNotNumber}
			} else {
				r.ignored = append(r.ignored, Note{header[c], fmt.Sprintf("%s column, not a feature", kindName(c))})
			}
		}
		if len(keep) == 0 {
			return &InputError{File: p, Msg: "no numeric feature columns; check --features", Err: ErrNoColumn}
		}
		roles.features = keep
	} else {
		for _, c := range roles.features {
			if !numeric(c) {
				return &InputError{File: p, Column: c + 1, Field: header[c], Msg: fmt.Sprintf("is %s here but numeric in %s; write it as a number", kindName(c), r.firstFile), Err: ErrMismatch}
			}
		}
	}
	var unit time.Duration // of a TIMESTAMP order column
	if roles.order >= 0 {
		if lt := leaves[roles.order].Node.Type().LogicalType(); lt != nil {
			if ts, ok := lt.Value.(*format.TimestampType); ok {
				if u, ok := ts.Unit.Value.(interface{ Duration() time.Duration }); ok {
					unit = u.Duration()
				}
			}
		}
	}
	text := func(v parquet.Value) string {
		switch {
		case v.IsNull():
			return ""
		case v.Kind() == parquet.ByteArray || v.Kind() == parquet.FixedLenByteArray:
			return string(v.ByteArray())
		case v.Kind() == parquet.Int32 || v.Kind() == parquet.Int64:
			return strconv.FormatInt(v.Int64(), 10)
		}
		return v.String()
	}
	fileIdx := len(r.files)
	rd := parquet.NewReader(pf)
	defer rd.Close()
	buf := make([]parquet.Row, 1024)
	vals := make([]float64, len(r.features))
	rowNo := 1 // the header is line 1, as in a text table
	for {
		n, err := rd.ReadRows(buf)
		for _, row := range buf[:n] {
			rowNo++
			if rowNo%4096 == 0 && r.ctx.Err() != nil {
				return r.ctx.Err()
			}
			cells := make([]parquet.Value, len(header))
			for _, v := range row {
				if c := v.Column(); c >= 0 && c < len(cells) {
					cells[c] = v
				}
			}
			id := strings.TrimSpace(text(cells[roles.id]))
			if id == "" {
				return &InputError{File: p, Line: rowNo, Column: roles.id + 1, Field: header[roles.id], Msg: "participant id is empty; fill it in or remove the row", Err: ErrMissingID}
			}
			wave, label := "", ""
			if roles.wave >= 0 {
				wave = strings.TrimSpace(text(cells[roles.wave]))
			}
			if roles.label >= 0 {
				label = strings.TrimSpace(text(cells[roles.label]))
			}
			var ord int64
			if roles.order >= 0 {
				cell := text(cells[roles.order])
				if unit > 0 && !cells[roles.order].IsNull() {
					cell = time.Unix(0, cells[roles.order].Int64()*int64(unit)).UTC().Format(time.RFC3339Nano)
				}
				pos := func(int) (int, int) { return rowNo, roles.order + 1 }
				if ord, err = r.parseOrder(p, pos, roles.order, header[roles.order], cell, parseOrderCell); err != nil {
					return err
				}
			}
			for j, c := range roles.features {
				v := cells[c]
				switch {
				case v.IsNull():
					vals[j] = math.NaN()
				case v.Kind() == parquet.Double:
					vals[j] = v.Double()
				case v.Kind() == parquet.Float:
					vals[j] = float64(v.Float())
				default:
					vals[j] = float64(v.Int64())
				}
				if math.IsInf(vals[j], 0) || math.Abs(vals[j]) > maxMagnitude {
					return &InputError{File: p, Line: rowNo, Column: c + 1, Field: header[c], Msg: numberMsg(strconv.FormatFloat(vals[j], 'g', -1, 64), ',', ErrNonFinite), Err: ErrNonFinite}
				}
			}
			if err := r.appendRow(p, fileIdx, id, wave, ord, roles.order < 0, vals, label, rowNo); err != nil {
				return err
			}
		}
		if errors.Is(err, io.EOF) {
			break
		}
		if err != nil {
			return &InputError{File: p, Line: rowNo, Msg: "reading the rows failed (" + err.Error() + "); the file may be damaged", Err: ErrNotText}
		}
	}
	if rowNo == 1 {
		return &InputError{File: p, Line: 1, Msg: "has columns but no windows; each row should be one window", Err: ErrEmpty}
	}
	hexsum, size, err := hashFile(p)
	if err != nil {
		return &InputError{File: p, Msg: "cannot read: " + err.Error(), Err: ErrOpen}
	}
	r.files = append(r.files, FileInfo{Path: p, SHA256: hexsum, Bytes: size, Rows: rowNo - 1})
	r.rows += rowNo - 1
	r.progress()
	return nil
}
