package main

import (
	"bytes"
	"compress/gzip"
	"context"
	"math/rand/v2"
	"os"
	"path/filepath"
	"strconv"
	"strings"
	"testing"

	"github.com/cohortmix/cohortmix/cohort/synth"
)

// TestHostileSweep tries the hostile and faulty inputs of issue 28 on 'check' (which reads as
// 'group' reads): each must end in a one-line error that names the file (exit 1), or in a
// policy whose effect shows in the output (exit 0). A panic fails the test run; an exit 0
// without the policy's note is a silent case. The counts are logged.
func TestHostileSweep(t *testing.T) {
	t.Parallel()
	dir := t.TempDir()
	base := filepath.Join(dir, "base.csv")
	if _, err := synth.WriteFile(base, synth.Options{Participants: 20, Windows: 60, Seed: 28}); err != nil {
		t.Fatal(err)
	}
	raw, _ := os.ReadFile(base)
	good := string(raw)
	lines := strings.SplitAfter(good, "\n")
	if len(good) < 80<<10 {
		t.Fatalf("the base cohort is %d bytes; the sweep needs more than the first 64 KiB", len(good))
	}
	late := len(lines) - 10 // a line past the first 64 KiB
	at := func(i int, f func(string) string) string {
		l := append([]string(nil), lines...)
		l[i] = f(l[i])
		return strings.Join(l, "")
	}
	gz := func(s string) string {
		var b bytes.Buffer
		w := gzip.NewWriter(&b)
		w.Write([]byte(s))
		w.Close()
		return b.String()
	}
	cell := func(i, col int, v string) string {
		return at(i, func(l string) string {
			f := strings.Split(strings.TrimSuffix(l, "\n"), ",")
			f[col] = v
			return strings.Join(f, ",") + "\n"
		})
	}
	type sweepCase struct {
		name, file, content string
		args                []string
		want                string // in the one-line error, or (policy) in the output
		policy              bool
	}
	cases := []sweepCase{
		{"NUL past 64 KiB", "a.csv", at(late, func(l string) string { return "P\x00" + l[1:] }), nil, "NUL byte", false},
		{"invalid UTF-8 past 64 KiB", "a.csv", at(late, func(l string) string { return "M\xfcller" + l[strings.Index(l, ","):] }), nil, "not valid UTF-8", false},
		{"a control byte in an id", "a.csv", at(late, func(l string) string { return "P\x01" + l[1:] }), nil, "control character 0x01", false},
		{"an id with a space after it", "a.csv", at(late, func(l string) string { return strings.Replace(l, ",", " ,", 1) }), nil, "had spaces around them", true},
		{"an empty wave cell", "a.csv", strings.Replace(strings.Replace(good, "participant,", "visit,participant,", 1), "\nP", "\n1,P", -1) + ",P1,999" + strings.Repeat(",0", 12) + "\n", []string{"--wave", "visit"}, "wave is empty", false},
		{"digits with an underscore", "a.csv", cell(late, 3, "1_000"), nil, `"1_000" is not a number`, false},
		{"a hexadecimal float", "a.csv", cell(late, 3, "0x1p-2"), nil, `"0x1p-2" is not a number`, false},
		{"a hexadecimal integer", "a.csv", cell(late, 3, "0x10"), nil, `"0x10" is not a number`, false},
		{"infinity", "a.csv", cell(late, 3, "-Infinity"), nil, "is infinite", false},
		{"1e400", "a.csv", cell(late, 3, "1e400"), nil, "is infinite", false},
		{"a decimal comma in a comma file", "a.csv", cell(late, 3, `"0,5"`), nil, "use '.' as the decimal separator", false},
		{"a time in 2300", "a.csv", "participant,window,f1\nA,2026-01-01T00:00:00,1\nA,2300-01-01T00:01:00,2\n", nil, "outside 1900–2200", false},
		{"a time in 1850", "a.csv", "participant,window,f1\nA,1850-01-01T00:00:00,1\n", nil, "outside 1900–2200", false},
		{"integers and times mixed", "a.csv", cell(late, 1, "2026-01-01T00:00:00"), nil, "but the order column held integers", false},
		{"a line of 2 MiB", "a.csv", at(late, func(l string) string { return strings.Repeat("9", 2<<20) + l }), nil, "longer than 1 MiB", false},
		{"a line of 2 MiB, compressed", "a.csv.gz", gz(at(3, func(l string) string { return strings.Repeat("9", 2<<20) + l })), nil, "longer than 1 MiB", false},
		{"a quote left open", "a.csv", at(late, func(l string) string { return `"` + l }), nil, "a quote opened in this row is not closed", false},
		{"a stray quote inside a field", "a.csv", at(late, func(l string) string { return `P"1` + l[strings.Index(l, ","):] }), nil, "misplaced quote", false},
		{"bare carriage returns", "a.csv", strings.ReplaceAll(good, "\n", "\r"), nil, "bare carriage return", false},
		{"byte-order mark and CRLF", "a.csv", "\xef\xbb\xbf" + strings.ReplaceAll(good, "\n", "\r\n"), nil, "the tables can be analysed", true},
		{"a feature column with no value", "a.csv", func() string {
			l := strings.Split(strings.TrimSuffix(good, "\n"), "\n")
			for i := 1; i < len(l); i++ {
				f := strings.Split(l[i], ",")
				f[4] = ""
				l[i] = strings.Join(f, ",")
			}
			return strings.Join(l, "\n") + "\n"
		}(), nil, "every cell of this feature column is empty", false},
		{"an id of 100,000 bytes", "a.csv", at(late, func(l string) string { return strings.Repeat("P", 100_000) + l[strings.Index(l, ","):] }), nil, "at most 1000 bytes", false},
		{"a window twice", "a.csv", good + lines[late], nil, "has this window twice", false},
		{"a short row", "a.csv", at(late, func(l string) string { return l[:strings.LastIndex(l, ",")] + "\n" }), nil, "different number of fields", false},
		{"a missing cell", "a.csv", cell(late, 3, "NA"), nil, "dropped for missing cells", true},
		{"header only", "a.csv", lines[0], nil, "has a header but no windows", false},
		{"empty", "a.csv", "", nil, "file is empty", false},
		{"binary", "a.csv", "PK\x03\x04\x00\x00binary", nil, "is not a text table", false},
		{"a damaged gzip header", "a.csv.gz", "\x1f\x8b\x08garbage", nil, "gzip header is damaged", false},
	}
	// A compressed file cut anywhere: always an error naming the last whole line, never a
	// shorter table (issue 28: 29 of 400 cut points were silent).
	whole := gz(good)
	rng := rand.New(rand.NewPCG(28, 1))
	for i := 0; i < 40; i++ {
		cut := 20 + rng.IntN(len(whole)-28)
		cases = append(cases, sweepCase{"gzip cut short", "a.csv.gz", whole[:cut], nil, "compressed file is cut short", false})
	}
	errors, policies := 0, 0
	for i, c := range cases {
		sub := filepath.Join(dir, "case", strings.ReplaceAll(c.name, " ", "-")+"-"+strconv.Itoa(i))
		os.MkdirAll(sub, 0o755)
		p := filepath.Join(sub, c.file)
		os.WriteFile(p, []byte(c.content), 0o644)
		env, out, errb := testEnv()
		code := run(context.Background(), env, append([]string{"check", p, "--quiet"}, c.args...))
		msg := strings.TrimSpace(errb.String())
		switch {
		case c.policy:
			if code != 0 || !strings.Contains(out.String(), c.want) {
				t.Errorf("%s: exit %d, output %q; want the policy %q shown", c.name, code, lastLines(out.String()), c.want)
			}
			policies++
		case code == 0:
			t.Errorf("%s: silent (exit 0); want an error with %q", c.name, c.want)
		case code != 1 || strings.Contains(msg, "\n") || !strings.HasPrefix(msg, "cohortmix: "+p) || !strings.Contains(msg, c.want):
			t.Errorf("%s: exit %d, %q; want one line naming %s with %q", c.name, code, msg, p, c.want)
		default:
			errors++
		}
	}
	t.Logf("%d hostile inputs: %d clear errors, %d visible policies, 0 panics", len(cases), errors, policies)
}

func lastLines(s string) string {
	l := strings.Split(strings.TrimSpace(s), "\n")
	return strings.Join(l[max(0, len(l)-3):], " / ")
}
