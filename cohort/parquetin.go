package cohort

import (
	"context"
	"errors"
	"fmt"
	"io"
	"math"
	"os"
	"slices"
	"strconv"
	"strings"
	"time"

	"github.com/parquet-go/parquet-go"
	"github.com/parquet-go/parquet-go/format"

	"github.com/cohortmix/cohortmix/cluster/par"
	"github.com/cohortmix/cohortmix/cohort/note"
	"github.com/cohortmix/cohortmix/cohort/pqframe"
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
	f, size, pf, err := openParquet(p)
	if err != nil {
		return err
	}
	defer f.Close()
	header, leaves, err := pqColumns(p, pf.Schema())
	if err != nil {
		return err
	}
	roles, err := r.assignRoles(p, header)
	if err != nil {
		return err
	}
	if err := r.pqFeatures(p, header, leaves, &roles); err != nil {
		return err
	}
	// The file's hash is taken while its columns are read.
	type hashResult struct {
		sum  string
		size int64
		err  error
	}
	hashing := make(chan hashResult, 1)
	go func() {
		sum, size, err := hashFile(p)
		hashing <- hashResult{sum, size, err}
	}()
	rows, err := r.readPQGroups(pf, r.newPQSpec(p, header, leaves, roles), size)
	if err != nil {
		return err
	}
	if rows == 0 {
		return &InputError{File: p, Line: 1, Msg: "has columns but no windows; each row should be one window", Err: ErrEmpty}
	}
	hashed := <-hashing
	if hashed.err != nil {
		return &InputError{File: p, Msg: "cannot read: " + hashed.err.Error(), Err: ErrOpen, Cause: hashed.err}
	}
	madeBy, _ := pf.Lookup(MadeByKey)
	r.files = append(r.files, FileInfo{Path: p, SHA256: hashed.sum, Bytes: hashed.size, Rows: rows, MadeBy: madeBy})
	r.rows += rows
	r.progress()
	return nil
}

// openParquet opens the Parquet file at p after checking its frame; the caller closes the file.
func openParquet(p string) (*os.File, int64, *parquet.File, error) {
	f, err := os.Open(p)
	if err != nil {
		return nil, 0, nil, &InputError{File: p, Msg: "cannot open: " + err.Error(), Err: ErrOpen, Cause: err}
	}
	fail := func(e error) (*os.File, int64, *parquet.File, error) {
		f.Close()
		return nil, 0, nil, e
	}
	st, err := f.Stat()
	if err != nil {
		return fail(&InputError{File: p, Msg: "cannot open: " + err.Error(), Err: ErrOpen, Cause: err})
	}
	if err := pqframe.Check(f, st.Size()); err != nil {
		return fail(&InputError{File: p, Msg: err.Error(), Err: ErrNotText, Cause: err})
	}
	pf, err := parquet.OpenFile(f, st.Size())
	if err != nil {
		return fail(&InputError{File: p, Msg: "not a readable Parquet file (" + err.Error() + "); write it again, or export CSV", Err: ErrNotText, Cause: err})
	}
	return f, st.Size(), pf, nil
}

// newPQSpec is how the row groups of the Parquet file p are read into windows.
func (r *reader) newPQSpec(p string, header []string, leaves []parquet.LeafColumn, roles roles) *pqSpec {
	unit := pqTimeUnit(leaves, roles.order)
	intOrder := false
	if roles.order >= 0 {
		k := leaves[roles.order].Node.Type().Kind()
		intOrder = unit > 0 || k == parquet.Int32 || k == parquet.Int64
	}
	spec := &pqSpec{file: p, fileIdx: len(r.files), header: header, roles: roles, unit: unit, intOrder: intOrder, nf: len(r.features), labels: r.hasLabels, workers: r.opts.Workers, rows: r.opts.tuning.parquetRows}
	if spec.rows <= 0 {
		spec.rows = pqRows
	}
	return spec
}

// readPQGroups reads every row group into the store and returns the rows read; size is the
// file's, for progress.
func (r *reader) readPQGroups(pf *parquet.File, spec *pqSpec, size int64) (int, error) {
	p, header, roles := spec.file, spec.header, spec.roles
	rows := 0
	total := pf.NumRows()
	emit := func(c *parsedChunk) error {
		if err := r.checkKinds(p, header, roles, c); err != nil {
			return err
		}
		rows += c.n
		if err := r.mergeChunk(p, c, roles.order < 0); err != nil {
			return err
		}
		if r.opts.Progress != nil && total > 0 {
			r.opts.Progress(p, size*int64(rows)/total, size, r.windows.Load())
		}
		return nil
	}
	for _, rg := range pf.RowGroups() {
		if err := spec.readGroup(r.ctx, rg, rows, emit); err != nil {
			return 0, err
		}
	}
	return rows, nil
}

// pqColumns are a Parquet file's flat columns: their names and leaves; a nested or repeated
// column is an error.
func pqColumns(p string, schema *parquet.Schema) ([]string, []parquet.LeafColumn, error) {
	var header []string
	var leaves []parquet.LeafColumn
	for _, path := range schema.Columns() {
		if len(path) != 1 {
			return nil, nil, &InputError{File: p, Field: strings.Join(path, "."), Msg: "is a nested column; write the table flat, one column per variable", Err: ErrRagged}
		}
		leaf, _ := schema.Lookup(path...)
		if leaf.MaxRepetitionLevel > 0 {
			return nil, nil, &InputError{File: p, Field: path[0], Msg: "is a repeated column; write one value per cell", Err: ErrRagged}
		}
		header = append(header, path[0])
		leaves = append(leaves, leaf)
	}
	if len(header) == 0 {
		return nil, nil, &InputError{File: p, Msg: "has no columns", Err: ErrEmpty}
	}
	return header, leaves, nil
}

// pqFeatures settles the feature columns of a Parquet file: in the first file, its numeric
// columns among roles.features (the others are noted as not features); in a later one, the same
// columns must be numeric.
func (r *reader) pqFeatures(p string, header []string, leaves []parquet.LeafColumn, roles *roles) error {
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
				return &InputError{File: p, Column: c + 1, Field: header[c], Msg: fmt.Sprintf("is %s, not a number, but cohort.ReadOptions.Features chose it; choose numeric columns", kindName(c)), Err: ErrNotNumber}
			} else {
				r.ignored = append(r.ignored, LeftOut{header[c], note.Note{Kind: LeftOutColumnKind, Names: []string{kindName(c)}}})
			}
		}
		if len(keep) == 0 {
			return &InputError{File: p, Msg: "no numeric feature columns; check cohort.ReadOptions.Features", Err: ErrNoColumn}
		}
		roles.features = keep
	} else {
		for _, c := range roles.features {
			if !numeric(c) {
				return &InputError{File: p, Column: c + 1, Field: header[c], Msg: fmt.Sprintf("is %s here but numeric in %s; write it as a number", kindName(c), r.firstFile), Err: ErrMismatch}
			}
		}
	}
	return nil
}

// pqTimeUnit is the unit of a TIMESTAMP order column (0 for another column, or none).
func pqTimeUnit(leaves []parquet.LeafColumn, order int) time.Duration {
	if order < 0 {
		return 0
	}
	if lt := leaves[order].Node.Type().LogicalType(); lt != nil {
		if ts, ok := lt.Value.(*format.TimestampType); ok {
			if u, ok := ts.Unit.Value.(interface{ Duration() time.Duration }); ok {
				return u.Duration()
			}
		}
	}
	return 0
}

// pqSpec is what reading a Parquet file's row groups needs, with the buffers it reuses.
type pqSpec struct {
	bufs     *pqBuffers
	file     string
	fileIdx  int
	header   []string
	roles    roles
	unit     time.Duration // of a TIMESTAMP order column; 0 otherwise
	intOrder bool          // the order column holds integers (or timestamps)
	nf       int
	labels   bool
	workers  int // goroutines for the columns and rows (0: one per core)
	rows     int // rows read at a time (pqRows)
}

// pqBuffers are the slices one read of rows fills, kept for the next.
type pqBuffers struct {
	vals                       []float64
	ids, waves, labels, orders []string
	kinds, chunkKinds          []byte
	missing                    []bool
	ords                       []int64
	feats                      [][]float64
}

// buffers returns buffers for n rows, made on first use.
func (s *pqSpec) buffers(n int) *pqBuffers {
	if b := s.bufs; b != nil && len(b.ids) >= n {
		return b
	}
	b := &pqBuffers{vals: make([]float64, n*(s.nf+2)), ids: make([]string, n), waves: make([]string, n), labels: make([]string, n),
		orders: make([]string, n), kinds: make([]byte, n), chunkKinds: make([]byte, 0, n), missing: make([]bool, n), ords: make([]int64, n), feats: make([][]float64, s.nf)}
	for j := range b.feats {
		b.feats[j] = make([]float64, n)
	}
	s.bufs = b
	return b
}

// pqError is the first problem found in a column, at a row of the slice being read.
type pqError struct {
	row int
	err error
}

// pqRows is how many rows of a row group are read at a time, unless ReadOptions.tuning says
// otherwise: the chunk they make is what is
// held in memory, whatever the size of the group.
const pqRows = 1 << 16

// readGroup reads one row group column by column, pqRows rows at a time with the columns on
// all cores, and hands each slice to emit as a chunk in store layout. before is the number of
// rows in earlier groups; row i of the file is line i+2 in messages, the header counting as
// line 1 as in a text table.
func (s *pqSpec) readGroup(ctx context.Context, rg parquet.RowGroup, before int, emit func(*parsedChunk) error) error {
	ro := s.roles
	cols := []int{ro.id}
	if ro.wave >= 0 {
		cols = append(cols, ro.wave)
	}
	if s.labels {
		cols = append(cols, ro.label)
	}
	if ro.order >= 0 {
		cols = append(cols, ro.order)
	}
	cols = append(cols, ro.features...)
	chunks := rg.ColumnChunks()
	cursors := make([]*pqCursor, len(cols))
	for k, col := range cols {
		cursors[k] = &pqCursor{pages: chunks[col].Pages()}
	}
	defer func() {
		for _, cu := range cursors {
			cu.close()
		}
	}()
	// One goroutine reads the next rows while emit takes the last ones; the two alternate
	// between two sets of buffers, and the hand-over waits for emit, so neither touches the
	// set the other holds.
	total := int(rg.NumRows())
	type read struct {
		c   *parsedChunk
		err error
	}
	out := make(chan read)
	stop := make(chan struct{})
	done := make(chan struct{})
	go func() {
		defer close(done)
		defer close(out)
		defer func() { // a library panic here is a damaged file, as in readParquet
			if v := recover(); v != nil {
				err := &InputError{File: s.file, Msg: fmt.Sprintf("the Parquet file is damaged (%v); write it again, or export CSV", v), Err: ErrNotText}
				select {
				case out <- read{nil, err}:
				case <-stop:
				}
			}
		}()
		sets := [2]*pqBuffers{}
		for k, start := 0, 0; start < total; k, start = k+1, start+s.rows {
			s.bufs = sets[k%2]
			c, err := s.readRows(cols, cursors, before+start, min(s.rows, total-start))
			sets[k%2] = s.bufs
			select {
			case out <- read{c, err}:
			case <-stop:
				return
			}
			if err != nil {
				return
			}
		}
	}()
	defer func() { close(stop); <-done }()
	for rd := range out {
		if rd.err != nil {
			return rd.err
		}
		if err := ctx.Err(); err != nil {
			return err
		}
		if err := emit(rd.c); err != nil {
			return err
		}
	}
	return nil
}

// readRows reads the next n rows of every column; first is the file row of the first.
func (s *pqSpec) readRows(cols []int, cursors []*pqCursor, first, n int) (*parsedChunk, error) {
	rr := s.newRowRead(first, n, len(cols))
	read, dsts := rr.readers(cols)
	found := make([]*pqError, len(cols))
	par.Each(len(cols), s.workers, func(k int) {
		found[k] = s.readColumn(cursors[k], n, cols[k], first, dsts[k], read[k])
	})
	// The first problem in row order (then in column order) is the one reported.
	var bad *pqError
	for _, e := range found {
		if e != nil && (bad == nil || e.row < bad.row) {
			bad = e
		}
	}
	rr.layFeatures()
	return rr.rows(bad)
}

// pqRowRead is one read of n rows from first: each column read into a slice of its own (the
// goroutines never write near each other), then laid out in rows.
type pqRowRead struct {
	s                          *pqSpec
	first, n, w                int
	c                          *parsedChunk
	ids, waves, labels, orders []string
	kinds                      []byte
	ords                       []int64
	feats                      [][]float64
	missing                    []bool
	trims                      []struct{ n, at int } // by column: cells with spaces around them, and the first one's row
}

func (s *pqSpec) newRowRead(first, n, cols int) *pqRowRead {
	w := s.nf + 2
	b := s.buffers(n)
	rr := &pqRowRead{s: s, first: first, n: n, w: w, c: &parsedChunk{vals: b.vals[:n*w], kinds: b.chunkKinds[:0]},
		ids: b.ids[:n], kinds: b.kinds[:n], ords: b.ords[:n], missing: b.missing[:n], trims: make([]struct{ n, at int }, cols)}
	if s.roles.wave >= 0 {
		rr.waves = b.waves[:n]
	}
	if s.labels {
		rr.labels = b.labels[:n]
	}
	if s.roles.order >= 0 && !s.intOrder {
		rr.orders = b.orders[:n]
	}
	rr.feats = make([][]float64, s.nf)
	for j := range rr.feats {
		rr.feats[j] = b.feats[j][:n]
	}
	return rr
}

// line is the input line of row i.
func (rr *pqRowRead) line(i int) int { return rr.first + i + 2 }

// readers are, for each column read, the function that takes its values into the read's slices,
// and for a feature column its slice (for readColumn's plain path).
func (rr *pqRowRead) readers(cols []int) ([]func([]parquet.Value, int) *pqError, [][]float64) {
	ro := rr.s.roles
	read := make([]func([]parquet.Value, int) *pqError, len(cols))
	dsts := make([][]float64, len(cols))
	for k, col := range cols {
		switch {
		case col == ro.id:
			read[k] = rr.text(k, col, rr.ids, true)
		case col == ro.wave:
			read[k] = rr.text(k, col, rr.waves, true)
		case col == ro.label:
			read[k] = rr.text(k, col, rr.labels, true)
		case col == ro.order && rr.orders != nil:
			read[k] = rr.text(k, col, rr.orders, false)
		case col == ro.order:
			read[k] = rr.order(col)
		default:
			dsts[k] = rr.feats[slices.Index(ro.features, col)]
			read[k] = rr.feature(col, dsts[k])
		}
	}
	return read, dsts
}

// text takes a text column's cells into dst, checking every byte, trimming spaces around them
// where trim is set (counted in trims), and keeping one string for a run of equal cells.
func (rr *pqRowRead) text(k, col int, dst []string, trim bool) func([]parquet.Value, int) *pqError {
	s := rr.s
	return func(vals []parquet.Value, at int) *pqError {
		for i, v := range vals {
			t := pqText(v)
			if off := textCellFault(t); off >= 0 {
				return &pqError{at + i, &InputError{File: s.file, Line: rr.line(at + i), Column: col + 1, Field: s.header[col], Msg: faultMsg(t[off]), Err: ErrNotText}}
			}
			if trim {
				if tt := strings.TrimSpace(t); len(tt) != len(t) {
					if rr.trims[k].n == 0 {
						rr.trims[k].at = at + i
					}
					rr.trims[k].n++
					t = tt
				}
			}
			if at+i > 0 && t == dst[at+i-1] {
				t = dst[at+i-1] // one string for a run of equal cells
			}
			dst[at+i] = t
		}
		return nil
	}
}

// order takes an integer or TIMESTAMP order column's cells into the order keys.
func (rr *pqRowRead) order(col int) func([]parquet.Value, int) *pqError {
	s := rr.s
	scale, kind := int64(1), byte('i')
	if s.unit > 0 {
		scale, kind = int64(s.unit), 't'
	}
	return func(vals []parquet.Value, at int) *pqError {
		for i, v := range vals {
			if v.IsNull() {
				return &pqError{at + i, &InputError{File: s.file, Line: rr.line(at + i), Column: col + 1, Field: s.header[col], Msg: "the order cell is empty; fill it in", Err: ErrOrder}}
			}
			if kind == 't' && (v.Int64() < minTime/scale || v.Int64() > maxTime/scale) {
				t := time.Unix(0, 0).UTC().Add(time.Duration(v.Int64()/int64(time.Second/time.Duration(scale))) * time.Second)
				return &pqError{at + i, &InputError{File: s.file, Line: rr.line(at + i), Column: col + 1, Field: s.header[col], Msg: orderMsg(t.Format("2006-01-02T15:04:05")), Err: ErrOrder}}
			}
			rr.ords[at+i] = v.Int64() * scale
			rr.kinds[at+i] = kind
		}
		return nil
	}
}

// feature takes a numeric feature column's cells into dst (an empty cell is NaN, missing).
func (rr *pqRowRead) feature(col int, dst []float64) func([]parquet.Value, int) *pqError {
	s := rr.s
	return func(vals []parquet.Value, at int) *pqError {
		for i, v := range vals {
			var x float64
			switch {
			case v.IsNull():
				x = math.NaN()
			case v.Kind() == parquet.Double:
				x = v.Double()
			case v.Kind() == parquet.Float:
				x = float64(v.Float())
			default:
				x = float64(v.Int64())
			}
			if math.IsInf(x, 0) || math.Abs(x) > maxMagnitude {
				return &pqError{at + i, &InputError{File: s.file, Line: rr.line(at + i), Column: col + 1, Field: s.header[col], Msg: numberMsg(strconv.FormatFloat(x, 'g', -1, 64), ',', ErrNonFinite), Err: ErrNonFinite}}
			}
			dst[at+i] = x
		}
		return nil
	}
}

// layFeatures lays the features out in rows on all cores, a stretch of rows each, noting the
// rows with a missing cell; the rest of each row is filled in order by rows.
func (rr *pqRowRead) layFeatures() {
	const stretch = 4096
	n, w, nf := rr.n, rr.w, rr.s.nf
	par.Each((n+stretch-1)/stretch, rr.s.workers, func(p int) {
		for i := p * stretch; i < min(n, (p+1)*stretch); i++ {
			row := rr.c.vals[i*w : i*w+nf]
			m := false
			for j, f := range rr.feats {
				v := f[i]
				row[j] = v
				m = m || v != v
			}
			rr.missing[i] = m
		}
	})
}

// rows fills in each row's order key and source and adds its window, in order, stopping at the
// first problem in row order (bad, from the columns, or an empty id or wave); it returns the
// chunk with the order cells the kinds' check must see.
func (rr *pqRowRead) rows(bad *pqError) (*parsedChunk, error) {
	s, c, w, ro := rr.s, rr.c, rr.w, rr.s.roles
	for _, tr := range rr.trims {
		if tr.n > 0 && (c.trimmed == 0 || rr.line(tr.at) < c.trimLine) {
			c.trimLine = rr.line(tr.at)
		}
		c.trimmed += tr.n
	}
	for i := 0; i < rr.n; i++ {
		if bad != nil && i == bad.row {
			return nil, bad.err
		}
		row := c.vals[i*w : (i+1)*w]
		row[s.nf] = math.Float64frombits(uint64(rr.ords[i]))
		if rr.ids[i] == "" {
			return nil, &InputError{File: s.file, Line: rr.line(i), Column: ro.id + 1, Field: s.header[ro.id], Msg: "participant id is empty; fill it in or remove the row", Err: ErrMissingID}
		}
		if rr.orders != nil {
			v, k, ok := parseOrderCell(rr.orders[i])
			if !ok {
				return nil, &InputError{File: s.file, Line: rr.line(i), Column: ro.order + 1, Field: s.header[ro.order], Msg: orderMsg(rr.orders[i]), Err: ErrOrder}
			}
			c.vals[i*w+s.nf] = math.Float64frombits(uint64(v))
			rr.kinds[i] = k
		}
		c.vals[i*w+s.nf+1] = packSource(s.fileIdx, rr.line(i))
		wave := ""
		if rr.waves != nil {
			if wave = rr.waves[i]; wave == "" {
				return nil, &InputError{File: s.file, Line: rr.line(i), Column: ro.wave + 1, Field: s.header[ro.wave], Msg: emptyWaveMsg, Err: ErrMissingID}
			}
		}
		c.addWindow([]byte(rr.ids[i]), []byte(wave), rr.kinds[i], rr.missing[i])
	}
	if bad != nil {
		return nil, bad.err
	}
	c.labels = rr.labels
	if ro.order >= 0 && rr.n > 0 {
		// The order cells checkKinds must see: the first, and the first of another kind.
		c.cells = append(c.cells, orderCell{row: 0, text: orderText(c, 0, w, rr.orders), col: ro.order + 1})
		for i := 1; i < rr.n; i++ {
			if rr.kinds[i] != rr.kinds[0] {
				c.cells = append(c.cells, orderCell{row: i, text: orderText(c, i, w, rr.orders), col: ro.order + 1})
				break
			}
		}
	}
	return c, nil
}

// orderText is window i's order cell as text, for parseOrder.
func orderText(c *parsedChunk, i, w int, orders []string) string {
	if orders != nil {
		return orders[i]
	}
	v := int64(math.Float64bits(c.vals[i*w+w-2]))
	if isTime(c.kinds[i]) {
		return time.Unix(0, v).UTC().Format(time.RFC3339Nano)
	}
	return strconv.FormatInt(v, 10)
}

// pqCursor reads a column chunk's values across its pages.
type pqCursor struct {
	pages parquet.Pages
	page  parquet.Page
	vr    parquet.ValueReader
	buf   []parquet.Value
}

func (cu *pqCursor) close() {
	if cu.page != nil {
		parquet.Release(cu.page)
		cu.page = nil
	}
	cu.pages.Close()
}

// readColumn hands the next n values of a column to read, with their row in the slice; a library
// panic on a damaged page becomes a positioned error. first is the file row of the slice's first.
// A feature column (dst, its values) whose page reads plain doubles is read straight into dst.
func (s *pqSpec) readColumn(cu *pqCursor, n, col, first int, dst []float64, read func([]parquet.Value, int) *pqError) (found *pqError) {
	at := 0
	damaged := func(msg string) *pqError {
		return &pqError{at, &InputError{File: s.file, Line: first + at + 2, Column: col + 1, Field: s.header[col], Msg: msg, Err: ErrNotText}}
	}
	defer func() {
		if v := recover(); v != nil {
			found = damaged(fmt.Sprintf("the Parquet file is damaged (%v); write it again, or export CSV", v))
		}
	}()
	if cu.buf == nil {
		cu.buf = make([]parquet.Value, 4096)
	}
	for at < n {
		if cu.vr == nil {
			page, err := cu.pages.ReadPage()
			if errors.Is(err, io.EOF) {
				return damaged(fmt.Sprintf("the column ends after %d of its rows; the file is damaged", first+at))
			}
			if err != nil {
				return damaged("reading the column failed (" + err.Error() + "); the file may be damaged")
			}
			cu.page, cu.vr = page, page.Values()
		}
		var k int
		var err error
		if dr, ok := cu.vr.(parquet.DoubleReader); ok && dst != nil {
			k, err = dr.ReadDoubles(dst[at:n])
			for i, x := range dst[at : at+k] {
				if math.IsInf(x, 0) || math.Abs(x) > maxMagnitude { // NaN is a missing cell, as in text
					at += i
					return &pqError{at, &InputError{File: s.file, Line: first + at + 2, Column: col + 1, Field: s.header[col], Msg: numberMsg(strconv.FormatFloat(x, 'g', -1, 64), ',', ErrNonFinite), Err: ErrNonFinite}}
				}
			}
			at += k
		} else {
			k, err = cu.vr.ReadValues(cu.buf[:min(len(cu.buf), n-at)])
			if k > 0 {
				if e := read(cu.buf[:k], at); e != nil {
					return e
				}
				at += k
			}
		}
		if errors.Is(err, io.EOF) {
			parquet.Release(cu.page)
			cu.page, cu.vr = nil, nil
		} else if err != nil {
			return damaged("reading the column failed (" + err.Error() + "); the file may be damaged")
		}
	}
	return nil
}

// pqText is a Parquet cell as text: strings as they are, integers in decimal, nulls empty.
func pqText(v parquet.Value) string {
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
