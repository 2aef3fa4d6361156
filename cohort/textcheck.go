package cohort

import (
	"bytes"
	"encoding/binary"
	"fmt"
	"io"
	"unicode/utf8"
)

// MaxLineBytes is the longest line a text table may hold. A window's row is a few hundred bytes;
// a longer line is a file that is not a table of windows (or a damaged one), and is refused
// before it is held in memory: a small compressed file can hold a line of gigabytes.
const MaxLineBytes = 1 << 20

// lineLimit passes a stream through and fails, naming the line, as soon as a line grows past
// MaxLineBytes. Reads are capped at MaxLineBytes so that a line longer than the limit always
// spans two reads and is seen at the second.
type lineLimit struct {
	r    io.Reader
	file string
	line int // lines ended so far
	run  int // bytes of the current line so far
}

func newLineLimit(r io.Reader, file string) *lineLimit { return &lineLimit{r: r, file: file} }

func (l *lineLimit) Read(p []byte) (int, error) {
	if len(p) > MaxLineBytes {
		p = p[:MaxLineBytes]
	}
	n, err := l.r.Read(p)
	b := p[:n]
	first := bytes.IndexByte(b, '\n')
	if first < 0 {
		l.run += n
	} else {
		if l.run+first > MaxLineBytes {
			return 0, l.tooLong()
		}
		l.line += bytes.Count(b, []byte{'\n'})
		l.run = n - bytes.LastIndexByte(b, '\n') - 1
	}
	if l.run > MaxLineBytes {
		return 0, l.tooLong()
	}
	return n, err
}

func (l *lineLimit) tooLong() error {
	return &InputError{File: l.file, Line: l.line + 1, Msg: fmt.Sprintf("line is longer than %d MiB, more than any row of windows; check that this is the table of windows and that its line ends are intact", MaxLineBytes>>20), Err: ErrNotText}
}

// textFault finds the first byte of b that has no place in a text table: a control character
// other than tab, carriage return and line feed, DEL, or a byte that is not part of valid UTF-8.
// It returns the fault's offset, or -1. A rune cut by the end of b is a fault only when b is the
// end of the text (whole); a peek at the start of a file may end inside one. Eight bytes are looked at in one step while they are all
// printable ASCII; a line feed makes one slow step per line.
func textFault(b []byte, whole bool) int {
	const (
		lows  = 0x2020202020202020
		highs = 0x8080808080808080
		ones  = 0x0101010101010101
	)
	i := 0
	for i < len(b) {
		if i+8 <= len(b) {
			w := binary.LittleEndian.Uint64(b[i:])
			// A byte at or above 0x80, below 0x20, or equal to 0x7f sets its high bit here.
			if (w|(w-lows)|((w^0x7f7f7f7f7f7f7f7f)-ones))&highs == 0 {
				i += 8
				continue
			}
		}
		c := b[i]
		switch {
		case c == '\t' || c == '\n' || c == '\r':
			i++
		case c < 0x20 || c == 0x7f:
			return i
		case c < 0x80:
			i++
		default:
			r, size := utf8.DecodeRune(b[i:])
			if r == utf8.RuneError && size <= 1 {
				if !whole && isCutRune(b[i:]) {
					return -1
				}
				return i
			}
			i += size
		}
	}
	return -1
}

// isCutRune tells whether b (shorter than a rune) is the start of a valid multi-byte rune.
func isCutRune(b []byte) bool {
	c := b[0]
	var need int
	switch {
	case c&0xe0 == 0xc0:
		need = 2
	case c&0xf0 == 0xe0:
		need = 3
	case c&0xf8 == 0xf0:
		need = 4
	default:
		return false
	}
	if len(b) >= need {
		return false
	}
	for _, x := range b[1:] {
		if x&0xc0 != 0x80 {
			return false
		}
	}
	return true
}

// textCellFault is textFault for one cell read whole (a sheet or Parquet cell).
func textCellFault(s string) int {
	for i := 0; i < len(s); {
		c := s[i]
		if c < 0x80 {
			if c < 0x20 && c != '\t' && c != '\n' && c != '\r' || c == 0x7f {
				return i
			}
			i++
			continue
		}
		r, size := utf8.DecodeRuneInString(s[i:])
		if r == utf8.RuneError && size <= 1 {
			return i
		}
		i += size
	}
	return -1
}

// faultMsg words a fault found by textFault or textCellFault at byte c.
func faultMsg(c byte) string {
	what := fmt.Sprintf("byte 0x%02x is not valid UTF-8", c)
	if c < 0x20 || c == 0x7f {
		what = fmt.Sprintf("control character 0x%02x", c)
		if c == 0 {
			what = "NUL byte (0x00)"
		}
	}
	return what + " in a text table; save the file again as UTF-8 text, or remove the stray byte"
}

// textFaultError words a fault at offset off of data, whose first line is line.
func textFaultError(file string, data []byte, off, line int) error {
	before := data[:off]
	line += bytes.Count(before, []byte{'\n'})
	col := off - bytes.LastIndexByte(before, '\n')
	return &InputError{File: file, Line: line, Column: col, Msg: faultMsg(data[off]), Err: ErrNotText}
}
