// Package pqframe checks the frame of a Parquet file before a Parquet library reads it, for the
// readers of tables and of raw recordings.
package pqframe

import (
	"encoding/binary"
	"fmt"
	"io"
)

// Check checks the frame of a Parquet file before parquet-go reads it, and says what
// to do when it is wrong. The frame (Apache Parquet file format) is the magic "PAR1" at both
// ends ("PARE" at the end when the footer is encrypted) and, before the final magic, the
// footer's length as 4 little-endian bytes, which must fit in the file. parquet-go allocates
// the footer length it reads before it finds that the length is wrong; fuzzing found a damaged
// length that made it allocate 4 GB.
func Check(f io.ReaderAt, size int64) error {
	var head, tail [8]byte
	if size < 12 {
		return fmt.Errorf("too short for a Parquet file (%d bytes); write it again, or export CSV", size)
	}
	if _, err := f.ReadAt(head[:4], 0); err != nil {
		return fmt.Errorf("cannot read it: %w; check the file", err)
	}
	if _, err := f.ReadAt(tail[:], size-8); err != nil {
		return fmt.Errorf("cannot read it: %w; check the file", err)
	}
	if string(tail[4:]) == "PARE" {
		return fmt.Errorf("a Parquet file with an encrypted footer, which this tool does not read; write it without encryption, or export CSV")
	}
	if string(head[:4]) != "PAR1" || string(tail[4:]) != "PAR1" {
		return fmt.Errorf("not a Parquet file (no PAR1 mark at its start and end); write it again, or export CSV")
	}
	if n := int64(binary.LittleEndian.Uint32(tail[:4])); n > size-12 {
		return fmt.Errorf("a damaged or cut-short Parquet file: its footer claims %d bytes of a %d-byte file; write it again, or export CSV", n, size)
	}
	return nil
}
