package cohort

import (
	"bufio"
	"encoding/binary"
	"fmt"
	"math"
	"os"
	"sync"
	"unsafe"

	tempname "github.com/cohortmix/cohortmix/cohort/scratch"
)

// segRows is the number of windows in one in-memory segment.
const segRows = 1 << 15

// spillAfter is the number of values a store keeps in memory before it moves them to a
// temporary file (64 MiB of float64), unless ReadOptions.MemoryValues says otherwise.
const spillAfter int64 = 8 << 20

// store holds windows out of the heap's way, width values a window: in memory while they are
// few, then in a temporary file, read back one participant at a time. In the file a window's
// features (all values but the last two) are float32, which keeps 7 significant digits, more
// than accelerometer features carry, and halves the bytes written and read; the last two values
// (order key and source, bit patterns) stay 64-bit. The file is this process's scratch, in the
// machine's byte order, never read elsewhere; it lives in the folder the caller names and is
// removed by close.
type store struct {
	dir     string
	limit   int64 // values held in memory before the file; 0 means spillAfter
	width   int
	mem     [][]float64 // segments of segRows windows: growing never copies what is held
	file    *os.File
	w       *bufio.Writer
	n       int64 // values appended
	flushed int64 // values readable from the file
	enc     []byte
	// A store on a windows file (ReadWindows) reads it in place: its rows from byte base on, in
	// the windows file's packed little-endian layout (packed), and the file is not the store's to
	// remove (borrowed).
	base             int64
	packed, borrowed bool
}

// rowBytes is the size of a window in the file: the float32 features padded to 8 bytes, so
// that the two 64-bit values are aligned, then those.
func (s *store) rowBytes() int {
	if s.packed {
		return windowBytes(s.width)
	}
	return featBytes(s.width-2) + 16
}

func featBytes(d int) int { return 8 * ((d + 1) / 2) }

// append adds whole windows (a multiple of width values).
func (s *store) append(vals []float64) error {
	limit := s.limit
	if limit <= 0 {
		limit = spillAfter
	}
	if s.file == nil && s.n+int64(len(vals)) <= limit {
		seg := segRows * s.width
		for len(vals) > 0 {
			if len(s.mem) == 0 || len(s.mem[len(s.mem)-1]) == seg {
				s.mem = append(s.mem, make([]float64, 0, seg))
			}
			last := &s.mem[len(s.mem)-1]
			k := min(len(vals), seg-len(*last))
			*last = append(*last, vals[:k]...)
			vals = vals[k:]
			s.n += int64(k)
		}
		return nil
	}
	if s.file == nil {
		f, err := os.CreateTemp(s.dir, tempname.Pattern(".cohortmix-windows", ".tmp"))
		if err != nil {
			return fmt.Errorf("cohort: cannot create a temporary file for the windows in %s: %w; name a writable folder in cohort.ReadOptions.TempDir", s.dir, err)
		}
		s.file, s.w = f, bufio.NewWriterSize(f, 1<<20)
		for _, seg := range s.mem {
			if err := s.writeValues(seg); err != nil {
				return err
			}
		}
		s.mem = nil
	}
	if err := s.writeValues(vals); err != nil {
		return err
	}
	s.n += int64(len(vals))
	return nil
}

func (s *store) writeValues(vals []float64) error {
	w, rb := s.width, s.rowBytes()
	rows := len(vals) / w
	if cap(s.enc) < rows*rb {
		s.enc = make([]byte, rows*rb)
	}
	b := s.enc[:rows*rb]
	encodeRows(b, vals, w)
	if _, err := s.w.Write(b); err != nil {
		return fmt.Errorf("cohort: writing the temporary windows file in %s: %w; free disk space or name another folder in cohort.ReadOptions.TempDir", s.dir, err)
	}
	return nil
}

// encodeRows writes windows of w values in the file's form.
func encodeRows(b []byte, vals []float64, w int) {
	d := w - 2
	fb := featBytes(d)
	rb := fb + 16
	for i, o := 0, 0; i+w <= len(vals); i, o = i+w, o+rb {
		f := unsafe.Slice((*float32)(unsafe.Pointer(&b[o])), d)
		for j, v := range vals[i : i+d] {
			f[j] = float32(v)
		}
		tail := unsafe.Slice((*float64)(unsafe.Pointer(&b[o+fb])), 2)
		tail[0], tail[1] = vals[i+d], vals[i+d+1]
	}
}

// flush makes everything appended readable.
func (s *store) flush() error {
	if s.w == nil || s.flushed == s.n {
		return nil
	}
	if err := s.w.Flush(); err != nil {
		return fmt.Errorf("cohort: writing the temporary windows file in %s: %w; free disk space or name another folder in cohort.ReadOptions.TempDir", s.dir, err)
	}
	s.flushed = s.n
	return nil
}

// scratch holds the bytes of windows read from a store's file.
var scratch = sync.Pool{New: func() any { return new([]byte) }}

// read returns rows windows from window at, keeping the columns cols of each (all columns when
// cols is nil), row-major, into dst (reused when large enough).
func (s *store) read(at int64, rows int, cols []int, dst []float64) ([]float64, error) {
	w := s.width
	d := w
	if cols != nil {
		d = len(cols)
	}
	if cap(dst) < rows*d {
		dst = make([]float64, rows*d)
	}
	dst = dst[:rows*d]
	if s.file == nil {
		for i := 0; i < rows; {
			seg, r := int((at+int64(i))/segRows), int((at+int64(i))%segRows)
			k := min(rows-i, segRows-r)
			gather(dst[i*d:(i+k)*d], s.mem[seg][r*w:(r+k)*w], w, cols)
			i += k
		}
		return dst, nil
	}
	if end := (at + int64(rows)) * int64(w); end > s.flushed {
		if err := s.flush(); err != nil {
			return nil, err
		}
	}
	rb := s.rowBytes()
	bp := scratch.Get().(*[]byte)
	defer scratch.Put(bp)
	if cap(*bp) < rows*rb {
		*bp = make([]byte, rows*rb)
	}
	buf := (*bp)[:rows*rb]
	if _, err := s.file.ReadAt(buf, s.base+at*int64(rb)); err != nil {
		return nil, fmt.Errorf("cohort: reading the windows file %s: %w", s.file.Name(), err)
	}
	fd := w - 2
	if s.packed {
		decodePacked(dst, buf, rows, w, cols)
		return dst, nil
	}
	// The usual request, the features in their order, is a plain conversion of each row's start.
	prefix := cols != nil && len(cols) <= fd
	for a, j := range cols {
		prefix = prefix && j == a
	}
	for i := 0; i < rows; i++ {
		f := unsafe.Slice((*float32)(unsafe.Pointer(&buf[i*rb])), fd)
		tail := unsafe.Slice((*float64)(unsafe.Pointer(&buf[i*rb+featBytes(fd)])), 2)
		out := dst[i*d : (i+1)*d]
		if prefix {
			for j, v := range f[:len(out)] {
				out[j] = float64(v)
			}
			continue
		}
		if cols == nil {
			for j, v := range f {
				out[j] = float64(v)
			}
			out[fd], out[fd+1] = tail[0], tail[1]
			continue
		}
		for a, j := range cols {
			if j < fd {
				out[a] = float64(f[j])
			} else {
				out[a] = tail[j-fd]
			}
		}
	}
	return dst, nil
}

// readRuns is read over several stretches of windows, one after the other in dst (reused when
// large enough); cols as for read.
func (s *store) readRuns(runs []run, cols []int, dst []float64) ([]float64, error) {
	d, rows := s.width, 0
	if cols != nil {
		d = len(cols)
	}
	for _, rn := range runs {
		rows += rn.rows
	}
	if cap(dst) < rows*d {
		dst = make([]float64, rows*d)
	}
	dst = dst[:rows*d]
	off := 0
	for _, rn := range runs {
		// A part exactly as long as the stretch is filled in place.
		part := dst[off : off+rn.rows*d : off+rn.rows*d]
		if _, err := s.read(rn.at, rn.rows, cols, part); err != nil {
			return nil, err
		}
		off += rn.rows * d
	}
	return dst, nil
}

// gather copies the columns cols of each row of src (width w) into dst; all of them when cols
// is nil.
func gather(dst, src []float64, w int, cols []int) {
	if cols == nil {
		copy(dst, src)
		return
	}
	d := len(cols)
	for i, o := 0, 0; i+w <= len(src); i, o = i+w, o+d {
		row, out := src[i:i+w], dst[o:o+d]
		for a, j := range cols {
			out[a] = row[j]
		}
	}
}

// close frees the memory and removes the file.
func (s *store) close() error {
	s.mem = nil
	if s.file == nil {
		return nil
	}
	name := s.file.Name()
	err := s.file.Close()
	s.file = nil
	if s.borrowed {
		return err
	}
	return os.Remove(name)
}

// decodePacked decodes rows windows of the windows file's layout (WriteWindows: features as
// float32, then the order key and source as float64, little-endian) into dst, keeping the columns
// cols of each (all when nil).
func decodePacked(dst []float64, buf []byte, rows, w int, cols []int) {
	fd, rb := w-2, windowBytes(w)
	d := w
	if cols != nil {
		d = len(cols)
	}
	value := func(in []byte, j int) float64 {
		if j < fd {
			return float64(math.Float32frombits(binary.LittleEndian.Uint32(in[4*j:])))
		}
		return math.Float64frombits(binary.LittleEndian.Uint64(in[4*fd+8*(j-fd):]))
	}
	for i := 0; i < rows; i++ {
		in, out := buf[i*rb:(i+1)*rb], dst[i*d:(i+1)*d]
		if cols == nil {
			for j := range out {
				out[j] = value(in, j)
			}
			continue
		}
		for a, j := range cols {
			out[a] = value(in, j)
		}
	}
}

// spilled reports whether the values live in a file.
func (s *store) spilled() bool { return s.file != nil }
