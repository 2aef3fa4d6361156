package cohort

import (
	"bufio"
	"bytes"
	"encoding/csv"
	"errors"
	"fmt"
	"io"
	"math"
	"runtime"
	"strconv"
	"strings"
	"sync"
	"time"
)

// The body of a table (everything after its first window) is parsed in chunks of whole lines,
// in parallel, and merged in file order, so the result is the same whatever the chunk size and
// the number of cores. A chunk without quote characters is split by hand; a chunk with quotes is
// extended until its quotes pair up and is parsed by encoding/csv.

// chunkSize is the number of bytes read per chunk (extended to the end of a line); tests set it
// small to cut tables into many chunks.
var chunkSize = 4 << 20

// parseSpec is what a worker needs to parse rows of one file; it is read-only.
type parseSpec struct {
	file   string
	header []string
	roles  roles
	delim  rune
	nf     int // features
}

// parsedChunk holds a chunk's rows column by column.
type parsedChunk struct {
	seq        int
	ids, waves []string
	ords       []int64
	kinds      []byte // 'i' integer, 't' time
	vals       []float64
	labels     []string
	lines      []int32
	cells      []orderCell // order cell text and column of the first row, and of the first row of another kind
	err        error       // first error in the chunk, positioned
}

type orderCell struct {
	row  int
	text string
	col  int
}

func (c *parsedChunk) rows() int { return len(c.lines) }

// parseBody reads the rest of br in chunks, parses them on all cores, and hands each chunk to
// merge in order. firstLine is the line number of the first line in br.
func (r *reader) parseBody(br *bufio.Reader, spec *parseSpec, firstLine int, merge func(*parsedChunk) error) error {
	type job struct {
		seq   int
		data  []byte
		line  int
		quote bool
	}
	workers := runtime.GOMAXPROCS(0)
	jobs := make(chan job, workers)
	results := make(chan *parsedChunk, workers)
	stop := make(chan struct{})
	var wg sync.WaitGroup
	for w := 0; w < workers; w++ {
		wg.Add(1)
		go func() {
			defer wg.Done()
			for j := range jobs {
				c := &parsedChunk{seq: j.seq}
				if j.quote {
					spec.parseQuoted(j.data, j.line, c)
				} else {
					spec.parsePlain(j.data, j.line, c)
				}
				select {
				case results <- c:
				case <-stop:
					return
				}
			}
		}()
	}
	readErr := make(chan error, 1)
	go func() {
		defer close(jobs)
		line, seq := firstLine, 0
		ch := &chunker{br: br}
		for {
			data, quote, err := ch.next()
			if len(data) > 0 {
				select {
				case jobs <- job{seq, data, line, quote}:
				case <-stop:
					readErr <- nil
					return
				}
				line += bytes.Count(data, []byte{'\n'})
				seq++
				r.progress()
			}
			if err != nil {
				if errors.Is(err, io.EOF) {
					err = nil
				}
				readErr <- err
				return
			}
		}
	}()
	go func() { wg.Wait(); close(results) }()
	pending := map[int]*parsedChunk{}
	next := 0
	var failed error
	for c := range results {
		if failed != nil {
			continue
		}
		pending[c.seq] = c
		for {
			c, ok := pending[next]
			if !ok {
				break
			}
			delete(pending, next)
			next++
			if err := r.ctx.Err(); err != nil {
				failed = err
			} else if c.err != nil {
				failed = c.err
			} else if err := merge(c); err != nil {
				failed = err
			}
			if failed != nil {
				close(stop)
				break
			}
		}
	}
	if err := <-readErr; err != nil && failed == nil {
		failed = r.gzipOrIO(spec.file, err)
	}
	return failed
}

// chunker cuts a stream into chunks of whole lines; when a chunk holds quotes it is extended
// until they pair up, so that no quoted field is cut.
type chunker struct {
	br   *bufio.Reader
	rest []byte // the start of a line carried over from the previous chunk
}

func (ch *chunker) next() ([]byte, bool, error) {
	buf := make([]byte, chunkSize)
	n := copy(buf, ch.rest)
	m, err := io.ReadFull(ch.br, buf[n:])
	buf = buf[:n+m]
	if errors.Is(err, io.ErrUnexpectedEOF) {
		err = io.EOF
	}
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
	return buf, quotes > 0, err
}

// parsePlain parses lines without quotes: fields are split at the delimiter.
func (s *parseSpec) parsePlain(data []byte, line int, c *parsedChunk) {
	rows := bytes.Count(data, []byte{'\n'}) + 1
	c.vals = make([]float64, 0, rows*s.nf)
	c.ids = make([]string, 0, rows)
	c.ords = make([]int64, 0, rows)
	c.kinds = make([]byte, 0, rows)
	c.lines = make([]int32, 0, rows)
	fields := make([][]byte, 0, len(s.header))
	starts := make([]int, 0, len(s.header))
	for len(data) > 0 {
		end := bytes.IndexByte(data, '\n')
		var ln []byte
		if end < 0 {
			ln, data = data, nil
		} else {
			ln, data = data[:end], data[end+1:]
		}
		ln = bytes.TrimSuffix(ln, []byte{'\r'})
		if len(ln) == 0 {
			line++
			continue // blank lines are skipped, as encoding/csv does
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
	idb := bytes.TrimSpace(raw(ro.id))
	if len(idb) == 0 {
		c.err = &InputError{File: s.file, Line: line, Column: col(ro.id), Field: s.header[ro.id], Msg: "participant id is empty; fill it in or remove the row", Err: ErrMissingID}
		return false
	}
	id := ""
	if n := len(c.ids); n > 0 && c.ids[n-1] == string(idb) { // no allocation for a repeated id
		id = c.ids[n-1]
	} else {
		id = string(idb)
	}
	wave := ""
	if ro.wave >= 0 {
		wave = strings.TrimSpace(cell(ro.wave))
		if n := len(c.waves); n > 0 && c.waves[n-1] == wave {
			wave = c.waves[n-1]
		}
	}
	var ord int64
	kind := byte(0)
	if ro.order >= 0 {
		text := cell(ro.order)
		v, k, ok := parseOrderCell(text)
		if !ok {
			c.err = &InputError{File: s.file, Line: line, Column: col(ro.order), Field: s.header[ro.order], Msg: fmt.Sprintf("%q is neither an integer nor an ISO-8601 time such as 2026-03-01T08:30:00; fix the cell", text), Err: ErrOrder}
			return false
		}
		ord, kind = v, k
		if len(c.kinds) == 0 || (kind != c.kinds[0] && len(c.cells) == 1) {
			c.cells = append(c.cells, orderCell{row: len(c.lines), text: text, col: col(ro.order)})
		}
	}
	for _, fc := range ro.features {
		v, err := parseNumberBytes(raw(fc), s.delim == ';')
		if err != nil {
			c.err = &InputError{File: s.file, Line: line, Column: col(fc), Field: s.header[fc], Msg: numberMsg(cell(fc), s.delim, err), Err: err}
			return false
		}
		c.vals = append(c.vals, v)
	}
	c.ids = append(c.ids, id)
	if ro.wave >= 0 {
		c.waves = append(c.waves, wave)
	}
	c.ords = append(c.ords, ord)
	c.kinds = append(c.kinds, kind)
	c.lines = append(c.lines, int32(min(line, math.MaxInt32)))
	if ro.label >= 0 {
		c.labels = append(c.labels, strings.TrimSpace(cell(ro.label)))
	}
	return true
}

// parseOrderCell reads an order cell: an integer ('i') or an ISO-8601 time ('t', Unix ns).
func parseOrderCell(cell string) (int64, byte, bool) {
	s := strings.TrimSpace(cell)
	if v, err := strconv.ParseInt(s, 10, 64); err == nil {
		return v, 'i', true
	}
	for _, layout := range timeLayouts {
		if t, err := time.Parse(layout, s); err == nil {
			return t.UnixNano(), 't', true
		}
	}
	return 0, 0, false
}

// pow10 holds the powers of ten that are exact in float64.
var pow10 = [...]float64{1e0, 1e1, 1e2, 1e3, 1e4, 1e5, 1e6, 1e7, 1e8, 1e9, 1e10, 1e11, 1e12, 1e13, 1e14, 1e15, 1e16, 1e17, 1e18, 1e19, 1e20, 1e21, 1e22}

// parseNumberBytes is parseNumber with a fast path for plain decimals: when the digits form an
// integer below 2⁵³ with at most 22 decimals, m / 10ᶠ of two exact floats is correctly rounded
// (Clinger 1990, How to read floating point numbers accurately, PLDI), the same as
// strconv.ParseFloat. Everything else goes through parseNumber.
func parseNumberBytes(b []byte, decimalComma bool) (float64, error) {
	i, neg := 0, false
	for i < len(b) && b[i] == ' ' {
		i++
	}
	if i < len(b) && (b[i] == '-' || b[i] == '+') {
		neg = b[i] == '-'
		i++
	}
	var m uint64
	digits, frac := 0, -1
	j := i
	for ; j < len(b); j++ {
		ch := b[j]
		if ch >= '0' && ch <= '9' {
			m = m*10 + uint64(ch-'0')
			digits++
			if frac >= 0 {
				frac++
			}
			continue
		}
		if (ch == '.' || (ch == ',' && decimalComma)) && frac < 0 {
			frac = 0
			continue
		}
		break
	}
	k := j
	for k < len(b) && b[k] == ' ' {
		k++
	}
	if digits == 0 || digits > 15 || k != len(b) || frac == 0 {
		return parseNumber(string(b), decimalComma)
	}
	v := float64(m)
	if frac > 0 {
		v /= pow10[frac]
	}
	if neg {
		v = -v
	}
	if math.Abs(v) > maxMagnitude {
		return 0, ErrNonFinite
	}
	return v, nil
}
