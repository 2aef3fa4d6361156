package cohort

import (
	"bytes"
	"errors"
	"io"
	"strings"
	"testing"
)

// The eight-bytes-at-a-time scan must find the same first fault as the byte-by-byte one.
func FuzzTextFault(f *testing.F) {
	for _, s := range []string{"participant,window\nA,1\n", "M\xfcller,1\n", "abcdefgh\x00ijk", "abcdefg\x7f", "é日本\xe6\x97", "\t\r\n", "\xf0\x9f\x98\x80 ok"} {
		f.Add([]byte(s))
	}
	f.Fuzz(func(t *testing.T, b []byte) {
		if got, want := textFault(b, true), textCellFault(string(b)); got != want {
			t.Fatalf("textFault %d, byte by byte %d, on %q", got, want, b)
		}
		// A peek may end inside a rune; only a whole text is faulted for it.
		if off := textFault(b, false); off >= 0 && off != textFault(b, true) {
			t.Fatalf("a peek faulted at %d, the whole at %d", off, textFault(b, true))
		}
	})
}

func TestTextFault(t *testing.T) {
	t.Parallel()
	for _, c := range []struct {
		in    string
		whole bool
		want  int
	}{
		{"plain,ascii,text\r\n1,2,3\n", true, -1},
		{"tab\tseparated\n", true, -1},
		{"Müller, Zoë, 日本", true, -1},
		{"12345678\x01", true, 8},
		{"1234567\x7f", true, 7},
		{"ab\xe6\x97", true, 2},   // a rune cut at the end of the file
		{"ab\xe6\x97", false, -1}, // …or only at the end of a peek
		{"ab\xe6x\x97", false, 2}, // not a rune start followed by its tail
		{"\xc0\xaf", true, 0},     // an overlong encoding of '/'
	} {
		if got := textFault([]byte(c.in), c.whole); got != c.want {
			t.Errorf("textFault(%q, %v) = %d, want %d", c.in, c.whole, got, c.want)
		}
	}
}

// lineLimit refuses a line past MaxLineBytes whatever the reads' sizes, and passes the rest.
func TestLineLimit(t *testing.T) {
	t.Parallel()
	ok := strings.Repeat(strings.Repeat("x", 1000)+"\n", 3000) + strings.Repeat("y", MaxLineBytes) + "\nend"
	if b, err := io.ReadAll(newLineLimit(strings.NewReader(ok), "f")); err != nil || !bytes.Equal(b, []byte(ok)) {
		t.Fatalf("a line of exactly the limit: %v", err)
	}
	bad := strings.Repeat("x\n", 10) + strings.Repeat("y", MaxLineBytes+1) + "\n"
	for _, chunk := range []int{1 << 10, 1 << 16, 4 << 20} {
		l := newLineLimit(strings.NewReader(bad), "f")
		buf := make([]byte, chunk)
		var err error
		for err == nil {
			_, err = l.Read(buf)
		}
		var ie *InputError
		if !errors.As(err, &ie) || ie.Line != 11 {
			t.Errorf("reads of %d: %v", chunk, err)
		}
	}
}
