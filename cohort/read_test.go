package cohort

import (
	"bytes"
	"compress/gzip"
	"context"
	"encoding/binary"
	"errors"
	"fmt"
	"io/fs"
	"math"
	"math/rand/v2"
	"os"
	"path/filepath"
	"slices"
	"strconv"
	"strings"
	"testing"
	"time"

	"github.com/parquet-go/parquet-go"
	"github.com/xuri/excelize/v2"
)

func write(t testing.TB, dir, name string, b []byte) string {
	t.Helper()
	p := filepath.Join(dir, name)
	if err := os.WriteFile(p, b, 0o644); err != nil {
		t.Fatal(err)
	}
	return p
}

func gz(b []byte) []byte {
	var buf bytes.Buffer
	w := gzip.NewWriter(&buf)
	w.Write(b)
	w.Close()
	return buf.Bytes()
}

// rowsOf builds a small cohort: participants A and B with n windows each.
func rowsOf(n int, sep string) string {
	var b strings.Builder
	b.WriteString(strings.Join([]string{"participant", "window", "f1", "f2"}, sep) + "\n")
	for _, p := range []string{"A", "B"} {
		for i := 0; i < n; i++ {
			b.WriteString(strings.Join([]string{p, itoa(i), itoa(i%7) + ".5", itoa((i * 3) % 5)}, sep) + "\n")
		}
	}
	return b.String()
}

func itoa(i int) string { return strconv.Itoa(i) }

// Each bad input ends in the exact one-line message users see.
func TestReadErrors(t *testing.T) {
	t.Parallel()
	dir := t.TempDir()
	good := rowsOf(3, ",")
	long := rowsOf(4000, ",") // past the 64 KiB the reader looks at before it starts
	cases := []struct {
		name  string
		files map[string][]byte // read in name order
		opts  ReadOptions
		want  string
		cause error
	}{
		{"missing id", map[string][]byte{"a.csv": []byte(strings.Replace(good, "participant", "pid", 1))}, ReadOptions{},
			`a.csv:1: no column "participant" (the id); pass --id with one of: pid, window, f1, f2`, ErrNoColumn},
		{"missing order", map[string][]byte{"a.csv": []byte(strings.Replace(good, "window", "w", 1))}, ReadOptions{},
			`a.csv:1: no column "window" (the order); pass --order with one of: participant, w, f1, f2, or --order - to keep the file's row order`, ErrNoColumn},
		{"duplicate column", map[string][]byte{"a.csv": []byte(strings.Replace(good, "f2", "f1", 1))}, ReadOptions{},
			`a.csv:1: f1: column name appears twice (columns 3 and 4); rename one`, ErrDuplicate},
		{"decimal comma in a comma file", map[string][]byte{"a.csv": []byte(strings.Replace(good, "A,1,1.5", `A,1,"1,5"`, 1))}, ReadOptions{},
			`a.csv:3:5: f1: "1,5" is not a number; use '.' as the decimal separator, or separate the columns by semicolons or tabs (where a decimal comma is read)`, ErrNotNumber},
		{"infinite value", map[string][]byte{"a.csv": []byte(strings.Replace(good, "A,1,1.5", "A,1,Inf", 1))}, ReadOptions{},
			`a.csv:3:5: f1: "Inf" is infinite or larger than 1e+12 in magnitude; fix the value or leave the cell empty to mark it missing`, ErrNonFinite},
		{"huge value", map[string][]byte{"a.csv": []byte(strings.Replace(good, "A,1,1.5", "A,1,3e200", 1))}, ReadOptions{},
			`a.csv:3:5: f1: "3e200" is infinite or larger than 1e+12 in magnitude; fix the value or leave the cell empty to mark it missing`, ErrNonFinite},
		{"empty id", map[string][]byte{"a.csv": []byte(strings.Replace(good, "B,1,", ",1,", 1))}, ReadOptions{},
			`a.csv:6:1: participant: participant id is empty; fill it in or remove the row`, ErrMissingID},
		{"id of a vertical tab only (found by FuzzRead: the one-scan path let it through)", map[string][]byte{"a.csv": []byte(strings.Replace(good, "B,1,", "\v,1,", 1))}, ReadOptions{},
			`a.csv:6:1: control character 0x0b in a text table; save the file again as UTF-8 text, or remove the stray byte`, ErrNotText},
		// The hostile sweep of issue 28: bytes past the first 64 KiB were not looked at.
		{"invalid UTF-8 past the first 64 KiB", map[string][]byte{"a.csv": []byte(strings.Replace(long, "\nB,3990,", "\nM\xfcller,3990,", 1))}, ReadOptions{},
			`a.csv:7992:2: byte 0xfc is not valid UTF-8 in a text table; save the file again as UTF-8 text, or remove the stray byte`, ErrNotText},
		{"NUL past the first 64 KiB", map[string][]byte{"a.csv": []byte(strings.Replace(long, "\nB,3990,", "\nB\x00,3990,", 1))}, ReadOptions{},
			`a.csv:7992:2: NUL byte (0x00) in a text table; save the file again as UTF-8 text, or remove the stray byte`, ErrNotText},
		{"NUL in the first 64 KiB, named where it is", map[string][]byte{"a.csv": []byte(strings.Replace(good, "B,1,", "B\x00,1,", 1))}, ReadOptions{},
			`a.csv:6:2: NUL byte (0x00) in a text table; save the file again as UTF-8 text, or remove the stray byte`, ErrNotText},
		{"a line of 2 MiB", map[string][]byte{"a.csv": []byte(strings.Replace(good, "A,2,", "A,2,"+strings.Repeat("1", 2<<20), 1))}, ReadOptions{},
			`a.csv:4: line is longer than 1 MiB, more than any row of windows; check that this is the table of windows and that its line ends are intact`, ErrNotText},
		{"a first window of 2 MiB, compressed", map[string][]byte{"a.csv.gz": gz([]byte(strings.Replace(good, "A,0,", "A,0,"+strings.Repeat("1", 2<<20), 1)))}, ReadOptions{},
			`a.csv.gz:2: line is longer than 1 MiB, more than any row of windows; check that this is the table of windows and that its line ends are intact`, ErrNotText},
		{"empty wave cell", map[string][]byte{"a.csv": []byte("participant,window,visit,f1\nA,0,1,1\nA,1,,2\n")}, ReadOptions{Wave: "visit"},
			`a.csv:3:5: visit: wave is empty; fill in the wave of every row, or leave the wave column out`, ErrMissingID},
		{"empty wave cell in a quoted chunk", map[string][]byte{"a.csv": []byte("participant,window,visit,f1\nA,0,1,1\n\"A\",1,\"\",2\n")}, ReadOptions{Wave: "visit"},
			`a.csv:3:7: visit: wave is empty; fill in the wave of every row, or leave the wave column out`, ErrMissingID},
		{"empty wave cell on the first row", map[string][]byte{"a.csv": []byte("participant,window,visit,f1\nA,0,,1\nA,1,1,2\n")}, ReadOptions{Wave: "visit"},
			`a.csv:2:5: visit: wave is empty; fill in the wave of every row, or leave the wave column out`, ErrMissingID},
		{"a quote left open (was reported at the end of the file)", map[string][]byte{"a.csv": []byte(strings.Replace(good, "\nA,1,", "\n\"A,1,", 1))}, ReadOptions{},
			`a.csv:3: a quote opened in this row is not closed where it should be (the reader ran on to line 7); close the quote, or double a quote inside a quoted field`, ErrRagged},
		{"bare carriage returns (was: column name appears twice)", map[string][]byte{"a.csv": []byte(strings.ReplaceAll(good, "\n", "\r"))}, ReadOptions{},
			`a.csv:1: lines end in a bare carriage return (an old Mac line end); save the file with LF or CRLF line ends`, ErrRagged},
		{"a feature column with no value (was: everyone excluded, the column not named)", map[string][]byte{"a.csv": []byte("participant,window,f1,f2\nA,0,1,\nA,1,2,NA\nB,0,1,\n")}, ReadOptions{Missing: ImputeMedian},
			`a.csv: f2: every cell of this feature column is empty or NA; fill it, or leave the column out with cohort.ReadOptions.Features`, ErrEmpty},
		{"an id of 100,000 bytes (was cut to 32,767 characters in the workbook only)", map[string][]byte{"a.csv": []byte(strings.Replace(good, "\nB,1,", "\n"+strings.Repeat("B", 100_000)+",1,", 1))}, ReadOptions{},
			`a.csv:6: the participant id is 100,000 bytes long (it starts "BBBBBBBBBBBBBBBBBBBB"); ids and waves are at most 1000 bytes: is the id column the right one?`, ErrMissingID},
		// Issue 29: text in the first row of a numeric column dropped the column silently; the
		// column is a feature (numbers follow), and the text is named.
		{"text in the first row of a numeric column", map[string][]byte{"a.csv": []byte(strings.Replace(good, "A,0,0.5,0", "A,0,low,0", 1))}, ReadOptions{},
			`a.csv:2:5: f1: "low" is not a number; feature cells hold numbers, or are empty or NA when missing (leave text columns out with cohort.ReadOptions.Features)`, ErrNotNumber},
		// Issue 30: naive and +01:00 times in one participant were interleaved silently.
		{"times with and without a UTC offset", map[string][]byte{"a.csv": []byte("participant,window,f1\nA,2026-03-02T08:00:00,1\nA,2026-03-02T08:01:00+01:00,2\n")}, ReadOptions{},
			`a.csv:3:3: window: "2026-03-02T08:01:00+01:00" is a time with a UTC offset but the order column held times without a UTC offset from a.csv:2 on; give every time in one form (all in UTC, say)`, ErrOrder},
		{"times with and without a UTC offset, in a later chunk", map[string][]byte{"a.csv": []byte("participant,window,f1\nA,2026-03-02T08:00:00Z,1\nA,2026-03-02T08:01:00Z,2\nA,2026-03-02T08:02:00,3\n")}, ReadOptions{},
			`a.csv:4:3: window: "2026-03-02T08:02:00" is a time without a UTC offset but the order column held times with a UTC offset from a.csv:2 on; give every time in one form (all in UTC, say)`, ErrOrder},
		{"digits with underscores", map[string][]byte{"a.csv": []byte(strings.Replace(good, "A,1,1.5", "A,1,1_000", 1))}, ReadOptions{},
			`a.csv:3:5: f1: "1_000" is not a number; feature cells hold numbers, or are empty or NA when missing (leave text columns out with cohort.ReadOptions.Features)`, ErrNotNumber},
		{"a hexadecimal float", map[string][]byte{"a.csv": []byte(strings.Replace(good, "A,1,1.5", "A,1,0x1p-2", 1))}, ReadOptions{},
			`a.csv:3:5: f1: "0x1p-2" is not a number; feature cells hold numbers, or are empty or NA when missing (leave text columns out with cohort.ReadOptions.Features)`, ErrNotNumber},
		{"a time after 2200", map[string][]byte{"a.csv": []byte("participant,window,f1\nA,2300-01-01T00:00:00,1\n")}, ReadOptions{},
			`a.csv:2:3: window: "2300-01-01T00:00:00" is a time outside 1900–2200; check the year (a wrong century or an unset clock)`, ErrOrder},
		{"a time before 1900 after good ones", map[string][]byte{"a.csv": []byte("participant,window,f1\nA,2026-01-01T00:00:00,1\nA,1850-01-01T00:02:00,2\n")}, ReadOptions{},
			`a.csv:3:3: window: "1850-01-01T00:02:00" is a time outside 1900–2200; check the year (a wrong century or an unset clock)`, ErrOrder},
		{"id of a no-break space only", map[string][]byte{"a.csv": []byte(strings.Replace(good, "B,1,", "\u00a0,1,", 1))}, ReadOptions{},
			`a.csv:6:1: participant: participant id is empty; fill it in or remove the row`, ErrMissingID},
		{"duplicate window", map[string][]byte{"a.csv": []byte(strings.Replace(good, "A,2,", "A,1,", 1))}, ReadOptions{},
			`a.csv:4: window: participant A has this window twice (also line 3); remove one of the rows`, ErrDuplicate},
		{"mixed order kinds", map[string][]byte{"a.csv": []byte(strings.Replace(good, "A,2,", "A,2026-03-02T08:00:00,", 1))}, ReadOptions{},
			`a.csv:4:3: window: "2026-03-02T08:00:00" is a time but the order column held integers from a.csv:2 on; use one kind throughout`, ErrOrder},
		{"mixed order kinds after an id the one-scan path leaves to the general one", map[string][]byte{"a.csv": []byte(strings.Replace(strings.Replace(good, "A,2,", "A,2026-03-02T08:00:00,", 1), "A,1,", " A,1,", 1))}, ReadOptions{},
			`a.csv:4:3: window: "2026-03-02T08:00:00" is a time but the order column held integers from a.csv:2 on; use one kind throughout`, ErrOrder},
		{"unreadable order", map[string][]byte{"a.csv": []byte(strings.Replace(good, "A,2,", "A,second,", 1))}, ReadOptions{},
			`a.csv:4:3: window: "second" is neither an integer nor an ISO-8601 time such as 2026-03-01T08:30:00; fix the cell`, ErrOrder},
		{"ragged", map[string][]byte{"a.csv": []byte(strings.Replace(good, "A,1,1.5,3", "A,1,1.5", 1))}, ReadOptions{},
			`a.csv:3: row has a different number of fields than the header; fix the row or quote fields that contain the delimiter`, ErrRagged},
		{"empty", map[string][]byte{"a.csv": nil}, ReadOptions{}, `a.csv: file is empty; it needs a header row and at least one window`, ErrEmpty},
		{"header only", map[string][]byte{"a.csv": []byte("participant,window,f1\n")}, ReadOptions{}, `a.csv:1: has a header but no windows; each row should be one window`, ErrEmpty},
		{"binary", map[string][]byte{"a.csv": {0x50, 0x4b, 0x03, 0x04, 0, 0, 1, 2}}, ReadOptions{}, `a.csv:1: is not a text table (binary or not UTF-8); export it as CSV or TSV`, ErrNotText},
		{"gzip cut short", map[string][]byte{"a.csv.gz": gz([]byte(rowsOf(400, ",")))[:300]}, ReadOptions{},
			`a.csv.gz: compressed file is cut short or damaged (unexpected EOF); copy it again from the source`, ErrNotText},
		{"feature missing in second file", map[string][]byte{"a.csv": []byte(good), "b.csv": []byte("participant,window,f1\nC,0,1\n")}, ReadOptions{},
			`b.csv:1: f2: feature is in a.csv but not in this file; add the column, or leave it out of both with cohort.ReadOptions.Features`, ErrMismatch},
		{"text in one file, numeric in another", map[string][]byte{"a.csv": []byte(good), "b.csv": []byte("participant,window,f1,f2\nC,0,low,1\n")}, ReadOptions{},
			`b.csv:2:5: f1: "low" is not a number; feature cells hold numbers, or are empty or NA when missing (leave text columns out with cohort.ReadOptions.Features) (it is numeric in a.csv)`, ErrNotNumber},
		{"feature chosen but text", map[string][]byte{"a.csv": []byte("participant,window,site\nA,0,north\n")}, ReadOptions{Features: []string{"site"}},
			`a.csv:2:5: site: "north" is not a number; feature cells hold numbers, or are empty or NA when missing (leave text columns out with cohort.ReadOptions.Features); cohort.ReadOptions.Features chose this column`, ErrNotNumber},
	}
	for _, c := range cases {
		t.Run(c.name, func(t *testing.T) {
			sub := filepath.Join(dir, strings.ReplaceAll(c.name, " ", "_"))
			os.Mkdir(sub, 0o755)
			var paths []string
			for _, name := range []string{"a.csv", "a.csv.gz", "b.csv"} {
				if b, ok := c.files[name]; ok {
					paths = append(paths, write(t, sub, name, b))
				}
			}
			_, err := Read(context.Background(), paths, c.opts)
			if err == nil {
				t.Fatal("no error")
			}
			if got, want := err.Error(), filepath.Join(sub, c.want); got != strings.ReplaceAll(want, "from a.csv", "from "+filepath.Join(sub, "a.csv")) &&
				got != strings.ReplaceAll(want, "in a.csv", "in "+filepath.Join(sub, "a.csv")) {
				t.Errorf("\n got %s\nwant %s", got, want)
			}
			if !errors.Is(err, c.cause) {
				t.Errorf("errors.Is(%v) is false", c.cause)
			}
			var ie *InputError
			if !errors.As(err, &ie) {
				t.Error("not an *InputError")
			}
		})
	}
}

func TestReadMissingPaths(t *testing.T) {
	t.Parallel()
	dir := t.TempDir()
	for _, c := range []struct{ path, want string }{
		{filepath.Join(dir, "nope.csv"), "cannot open: no such file or directory; check the path"},
		{dir, "is a folder with no table files (.csv, .tsv, .txt, .csv.gz, .tsv.gz, .txt.gz, .xlsx, .parquet); name the files, or put them in it"},
		{filepath.Join(dir, "*.csv"), "no file matches this pattern; check the path"},
	} {
		_, err := Read(context.Background(), []string{c.path}, ReadOptions{})
		if err == nil || err.Error() != c.path+": "+c.want || !errors.Is(err, ErrOpen) {
			t.Errorf("%s: got %v", c.path, err)
		}
	}
	// The system's error is kept beneath the message (issue 27): a missing file is
	// fs.ErrNotExist to a caller, as well as ErrOpen.
	if _, err := Read(context.Background(), []string{filepath.Join(dir, "nope.csv")}, ReadOptions{}); !errors.Is(err, fs.ErrNotExist) {
		t.Errorf("a missing file: %v is not fs.ErrNotExist", err)
	}
	// With no file to name, the message does not start with a colon.
	if _, err := Read(context.Background(), nil, ReadOptions{}); err == nil || strings.HasPrefix(err.Error(), ":") || !errors.Is(err, ErrOpen) {
		t.Errorf("no inputs: %v", err)
	}
}

// Inputs that are accepted, and the policy each shows in the result.
func TestReadPolicies(t *testing.T) {
	t.Parallel()
	dir := t.TempDir()
	good := rowsOf(25, ",")
	cases := []struct {
		name  string
		files []string
		opts  ReadOptions
		check func(t *testing.T, tab *Table)
	}{
		{"byte-order mark and CRLF", []string{"\xef\xbb\xbf" + strings.ReplaceAll(good, "\n", "\r\n")}, ReadOptions{}, func(t *testing.T, tab *Table) {
			if len(tab.Units) != 2 || tab.Features[0] != "f1" {
				t.Errorf("units %d features %v", len(tab.Units), tab.Features)
			}
		}},
		{"semicolon with decimal comma", []string{strings.ReplaceAll(strings.ReplaceAll(rowsOf(25, ";"), ".5", ",5"), "", "")}, ReadOptions{}, func(t *testing.T, tab *Table) {
			if v := block(t, tab, 0)[2]; v != 1.5 {
				t.Errorf("second window f1 = %v, want 1.5", v)
			}
		}},
		{"tab separated", []string{rowsOf(25, "\t")}, ReadOptions{}, func(t *testing.T, tab *Table) {
			if len(tab.Features) != 2 {
				t.Errorf("features %v", tab.Features)
			}
		}},
		{"quoted fields with delimiters and newlines", []string{"participant,window,f1,f2,note\n" + strings.Repeat("", 0) + quotedRows()}, ReadOptions{}, func(t *testing.T, tab *Table) {
			if len(tab.Quality.IgnoredColumns) != 1 || tab.Quality.IgnoredColumns[0].Name != "note" {
				t.Errorf("ignored %v", tab.Quality.IgnoredColumns)
			}
		}},
		{"unsorted windows are sorted", []string{strings.Replace(good, "A,0,0.5,0\n", "", 1) + "A,0,0.5,0\n"}, ReadOptions{}, func(t *testing.T, tab *Table) {
			if !tab.Units[0].Sorted || order(t, tab, 0)[0] != 0 || len(tab.Quality.Notes) != 1 {
				t.Errorf("sorted %v order %v notes %v", tab.Units[0].Sorted, order(t, tab, 0)[:3], tab.Quality.Notes)
			}
		}},
		{"participant split across files", []string{rowsOf(25, ","), "participant,window,f1,f2\nA,100,1,2\n"}, ReadOptions{}, func(t *testing.T, tab *Table) {
			if len(tab.Units[0].Files) != 2 || tab.Units[0].Windows() != 26 || len(tab.Quality.Notes) != 1 || tab.Quality.Notes[0].Kind != NoteJoined || tab.Quality.Notes[0].Ints[0] != 1 {
				t.Errorf("files %v windows %d notes %v", tab.Units[0].Files, tab.Units[0].Windows(), tab.Quality.Notes)
			}
		}},
		// Issue 28: "P6 " was merged into P6 with no note; it still is, and counted.
		{"ids with spaces around them are trimmed, and counted", []string{strings.Replace(strings.Replace(good, "\nB,3,", "\nB ,3,", 1), "\nB,4,", "\n\"  B\",4,", 1)}, ReadOptions{}, func(t *testing.T, tab *Table) {
			notes := tab.Quality.Notes
			if len(tab.Units) != 2 || tab.Quality.TrimmedCells != 2 || len(notes) != 1 || notes[0].Kind != NoteTrimmed || notes[0].Ints[0] != 2 || !strings.HasSuffix(notes[0].Names[0], ".csv:30") {
				t.Errorf("units %d, trimmed %d, notes %v", len(tab.Units), tab.Quality.TrimmedCells, tab.Quality.Notes)
			}
		}},
		// Issue 29: a tab file with decimal commas was "no numeric feature columns".
		{"tab separated with decimal commas", []string{strings.ReplaceAll(rowsOf(25, "\t"), ".5", ",5")}, ReadOptions{}, func(t *testing.T, tab *Table) {
			if v := block(t, tab, 0)[2]; v != 1.5 || tab.Files[0].Delimiter != "tab" || tab.Files[0].Decimal != "comma" {
				t.Errorf("second window f1 = %v, read as %s/%s", v, tab.Files[0].Delimiter, tab.Files[0].Decimal)
			}
		}},
		{"comma separated is read with a decimal point", []string{good}, ReadOptions{}, func(t *testing.T, tab *Table) {
			if tab.Files[0].Delimiter != "comma" || tab.Files[0].Decimal != "point" {
				t.Errorf("read as %s/%s", tab.Files[0].Delimiter, tab.Files[0].Decimal)
			}
		}},
		// Issue 29: a single n/a in the first row turned a feature into text, silently.
		{"n-a in the first row is a missing cell", []string{strings.Replace(good, "A,0,0.5,0", "A,0,n/a,0", 1)}, ReadOptions{}, func(t *testing.T, tab *Table) {
			if len(tab.Features) != 2 || tab.Units[0].Dropped != 1 || len(tab.Quality.IgnoredColumns) != 0 {
				t.Errorf("features %v, dropped %d, ignored %v", tab.Features, tab.Units[0].Dropped, tab.Quality.IgnoredColumns)
			}
		}},
		{"missing cells dropped", []string{strings.Replace(strings.Replace(good, "A,1,1.5,3", "A,1,NA,3", 1), "A,2,2.5,1", "A,2,,1", 1)}, ReadOptions{}, func(t *testing.T, tab *Table) {
			if tab.Units[0].Dropped != 2 || tab.Quality.WindowsDropped != 2 || tab.Units[0].Windows() != 23 {
				t.Errorf("dropped %d/%d windows %d", tab.Units[0].Dropped, tab.Quality.WindowsDropped, tab.Units[0].Windows())
			}
		}},
		{"missing cells imputed", []string{strings.Replace(good, "A,1,1.5,3", "A,1,NaN,3", 1)}, ReadOptions{Missing: ImputeMedian}, func(t *testing.T, tab *Table) {
			if tab.Quality.CellsImputed != 1 || math.IsNaN(block(t, tab, 0)[2]) || block(t, tab, 0)[2] != 3.5 {
				t.Errorf("imputed %d, value %v (median of A's f1 is 3.5)", tab.Quality.CellsImputed, block(t, tab, 0)[2])
			}
		}},
		{"too few windows and a constant feature", []string{good + "C,0,1,1\nC,1,2,1\n"}, ReadOptions{}, func(t *testing.T, tab *Table) {
			if len(tab.Quality.Excluded) != 1 || tab.Quality.Excluded[0].ID != "C" || tab.Quality.UnitsIn != 3 || tab.Quality.WindowsExcluded != 2 {
				t.Errorf("excluded %+v", tab.Quality.Excluded)
			}
		}},
		{"times in the order column", []string{"participant,window,f1\n" + timeRows()}, ReadOptions{}, func(t *testing.T, tab *Table) {
			if tab.OrderKind != "time" || order(t, tab, 0)[1]-order(t, tab, 0)[0] != 60e9 {
				t.Errorf("order kind %s, step %d", tab.OrderKind, order(t, tab, 0)[1]-order(t, tab, 0)[0])
			}
		}},
		{"lowest values", []string{good}, ReadOptions{}, func(t *testing.T, tab *Table) {
			if lo1, lo2 := tab.Lowest(0), tab.Lowest(1); lo1 != 0.5 || lo2 != 0 {
				t.Errorf("lowest f1 %v, f2 %v; want 0.5 and 0", lo1, lo2)
			}
		}},
		{"lowest values count missing cells out and excluded participants in", []string{strings.Replace(good, "A,1,1.5,3", "A,1,NA,-3", 1) + "C,0,-2,1\n"}, ReadOptions{}, func(t *testing.T, tab *Table) {
			if lo1, lo2 := tab.Lowest(0), tab.Lowest(1); lo1 != -2 || lo2 != -3 {
				t.Errorf("lowest f1 %v, f2 %v; want -2 (excluded C) and -3 (a window dropped for another cell)", lo1, lo2)
			}
		}},
		{"gzip", []string{string(gz([]byte(good)))}, ReadOptions{}, func(t *testing.T, tab *Table) {
			if len(tab.Units) != 2 || tab.Files[0].Rows != 50 {
				t.Errorf("units %d rows %d", len(tab.Units), tab.Files[0].Rows)
			}
		}},
	}
	for _, c := range cases {
		t.Run(c.name, func(t *testing.T) {
			var paths []string
			for i, content := range c.files {
				paths = append(paths, write(t, dir, strings.ReplaceAll(c.name, " ", "_")+itoa(i)+".csv", []byte(content)))
			}
			tab, err := Read(context.Background(), paths, c.opts)
			if err != nil {
				t.Fatal(err)
			}
			c.check(t, tab)
			q := tab.Quality
			kept := 0
			for _, u := range tab.Units {
				kept += u.Windows()
			}
			if kept+q.WindowsDropped+q.WindowsExcluded != q.WindowsIn || len(tab.Units)+len(q.Excluded) != q.UnitsIn {
				t.Errorf("accounting: %d kept + %d dropped + %d excluded ≠ %d in; %d + %d units ≠ %d", kept, q.WindowsDropped, q.WindowsExcluded, q.WindowsIn, len(tab.Units), len(q.Excluded), q.UnitsIn)
			}
		})
	}
}

func quotedRows() string {
	var b strings.Builder
	for i := 0; i < 25; i++ {
		b.WriteString("A," + itoa(i) + "," + itoa(i%4) + ",1,\"walked, then\nsat\"\n")
		b.WriteString("B," + itoa(i) + "," + itoa(i%3) + ",2,\"x\"\n")
	}
	return b.String()
}

func timeRows() string {
	var b strings.Builder
	for i := 0; i < 25; i++ {
		m := itoa(i)
		if i < 10 {
			m = "0" + m
		}
		b.WriteString("A,2026-03-02T08:" + m + ":00," + itoa(i%5) + "\n")
		b.WriteString("B,2026-03-02 08:" + m + ":00," + itoa(i%3) + "\n")
	}
	return b.String()
}

// FuzzRead feeds arbitrary bytes to the reader as a table, plain and gzipped: it must never
// panic, and every rejection must be an *InputError naming the file.
func FuzzRead(f *testing.F) {
	f.Add([]byte(rowsOf(3, ",")), false)
	f.Add([]byte(rowsOf(3, ";")), false)
	f.Add([]byte(strings.ReplaceAll(rowsOf(3, ";"), ".5", ",5")), false)
	f.Add([]byte(rowsOf(3, "\t")), true)
	f.Add([]byte("participant,window,f1\nA,2026-03-02T08:00:00,1\nA,3,2\n"), false)
	f.Add([]byte("\xef\xbb\xbfparticipant,window,f1,note\r\nA,1,NA,\"a,\nb\"\r\n"), false)
	if seeds, err := filepath.Glob("../testdata/pipeline/*.csv"); err == nil {
		for _, s := range seeds {
			if b, err := os.ReadFile(s); err == nil {
				f.Add(b[:min(len(b), 4096)], false)
			}
		}
	}
	dir := f.TempDir()
	f.Fuzz(func(t *testing.T, b []byte, compress bool) {
		if compress {
			b = gz(b)
		}
		p := filepath.Join(dir, "in.csv")
		if err := os.WriteFile(p, b, 0o644); err != nil {
			t.Skip()
		}
		tab, err := Read(context.Background(), []string{p}, ReadOptions{MinWindows: 1})
		// The one-scan path for plain lines and the general path must agree on every input:
		// the same error, or the same table bit for bit.
		slow, serr := Read(context.Background(), []string{p}, ReadOptions{MinWindows: 1, tuning: readTuning{generalRows: true}})
		if (err == nil) != (serr == nil) || (err != nil && err.Error() != serr.Error()) {
			t.Fatalf("fast path: %v; general path: %v", err, serr)
		}
		if err == nil {
			defer tab.Close()
			defer slow.Close()
			sameTable(t, tab, slow)
			return
		}
		var ie *InputError
		if !errors.As(err, &ie) || ie.File != p || !strings.HasPrefix(err.Error(), p) {
			t.Fatalf("rejection without position: %v", err)
		}
	})
}

// sameTable fails unless a and b hold the same units, features, windows (bit for bit), order
// keys and accounting.
func sameTable(t *testing.T, a, b *Table) {
	t.Helper()
	if !slices.Equal(a.Features, b.Features) || len(a.Units) != len(b.Units) || a.OrderKind != b.OrderKind ||
		fmt.Sprint(a.Quality) != fmt.Sprint(b.Quality) {
		t.Fatalf("tables differ: features %v / %v, units %d / %d, order %s / %s, quality %+v / %+v",
			a.Features, b.Features, len(a.Units), len(b.Units), a.OrderKind, b.OrderKind, a.Quality, b.Quality)
	}
	for u := range a.Units {
		ua, ub := a.Units[u], b.Units[u]
		xa, xb := block(t, a, u), block(t, b, u)
		same := ua.ID == ub.ID && ua.Wave == ub.Wave && len(xa) == len(xb) && slices.Equal(order(t, a, u), order(t, b, u))
		for i := 0; same && i < len(xa); i++ {
			same = math.Float64bits(xa[i]) == math.Float64bits(xb[i])
		}
		if !same {
			t.Fatalf("unit %d (%s / %s) differs: %v / %v", u, ua.ID, ub.ID, xa, xb)
		}
	}
}

// The result does not depend on the chunk size: tiny chunks cut every line and quoted field
// boundary there is, and must give the same table as one chunk.
func TestReadSameWhateverTheChunkSize(t *testing.T) {
	t.Parallel()
	dir := t.TempDir()
	var b strings.Builder
	b.WriteString("participant,window,f1,f2,note\r\n")
	for i := 0; i < 300; i++ {
		note := "plain"
		if i%7 == 0 {
			note = "\"walked, then\nsat \"\"down\"\"\""
		}
		b.WriteString("P" + itoa(i%4) + "," + itoa(i/4) + "," + itoa(i%13) + ".25,-" + itoa(i%5) + "e-1," + note + "\r\n")
	}
	p := write(t, dir, "c.csv", []byte(b.String()))
	var first *Table
	for _, size := range []int{4 << 20, 97, 13, 1} {
		tab, err := Read(context.Background(), []string{p}, ReadOptions{tuning: readTuning{chunkBytes: size}})
		if err != nil {
			t.Fatalf("chunk %d: %v", size, err)
		}
		if first == nil {
			first = tab
			continue
		}
		for u := range tab.Units {
			a, c := tab.Units[u], first.Units[u]
			ax, cx := block(t, tab, u), block(t, first, u)
			if ao, co := order(t, tab, u), order(t, first, u); !slices.Equal(ao, co) {
				t.Fatalf("chunk %d: unit %s order %v, one chunk %v", size, a.ID, ao, co)
			}
			if a.ID != c.ID || len(ax) != len(cx) {
				t.Fatalf("chunk %d: unit %d is %s with %d values, one chunk gives %s with %d", size, u, a.ID, len(ax), c.ID, len(cx))
			}
			for i := range ax {
				if ax[i] != cx[i] {
					t.Fatalf("chunk %d: unit %s value %d: %v, one chunk %v", size, a.ID, i, ax[i], cx[i])
				}
			}
		}
	}
}

// The fast number path agrees with strconv.ParseFloat bit for bit.
func TestParseNumberFastPath(t *testing.T) {
	t.Parallel()
	for _, s := range []string{"0", "-0", "1.5", "0.0314", "-12.3456", "123456789012345", "0.000000000000001", "9.99999999999999", ".5", "+3.25", " 7.5 ", "1e-3", "12345678901234567", "NA", "", "1,5"} {
		want, werr := parseNumber(s, false)
		got, gerr := parseNumberBytes([]byte(s), false)
		if (werr == nil) != (gerr == nil) || (werr == nil && math.Float64bits(got) != math.Float64bits(want) && !(math.IsNaN(got) && math.IsNaN(want))) {
			t.Errorf("%q: fast %v (%v), strconv %v (%v)", s, got, gerr, want, werr)
		}
	}
	if v, err := parseNumberBytes([]byte("1,25"), true); err != nil || v != 1.25 {
		t.Errorf("decimal comma: %v %v", v, err)
	}
}

func block(t testing.TB, tab *Table, u int) []float64 {
	t.Helper()
	x, err := tab.Block(u, nil)
	if err != nil {
		t.Fatal(err)
	}
	return x
}

func order(t testing.TB, tab *Table, u int) []int64 {
	t.Helper()
	o, err := tab.Order(u)
	if err != nil {
		t.Fatal(err)
	}
	return o
}

// Past spillAfter values the windows go to a temporary file, which gives the same table, up to
// the float32 rounding of the features in the file, and is removed by Close.
func TestSpillGivesTheSameTable(t *testing.T) {
	t.Parallel()
	dir := t.TempDir()
	var d strings.Builder
	for i := 0; i < 30; i++ {
		fmt.Fprintf(&d, "D,%d,%.4f,%.6f\n", i, 0.1*float64(i)+0.0001, 1/float64(i+3))
	}
	p := write(t, dir, "c.csv", []byte(rowsOf(400, ",")+"C,0,1,2\n"+d.String()))
	inMemory, err := Read(context.Background(), []string{p}, ReadOptions{})
	if err != nil {
		t.Fatal(err)
	}
	tmp := t.TempDir()
	spilled, err := Read(context.Background(), []string{p}, ReadOptions{TempDir: tmp, MemoryValues: 50})
	if err != nil {
		t.Fatal(err)
	}
	if !spilled.Spilled() || inMemory.Spilled() {
		t.Fatalf("spilled %v, in memory %v", spilled.Spilled(), inMemory.Spilled())
	}
	for u := range inMemory.Units {
		a, b := block(t, inMemory, u), block(t, spilled, u)
		for i := range a {
			// float32 keeps 24 bits: a relative error of at most 2⁻²⁴ ≈ 6e-8 (IEEE 754 rounding).
			if math.Abs(a[i]-b[i]) > 0x1p-24*math.Abs(a[i]) {
				t.Fatalf("unit %d value %d: %v in memory, %v spilled", u, i, a[i], b[i])
			}
		}
		if !slices.Equal(order(t, inMemory, u), order(t, spilled, u)) {
			t.Fatalf("unit %d: order keys differ", u)
		}
	}
	if entries, _ := os.ReadDir(tmp); len(entries) != 1 {
		t.Errorf("%d temporary files while the table is open, want 1", len(entries))
	}
	spilled.Close()
	if entries, _ := os.ReadDir(tmp); len(entries) != 0 {
		t.Errorf("temporary files left after Close: %v", entries)
	}
}

// A folder of per-participant files, or a glob of them, reads like the files named one by one.
func TestReadFolderAndGlob(t *testing.T) {
	t.Parallel()
	dir := t.TempDir()
	for i, p := range []string{"A", "B", "C"} {
		var b strings.Builder
		b.WriteString("participant,window,f1\n")
		for w := 0; w < 25; w++ {
			b.WriteString(p + "," + itoa(w) + "," + itoa((w*(i+2))%7) + "\n")
		}
		write(t, dir, "p"+p+".csv", []byte(b.String()))
	}
	write(t, dir, "notes.md", []byte("not a table"))
	for _, in := range [][]string{{dir}, {filepath.Join(dir, "p*.csv")}} {
		tab, err := Read(context.Background(), in, ReadOptions{})
		if err != nil {
			t.Fatal(err)
		}
		if len(tab.Units) != 3 || len(tab.Files) != 3 || tab.Units[2].ID != "C" {
			t.Errorf("%v: %d units from %d files", in, len(tab.Units), len(tab.Files))
		}
		tab.Close()
	}
}

// writeSheet writes rows to the first sheet of a new workbook; a cell text starting with "="
// becomes a formula.
func writeSheet(t *testing.T, path string, rows [][]any, merge string) {
	t.Helper()
	f := excelize.NewFile()
	for i, row := range rows {
		for j, v := range row {
			cell, _ := excelize.CoordinatesToCellName(j+1, i+1)
			if s, ok := v.(string); ok && strings.HasPrefix(s, "=") {
				f.SetCellFormula("Sheet1", cell, s[1:])
				continue
			}
			f.SetCellValue("Sheet1", cell, v)
		}
	}
	if merge != "" {
		a, b, _ := strings.Cut(merge, ":")
		f.MergeCell("Sheet1", a, b)
	}
	if err := f.SaveAs(path); err != nil {
		t.Fatal(err)
	}
}

func TestReadXLSX(t *testing.T) {
	t.Parallel()
	dir := t.TempDir()
	rows := [][]any{{"participant", "window", "f1", "f2", "site"}}
	start := time.Date(2026, 3, 2, 8, 0, 0, 0, time.UTC)
	for i := 0; i < 60; i++ {
		rows = append(rows, []any{[]string{"A", "B"}[i/30], start.Add(time.Duration(i%30) * time.Minute), float64(i%7) + 0.25, i % 3, "north"})
	}
	good := filepath.Join(dir, "good.xlsx")
	writeSheet(t, good, rows, "")
	tab, err := Read(context.Background(), []string{good}, ReadOptions{})
	if err != nil {
		t.Fatal(err)
	}
	defer tab.Close()
	if len(tab.Units) != 2 || len(tab.Features) != 2 || tab.OrderKind != "time" || tab.Quality.IgnoredColumns[0].Name != "site" {
		t.Fatalf("units %d features %v order %s ignored %v", len(tab.Units), tab.Features, tab.OrderKind, tab.Quality.IgnoredColumns)
	}
	if x := block(t, tab, 0); x[2] != 1.25 || order(t, tab, 0)[1]-order(t, tab, 0)[0] != 60e9 {
		t.Errorf("second window f1 %v, step %d ns", x[2], order(t, tab, 0)[1]-order(t, tab, 0)[0])
	}
	bad := append([][]any(nil), rows...)
	bad[5] = []any{"A", start.Add(4 * time.Minute), "=1+2", 1, "north"}
	formula := filepath.Join(dir, "formula.xlsx")
	writeSheet(t, formula, bad, "")
	if _, err := Read(context.Background(), []string{formula}, ReadOptions{}); err == nil || err.Error() != formula+":6:3: f1: cell C6 holds a formula (=1+2); paste the values instead" {
		t.Errorf("formula: %v", err)
	}
	damaged := write(t, dir, "damaged.xlsx", []byte("PK\x03\x04 not really a workbook"))
	if _, err := Read(context.Background(), []string{damaged}, ReadOptions{}); err == nil || !strings.Contains(err.Error(), "cannot open as a workbook") {
		t.Errorf("damaged: %v", err)
	}
	merged := filepath.Join(dir, "merged.xlsx")
	writeSheet(t, merged, rows, "C2:D2")
	if _, err := Read(context.Background(), []string{merged}, ReadOptions{}); err == nil || !strings.Contains(err.Error(), `has merged cells (C2:D2); unmerge them`) {
		t.Errorf("merged: %v", err)
	}
}

type pqRow struct {
	Participant string   `parquet:"participant"`
	Window      int64    `parquet:"window"`
	F1          float64  `parquet:"f1"`
	F2          *float64 `parquet:"f2,optional"`
	Site        string   `parquet:"site"`
}

type pqTimeRow struct {
	Participant string    `parquet:"participant"`
	Window      time.Time `parquet:"window"`
	F1          float32   `parquet:"f1"`
}

// Parquet input reads like the same table as CSV, with nulls as missing cells.
func TestReadParquet(t *testing.T) {
	t.Parallel()
	dir := t.TempDir()
	var rows []pqRow
	var csvText strings.Builder
	csvText.WriteString("participant,window,f1,f2,site\n")
	for i := 0; i < 60; i++ {
		f2 := float64(i%5) / 4
		r := pqRow{Participant: []string{"A", "B"}[i/30], Window: int64(i % 30), F1: float64(i%7) + 0.25, F2: &f2, Site: "north"}
		cell := strconv.FormatFloat(f2, 'g', -1, 64)
		if i == 7 {
			r.F2, cell = nil, "NA"
		}
		rows = append(rows, r)
		csvText.WriteString(r.Participant + "," + itoa(int(r.Window)) + "," + strconv.FormatFloat(r.F1, 'g', -1, 64) + "," + cell + ",north\n")
	}
	pq := filepath.Join(dir, "c.parquet")
	if err := parquet.WriteFile(pq, rows); err != nil {
		t.Fatal(err)
	}
	fromPQ, err := Read(context.Background(), []string{pq}, ReadOptions{})
	if err != nil {
		t.Fatal(err)
	}
	defer fromPQ.Close()
	fromCSV, err := Read(context.Background(), []string{write(t, dir, "c.csv", []byte(csvText.String()))}, ReadOptions{})
	if err != nil {
		t.Fatal(err)
	}
	defer fromCSV.Close()
	if len(fromPQ.Units) != 2 || fromPQ.Quality.WindowsDropped != 1 || len(fromPQ.Quality.IgnoredColumns) != 1 {
		t.Fatalf("units %d, dropped %d, ignored %v", len(fromPQ.Units), fromPQ.Quality.WindowsDropped, fromPQ.Quality.IgnoredColumns)
	}
	// Read in slices of 7 rows (the columns are read pqRows rows at a time, across pages), the
	// table is the same.
	sliced, err := Read(context.Background(), []string{pq}, ReadOptions{tuning: readTuning{parquetRows: 7}})
	if err != nil {
		t.Fatal(err)
	}
	defer sliced.Close()
	for u := range fromCSV.Units {
		a, b, c := block(t, fromPQ, u), block(t, fromCSV, u), block(t, sliced, u)
		for i := range a {
			if a[i] != b[i] || c[i] != b[i] {
				t.Fatalf("unit %d value %d: Parquet %v (in slices %v), CSV %v", u, i, a[i], c[i], b[i])
			}
		}
		if !slices.Equal(order(t, fromPQ, u), order(t, fromCSV, u)) || !slices.Equal(order(t, sliced, u), order(t, fromCSV, u)) {
			t.Fatalf("unit %d: order keys differ", u)
		}
	}
	start := time.Date(2026, 3, 2, 8, 0, 0, 0, time.UTC)
	var trows []pqTimeRow
	for i := 0; i < 25; i++ {
		trows = append(trows, pqTimeRow{Participant: "A", Window: start.Add(time.Duration(i) * time.Minute), F1: float32(i % 4)})
	}
	tq := filepath.Join(dir, "t.parquet")
	if err := parquet.WriteFile(tq, trows); err != nil {
		t.Fatal(err)
	}
	tt, err := Read(context.Background(), []string{tq}, ReadOptions{})
	if err != nil {
		t.Fatal(err)
	}
	defer tt.Close()
	if tt.OrderKind != "time" || order(t, tt, 0)[1]-order(t, tt, 0)[0] != 60e9 {
		t.Errorf("order kind %s, step %d", tt.OrderKind, order(t, tt, 0)[1]-order(t, tt, 0)[0])
	}
	// A TIMESTAMP outside 1900–2200 is refused as a text time is (issue 28: times past 2262
	// wrapped in nanoseconds and reordered the windows).
	trows[3].Window = time.Date(1850, 3, 2, 8, 0, 0, 0, time.UTC)
	oq := filepath.Join(dir, "old.parquet")
	if err := parquet.WriteFile(oq, trows); err != nil {
		t.Fatal(err)
	}
	if _, err := Read(context.Background(), []string{oq}, ReadOptions{}); err == nil || !strings.HasSuffix(err.Error(), `:5:2: window: "1850-03-02T08:00:00" is a time outside 1900–2200; check the year (a wrong century or an unset clock)`) {
		t.Errorf("a Parquet time in 1850: %v", err)
	}
	// Damaged frames are refused before parquet-go reads them. The footer length (the four
	// bytes before the final PAR1, Apache Parquet file format) set near 4 GB made parquet-go
	// allocate that much (found by FuzzReadParquet; its input is in testdata/fuzz).
	good, err := os.ReadFile(tq)
	if err != nil {
		t.Fatal(err)
	}
	long := append([]byte(nil), good...)
	binary.LittleEndian.PutUint32(long[len(long)-8:], 0xffffff7f)
	for _, c := range []struct {
		name string
		b    []byte
		want string
	}{
		{"no end mark", []byte("PAR1 not really"), "not a Parquet file (no PAR1 mark at its start and end); write it again, or export CSV"},
		{"too short", []byte("PAR1PAR1"), "too short for a Parquet file (8 bytes); write it again, or export CSV"},
		{"encrypted footer (its end mark is PARE)", append(append([]byte(nil), good[:len(good)-4]...), "PARE"...), "an encrypted footer, which this tool does not read; write it without encryption, or export CSV"},
		{"footer longer than the file", long, fmt.Sprintf("its footer claims 4294967167 bytes of a %d-byte file; write it again, or export CSV", len(long))},
		{"footer broken", append(append([]byte(nil), good[:len(good)-40]...), good[len(good)-8:]...), "not a readable Parquet file"},
	} {
		if _, err := Read(context.Background(), []string{write(t, dir, "bad.parquet", c.b)}, ReadOptions{}); err == nil || !strings.Contains(err.Error(), c.want) {
			t.Errorf("%s: %v, want …%s…", c.name, err, c.want)
		}
	}
}

// fuzzBinary feeds arbitrary bytes, saved with the extension ext, to the reader: a damaged file
// is an *InputError, never a panic.
func fuzzBinary(f *testing.F, ext string, seed []byte) {
	dir := f.TempDir()
	f.Add(seed)
	f.Fuzz(func(t *testing.T, b []byte) {
		p := filepath.Join(dir, "in"+ext)
		if err := os.WriteFile(p, b, 0o644); err != nil {
			t.Skip()
		}
		tab, err := Read(context.Background(), []string{p}, ReadOptions{MinWindows: 1})
		if err == nil {
			tab.Close()
			return
		}
		var ie *InputError
		if !errors.As(err, &ie) || ie.File != p {
			t.Fatalf("rejection without position: %v", err)
		}
	})
}

func FuzzReadParquet(f *testing.F) {
	var rows []pqRow
	for i := 0; i < 30; i++ {
		v := float64(i)
		rows = append(rows, pqRow{Participant: "A", Window: int64(i), F1: v, F2: &v, Site: "x"})
	}
	pq := filepath.Join(f.TempDir(), "seed.parquet")
	if err := parquet.WriteFile(pq, rows); err != nil {
		f.Fatal(err)
	}
	b, _ := os.ReadFile(pq)
	fuzzBinary(f, ".parquet", b)
}

func FuzzReadXLSX(f *testing.F) {
	xl := excelize.NewFile()
	xl.SetSheetRow("Sheet1", "A1", &[]any{"participant", "window", "f1"})
	xl.SetSheetRow("Sheet1", "A2", &[]any{"A", 1, 2.5})
	var buf bytes.Buffer
	xl.WriteTo(&buf)
	fuzzBinary(f, ".xlsx", buf.Bytes())
}

// Damaged workbooks and Parquet files, made by flipping bits, cutting the file short and
// overwriting bytes of a valid one: each read ends within 5 s in an *InputError or a table, never
// a panic or a hang. These fixed mutations run in every `go test`; the coverage-guided search is
// FuzzReadXLSX and FuzzReadParquet, run with `-fuzzminimizetime 10x` (see the README): with the
// default minimizing time (60 s for each new input) they seemed to stall at 0 execs/s.
func TestDamagedBinaryInputs(t *testing.T) {
	t.Parallel()
	dir := t.TempDir()
	xl := excelize.NewFile()
	xl.SetSheetRow("Sheet1", "A1", &[]any{"participant", "window", "f1"})
	for i := 0; i < 30; i++ {
		xl.SetSheetRow("Sheet1", "A"+itoa(i+2), &[]any{"A", i, float64(i%5) + 0.5})
	}
	var xb bytes.Buffer
	xl.WriteTo(&xb)
	var rows []pqRow
	for i := 0; i < 30; i++ {
		v := float64(i)
		rows = append(rows, pqRow{Participant: "A", Window: int64(i), F1: v, F2: &v, Site: "x"})
	}
	pq := filepath.Join(dir, "seed.parquet")
	if err := parquet.WriteFile(pq, rows); err != nil {
		t.Fatal(err)
	}
	pb, _ := os.ReadFile(pq)
	rng := rand.New(rand.NewPCG(1, 2))
	for _, c := range []struct {
		ext  string
		seed []byte
	}{{".xlsx", xb.Bytes()}, {".parquet", pb}} {
		p := filepath.Join(dir, "in"+c.ext)
		for k := 0; k < 300; k++ {
			b := append([]byte(nil), c.seed...)
			switch k % 3 {
			case 0:
				b[rng.IntN(len(b))] ^= byte(1 << rng.IntN(8))
			case 1:
				b = b[:rng.IntN(len(b))]
			case 2:
				i := rng.IntN(len(b) - 4)
				copy(b[i:], []byte{0xff, 0xff, 0xff, 0x7f})
			}
			os.WriteFile(p, b, 0o644)
			done := make(chan error, 1)
			go func() {
				tab, err := Read(context.Background(), []string{p}, ReadOptions{MinWindows: 1})
				tab.Close()
				done <- err
			}()
			select {
			case err := <-done:
				var ie *InputError
				if err != nil && !errors.As(err, &ie) {
					t.Fatalf("%s mutation %d: error without position: %v", c.ext, k, err)
				}
			case <-time.After(5 * time.Second):
				t.Fatalf("%s mutation %d: no answer after 5 s", c.ext, k)
			}
		}
	}
}

// scanDecimal agrees with strconv.ParseFloat bit for bit on plain decimals of every length
// from 1 to 15 digits, wherever the cell sits in a line (the word-at-a-time reading looks past a
// cell's end, into bytes that are digits here on purpose), and refuses what it does not read.
func TestScanDecimalMatchesStrconv(t *testing.T) {
	t.Parallel()
	rng := rand.New(rand.NewPCG(3, 4))
	buf := make([]byte, 0, 64)
	for n := 0; n < 200000; n++ {
		intDigits, fracDigits := rng.IntN(9), rng.IntN(10)
		if intDigits+fracDigits == 0 || intDigits+fracDigits > 15 {
			continue
		}
		var cell []byte
		if rng.IntN(3) == 0 {
			cell = append(cell, '-')
		}
		for k := 0; k < intDigits; k++ {
			cell = append(cell, byte('0'+rng.IntN(10)))
		}
		if fracDigits > 0 {
			cell = append(cell, '.')
			for k := 0; k < fracDigits; k++ {
				cell = append(cell, byte('0'+rng.IntN(10)))
			}
		}
		want, err := strconv.ParseFloat(string(cell), 64)
		if err != nil || math.Abs(want) > maxMagnitude {
			continue
		}
		lead := rng.IntN(5)
		buf = append(append(buf[:0], "1234"[:lead]...), cell...)
		end := len(buf)
		var line []byte
		if rng.IntN(2) == 0 { // the cell ends at the delimiter
			buf = append(buf, ",99999999"...)
			line = buf[:end+2]
		} else { // the cell ends the line; digits follow in the buffer's spare bytes
			buf = append(buf, "999999999"...)
			line = buf[:end]
		}
		got, at, ok := scanDecimal(line, lead, ',', '.')
		if !ok || math.Float64bits(got) != math.Float64bits(want) || at != end {
			t.Fatalf("%q in %q: got %v at %d (ok %v), strconv %v at %d", cell, line, got, at, ok, want, end)
		}
	}
	for _, s := range []string{"", "-", ".", "5.", "1.2.3", "1e5", " 1", "1 ", "NA", "1234567890123456", "0.1234567890123456", "2e12", "9999999999999.9"} {
		if v, _, ok := scanDecimal([]byte(s), 0, ',', '.'); ok {
			t.Errorf("%q read as %v; it should be left to parseNumber", s, v)
		}
	}
	if v, _, ok := scanDecimal([]byte("1,25"), 0, ';', ','); !ok || v != 1.25 {
		t.Errorf("decimal comma: %v %v", v, ok)
	}
}

// A table whose participants' windows are interleaved (sorted by time across participants)
// reads as the same table as one grouped by participant, in memory and spilled, in one chunk or
// many: the interleaved windows are gathered per participant as each chunk is merged.
func TestInterleavedReadsLikeGrouped(t *testing.T) {
	t.Parallel()
	dir := t.TempDir()
	var grouped, interleaved strings.Builder
	grouped.WriteString("participant,window,f1,f2\n")
	interleaved.WriteString("participant,window,f1,f2\n")
	cell := func(p, w int) string {
		return fmt.Sprintf("P%02d,%d,%.4f,%.3f\n", p, w, float64(p)+0.01*float64(w%7), float64((p*w)%11)/8)
	}
	for p := 0; p < 70; p++ {
		for w := 0; w < 30; w++ {
			grouped.WriteString(cell(p, w))
		}
	}
	for w := 0; w < 30; w++ {
		for p := 0; p < 70; p++ {
			interleaved.WriteString(cell(p, w))
		}
	}
	// compare reads both files with large and small chunks, in memory and spilled; stretches,
	// when above 0, is how many stretches of the store each interleaved participant must be
	// read from in place.
	compare := func(grouped, interleaved string, stretches int) {
		gp := write(t, dir, "grouped.csv", []byte(grouped))
		ip := write(t, dir, "interleaved.csv", []byte(interleaved))
		for _, setting := range []struct {
			chunk int
			spill int64
		}{{4 << 20, 8 << 20}, {4096, 8 << 20}, {4096, 500}} {
			opts := ReadOptions{MemoryValues: setting.spill, tuning: readTuning{chunkBytes: setting.chunk}}
			a, err := Read(context.Background(), []string{gp}, opts)
			if err != nil {
				t.Fatal(err)
			}
			b, err := Read(context.Background(), []string{ip}, opts)
			if err != nil {
				t.Fatal(err)
			}
			for _, u := range b.Units {
				if stretches > 0 && len(u.runs) != stretches {
					t.Fatalf("chunk %d, spill %d: participant %s in %d stretches, want %d read in place", setting.chunk, setting.spill, u.ID, len(u.runs), stretches)
				}
			}
			sameTable(t, a, b)
			a.Close()
			b.Close()
		}
	}
	compare(grouped.String(), interleaved.String(), 0)
	// Interleaved in blocks of 80 windows, each participant's windows lie in stretches long
	// enough (minStretch) to be read where they landed, without a second copy: the table must
	// still read like the grouped one.
	grouped.Reset()
	interleaved.Reset()
	grouped.WriteString("participant,window,f1,f2\n")
	interleaved.WriteString("participant,window,f1,f2\n")
	for p := 0; p < 5; p++ {
		for w := 0; w < 400; w++ {
			grouped.WriteString(cell(p, w))
		}
	}
	for start := 0; start < 400; start += 80 {
		for p := 0; p < 5; p++ {
			for w := start; w < start+80; w++ {
				interleaved.WriteString(cell(p, w))
			}
		}
	}
	compare(grouped.String(), interleaved.String(), 5)
}

// A gzip file cut short is an error naming the file and the last line read whole, wherever it
// is cut (the body, the last block, the trailer), and never a table read in part: a cut file
// once gave 50 of 60 participants, or its last value cut from 0.1414 to 0.14, and exit 0.
func TestTruncatedGzipIsAnError(t *testing.T) {
	t.Parallel()
	dir := t.TempDir()
	var b strings.Builder
	b.WriteString("participant,window,f1,f2\n")
	for p := 0; p < 60; p++ { // 600 kB: past the first 64 kB the reader looks at whole
		for w := 0; w < 400; w++ {
			b.WriteString("P" + itoa(p) + "," + itoa(w) + ",0.1414," + itoa((p*w)%17) + ".25\n")
		}
	}
	full := gz([]byte(b.String()))
	whole := write(t, dir, "whole.csv.gz", full)
	if _, err := Read(context.Background(), []string{whole}, ReadOptions{}); err != nil {
		t.Fatalf("the whole file: %v", err)
	}
	cuts := []int{len(full) - 40, len(full) - 8, len(full) - 1}
	for i := 1; i < 100; i++ { // cut points all through the file, as a copy may stop anywhere
		cuts = append(cuts, i*len(full)/100)
	}
	for _, cut := range cuts {
		for _, size := range []int{4 << 20, 1 << 10} { // one chunk, and many
			func() {
				p := write(t, dir, "cut.csv.gz", full[:cut])
				tab, err := Read(context.Background(), []string{p}, ReadOptions{tuning: readTuning{chunkBytes: size}})
				if err == nil {
					t.Fatalf("cut at byte %d of %d, chunks of %d: read %d participants, want an error", cut, len(full), size, len(tab.Units))
				}
				var ie *InputError
				if !errors.As(err, &ie) || ie.File != p || !strings.Contains(err.Error(), "cut short") {
					t.Errorf("cut at byte %d, chunks of %d: %v; want an error naming %s and saying it is cut short", cut, size, err, p)
				}
			}()
		}
	}
}

// Spreadsheet date-times in the order column read as times across midnight and across days,
// whether the first window is at midnight (a whole-day serial, once taken for an integer order
// and refused with "is an integer but the order column held times") or later.
func TestReadXLSXDatesAcrossMidnight(t *testing.T) {
	t.Parallel()
	dir := t.TempDir()
	for _, tc := range []struct {
		name  string
		start time.Time
	}{
		{"first window at midnight", time.Date(2026, 3, 2, 0, 0, 0, 0, time.UTC)},
		{"crossing midnight", time.Date(2026, 3, 1, 22, 30, 0, 0, time.UTC)},
		{"over days", time.Date(2026, 3, 1, 23, 0, 0, 0, time.UTC)},
	} {
		t.Run(tc.name, func(t *testing.T) {
			rows := [][]any{{"participant", "window", "f1"}}
			step := 30 * time.Minute
			if tc.name == "over days" {
				step = 6 * time.Hour
			}
			for i := 0; i < 40; i++ {
				rows = append(rows, []any{[]string{"A", "B"}[i/20], tc.start.Add(time.Duration(i%20) * step), float64(i%7) + 0.5})
			}
			p := filepath.Join(dir, strings.ReplaceAll(tc.name, " ", "-")+".xlsx")
			writeSheet(t, p, rows, "")
			tab, err := Read(context.Background(), []string{p}, ReadOptions{})
			if err != nil {
				t.Fatal(err)
			}
			defer tab.Close()
			if tab.OrderKind != "time" || len(tab.Units) != 2 {
				t.Fatalf("order %s, %d units", tab.OrderKind, len(tab.Units))
			}
			ord := order(t, tab, 0)
			for w := 1; w < len(ord); w++ {
				if ord[w]-ord[w-1] != int64(step) {
					t.Fatalf("window %d: step %v, want %v (%v)", w, time.Duration(ord[w]-ord[w-1]), step, ord[:3])
				}
			}
			if got := time.Unix(0, ord[0]).UTC(); !got.Equal(tc.start) {
				t.Errorf("first window at %v, want %v", got, tc.start)
			}
		})
	}
}
