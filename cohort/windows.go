package cohort

import (
	"bufio"
	"encoding/binary"
	"encoding/gob"
	"errors"
	"fmt"
	"hash"
	"hash/crc32"
	"io"
	"math"
	"os"
	"slices"
)

// WindowsFormat and WindowsVersion identify a windows file (Table.WriteWindows): a table's
// units and windows, without its accounting, so that a later pass of a run split in shards reads
// its shard's windows once more from there instead of every input file. The file ends in the
// CRC-32C (Castagnoli) of everything before it, little-endian, so that damage anywhere is found.
const (
	WindowsFormat  = "cohortmix windows"
	WindowsVersion = 2 // 2: the run's identity, and the CRC-32C at the end
)

var castagnoli = crc32.MakeTable(crc32.Castagnoli)

type windowsHeader struct {
	Format    string
	Version   int
	Run       string // the identity of the run the windows were read for, as the caller gives it
	Shard     Shard
	Files     []FileInfo // the inputs the windows were read from
	Features  []string
	Width     int // values a window: the features, then the order key and source
	OrderKind string
	HasLabels bool
	Units     []windowsUnit
}

// windowBytes is a window's size in a windows file: its features as float32, then the order key
// and source as float64 bit patterns, little-endian whatever the machine.
func windowBytes(width int) int { return 4*(width-2) + 16 }

type windowsUnit struct {
	ID, Wave string
	Ordinal  int
	Rows     int
	Labels   []string
}

// WriteWindows writes the table's units and their windows (the features selected, with the
// order key and source, in the windows file's encoding: features as float32, to which they were
// rounded when read) as a windows file of the given shard, for the run the caller names.
func (t *Table) WriteWindows(w io.Writer, shard Shard, run string) error {
	return t.writeWindows(w, shard, run, t.Units)
}

// WriteShardWindows is WriteWindows of the units of a whole table that fall in the shard
// (Unit.InShard): the windows file a read of that shard alone would write, with the features the
// whole read kept.
func (t *Table) WriteShardWindows(w io.Writer, shard Shard, run string) error {
	var units []*Unit
	for _, u := range t.Units {
		if u.InShard(shard) {
			units = append(units, u)
		}
	}
	return t.writeWindows(w, shard, run, units)
}

func (t *Table) writeWindows(w io.Writer, shard Shard, run string, units []*Unit) error {
	d, stored := len(t.cols), t.store.width
	h := windowsHeader{Format: WindowsFormat, Version: WindowsVersion, Run: run, Shard: shard, Files: t.Files, OrderKind: t.OrderKind,
		HasLabels: t.HasLabels, Width: d + 2, Features: t.Features}
	if len(t.Features) != d {
		return fmt.Errorf("cohort: WriteWindows: %d features named for %d columns: %w", len(t.Features), d, ErrBadOption)
	}
	for _, u := range units {
		h.Units = append(h.Units, windowsUnit{ID: u.ID, Wave: u.Wave, Ordinal: u.Ordinal, Rows: u.rows, Labels: u.Labels})
	}
	out := bufio.NewWriterSize(w, 1<<20)
	crc := crc32.New(castagnoli)
	bw := io.MultiWriter(out, crc)
	if err := gob.NewEncoder(bw).Encode(h); err != nil {
		return fmt.Errorf("cohort: writing a windows file: %w", err)
	}
	var x []float64
	var b []byte
	rb := windowBytes(h.Width)
	for _, u := range units {
		var err error
		if x, err = t.readUnit(u, nil, x); err != nil {
			return err
		}
		b = slices.Grow(b[:0], u.rows*rb)[:u.rows*rb]
		for i := 0; i < u.rows; i++ {
			row, out := x[i*stored:(i+1)*stored], b[i*rb:(i+1)*rb]
			for j, c := range t.cols { // the features kept, in the table's order
				binary.LittleEndian.PutUint32(out[4*j:], math.Float32bits(float32(row[c])))
			}
			binary.LittleEndian.PutUint64(out[4*d:], math.Float64bits(row[stored-2]))
			binary.LittleEndian.PutUint64(out[4*d+8:], math.Float64bits(row[stored-1]))
		}
		if _, err := bw.Write(b); err != nil {
			return fmt.Errorf("cohort: writing a windows file: %w", err)
		}
	}
	if err := binary.Write(out, binary.LittleEndian, crc.Sum32()); err != nil {
		return err
	}
	return out.Flush()
}

// crcReader passes a buffered reader through, adding what it reads to a CRC; it is an
// io.ByteReader, so that gob reads no further than its message.
type crcReader struct {
	br  *bufio.Reader
	crc hash.Hash32
	one [1]byte
	n   int64 // bytes read
}

func (c *crcReader) Read(p []byte) (int, error) {
	n, err := c.br.Read(p)
	c.crc.Write(p[:n])
	c.n += int64(n)
	return n, err
}

func (c *crcReader) ReadByte() (byte, error) {
	b, err := c.br.ReadByte()
	if err == nil {
		c.one[0] = b
		c.crc.Write(c.one[:])
		c.n++
	}
	return b, err
}

// ErrWindows is wrapped by every error about a windows file.
var ErrWindows = errors.New("windows file not usable")

// ReadWindows reads a windows file (WriteWindows) as a table of its units. Its checksum is checked
// in one pass over the file, and the table then reads its windows from the file itself (which
// must stay in place until the table is closed), as Read reads a store's temporary file; nothing
// is copied. The table has no accounting; its Files are the inputs the windows came from, and
// run the run it names, for the caller to check.
func ReadWindows(path string) (*Table, Shard, string, error) {
	t, h, err := readWindows(path)
	if err != nil {
		return nil, Shard{}, "", err
	}
	return t, h.Shard, h.Run, nil
}

func readWindows(path string) (*Table, *windowsHeader, error) {
	f, err := os.Open(path)
	if err != nil {
		return nil, nil, fmt.Errorf("%s: cannot open: %w", path, errors.Join(ErrWindows, err))
	}
	t, h, err := windowsTable(f, path)
	if err != nil {
		f.Close()
		return nil, nil, err
	}
	return t, h, nil
}

// windowsTable checks the windows file open in f and makes the table that reads from it.
func windowsTable(f *os.File, path string) (*Table, *windowsHeader, error) {
	raw := bufio.NewReaderSize(f, 1<<20)
	br := &crcReader{br: raw, crc: crc32.New(castagnoli)}
	h, err := readWindowsHeader(f, br, path)
	if err != nil {
		return nil, nil, err
	}
	base := br.n // the first window's byte
	d := h.Width - 2
	t := &Table{store: &store{width: h.Width, file: f, base: base, packed: true, borrowed: true}, Features: h.Features, Files: h.Files,
		OrderKind: h.OrderKind, HasLabels: h.HasLabels, cols: make([]int, d)}
	for j := range t.cols {
		t.cols[j] = j
	}
	rb := int64(windowBytes(h.Width))
	var rows int64
	for _, wu := range h.Units {
		if _, err := io.CopyN(io.Discard, br, int64(wu.Rows)*rb); err != nil {
			return nil, nil, fmt.Errorf("%s: the windows of participant %s are cut short: %w; write the file again", path, wu.ID, ErrWindows)
		}
		t.Units = append(t.Units, &Unit{ID: wu.ID, Wave: wu.Wave, Ordinal: wu.Ordinal, Labels: wu.Labels, at: rows, rows: wu.Rows})
		rows += int64(wu.Rows)
	}
	var sum uint32
	if err := binary.Read(raw, binary.LittleEndian, &sum); err != nil || sum != br.crc.Sum32() {
		return nil, nil, fmt.Errorf("%s: the windows file is damaged (its content does not match its checksum): %w; write it again", path, ErrWindows)
	}
	if _, err := raw.ReadByte(); err != io.EOF {
		return nil, nil, fmt.Errorf("%s: bytes after the end of the windows: %w; write the file again", path, ErrWindows)
	}
	t.store.n = rows * int64(h.Width)
	t.store.flushed = t.store.n
	return t, &h, nil
}

// readWindowsHeader reads and checks a windows file's header: its format, version and width,
// and that the windows it announces fit in the file before any room is made for them.
func readWindowsHeader(f *os.File, br io.Reader, path string) (h windowsHeader, err error) {
	if err := gob.NewDecoder(br).Decode(&h); err != nil || h.Format != WindowsFormat {
		return h, fmt.Errorf("%s: not a windows file: %w; name the file the census step wrote", path, ErrWindows)
	}
	if h.Version != WindowsVersion {
		return h, fmt.Errorf("%s: a windows file of version %d, and this cohortmix reads version %d: %w; run every pass of a split run with the same release", path, h.Version, WindowsVersion, ErrWindows)
	}
	d := h.Width - 2
	if d < 1 || len(h.Features) != d {
		return h, fmt.Errorf("%s: a windows file of %d features and %d values a window: %w", path, len(h.Features), h.Width, ErrWindows)
	}
	st, err := f.Stat()
	if err != nil {
		return h, fmt.Errorf("%s: %w", path, errors.Join(ErrWindows, err))
	}
	var need int64
	for _, wu := range h.Units {
		if wu.Rows < 1 {
			return h, fmt.Errorf("%s: participant %s has %d windows: %w", path, wu.ID, wu.Rows, ErrWindows)
		}
		need += int64(wu.Rows) * int64(windowBytes(h.Width))
		if need > st.Size() {
			return h, fmt.Errorf("%s: the header announces more windows than the file holds: %w; write the file again", path, ErrWindows)
		}
	}
	return h, nil
}
