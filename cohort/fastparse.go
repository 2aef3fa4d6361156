package cohort

import (
	"bufio"
	"bytes"
	"encoding/csv"
	"errors"
	"fmt"
	"io"
	"math"
	"slices"
	"strconv"
	"strings"
	"sync"
	"time"

	"github.com/cohortmix/cohortmix/cluster/par"
	"github.com/cohortmix/cohortmix/cohort/decimal"
)

// The body of a table (everything after its first window) is parsed in chunks of whole lines,
// in parallel, and merged in file order, so the result is the same whatever the chunk size and
// the number of cores. A chunk without quote characters is split by hand; a chunk with quotes is
// extended until its quotes pair up and is parsed by encoding/csv.

// defaultChunkBytes is the number of bytes read per chunk (extended to the end of a line), unless
// ReadOptions.tuning says otherwise.
const defaultChunkBytes = 4 << 20

// parseSpec is what a worker needs to parse rows of one file; it is read-only.
type parseSpec struct {
	file    string
	fileIdx int
	header  []string
	roles   roles
	delim   rune
	nf      int   // features
	featAt  []int // for each column, its feature index, or -1
	decimal byte  // a second decimal separator (',' with decimal commas), or '.'
	comma   bool  // the file's numbers use a decimal comma (semicolon files, and tab files whose head shows one)
	// generalRows sends every row through the general reader (readTuning).
	generalRows bool
}

func newParseSpec(file string, fileIdx int, header []string, ro roles, delim rune, comma bool) *parseSpec {
	s := &parseSpec{file: file, fileIdx: fileIdx, header: header, roles: ro, delim: delim, nf: len(ro.features), decimal: '.', comma: comma}
	if comma {
		s.decimal = ','
	}
	s.featAt = make([]int, len(header))
	for i := range s.featAt {
		s.featAt[i] = -1
	}
	for j, col := range ro.features {
		s.featAt[col] = j
	}
	return s
}

// A window in a chunk, and in the store, is nf+2 values: the features, then the order key and
// the window's source (file and line) as bits, so that what the reader needs after the parse
// lives beside the features and not in memory.
func packSource(file, line int) float64 {
	return math.Float64frombits(uint64(file)<<32 | uint64(min(line, math.MaxUint32)))
}

func unpackSource(v float64) (file, line int) {
	b := math.Float64bits(v)
	return int(b >> 32), int(b & math.MaxUint32)
}

// parsedChunk holds a chunk's windows in store layout.
type parsedChunk struct {
	n      int       // windows
	vals   []float64 // n × (nf+2)
	segs   []segment // stretches of consecutive windows of one unit
	kinds  []byte    // per window: 'i' integer, 't' time (0 without an order column)
	nan    []bool    // per window: a feature cell is missing (nil while none is)
	labels []string
	cells  []orderCell // order cell text and column of the first row, and of the first row of another kind
	err    error       // first error in the chunk, positioned
	// trimmed counts the rows whose id or wave had spaces around it; trimLine is the first.
	trimmed, trimLine int
	// lo is each feature's lowest value over the chunk's windows (missing cells aside; +Inf
	// when there is none), found by summarize.
	lo []float64
}

// summarize rounds every feature value of the chunk's windows (rows of width w) to float32
// precision and finds each of the d features' lowest value. Values are kept to float32 (7
// significant digits, more than accelerometer features carry) from the moment they are read:
// the windows file of a large input holds float32, and rounding every value alike makes the
// result the same whether the table stayed in memory or went to that file, and however the
// participants were split in shards.
func (c *parsedChunk) summarize(d, w int) {
	c.lo = make([]float64, d)
	for j := range c.lo {
		c.lo[j] = math.Inf(1)
	}
	for i := 0; i+w <= len(c.vals); i += w {
		row := c.vals[i : i+d]
		for j, v := range row {
			v = float64(float32(v))
			row[j] = v
			if v < c.lo[j] { // false for NaN
				c.lo[j] = v
			}
		}
	}
}

// segment is the windows [previous end, end) of one unit.
type segment struct {
	id, wave string
	end      int
}

type orderCell struct {
	row  int
	text string
	col  int
}

func (c *parsedChunk) rows() int { return c.n }

// line is the input line of window i.
func (c *parsedChunk) line(i, w int) int {
	_, l := unpackSource(c.vals[i*w+w-1])
	return l
}

// parseBody reads the rest of br in chunks, parses them on all cores, and hands each chunk to
// merge in order (par.Stream). firstLine is the line number of the first line in br.
func (r *reader) parseBody(br *bufio.Reader, spec *parseSpec, firstLine int, merge func(*parsedChunk) error) error {
	type job struct {
		data        []byte
		line, lines int
		quote       bool
	}
	ch := &chunker{br: br, size: r.opts.tuning.chunkBytes}
	if ch.size <= 0 {
		ch.size = defaultChunkBytes
	}
	line := firstLine
	var readErr error // what came with the last chunk read: the end, or an error
	next := func(int) (job, bool, error) {
		for readErr == nil {
			data, quote, err := ch.next()
			readErr = err
			if len(data) > 0 {
				j := job{data, line, bytes.Count(data, []byte{'\n'}), quote}
				line += j.lines
				r.progress()
				return j, true, nil
			}
		}
		if errors.Is(readErr, io.EOF) {
			return job{}, false, nil
		}
		return job{}, false, r.gzipCut(spec.file, readErr, line-1)
	}
	parse := func(_ int, j job, _ int) (*parsedChunk, error) {
		if off := textFault(j.data, true); off >= 0 {
			err := textFaultError(spec.file, j.data, off, j.line)
			chunkBufs.Put(&j.data)
			return nil, err
		}
		c := &parsedChunk{}
		if j.quote {
			spec.parseQuoted(j.data, j.line, c)
		} else {
			spec.parsePlain(j.data, j.line, j.lines+1, c)
		}
		if c.err == nil {
			c.summarize(spec.nf, spec.nf+2)
		}
		chunkBufs.Put(&j.data)
		return c, c.err
	}
	return par.Stream(r.ctx, r.opts.Workers, next, parse, func(_ int, c *parsedChunk) error { return merge(c) })
}

// chunker cuts a stream into chunks of whole lines; when a chunk holds quotes it is extended
// until they pair up, so that no quoted field is cut.
type chunker struct {
	size int // bytes per chunk
	br   *bufio.Reader
	rest []byte // the start of a line carried over from the previous chunk
}

// chunkBufs keeps the chunks' byte buffers for reuse once their chunk is parsed.
var chunkBufs sync.Pool

// valsBufs keeps the chunks' window values for reuse once their chunk is merged into the store,
// which copies them.
var valsBufs sync.Pool

// newVals returns an empty slice with room for n values, reused when one is at hand.
func newVals(n int) []float64 {
	if p, ok := valsBufs.Get().(*[]float64); ok && cap(*p) >= n {
		return (*p)[:0]
	}
	return make([]float64, 0, n)
}

// release hands a merged chunk's values back for a later chunk; the chunk must not be used
// after.
func (c *parsedChunk) release() {
	v := c.vals[:0]
	c.vals = nil
	valsBufs.Put(&v)
}

func (ch *chunker) next() ([]byte, bool, error) {
	var buf []byte
	if p, ok := chunkBufs.Get().(*[]byte); ok && cap(*p) >= ch.size {
		buf = (*p)[:ch.size]
	} else {
		buf = make([]byte, ch.size)
	}
	n := copy(buf, ch.rest)
	// Filled by hand rather than by io.ReadFull, which turns a plain end of the stream after a
	// partial read into io.ErrUnexpectedEOF: that is what a gzip stream cut short returns, and
	// the two must stay apart.
	m, err := 0, error(nil)
	for n+m < len(buf) && err == nil {
		var k int
		k, err = ch.br.Read(buf[n+m:])
		m += k
	}
	buf = buf[:n+m]
	ch.rest = nil
	if err == nil {
		if cut := bytes.LastIndexByte(buf, '\n'); cut >= 0 {
			ch.rest = append([]byte(nil), buf[cut+1:]...)
			buf = buf[:cut+1]
		} else { // one line longer than a chunk: read to its end
			for {
				line, lerr := ch.br.ReadSlice('\n')
				buf = append(buf, line...)
				if !errors.Is(lerr, bufio.ErrBufferFull) {
					err = lerr
					break
				}
			}
		}
	}
	quotes := bytes.Count(buf, []byte{'"'})
	for quotes%2 == 1 && err == nil { // inside a quoted field: read on to where it closes
		if len(ch.rest) > 0 {
			buf = append(buf, ch.rest...)
			quotes += bytes.Count(ch.rest, []byte{'"'})
			ch.rest = nil
			continue
		}
		line, lerr := ch.br.ReadSlice('\n')
		buf = append(buf, line...)
		quotes += bytes.Count(line, []byte{'"'})
		if lerr != nil && !errors.Is(lerr, bufio.ErrBufferFull) {
			err = lerr
		}
	}
	if errors.Is(err, io.EOF) && len(ch.rest) > 0 {
		buf = append(buf, ch.rest...)
		ch.rest = nil
	}
	if err != nil && !errors.Is(err, io.EOF) {
		// The stream broke (a compressed file cut short): only whole lines are handed on, so
		// that the break, not a line it cut in two, is what the reader reports.
		buf = buf[:bytes.LastIndexByte(buf, '\n')+1]
		ch.rest = nil
	}
	return buf, quotes > 0, err
}

// parsePlain parses lines without quotes. Each line is first read by fastRow, which parses
// plain decimals as it finds the delimiters; a line it cannot take (a missing or unusual cell,
// a wrong field count) is split at the delimiter and read by addRow, which also words the errors.
func (s *parseSpec) parsePlain(data []byte, line, rows int, c *parsedChunk) {
	c.vals = newVals(rows * (s.nf + 2))
	c.kinds = make([]byte, 0, rows)
	var fields [][]byte
	var starts []int
	for len(data) > 0 {
		end := bytes.IndexByte(data, '\n')
		var ln []byte
		if end < 0 {
			ln, data = data, nil
		} else {
			ln, data = data[:end], data[end+1:]
		}
		if n := len(ln); n > 0 && ln[n-1] == '\r' {
			ln = ln[:n-1]
		}
		if len(ln) == 0 {
			line++
			continue // blank lines are skipped, as encoding/csv does
		}
		if !s.generalRows && s.fastRow(c, ln, line) {
			line++
			continue
		}
		fields, starts = fields[:0], starts[:0]
		for start := 0; ; {
			i := bytes.IndexByte(ln[start:], byte(s.delim))
			if i < 0 {
				fields = append(fields, ln[start:])
				starts = append(starts, start+1)
				break
			}
			fields = append(fields, ln[start:start+i])
			starts = append(starts, start+1)
			start += i + 1
		}
		if len(fields) != len(s.header) {
			c.err = &InputError{File: s.file, Line: line, Msg: "row has a different number of fields than the header; fix the row or quote fields that contain the delimiter", Err: ErrRagged}
			return
		}
		if !s.addRow(c, line, func(i int) string { return string(fields[i]) }, func(i int) int { return starts[i] }, func(i int) []byte { return fields[i] }) {
			return
		}
		line++
	}
}

// plainEdges reports whether a non-empty cell starts and ends with a byte that trimming cannot
// remove: printable ASCII. Any other edge (a tab, a vertical tab, a no-break space or anything
// else outside ASCII, which strings.TrimSpace may trim) sends the line to the general path,
// which trims the id and wave as it does for every line. FuzzRead found a vertical tab here.
func plainEdges(b []byte) bool {
	first, last := b[0], b[len(b)-1]
	return first > ' ' && first < 0x80 && last > ' ' && last < 0x80
}

// fastRow parses a line whose feature cells are all plain decimals and whose id and order cells
// are plain, in one scan; it returns false, adding nothing, for any other line.
func (s *parseSpec) fastRow(c *parsedChunk, ln []byte, line int) bool {
	ro := s.roles
	w := s.nf + 2
	base := len(c.vals)
	c.vals = slices.Grow(c.vals, w)[:base+w]
	row := c.vals[base : base+w]
	var idb, waveb, ordb, labelb []byte
	delim := byte(s.delim)
	pos, last := 0, len(s.header)-1
	for col := 0; col <= last; col++ {
		if j := s.featAt[col]; j >= 0 {
			v, next, ok := scanDecimal(ln, pos, delim, s.decimal)
			if !ok {
				c.vals = c.vals[:base]
				return false
			}
			row[j], pos = v, next
		} else {
			var f []byte
			if i := bytes.IndexByte(ln[pos:], delim); i < 0 {
				f, pos = ln[pos:], len(ln)
			} else {
				f, pos = ln[pos:pos+i], pos+i
			}
			switch col {
			case ro.id:
				idb = f
			case ro.order:
				ordb = f
			case ro.wave:
				waveb = f
			case ro.label:
				labelb = f
			}
		}
		if col < last {
			if pos >= len(ln) {
				c.vals = c.vals[:base]
				return false
			}
			pos++
		} else if pos != len(ln) {
			c.vals = c.vals[:base]
			return false
		}
	}
	// Everything that can send the line to the general path is checked before the chunk's
	// order cells are touched, so that the general path records them as for any other line.
	ord, ordOK := scanInt(ordb)
	if ro.order >= 0 && !ordOK || len(idb) == 0 || !plainEdges(idb) || ro.wave >= 0 && (len(waveb) == 0 || !plainEdges(waveb)) {
		c.vals = c.vals[:base]
		return false
	}
	kind := byte(0)
	if ro.order >= 0 {
		kind = 'i'
		if len(c.kinds) == 0 || (kind != c.kinds[0] && len(c.cells) == 1) {
			c.cells = append(c.cells, orderCell{row: c.n, text: string(ordb), col: s.column(ln, ro.order)})
		}
	}
	row[s.nf] = math.Float64frombits(uint64(ord))
	row[s.nf+1] = packSource(s.fileIdx, line)
	c.addWindow(idb, waveb, kind, false)
	if ro.label >= 0 {
		c.labels = append(c.labels, string(bytes.TrimSpace(labelb)))
	}
	return true
}

// column is the 1-based byte column where field col of a plain line starts.
func (s *parseSpec) column(ln []byte, col int) int {
	start := 0
	for ; col > 0; col-- {
		start += bytes.IndexByte(ln[start:], byte(s.delim)) + 1
	}
	return start + 1
}

// addWindow records a window whose values are in place: its unit, order kind and missing flag.
func (c *parsedChunk) addWindow(id, wave []byte, kind byte, missing bool) {
	if n := len(c.segs); n > 0 && c.segs[n-1].id == string(id) && c.segs[n-1].wave == string(wave) {
		c.segs[n-1].end++
	} else {
		c.segs = append(c.segs, segment{id: string(id), wave: string(wave), end: c.n + 1})
	}
	c.kinds = append(c.kinds, kind)
	if missing && c.nan == nil {
		c.nan = make([]bool, c.n, cap(c.kinds))
	}
	if c.nan != nil {
		c.nan = append(c.nan, missing)
	}
	c.n++
}

// scanDecimal reads a plain decimal cell that starts at b[pos] and ends at delim or the end of b
// (decimal.Scan), within the reader's bound on magnitudes; any other cell is refused (ok false)
// and left to parseNumber.
func scanDecimal(b []byte, pos int, delim, point byte) (v float64, end int, ok bool) {
	v, end, ok = decimal.Scan(b, pos, delim, point)
	if !ok || math.Abs(v) > maxMagnitude {
		return 0, 0, false
	}
	return v, end, true
}

// scanInt reads a plain integer order cell (an optional minus sign and at most 18 digits).
func scanInt(b []byte) (int64, bool) {
	i, neg := 0, false
	if len(b) > 0 && b[0] == '-' {
		neg, i = true, 1
	}
	if len(b)-i == 0 || len(b)-i > 18 {
		return 0, false
	}
	var v int64
	for ; i < len(b); i++ {
		d := b[i] - '0'
		if d > 9 {
			return 0, false
		}
		v = v*10 + int64(d)
	}
	if neg {
		v = -v
	}
	return v, true
}

// parseQuoted parses a chunk that holds quotes with encoding/csv.
func (s *parseSpec) parseQuoted(data []byte, line int, c *parsedChunk) {
	cr := csv.NewReader(bytes.NewReader(data))
	cr.Comma = s.delim
	cr.FieldsPerRecord = len(s.header)
	cr.ReuseRecord = true
	for {
		rec, err := cr.Read()
		if err == io.EOF {
			return
		}
		if err != nil {
			var pe *csv.ParseError
			if errors.As(err, &pe) {
				pe.StartLine += line - 1
				pe.Line += line - 1
			}
			c.err = (&reader{}).csvError(s.file, err)
			return
		}
		l, _ := cr.FieldPos(0)
		if !s.addRow(c, l+line-1, func(i int) string { return rec[i] }, func(i int) int { _, col := cr.FieldPos(i); return col }, func(i int) []byte { return []byte(rec[i]) }) {
			return
		}
	}
}

// addRow parses one row's cells into the chunk; on a bad cell it records the error and returns false.
func (s *parseSpec) addRow(c *parsedChunk, line int, cell func(int) string, col func(int) int, raw func(int) []byte) bool {
	ro := s.roles
	rawID := raw(ro.id)
	idb := bytes.TrimSpace(rawID)
	if len(idb) == 0 {
		c.err = &InputError{File: s.file, Line: line, Column: col(ro.id), Field: s.header[ro.id], Msg: "participant id is empty; fill it in or remove the row", Err: ErrMissingID}
		return false
	}
	trimmed := 0
	if len(idb) != len(rawID) {
		trimmed++
	}
	var wave []byte
	if ro.wave >= 0 {
		rawWave := raw(ro.wave)
		wave = bytes.TrimSpace(rawWave)
		if len(wave) == 0 {
			c.err = &InputError{File: s.file, Line: line, Column: col(ro.wave), Field: s.header[ro.wave], Msg: emptyWaveMsg, Err: ErrMissingID}
			return false
		}
		if len(wave) != len(rawWave) {
			trimmed++
		}
	}
	if trimmed > 0 {
		if c.trimmed == 0 {
			c.trimLine = line
		}
		c.trimmed += trimmed
	}
	var ord int64
	kind := byte(0)
	if ro.order >= 0 {
		text := cell(ro.order)
		v, k, ok := parseOrderCell(text)
		if !ok {
			c.err = &InputError{File: s.file, Line: line, Column: col(ro.order), Field: s.header[ro.order], Msg: orderMsg(text), Err: ErrOrder}
			return false
		}
		ord, kind = v, k
		if len(c.kinds) == 0 || (kind != c.kinds[0] && len(c.cells) == 1) {
			c.cells = append(c.cells, orderCell{row: c.n, text: text, col: col(ro.order)})
		}
	}
	w := s.nf + 2
	base := len(c.vals)
	c.vals = slices.Grow(c.vals, w)[:base+w]
	row := c.vals[base : base+w]
	missing := false
	for j, fc := range ro.features {
		v, err := parseNumberBytes(raw(fc), s.comma)
		if err != nil {
			c.vals = c.vals[:base]
			c.err = &InputError{File: s.file, Line: line, Column: col(fc), Field: s.header[fc], Msg: numberMsg(cell(fc), s.delim, err), Err: err}
			return false
		}
		row[j] = v
		missing = missing || math.IsNaN(v)
	}
	row[s.nf] = math.Float64frombits(uint64(ord))
	row[s.nf+1] = packSource(s.fileIdx, line)
	c.addWindow(idb, wave, kind, missing)
	if ro.label >= 0 {
		c.labels = append(c.labels, strings.TrimSpace(cell(ro.label)))
	}
	return true
}

// emptyWaveMsg is the message for an empty wave cell: a row whose wave is not known cannot be
// placed in a wave, and a wave of "" would be one of its own.
const emptyWaveMsg = "wave is empty; fill in the wave of every row, or leave the wave column out"

// parseOrderCell reads an order cell: an integer ('i') or an ISO-8601 time (Unix ns) in the
// years 1900–2200, 'z' when it carries a UTC offset (or Z) and 't' when it does not (a time
// outside those years is refused; see orderMsg).
func parseOrderCell(cell string) (int64, byte, bool) {
	s := strings.TrimSpace(cell)
	if v, err := strconv.ParseInt(s, 10, 64); err == nil {
		return v, 'i', true
	}
	if t, zoned, ok := parseTimeZoned(s); ok && plausibleTime(t) {
		if zoned {
			return t.UnixNano(), 'z', true
		}
		return t.UnixNano(), 't', true
	}
	return 0, 0, false
}

// isTime tells whether an order kind is a time, with a UTC offset or without.
func isTime(k byte) bool { return k == 't' || k == 'z' }

func parseTime(s string) (time.Time, bool) {
	t, _, ok := parseTimeZoned(s)
	return t, ok
}

// parseTimeZoned reads an ISO-8601 time, and tells whether it carries a UTC offset (the first
// layout, RFC 3339, is the only one with one).
func parseTimeZoned(s string) (time.Time, bool, bool) {
	for i, layout := range timeLayouts {
		if t, err := time.Parse(layout, s); err == nil {
			return t, i == 0, true
		}
	}
	return time.Time{}, false, false
}

// plausibleTime tells whether t falls in 1900–2200: outside these years a recording's clock is
// wrong (an unset device clock, a wrong century), and past 2262 Unix nanoseconds overflow.
func plausibleTime(t time.Time) bool {
	return t.Year() >= 1900 && t.Year() <= 2200
}

// minTime and maxTime are the start of 1900 and the end of 2200 in Unix nanoseconds.
var (
	minTime = time.Date(1900, 1, 1, 0, 0, 0, 0, time.UTC).UnixNano()
	maxTime = time.Date(2201, 1, 1, 0, 0, 0, 0, time.UTC).UnixNano() - 1
)

// orderMsg says what is wrong with an order cell that parseOrderCell refused.
func orderMsg(cell string) string {
	if t, ok := parseTime(strings.TrimSpace(cell)); ok && !plausibleTime(t) {
		return fmt.Sprintf("%q is a time outside 1900–2200; check the year (a wrong century or an unset clock)", cell)
	}
	return fmt.Sprintf("%q is neither an integer nor an ISO-8601 time such as 2026-03-01T08:30:00; fix the cell", cell)
}

// parseNumberBytes is parseNumber with a fast path for plain decimals (decimal.Plain, exact).
func parseNumberBytes(b []byte, decimalComma bool) (float64, error) {
	v, ok := decimal.Plain(b, decimalComma)
	if !ok {
		return parseNumber(string(b), decimalComma)
	}
	if math.Abs(v) > maxMagnitude {
		return 0, ErrNonFinite
	}
	return v, nil
}
