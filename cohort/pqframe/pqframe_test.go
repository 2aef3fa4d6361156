package pqframe

import (
	"bytes"
	"encoding/binary"
	"strings"
	"testing"
)

// The frame of the Apache Parquet file format: PAR1 at both ends, the footer's length in the
// 4 bytes before the last mark.
func TestCheck(t *testing.T) {
	t.Parallel()
	frame := func(head, tail string, footer uint32, size int) []byte {
		b := make([]byte, size)
		copy(b, head)
		binary.LittleEndian.PutUint32(b[size-8:], footer)
		copy(b[size-4:], tail)
		return b
	}
	for _, c := range []struct {
		name string
		b    []byte
		want string // "" for a frame that passes
	}{
		{"whole", frame("PAR1", "PAR1", 20, 64), ""},
		{"too short", []byte("PAR1PAR1"), "too short"},
		{"not Parquet", frame("PK\x03\x04", "PAR1", 20, 64), "not a Parquet file"},
		{"encrypted footer", frame("PAR1", "PARE", 20, 64), "encrypted footer"},
		{"footer longer than the file", frame("PAR1", "PAR1", 1<<30, 64), "footer claims 1073741824 bytes of a 64-byte file"},
	} {
		err := Check(bytes.NewReader(c.b), int64(len(c.b)))
		if c.want == "" && err != nil || c.want != "" && (err == nil || !strings.Contains(err.Error(), c.want)) {
			t.Errorf("%s: %v, want %q", c.name, err, c.want)
		}
	}
}
