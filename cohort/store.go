package cohort

import (
	"bufio"
	"encoding/binary"
	"fmt"
	"math"
	"os"
)

// segSize is the number of values in one in-memory segment.
const segSize = 1 << 20

// spillAfter is the number of values a store keeps in memory before it moves them to a
// temporary file (64 MiB of float64); tests set it small.
var spillAfter int64 = 8 << 20

// store holds feature values out of the heap's way: in memory while they are few, then in a
// temporary file (float64, little endian), read back one participant at a time. The file lives in
// the folder the caller names and is removed by close.
type store struct {
	dir  string
	mem  [][]float64 // segments of segSize values: growing never copies what is held
	file *os.File
	w    *bufio.Writer
	n    int64 // values written
	buf  []byte
}

func (s *store) append(vals []float64) error {
	if s.file == nil && s.n+int64(len(vals)) <= spillAfter {
		for len(vals) > 0 {
			if len(s.mem) == 0 || len(s.mem[len(s.mem)-1]) == segSize {
				s.mem = append(s.mem, make([]float64, 0, segSize))
			}
			last := &s.mem[len(s.mem)-1]
			k := min(len(vals), segSize-len(*last))
			*last = append(*last, vals[:k]...)
			vals = vals[k:]
			s.n += int64(k)
		}
		return nil
	}
	if s.file == nil {
		f, err := os.CreateTemp(s.dir, ".cohortmix-windows-*.tmp")
		if err != nil {
			return fmt.Errorf("cohort: cannot create a temporary file for the windows in %s: %w; pass --temp with a writable folder", s.dir, err)
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
	if cap(s.buf) < 8*len(vals) {
		s.buf = make([]byte, 8*len(vals))
	}
	b := s.buf[:8*len(vals)]
	for i, v := range vals {
		binary.LittleEndian.PutUint64(b[8*i:], math.Float64bits(v))
	}
	if _, err := s.w.Write(b); err != nil {
		return fmt.Errorf("cohort: writing the temporary windows file in %s: %w; free disk space or pass --temp", s.dir, err)
	}
	return nil
}

// flush makes everything appended readable.
func (s *store) flush() error {
	if s.w == nil {
		return nil
	}
	if err := s.w.Flush(); err != nil {
		return fmt.Errorf("cohort: writing the temporary windows file in %s: %w; free disk space or pass --temp", s.dir, err)
	}
	return nil
}

// read returns the n values from offset off into dst (reused when large enough).
func (s *store) read(off, n int64, dst []float64) ([]float64, error) {
	if int64(cap(dst)) < n {
		dst = make([]float64, n)
	}
	dst = dst[:n]
	if s.file == nil {
		for done := int64(0); done < n; {
			seg, at := (off+done)/segSize, (off+done)%segSize
			done += int64(copy(dst[done:], s.mem[seg][at:]))
		}
		return dst, nil
	}
	b := make([]byte, 8*n)
	if _, err := s.file.ReadAt(b, 8*off); err != nil {
		return nil, fmt.Errorf("cohort: reading the temporary windows file: %w", err)
	}
	for i := range dst {
		dst[i] = math.Float64frombits(binary.LittleEndian.Uint64(b[8*i:]))
	}
	return dst, nil
}

// close frees the memory and removes the file.
func (s *store) close() error {
	s.mem = nil
	if s.file == nil {
		return nil
	}
	name := s.file.Name()
	s.file.Close()
	s.file = nil
	return os.Remove(name)
}

// spilled reports whether the values live in a file.
func (s *store) spilled() bool { return s.file != nil }
