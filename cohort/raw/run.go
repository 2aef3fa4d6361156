package raw

import (
	"bytes"
	"context"
	"fmt"
	"io"
	"math"
	"strconv"
	"strings"
	"time"

	"github.com/parquet-go/parquet-go"

	"github.com/cohortmix/cohortmix/cluster/groupstat"
	"github.com/cohortmix/cohortmix/cluster/par"
)

// firstPass gathers one participant's summaries in the first pass, in the units as read.
type firstPass struct {
	p         *Participant
	first     int64 // the first sample's time, and its line
	firstLine int
	last      int64
	lastLine  int
	steps     []float64 // the first positive steps between samples, in s
	vms       []float64 // the first samples' vector magnitudes
	blocks    []chunk   // the 10-second blocks' sums, in order (the 15-minute chunks are made of them)
	blockEnd  int64     // the time the last block ends (Unix ns)
}

// firstSamples is how many samples the units and the rate are read from.
const firstSamples = 2000

func (f *firstPass) add(s sample, path string) error {
	if f.p.Samples > 0 {
		switch {
		case s.t == f.last:
			return fmt.Errorf("%s:%d: participant %s has this time twice (also line %d); remove one of the rows: %w", path, s.line, f.p.ID, f.lastLine, ErrInput)
		case s.t < f.last:
			return fmt.Errorf("%s:%d: participant %s goes back in time from line %d; sort the rows by time: %w", path, s.line, f.p.ID, f.lastLine, ErrInput)
		}
		if len(f.steps) < firstSamples {
			f.steps = append(f.steps, float64(s.t-f.last)/1e9)
		}
	}
	if f.p.Samples == 0 {
		f.first, f.firstLine = s.t, s.line
	}
	f.p.Samples++
	f.last, f.lastLine = s.t, s.line
	if len(f.vms) < firstSamples {
		f.vms = append(f.vms, math.Sqrt(s.a[0]*s.a[0]+s.a[1]*s.a[1]+s.a[2]*s.a[2]))
	}
	if len(f.blocks) == 0 || s.t >= f.blockEnd { // times increase: a new block starts only here
		key := floorDiv(s.t, int64(stillBlock))
		f.blocks = addTo(f.blocks, key, s.a)
		f.blockEnd = (key + 1) * int64(stillBlock)
		return nil
	}
	f.blocks[len(f.blocks)-1].add(s.a)
	return nil
}

// addTo adds a sample to the last of a list of sums by key, or to a new one for a new key.
func addTo(list []chunk, key int64, a [3]float64) []chunk {
	if len(list) == 0 || list[len(list)-1].key != key {
		list = append(list, chunk{key: key})
	}
	list[len(list)-1].add(a)
	return list
}

// stillMeans are the means of the still 10-second blocks (every axis's s.d. below stillSD), in
// g, of blocks of two samples or more.
func stillMeans(blocks []chunk, factor float64) [][3]float64 {
	var out [][3]float64
	for _, b := range blocks {
		if b.n < 2 {
			continue
		}
		n := float64(b.n)
		var m [3]float64
		still := true
		for a := 0; a < 3; a++ {
			m[a] = b.sum[a] / n
			sd := math.Sqrt(math.Max(0, b.sum2[a]/n-m[a]*m[a]))
			still = still && sd*factor < stillSD
			m[a] *= factor
		}
		if still {
			out = append(out, m)
		}
	}
	return out
}

// plan is what the second pass needs of one participant: its units, rate, calibration and the
// non-wear chunks.
type plan struct {
	factor  float64
	rate    float64
	cal     Calibration
	nonWear map[int64]bool
}

// finish turns the first pass's summaries into the participant's plan.
func (f *firstPass) finish(path string, o Options) (*plan, error) {
	if f.p.Samples < 2 {
		return nil, fmt.Errorf("%s: participant %s has %d samples; a raw recording has many: %w", path, f.p.ID, f.p.Samples, ErrInput)
	}
	factor, units, err := unitsOf(o.Units, groupstat.Median(f.vms))
	if err != nil {
		return nil, fmt.Errorf("%s: participant %s: %w", path, f.p.ID, err)
	}
	f.p.Units = units
	rate := o.Rate
	if rate == 0 {
		step := groupstat.Median(f.steps)
		if !(step > 0) {
			return nil, fmt.Errorf("%s: participant %s: the sampling rate cannot be read from the times; give it: %w", path, f.p.ID, ErrInput)
		}
		rate = math.Round(1/step*100) / 100
	}
	f.p.Rate = rate
	pl := &plan{factor: factor, rate: rate, cal: Calibration{Scale: [3]float64{1, 1, 1}, Reason: "calibration was not asked for"}}
	if !o.NoCalibration {
		pl.cal = calibrate(stillMeans(f.blocks, factor))
	}
	f.p.Calibration = pl.cal
	chunks := chunksOf(f.blocks)
	for i := range chunks {
		for a := 0; a < 3; a++ {
			chunks[i].sum[a] *= factor
			chunks[i].sum2[a] *= factor * factor
			chunks[i].lo[a] *= factor
			chunks[i].hi[a] *= factor
		}
	}
	pl.nonWear = nonWearChunks(chunks, pl.cal.Scale, rate)
	f.blocks = nil
	return pl, nil
}

// chunksOf adds the 10-second blocks up into the 15-minute chunks they fall in (a chunk is 90
// whole blocks, both counted from the epoch).
func chunksOf(blocks []chunk) []chunk {
	var out []chunk
	for _, b := range blocks {
		b.key = floorDiv(b.key*int64(stillBlock), int64(nonWearChunk))
		out = joinSums(out, []chunk{b})
	}
	return out
}

// secondPass computes one participant's windows.
type secondPass struct {
	p       *Participant
	pl      *plan
	o       Options
	zoned   bool
	window  int64 // the current window's number, counted from the epoch
	end     int64 // the time its next window starts (Unix ns)
	x, y, z []float64
	feat    []float64
	sp      spectrum
	out     *sink
}

// sink gathers one file's rows: as CSV text, or as Parquet rows (Options.Parquet).
type sink struct {
	text bytes.Buffer
	rows []parquet.Row
	col  map[string]int // the Parquet column of each name; nil for CSV
}

// add appends one window's row.
func (k *sink) add(id string, when string, feat []float64, worn int) {
	if k.col != nil {
		row := make(parquet.Row, len(feat)+3)
		set := func(name string, v any) { row[k.col[name]] = parquet.ValueOf(v).Level(0, 0, k.col[name]) }
		set("participant", id)
		set("window", when)
		for j, v := range feat {
			set(FeatureNames[j], v)
		}
		set("worn", int64(worn))
		k.rows = append(k.rows, row)
		return
	}
	b := &k.text
	b.WriteString(csvCell(id))
	b.WriteByte(',')
	b.WriteString(when)
	var num [32]byte
	for _, v := range feat {
		b.WriteByte(',')
		if math.IsNaN(v) {
			b.WriteString("NA")
			continue
		}
		b.Write(strconv.AppendFloat(num[:0], v, 'g', 10, 64))
	}
	b.WriteByte(',')
	b.WriteString(strconv.Itoa(worn))
	b.WriteByte('\n')
}

// parquetSchema is the table's schema in Parquet: the participant and the window's start as
// text, the features as doubles (NaN where a feature is not defined), worn as an integer; the
// columns in the order Parquet gives a group (by name), and the index of each.
func parquetSchema() (*parquet.Schema, map[string]int) {
	g := parquet.Group{"participant": parquet.String(), "window": parquet.String(), "worn": parquet.Int(64)}
	for _, n := range FeatureNames {
		g[n] = parquet.Leaf(parquet.DoubleType)
	}
	schema := parquet.NewSchema("windows", g)
	col := map[string]int{}
	for i, path := range schema.Columns() {
		col[path[0]] = i
	}
	return schema, col
}

// add takes one sample (times increase): a sample past the current window's end starts the
// next window after writing the current one.
func (s *secondPass) add(smp sample) {
	if smp.t >= s.end || len(s.x) == 0 {
		w := floorDiv(smp.t, int64(s.o.Window))
		if w != s.window || len(s.x) == 0 {
			s.flush()
			s.window = w
		}
		s.end = (w + 1) * int64(s.o.Window)
	}
	f, clip := s.pl.factor, 0.99*s.o.Range
	cal := &s.pl.cal
	x, y, z := smp.a[0]*f, smp.a[1]*f, smp.a[2]*f
	if math.Abs(x) >= clip || math.Abs(y) >= clip || math.Abs(z) >= clip {
		for _, v := range [3]float64{x, y, z} {
			if math.Abs(v) >= clip {
				s.p.Clipped++
			}
		}
	}
	s.x = append(s.x, cal.Scale[0]*x+cal.Offset[0])
	s.y = append(s.y, cal.Scale[1]*y+cal.Offset[1])
	s.z = append(s.z, cal.Scale[2]*z+cal.Offset[2])
}

// flush writes the current window, when it holds enough of its samples.
func (s *secondPass) flush() {
	n := len(s.x)
	if n == 0 {
		return
	}
	defer func() { s.x, s.y, s.z = s.x[:0], s.y[:0], s.z[:0] }()
	if float64(n) < completeShare*s.pl.rate*s.o.Window.Seconds() {
		s.p.Incomplete++
		return
	}
	if s.feat == nil {
		s.feat = make([]float64, len(FeatureNames))
	}
	windowFeatures(s.x, s.y, s.z, s.pl.rate, s.feat, &s.sp)
	start := s.window * int64(s.o.Window)
	worn := 1
	if s.pl.nonWear[floorDiv(start, int64(nonWearChunk))] {
		worn = 0
		s.p.NonWear++
	}
	s.p.Windows++
	t := time.Unix(0, start).UTC()
	when := t.Format("2006-01-02T15:04:05")
	if s.zoned {
		when += "Z"
	}
	s.out.add(s.p.ID, when, s.feat, worn)
}

// Header is the first line of the table the step writes.
func Header() string {
	return "participant,window," + strings.Join(FeatureNames, ",") + ",worn\n"
}

// Run computes the windows of every recording in inputs and writes the long table to w (Header,
// then one row per window, participants in the order of the inputs), returning what was done
// with each participant. Files are processed on o.Workers cores at once; the table is the same
// on any number.
func Run(ctx context.Context, inputs []string, w io.Writer, o Options) ([]Participant, error) {
	o = o.withDefaults()
	if o.Window < 5*time.Second || o.Window > 15*time.Minute {
		return nil, fmt.Errorf("window length %v: %w; use 5s to 15m", o.Window, ErrOption)
	}
	if _, _, err := unitsOf(o.Units, math.NaN()); err != nil {
		return nil, err
	}
	var pw *parquet.Writer
	var col map[string]int
	if o.Parquet {
		var schema *parquet.Schema
		schema, col = parquetSchema()
		pw = parquet.NewWriter(w, schema, parquet.KeyValueMetadata(ProvenanceKey, ProvenanceOf(o, o.Tool).JSON()))
	} else if _, err := io.WriteString(w, Header()); err != nil {
		return nil, err
	}
	var all []Participant
	err := par.Ordered(ctx, len(inputs), o.Workers, func(i, _ int) (fileResult, error) {
		return runFile(ctx, inputs[i], o, col)
	}, func(i int, r fileResult) error {
		all = append(all, r.people...)
		if pw != nil {
			_, err := pw.WriteRows(r.rows.rows)
			return err
		}
		_, err := w.Write(r.rows.text.Bytes())
		return err
	})
	if err == nil && pw != nil {
		err = pw.Close()
	}
	return all, err
}

type fileResult struct {
	people []Participant
	rows   *sink
}

// runFile makes both passes over one file.
func runFile(ctx context.Context, path string, o Options, col map[string]int) (fileResult, error) {
	if strings.HasSuffix(strings.ToLower(path), ".parquet") && o.ID == "" {
		// A Parquet recording of one participant: its row groups on all cores.
		r, err := openParquet(path, o)
		if err != nil {
			return fileResult{}, err
		}
		defer r.file.Close()
		if parts := r.parts(); len(parts) > 1 {
			return runFileSplit(ctx, path, o, col, parts, r.l, func(i int, l layout, each func(l *layout, s sample) error) error {
				return r.scanGroup(parts[i], l, each)
			})
		}
	}
	if ranges, l, err := splits(ctx, path, o); err != nil {
		return fileResult{}, err
	} else if ranges != nil {
		return runFileSplit(ctx, path, o, col, ranges, l, func(i int, l layout, each func(l *layout, s sample) error) error {
			return scanRange(path, l, ranges[i], each)
		})
	}
	var order []*firstPass
	byID := map[string]*firstPass{}
	var cur *firstPass
	lines := 0
	err := scanAny(path, o, func(l *layout, s sample) error {
		if lines++; lines%(1<<20) == 0 && ctx.Err() != nil {
			return ctx.Err()
		}
		if cur == nil || cur.p.ID != s.id {
			if byID[s.id] != nil {
				return fmt.Errorf("%s:%d: the rows of participant %s are not together (it appeared before line %d); sort the table by participant, then time: %w", path, s.line, s.id, byID[s.id].lastLine+1, ErrInput)
			}
			cur = &firstPass{p: &Participant{ID: s.id, File: path}}
			byID[s.id] = cur
			order = append(order, cur)
		}
		return cur.add(s, path)
	})
	if err != nil {
		return fileResult{}, err
	}
	if len(order) == 0 {
		return fileResult{}, fmt.Errorf("%s: no samples after the header: %w", path, ErrInput)
	}
	plans := map[string]*plan{}
	for _, f := range order {
		if plans[f.p.ID], err = f.finish(path, o); err != nil {
			return fileResult{}, err
		}
	}
	res := fileResult{rows: &sink{col: col}}
	var sec *secondPass
	err = scanAny(path, o, func(l *layout, s sample) error {
		if sec == nil || sec.p.ID != s.id {
			if sec != nil {
				sec.flush()
			}
			sec = &secondPass{p: byID[s.id].p, pl: plans[s.id], o: o, zoned: l.zoned, out: res.rows}
		}
		sec.add(s)
		return nil
	})
	if err != nil {
		return fileResult{}, err
	}
	sec.flush()
	for _, f := range order {
		res.people = append(res.people, *f.p)
	}
	return res, nil
}

// scanAny reads a recording as Parquet when its name ends in .parquet, as text otherwise.
func scanAny(path string, o Options, each func(l *layout, s sample) error) error {
	if strings.HasSuffix(strings.ToLower(path), ".parquet") {
		return scanParquet(path, o, each)
	}
	return scan(path, o, each)
}

// csvCell quotes a cell that holds a comma, a quote or a line break.
func csvCell(s string) string {
	if !strings.ContainsAny(s, ",\"\r\n") {
		return s
	}
	return `"` + strings.ReplaceAll(s, `"`, `""`) + `"`
}

func floorDiv(a, b int64) int64 {
	q := a / b
	if a%b != 0 && (a < 0) != (b < 0) {
		q--
	}
	return q
}
