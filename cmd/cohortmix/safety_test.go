package main

import (
	"archive/zip"
	"bytes"
	"context"
	"encoding/csv"
	"fmt"
	"io"
	"os"
	"os/exec"
	"path/filepath"
	"regexp"
	"strconv"
	"strings"
	"testing"

	"github.com/cohortmix/cohortmix/cohort/job"

	"github.com/xuri/excelize/v2"

	"github.com/cohortmix/cohortmix/cohort/synth"
)

// runCode runs cohortmix in-process and returns its exit code and the one-line error it printed.
func runCode(args ...string) (int, string) {
	env, _, errb := testEnv()
	code := run(context.Background(), env, args)
	return code, strings.TrimSpace(errb.String())
}

// synthCohort40 writes a 40-participant synthetic cohort (synth seed 13) into dir.
func synthCohort40(t *testing.T, dir string) string {
	t.Helper()
	input := filepath.Join(dir, "c.csv")
	if _, err := synth.WriteFile(input, synth.Options{Participants: 40, Windows: 300, Seed: 13}); err != nil {
		t.Fatal(err)
	}
	return input
}

// Outputs never replace an input, whatever --force says, and every output path is checked
// before any window is read: a bad one costs nothing and leaves nothing behind.
func TestOutputsAreCheckedFirst(t *testing.T) {
	t.Parallel()
	dir := t.TempDir()
	input := synthCohort40(t, dir)
	before, _ := os.ReadFile(input)
	// A broken input: if any of these runs read it, the message would be about line 3.
	broken := writeFile(t, dir, "broken.csv", "participant,window,f1\nP1,0,1\nP1,1,x\n")
	model := filepath.Join(dir, "model.json")
	mustRun(t, "group", input, "--out", filepath.Join(dir, "first.xlsx"), "--model", model, "--states", "5", "--groups", "3")
	modelBefore, _ := os.ReadFile(model)
	key := writeFile(t, dir, "study.key", "a study key of enough length to pseudonymize with\n")
	out := filepath.Join(dir, "r.xlsx")
	cases := []struct {
		name string
		args []string
		want string // a part of the one-line message
	}{
		{"members onto the input", []string{"group", input, "--out", out, "--members", input, "--force"}, "--members " + input + ": is one of the inputs"},
		{"workbook onto the input", []string{"group", input, "--out", input + ".xlsx", "--force"}, ""}, // not an input: allowed, checked below not to exist
		{"model onto the input through another path", []string{"group", input, "--out", out, "--model", filepath.Join(dir, ".", "c.csv"), "--force"}, "--model " + filepath.Join(dir, "c.csv") + ": is one of the inputs"},
		{"members onto the previous model", []string{"refresh", "--previous", model, input, "--out", out, "--members", model, "--force"}, "--members " + model + ": is one of the inputs"},
		{"members onto assign's model", []string{"assign", "--model", model, input, "--out", out, "--members", model, "--force"}, "--members " + model + ": is the file given with --model, which this run reads"},
		// The pseudonymization key is read, never written: an output named like it would make
		// every model written with the key unusable.
		{"members onto the key", []string{"group", input, "--out", out, "--pseudonymize", key, "--members", key, "--force"}, "--members " + key + ": is the file given with --pseudonymize"},
		{"model onto the key", []string{"group", input, "--out", out, "--pseudonymize", key, "--model", key, "--force"}, "--model " + key + ": is the file given with --pseudonymize"},
		{"members onto assign's key", []string{"assign", "--model", model, input, "--out", out, "--pseudonymize", key, "--members", key, "--force"}, "--members " + key + ": is the file given with --pseudonymize"},
		{"members into a missing folder", []string{"group", broken, "--out", out, "--members", filepath.Join(dir, "nofolder", "m.csv")}, "--members " + filepath.Join(dir, "nofolder", "m.csv") + ": the folder " + filepath.Join(dir, "nofolder") + " does not exist"},
		{"workbook into a missing folder", []string{"group", broken, "--out", filepath.Join(dir, "nofolder", "r.xlsx"), "--temp", os.TempDir()}, "--out " + filepath.Join(dir, "nofolder", "r.xlsx") + ": the folder"},
		{"two outputs on one file", []string{"group", broken, "--out", out, "--members", filepath.Join(dir, "m.csv"), "--model", filepath.Join(dir, "m.csv")}, "--model " + filepath.Join(dir, "m.csv") + ": --members names the same file"},
		{"output onto the temp folder", []string{"group", broken, "--out", out, "--members", dir, "--temp", dir}, "--members " + dir + ": is the folder for temporary files"},
		{"assign into a missing folder", []string{"assign", "--model", model, broken, "--out", filepath.Join(dir, "no", "w.xlsx")}, "--out " + filepath.Join(dir, "no", "w.xlsx") + ": the folder"},
	}
	for _, c := range cases {
		t.Run(c.name, func(t *testing.T) {
			code, msg := runCode(c.args...)
			if c.want == "" {
				if code != 0 {
					t.Fatalf("exit %d: %s", code, msg)
				}
				return
			}
			if code != 1 || !strings.Contains(msg, c.want) || strings.Contains(msg, "\n") {
				t.Errorf("exit %d, message %q; want exit 1 and one line with %q", code, msg, c.want)
			}
			if _, err := os.Stat(out); err == nil {
				t.Errorf("%s was written by a run that failed", out)
			}
		})
	}
	if after, _ := os.ReadFile(input); !bytes.Equal(before, after) {
		t.Error("an input was changed")
	}
	if after, _ := os.ReadFile(model); !bytes.Equal(modelBefore, after) {
		t.Error("the model read by refresh or assign was changed")
	}
	if after, _ := os.ReadFile(key); string(after) != "a study key of enough length to pseudonymize with\n" {
		t.Error("the pseudonymization key was changed")
	}
	if left, _ := filepath.Glob(filepath.Join(dir, ".*partial")); len(left) > 0 {
		t.Errorf("temporary files left behind: %v", left)
	}
}

// When the run fails after some outputs are written, none is put in place, and earlier outputs
// stay as they were: here the members CSV fails (its folder is replaced by a file while the run
// works, which the check before cannot foresee), so neither the workbook nor the model appears.
func TestNoHalfOutputs(t *testing.T) {
	t.Parallel()
	dir := t.TempDir()
	input := synthCohort40(t, dir)
	out := filepath.Join(dir, "r.xlsx")
	old := []byte("an earlier workbook")
	os.WriteFile(out, old, 0o644)
	sub := filepath.Join(dir, "sub")
	os.Mkdir(sub, 0o755)
	o := &groupOptions{IO: func() IO { e, _, _ := testEnv(); return e.IO }(), Now: fixedNow, Inputs: []string{input}, Out: out, Flags: defaultFlags()}
	o.Flags.Force = true
	o.Flags.Model = filepath.Join(dir, "model.json")
	o.Flags.Members = filepath.Join(sub, "m.csv")
	o.Flags.States, o.Flags.Groups = "5", "3"
	if err := o.outputs(); err != nil {
		t.Fatal(err)
	}
	defer o.plan.Abort()
	ao, _, err := o.prepare()
	if err != nil {
		t.Fatal(err)
	}
	res, err := job.Analyze(context.Background(), ao)
	if err != nil {
		t.Fatal(err)
	}
	os.RemoveAll(sub)
	os.WriteFile(sub, nil, 0o644) // the folder is now a file
	if err := o.write(res, ao.Read, ao.FitSettings()); err == nil {
		t.Fatal("writing into a folder that became a file succeeded")
	}
	if got, _ := os.ReadFile(out); !bytes.Equal(got, old) {
		t.Error("the earlier workbook was replaced by a run that failed")
	}
	if _, err := os.Stat(o.Flags.Model); err == nil {
		t.Error("the model was written by a run that failed")
	}
	if left, _ := filepath.Glob(filepath.Join(dir, ".*partial")); len(left) > 0 {
		t.Errorf("temporary files left behind: %v", left)
	}
}

// A model records whether its ids are pseudonyms and a fingerprint of the key; assign and
// refresh refuse a pseudonymized model without the key, a key with a plain model, and another key.
func TestPseudonymKeyMustFitTheModel(t *testing.T) {
	t.Parallel()
	dir := t.TempDir()
	input := filepath.Join(dir, "c.csv")
	synth.WriteFile(input, synth.Options{Participants: 40, Windows: 300, Seed: 13, IDPrefix: "STUDY-"})
	key := writeFile(t, dir, "key", "0123456789abcdef-analyst-key")
	other := writeFile(t, dir, "other", "another-key-of-sixteen-bytes")
	keyed, plain := filepath.Join(dir, "keyed.json"), filepath.Join(dir, "plain.json")
	mustRun(t, "group", input, "--out", filepath.Join(dir, "k.xlsx"), "--model", keyed, "--pseudonymize", key, "--states", "5", "--groups", "3")
	mustRun(t, "group", input, "--out", filepath.Join(dir, "p.xlsx"), "--model", plain, "--states", "5", "--groups", "3")
	text, _ := os.ReadFile(keyed)
	if !bytes.Contains(text, []byte(`"pseudonymized": true`)) || !regexp.MustCompile(`"key_fingerprint": "[0-9a-f]{16}"`).Match(text) {
		t.Error("the keyed model does not record its pseudonymization and key fingerprint")
	}
	if bytes.Contains(text, []byte("0123456789abcdef-analyst-key")) || bytes.Contains(text, []byte("STUDY-")) {
		t.Error("the keyed model holds the key or a study id")
	}
	out := filepath.Join(dir, "w.xlsx")
	for _, cmd := range []string{"assign", "refresh"} {
		modelFlag := map[string]string{"assign": "--model", "refresh": "--previous"}[cmd]
		for _, c := range []struct {
			name, model string
			key         []string
			want        string
		}{
			{"no key for a pseudonymized model", keyed, nil, "the model holds pseudonyms, not study ids"},
			{"a key for a plain model", plain, []string{"--pseudonymize", key}, "the model holds study ids, not pseudonyms"},
			{"another key", keyed, []string{"--pseudonymize", other}, "was pseudonymized with another key than " + other},
		} {
			args := append([]string{cmd, modelFlag, c.model, input, "--out", out}, c.key...)
			code, msg := runCode(args...)
			if code != 1 || !strings.Contains(msg, c.want) {
				t.Errorf("%s, %s: exit %d, %q; want exit 1 with %q", cmd, c.name, code, msg, c.want)
			}
		}
	}
	// With the right key every participant returns, and no study id reaches the outputs.
	mustRun(t, "assign", "--model", keyed, input, "--out", out, "--pseudonymize", key, "--members", filepath.Join(dir, "wm.csv"))
	f, err := excelize.OpenFile(out)
	if err != nil {
		t.Fatal(err)
	}
	defer f.Close()
	rows, _ := f.GetRows("Changes")
	if !strings.Contains(flattenRows(rows), "40 returning participants") {
		t.Errorf("the Changes sheet does not count the 40 returning participants:\n%s", flattenRows(rows)[:min(400, len(flattenRows(rows)))])
	}
	if b := readZipText(t, out); bytes.Contains(b, []byte("STUDY-")) {
		t.Error("the assign workbook holds a study id")
	}
}

// Every command-line mistake exits 2, as --help says, for every command.
func TestCommandLineMistakesExit2(t *testing.T) {
	t.Parallel()
	dir := t.TempDir()
	in := writeFile(t, dir, "c.csv", cohortText(4, 30))
	cases := [][]string{
		{"nosuchcommand"},
		{"group", in},                // no --out
		{"group", "--out", "r.xlsx"}, // no input
		{"group", in, "--out", "r.xlsx", "--no-such-flag"},
		{"group", in, "--out", "r.txt"}, // not a workbook name
		{"group", in, "--out", "r.xlsx", "--states", "many"},
		{"check"},                           // no input
		{"check", in, "--members", "m.csv"}, // check writes nothing
		{"check", in, "--model", "m.json"},
		{"check", in, "--states", "4"},
		{"check", in, "--force"},
		{"check", in, "--missing", "guess"},
		{"assign", in, "--out", "w.xlsx"},   // no --model
		{"assign", "--model", "m.json", in}, // no --out
		{"assign", "--model", "m.json", "--out", "w.xlsx"},
		{"refresh", in, "--out", "w.xlsx"}, // no --previous
		{"refresh", "--previous", "m.json", in},
		{"demo"}, // no --dir
		{"demo", "--dir", dir, "--participants", "x"},
		{"synth"}, // no --out
		{"synth", "--out", "s.csv", "--scenario", "3", "--groups", "4"},
		{"shard", "nosuchstep"},
		{"shard", "census", in, "--piece", "c.piece"}, // no --shard
		{"shard", "census", in, "--shard", "5/4", "--piece", filepath.Join(dir, "c.piece")},
		{"shard", "census", in, "--shard", "1/2", "--piece", filepath.Join(dir, "c.piece"), "--within", "rest"}, // shards take align
		{"shard", "plan", "--piece", "p.piece"},                                                                 // no census pieces
		{"shard", "sample", "--plan", "p.piece", "--piece", "s.piece"},
		{"shard", "fit", "--plan", "p.piece", "--piece", "f.piece"},
		{"shard", "finish", "--fit", "f.piece", "a.piece"}, // no --out
		{"shard", "run", in, "--out", filepath.Join(dir, "r.xlsx"), "--shards", "0"},
	}
	for _, args := range cases {
		code, msg := runCode(args...)
		if code != 2 {
			t.Errorf("cohortmix %s: exit %d (%s), want 2", strings.Join(args, " "), code, msg)
		}
	}
}

// check fails when nothing can be grouped, and says so.
func TestCheckFailsWhenNothingCanBeGrouped(t *testing.T) {
	t.Parallel()
	dir := t.TempDir()
	in := writeFile(t, dir, "short.csv", cohortText(4, 10)) // 10 windows each, under the minimum 20
	code, msg := runCode("check", in)
	if code != 1 || !strings.Contains(msg, "0 participants can be grouped (4 excluded") {
		t.Errorf("exit %d, %q; want exit 1 saying no participant can be grouped", code, msg)
	}
	ok := writeFile(t, dir, "ok.csv", cohortText(4, 30))
	if out := mustRun(t, "check", ok); !strings.Contains(out, "the tables can be analysed") {
		t.Errorf("check of a good table does not say it can be analysed:\n%s", out)
	}
}

// Every sheet's <dimension> covers all its rows and columns, so that readers that trust it
// (openpyxl's read-only mode; testdata/check_workbooks.sh reads every sheet that way) see every
// row. Both forms are checked: sheets built in memory and the streamed participants sheet.
func TestSheetDimensionsCoverTheirCells(t *testing.T) {
	t.Parallel()
	dir := t.TempDir()
	input := synthCohort40(t, dir)
	out := filepath.Join(dir, "r.xlsx")
	mustRun(t, "group", input, "--out", out, "--states", "5", "--groups", "3")
	checkDimensions(t, out)
}

// checkDimensions compares each sheet's recorded dimension with its last row and column.
func checkDimensions(t *testing.T, path string) {
	t.Helper()
	zr, err := zip.OpenReader(path)
	if err != nil {
		t.Fatal(err)
	}
	defer zr.Close()
	dimRe := regexp.MustCompile(`<dimension ref="([^"]*)"`)
	cellRe := regexp.MustCompile(`<c r="([A-Z]+)([0-9]+)"`)
	sheets := 0
	for _, zf := range zr.File {
		if !strings.HasPrefix(zf.Name, "xl/worksheets/sheet") {
			continue
		}
		sheets++
		rc, _ := zf.Open()
		b, _ := io.ReadAll(rc)
		rc.Close()
		m := dimRe.FindSubmatch(b)
		if m == nil {
			t.Errorf("%s: no dimension", zf.Name)
			continue
		}
		lastCol, lastRow := 0, 0
		for _, c := range cellRe.FindAllSubmatch(b, -1) {
			col, _ := excelize.ColumnNameToNumber(string(c[1]))
			row, _ := strconv.Atoi(string(c[2]))
			lastCol, lastRow = max(lastCol, col), max(lastRow, row)
		}
		ref := string(m[1])
		_, end, _ := strings.Cut(ref, ":")
		if end == "" {
			end = ref
		}
		col, row, err := excelize.CellNameToCoordinates(end)
		if err != nil || col < lastCol || row < lastRow {
			t.Errorf("%s: dimension %s, but cells reach column %d, row %d", zf.Name, ref, lastCol, lastRow)
		}
	}
	if sheets < 5 {
		t.Errorf("only %d sheets found", sheets)
	}
}

// rewriteCSV rewrites a CSV file cell by cell.
func rewriteCSV(t *testing.T, path string, cell func(row, col int, header []string, s string) string) {
	t.Helper()
	f, err := os.Open(path)
	if err != nil {
		t.Fatal(err)
	}
	recs, err := csv.NewReader(f).ReadAll()
	f.Close()
	if err != nil {
		t.Fatal(err)
	}
	var b bytes.Buffer
	w := csv.NewWriter(&b)
	for r, rec := range recs {
		for c := range rec {
			rec[c] = cell(r, c, recs[0], rec[c])
		}
		w.Write(rec)
	}
	w.Flush()
	if err := os.WriteFile(path, b.Bytes(), 0o644); err != nil {
		t.Fatal(err)
	}
}

// sheetText is every cell of a sheet, one row per line.
func sheetText(t *testing.T, path, sheet string) string {
	t.Helper()
	f, err := excelize.OpenFile(path)
	if err != nil {
		t.Fatal(err)
	}
	defer f.Close()
	rows, err := f.GetRows(sheet)
	if err != nil {
		t.Fatal(err)
	}
	return flattenRows(rows)
}

// emptyFragment finds sentence pieces left empty: a separator followed by nothing, doubled
// spaces, or a comparison with nothing compared.
var emptyFragment = regexp.MustCompile(`;\s*(than|,|;|$)|,\s*,|  +\S|: ;|\(\s*\)`)

// With waves, people and participant-waves are counted apart, a person's waves sit side by side,
// and the separating variables use one row per person (planted structure: synth seed 21, 60
// people, 20 of them seen again in a second wave).
func TestWavesCountPeopleApart(t *testing.T) {
	t.Parallel()
	dir := t.TempDir()
	w1, w2 := filepath.Join(dir, "wave1.csv"), filepath.Join(dir, "wave2.csv")
	if _, err := synth.WriteFile(w1, synth.Options{Participants: 60, Windows: 300, Seed: 21, Waves: true}); err != nil {
		t.Fatal(err)
	}
	if _, err := synth.WriteFile(w2, synth.Options{Participants: 20, Windows: 300, Seed: 22, Waves: true}); err != nil {
		t.Fatal(err)
	}
	rewriteCSV(t, w2, func(r, c int, h []string, s string) string {
		if r > 0 && h[c] == "wave" {
			return "2"
		}
		return s
	})
	out, members := filepath.Join(dir, "r.xlsx"), filepath.Join(dir, "m.csv")
	stdout := mustRun(t, "group", w1, w2, "--wave", "wave", "--out", out, "--members", members, "--states", "5", "--groups", "3")
	if !strings.Contains(stdout, "80 participant-waves of 60 people grouped") {
		t.Errorf("the run's summary does not count people apart:\n%s", stdout)
	}
	summary := sheetText(t, out, "Summary")
	if !strings.Contains(summary, "80 participant-waves of 60 people in the input: 80 grouped (60 people)") {
		t.Errorf("the Summary does not count people apart:\n%s", summary)
	}
	if !regexp.MustCompile(`\d+ participant-waves of \d+ people: `).MatchString(summary) {
		t.Errorf("the group lines do not count people apart:\n%s", summary)
	}
	if quality := sheetText(t, out, "Data quality"); !strings.Contains(quality, "people in|60") {
		t.Errorf("the Data quality sheet does not count people:\n%s", quality)
	}
	if sep := sheetText(t, out, "Separating variables"); !strings.Contains(sep, "Each person counts once in these tests") || !strings.Contains(sep, "60 people") {
		t.Errorf("the separating variables do not say they use one row per person:\n%.400s", sep)
	}
	f, _ := os.Open(members)
	recs, _ := csv.NewReader(f).ReadAll()
	f.Close()
	for i := 1; i+1 < len(recs); i++ {
		if recs[i][1] == "1" && recs[i+1][1] == "2" && recs[i][0] != recs[i+1][0] {
			t.Errorf("row %d: wave 2 of %s does not follow its wave 1", i+1, recs[i+1][0])
		}
	}
	if recs[1][0] != recs[2][0] || recs[1][1] != "1" || recs[2][1] != "2" {
		t.Errorf("the first person's two waves are not side by side at the top: %v %v", recs[1], recs[2])
	}
}

// Participants that assign finds atypical are in no group: an empty group and the flag
// "atypical" in the members CSV, counted apart on the Summary and out of the group lines, and no
// group or state line has an empty fragment. The later wave has a unit mistake (every feature ×
// 1,000), so most of them are atypical (planted structure: synth seeds 13 and 14).
func TestAtypicalParticipantsAreInNoGroup(t *testing.T) {
	t.Parallel()
	dir := t.TempDir()
	input := synthCohort40(t, dir)
	model := filepath.Join(dir, "model.json")
	mustRun(t, "group", input, "--out", filepath.Join(dir, "r.xlsx"), "--model", model, "--states", "5", "--groups", "3")
	later := filepath.Join(dir, "later.csv")
	if _, err := synth.WriteFile(later, synth.Options{Participants: 40, Windows: 300, Seed: 14, FirstID: 40}); err != nil {
		t.Fatal(err)
	}
	rewriteCSV(t, later, func(r, c int, h []string, s string) string {
		if r == 0 || h[c] == "participant" || h[c] == "window" {
			return s
		}
		x, err := strconv.ParseFloat(s, 64)
		if err != nil {
			t.Fatal(err)
		}
		return strconv.FormatFloat(x*1000, 'g', -1, 64)
	})
	out, members := filepath.Join(dir, "w.xlsx"), filepath.Join(dir, "wm.csv")
	stdout := mustRun(t, "assign", "--model", model, later, "--out", out, "--members", members)
	f, _ := os.Open(members)
	recs, _ := csv.NewReader(f).ReadAll()
	f.Close()
	atypical := 0
	for _, r := range recs[1:] {
		switch {
		case r[5] == "atypical" && r[2] == "":
			atypical++
		case r[5] == "atypical" || r[2] == "":
			t.Errorf("members CSV row %v: an atypical participant has no group, and only it", r)
		}
	}
	if atypical < 10 {
		t.Fatalf("only %d of 40 participants with a unit mistake were atypical:\n%s", atypical, stdout)
	}
	grouped := 40 - atypical
	if want := fmt.Sprintf("40 participants placed with %s: %d in a group, %d atypical (in no group), 0 excluded", model, grouped, atypical); !strings.Contains(stdout, want) {
		t.Errorf("the run's summary lacks %q:\n%s", want, stdout)
	}
	summary := sheetText(t, out, "Summary")
	if want := fmt.Sprintf("40 in the input: %d grouped, %d atypical", grouped, atypical); !strings.Contains(summary, want) {
		t.Errorf("the Summary lacks %q:\n%s", want, summary)
	}
	groups := sheetText(t, out, "Group profiles")
	n := 0
	for _, m := range regexp.MustCompile(`(\d+) participants?: `).FindAllStringSubmatch(summary, -1) {
		k, _ := strconv.Atoi(m[1])
		n += k
	}
	if n != grouped {
		t.Errorf("the group lines count %d participants, %d are grouped:\n%s\n%s", n, grouped, summary, groups)
	}
	for _, line := range strings.Split(summary, "\n") {
		if emptyFragment.MatchString(line) {
			t.Errorf("Summary line with an empty fragment: %q", line)
		}
	}
	if changes := sheetText(t, out, "Changes"); !strings.Contains(changes, "in no group (atypical)") {
		t.Errorf("the Changes sheet does not say the atypical are in no group:\n%.600s", changes)
	}
}

// Issue 28: after SIGKILL, group left a hidden windows file of 77 MB and the temporary outputs,
// and later runs left them. The next run in the folder removes what killed runs of this host
// left, and says so; a live run's files (here a file of this process) are kept.
func TestLeftoversOfKilledRunsAreRemoved(t *testing.T) {
	dir := t.TempDir()
	input := synthCohort40(t, dir)
	dead := exec.Command("true")
	if err := dead.Run(); err != nil {
		t.Skip(err)
	}
	host, _ := os.Hostname()
	mark := func(pid int) string { return "~" + host + "~" + strconv.Itoa(pid) + "~1" }
	left := []string{".cohortmix-windows" + mark(dead.Process.Pid) + ".tmp", ".r.xlsx" + mark(dead.Process.Pid) + ".partial"}
	live := ".m.csv" + mark(os.Getpid()) + ".partial"
	for _, name := range append(left, live) {
		os.WriteFile(filepath.Join(dir, name), make([]byte, 1000), 0o600)
	}
	env, _, errb := testEnv()
	if code := run(context.Background(), env, []string{"group", input, "--out", filepath.Join(dir, "r.xlsx"), "--states", "5", "--groups", "3", "--quiet"}); code != 0 {
		t.Fatalf("exit %d: %s", code, errb)
	}
	if !strings.Contains(errb.String(), "note: removed 2 temporary files (2,000 bytes) that killed runs left behind") {
		t.Errorf("no note: %q", errb.String())
	}
	for _, name := range left {
		if _, err := os.Stat(filepath.Join(dir, name)); err == nil {
			t.Errorf("%s is still there", name)
		}
	}
	if _, err := os.Stat(filepath.Join(dir, live)); err != nil {
		t.Error("a live process's file was removed")
	}
}

// Issue 29: text headers stood left-aligned over right-aligned numbers, so in a wide column each
// value read as the next header's. Read from the file: every header cell (bold on the header
// fill) over a number in the row below is right-aligned, and every cell sits at the top of its
// row.
func TestHeadersStandOverTheirNumbers(t *testing.T) {
	t.Parallel()
	dir := t.TempDir()
	input := synthCohort40(t, dir)
	out := filepath.Join(dir, "r.xlsx")
	mustRun(t, "group", input, "--out", out, "--states", "5", "--groups", "3", "--quiet")
	f, err := excelize.OpenFile(out)
	if err != nil {
		t.Fatal(err)
	}
	defer f.Close()
	checked := 0
	for _, sheet := range f.GetSheetList() {
		rows, err := f.GetRows(sheet)
		if err != nil {
			t.Fatal(err)
		}
		for r := range rows {
			for c := range rows[r] {
				cell, _ := excelize.CoordinatesToCellName(c+1, r+1)
				id, _ := f.GetCellStyle(sheet, cell)
				st, _ := f.GetStyle(id)
				if st == nil || len(st.Fill.Color) == 0 || !strings.EqualFold(st.Fill.Color[0], "DDEBE8") || st.Font == nil || !st.Font.Bold {
					continue
				}
				below, _ := excelize.CoordinatesToCellName(c+1, r+2)
				if typ, _ := f.GetCellType(sheet, below); typ != excelize.CellTypeNumber && typ != excelize.CellTypeUnset {
					continue
				}
				if v, _ := f.GetCellValue(sheet, below); v == "" {
					continue
				}
				checked++
				if st.Alignment == nil || st.Alignment.Horizontal != "right" {
					t.Errorf("%s!%s %q stands over the number in %s but is not right-aligned", sheet, cell, rows[r][c], below)
				}
			}
		}
	}
	if checked < 10 {
		t.Errorf("only %d headers over numbers were found; is the header fill still DDEBE8?", checked)
	}
}

// Issue 29: Changes said "180 returning participants" for 120 people and mixed people with
// participant-waves in its group counts; 2 who moved were lost among 7 pages, and the Summary
// did not name them. Now the counts say what they count, who moved leads the sheet and is named
// on the Summary.
func TestChangesLeadWithWhoMoved(t *testing.T) {
	t.Parallel()
	dir := t.TempDir()
	w1, w2 := filepath.Join(dir, "wave1.csv"), filepath.Join(dir, "wave2.csv")
	if _, err := synth.WriteFile(w1, synth.Options{Participants: 40, Windows: 300, Seed: 21, Waves: true}); err != nil {
		t.Fatal(err)
	}
	model := filepath.Join(dir, "m.json")
	mustRun(t, "group", w1, "--wave", "wave", "--out", filepath.Join(dir, "r1.xlsx"), "--model", model, "--states", "5", "--groups", "3", "--quiet")
	b, _ := os.ReadFile(w1)
	os.WriteFile(w2, b, 0o644) // the same people again, as wave 2 (below)
	rewriteCSV(t, w2, func(r, c int, h []string, s string) string {
		if r > 0 && h[c] == "wave" {
			return "2"
		}
		return s
	})
	out := filepath.Join(dir, "r2.xlsx")
	mustRun(t, "refresh", "--previous", model, w1, w2, "--wave", "wave", "--out", out, "--states", "5", "--groups", "3", "--quiet")
	changes := sheetText(t, out, "Changes")
	if !strings.Contains(changes, "returning participant-waves of 40 people") || !strings.Contains(changes, "Moved to another group: ") {
		t.Errorf("the Changes sheet does not count people apart or does not lead with who moved:\n%.600s", changes)
	}
	if !strings.Contains(changes, "members in the model|participant-waves in it now") {
		t.Errorf("the group counts do not say what they count:\n%.800s", changes)
	}
	if summary := sheetText(t, out, "Summary"); !strings.Contains(summary, "Moved since the model|") {
		t.Errorf("the Summary does not name who moved:\n%.600s", summary)
	}
}
