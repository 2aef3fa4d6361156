package main

import (
	"bytes"
	"context"
	"fmt"
	"os"
	"path/filepath"
	"regexp"
	"strings"
	"testing"

	"github.com/cohortmix/cohortmix/cohort/synth"
)

// workbookText is a workbook's parts as text, without what differs between two runs of the same
// job: the date of the run, the command line with the height of its row, and the default
// content types (which the workbook library writes in the order of a map).
func workbookText(t *testing.T, path string) string {
	t.Helper()
	b := string(readZipText(t, path))
	b = regexp.MustCompile(`\d{4}-\d\d-\d\d \d\d:\d\d:\d\d UTC`).ReplaceAllString(b, "DATE")
	b = regexp.MustCompile(`cohortmix (group|shard run)[^<]*`).ReplaceAllString(b, "COMMAND")
	b = regexp.MustCompile(`<Default [^>]*>(</Default>)?`).ReplaceAllString(b, "")
	return regexp.MustCompile(` ht="[0-9.]+"`).ReplaceAllString(b, "")
}

// A run split in shards gives the one-machine result bit for bit: members, model (apart from
// its date) and workbook (apart from date and command line), for 1, 2, 3 and 7 shards, with the
// windows in memory and in the temporary file, with each shard's census read apart or the
// inputs read once (--split). The input has labels, times, participants whose
// windows sit in two files, one participant with too few windows and a window with a missing
// cell, so that every piece of the accounting is merged.
func TestShardsGiveTheOneMachineResult(t *testing.T) {
	t.Parallel()
	if testing.Short() {
		t.Skip("runs the job 15 times")
	}
	dir := t.TempDir()
	whole := filepath.Join(dir, "whole.csv")
	if _, err := synth.WriteFile(whole, synth.Options{Participants: 48, Windows: 300, Seed: 21, Labels: true, Times: true}); err != nil {
		t.Fatal(err)
	}
	b, _ := os.ReadFile(whole)
	lines := strings.Split(strings.TrimSpace(string(b)), "\n")
	var a, c strings.Builder
	a.WriteString(lines[0] + "\n")
	c.WriteString(lines[0] + "\n")
	for i, l := range lines[1:] {
		switch {
		case strings.HasPrefix(l, "P7,") && i%300 > 10: // too few windows: excluded
			continue
		case i == 1000:
			f := strings.Split(l, ",")
			f[3] = "NA" // a missing cell: the window is dropped
			l = strings.Join(f, ",")
		}
		if i%300 < 150 || i/300%3 != 0 {
			a.WriteString(l + "\n")
		} else {
			c.WriteString(l + "\n") // the second half of every third participant
		}
	}
	inputs := []string{writeFile(t, dir, "a.csv", a.String()), writeFile(t, dir, "b.csv", c.String())}
	run := func(name string, args ...string) (members, model []byte, book string) {
		out, mem, mod := filepath.Join(dir, name+".xlsx"), filepath.Join(dir, name+".csv"), filepath.Join(dir, name+".json")
		mustRun(t, append(append(args, inputs...), "--out", out, "--members", mem, "--model", mod, "--groups", "2-5", "--states", "3-8", "--bootstrap", "5", "--label", "activity", "--quiet")...)
		members, _ = os.ReadFile(mem)
		model, _ = os.ReadFile(mod)
		model = regexp.MustCompile(`"checksum": "[^"]*"`).ReplaceAll(model, nil) // covers the time it was made
		return members, regexp.MustCompile(`"created": "[^"]*"`).ReplaceAll(model, nil), workbookText(t, out)
	}
	for _, spill := range []int64{0, 2000} {
		memory := []string{"--memory-values", fmt.Sprint(spill)}
		members, model, book := run(fmt.Sprintf("one-%d", spill), append([]string{"group"}, memory...)...)
		if !bytes.Contains(members, []byte("P7,")) || !strings.Contains(book, "fewer than the minimum") {
			t.Fatal("the excluded participant is not in the one-machine result")
		}
		// Each shard read apart (census and plan), or the inputs read once (split).
		for _, split := range []bool{false, true} {
			for _, n := range []int{1, 2, 3, 7} {
				if split && n == 2 {
					continue
				}
				name := fmt.Sprintf("shards-%d-%d-%v", n, spill, split)
				args := []string{"shard", "run", "--shards", fmt.Sprint(n), "--pieces", filepath.Join(dir, name), fmt.Sprintf("--split=%v", split)}
				m, mo, bo := run(name, append(args, memory...)...)
				if !bytes.Equal(m, members) {
					t.Errorf("%d shards, split %v, memory %d: the members differ from one machine's", n, split, spill)
				}
				if !bytes.Equal(mo, model) {
					t.Errorf("%d shards, split %v, memory %d: the model differs from one machine's", n, split, spill)
				}
				if bo != book {
					t.Errorf("%d shards, split %v, memory %d: the workbook differs from one machine's", n, split, spill)
				}
			}
		}
		// Without --pieces the pieces stay in memory, and nothing but the outputs is left.
		name := fmt.Sprintf("memory-%d", spill)
		m, mo, bo := run(name, "shard", "run", "--shards", "3")
		if !bytes.Equal(m, members) || !bytes.Equal(mo, model) || bo != book {
			t.Errorf("3 shards in memory, memory %d: the result differs from one machine's", spill)
		}
		if left, _ := filepath.Glob(filepath.Join(dir, ".*")); len(left) > 0 {
			t.Errorf("left behind: %v", left)
		}
		// Step by step, as a workflow engine runs them, with sample and assign reading the
		// inputs again instead of the census's windows files.
		p := filepath.Join(dir, fmt.Sprintf("steps-%d", spill))
		os.MkdirAll(p, 0o755)
		piece := func(kind string, i int) string { return filepath.Join(p, fmt.Sprintf("%s-%d.piece", kind, i)) }
		var censuses, samples, assigned []string
		for i := 1; i <= 2; i++ {
			mustRun(t, append(append([]string{"shard", "census"}, inputs...), "--shard", fmt.Sprintf("%d/2", i), "--piece", piece("census", i),
				"--groups", "2-5", "--states", "3-8", "--bootstrap", "5", "--label", "activity", "--quiet")...)
			censuses = append(censuses, piece("census", i))
		}
		mustRun(t, append(append([]string{"shard", "plan"}, censuses...), "--piece", piece("plan", 0), "--quiet")...)
		for i := 1; i <= 2; i++ {
			mustRun(t, "shard", "sample", "--plan", piece("plan", 0), "--shard", fmt.Sprintf("%d/2", i), "--piece", piece("sample", i), "--quiet")
			samples = append(samples, piece("sample", i))
		}
		mustRun(t, append(append([]string{"shard", "fit", "--plan", piece("plan", 0)}, samples...), "--piece", piece("fit", 0), "--quiet")...)
		for i := 1; i <= 2; i++ {
			mustRun(t, "shard", "assign", "--fit", piece("fit", 0), "--shard", fmt.Sprintf("%d/2", i), "--piece", piece("assign", i), "--quiet")
			assigned = append(assigned, piece("assign", i))
		}
		mem := filepath.Join(p, "members.csv")
		mustRun(t, append(append([]string{"shard", "finish", "--fit", piece("fit", 0)}, assigned...), "--out", filepath.Join(p, "r.xlsx"), "--members", mem, "--quiet")...)
		if m, _ := os.ReadFile(mem); !bytes.Equal(m, members) {
			t.Errorf("step by step, reading the inputs again, memory %d: the members differ from one machine's", spill)
		}
	}
}

// Issue 28: pieces of another run, of another seed, of another fit, a windows file of another
// input, or a damaged piece, all went through with different groups. Each is now refused with a
// one-line message naming the piece.
func TestShardPiecesOfAnotherRunAreRefused(t *testing.T) {
	t.Parallel()
	dir := t.TempDir()
	in := filepath.Join(dir, "c.csv")
	if _, err := synth.WriteFile(in, synth.Options{Participants: 16, Windows: 120, Seed: 5}); err != nil {
		t.Fatal(err)
	}
	b, _ := os.ReadFile(in)
	other := writeFile(t, dir, "other.csv", strings.Replace(string(b), "\nP1,", "\nP1x,", 1))
	steps := func(name, input string, seed int) func(kind string, i int) string {
		p := filepath.Join(dir, name)
		os.MkdirAll(p, 0o755)
		piece := func(kind string, i int) string { return filepath.Join(p, fmt.Sprintf("%s-%d.piece", kind, i)) }
		common := []string{"--states", "3", "--groups", "2", "--bootstrap", "2", "--seed", fmt.Sprint(seed), "--quiet"}
		for i := 1; i <= 2; i++ {
			mustRun(t, append([]string{"shard", "census", input, "--shard", fmt.Sprintf("%d/2", i), "--piece", piece("census", i), "--windows-file", piece("windows", i)}, common...)...)
		}
		mustRun(t, "shard", "plan", piece("census", 1), piece("census", 2), "--piece", piece("plan", 0), "--quiet")
		for i := 1; i <= 2; i++ {
			mustRun(t, "shard", "sample", "--plan", piece("plan", 0), "--windows-file", piece("windows", i), "--shard", fmt.Sprintf("%d/2", i), "--piece", piece("sample", i), "--quiet")
		}
		mustRun(t, "shard", "fit", "--plan", piece("plan", 0), piece("sample", 1), piece("sample", 2), "--piece", piece("fit", 0), "--quiet")
		for i := 1; i <= 2; i++ {
			mustRun(t, "shard", "assign", "--fit", piece("fit", 0), "--windows-file", piece("windows", i), "--shard", fmt.Sprintf("%d/2", i), "--piece", piece("assign", i), "--quiet")
		}
		return piece
	}
	a, s2, in2 := steps("a", in, 1), steps("seed2", in, 2), steps("input2", other, 1)
	refit := filepath.Join(dir, "a", "fit-again.piece") // a second fit of run a, from a sample of another seed
	flipped := filepath.Join(dir, "a", "flipped.piece")
	pb, _ := os.ReadFile(a("assign", 2))
	pb[len(pb)-40] ^= 0x10
	os.WriteFile(flipped, pb, 0o644)
	out := func(name string) []string {
		return []string{"--out", filepath.Join(dir, name+".xlsx"), "--members", filepath.Join(dir, name+".csv"), "--quiet"}
	}
	mustRun(t, append([]string{"shard", "finish", "--fit", a("fit", 0), a("assign", 1), a("assign", 2)}, out("good")...)...)
	for _, c := range []struct {
		name string
		args []string
		want string
	}{
		{"an assignment piece of a --seed 2 run", append([]string{"shard", "finish", "--fit", a("fit", 0), a("assign", 1), s2("assign", 2)}, out("x1")...),
			s2("assign", 2) + ": this assignment piece is of another run than " + a("fit", 0)},
		{"a sample piece of another seed", []string{"shard", "fit", "--plan", a("plan", 0), a("sample", 1), s2("sample", 2), "--piece", refit, "--quiet"},
			s2("sample", 2) + ": this sample piece is of another run than " + a("plan", 0)},
		{"a fit piece of another run", append([]string{"shard", "finish", "--fit", s2("fit", 0), a("assign", 1), a("assign", 2)}, out("x2")...),
			a("assign", 1) + ": this assignment piece is of another run than " + s2("fit", 0)},
		{"an assignment piece of another input", append([]string{"shard", "finish", "--fit", a("fit", 0), a("assign", 1), in2("assign", 2)}, out("x3")...),
			in2("assign", 2) + ": this assignment piece is of another run than " + a("fit", 0)},
		{"a windows file of another input", []string{"shard", "assign", "--fit", a("fit", 0), "--windows-file", in2("windows", 2), "--shard", "2/2", "--piece", filepath.Join(dir, "x4.piece"), "--quiet"},
			in2("windows", 2) + ": the windows of another run"},
		{"a damaged assignment piece", append([]string{"shard", "finish", "--fit", a("fit", 0), a("assign", 1), flipped}, out("x5")...),
			flipped + ": the assignment piece is damaged (its content does not match its checksum)"},
	} {
		env, _, errb := testEnv()
		if code := run(context.Background(), env, c.args); code != 1 || !strings.Contains(errb.String(), c.want) || strings.Count(strings.TrimSpace(errb.String()), "\n") > 0 {
			t.Errorf("%s: exit %d, %q; want one line with %q", c.name, code, errb.String(), c.want)
		}
	}
	// A second fit of run a from its own samples is the same fit, and its assignments finish.
	mustRun(t, "shard", "fit", "--plan", a("plan", 0), a("sample", 1), a("sample", 2), "--piece", refit, "--quiet")
	if f1, f2 := readBytes(t, a("fit", 0)), readBytes(t, refit); !bytes.Equal(f1, f2) {
		t.Error("a fit of the same plan and samples differs")
	}
}

func readBytes(t *testing.T, p string) []byte {
	t.Helper()
	b, err := os.ReadFile(p)
	if err != nil {
		t.Fatal(err)
	}
	return b
}

// Issue 28: a pseudonymized split run wrote the raw ids into its pieces. Under --pseudonymize
// the census replaces every id as it reads it: no piece, windows file or output holds a study id,
// and the result is that of 'group --pseudonymize' byte for byte, with a census per shard or
// the inputs read once (--split). Later steps that read the inputs again need the same key.
func TestPseudonymizedSplitRunKeepsNoIDsOnDisk(t *testing.T) {
	t.Parallel()
	dir := t.TempDir()
	in := filepath.Join(dir, "c.csv")
	if _, err := synth.WriteFile(in, synth.Options{Participants: 24, Windows: 200, Seed: 8}); err != nil {
		t.Fatal(err)
	}
	b, _ := os.ReadFile(in)
	os.WriteFile(in, bytes.ReplaceAll(b, []byte("\nP"), []byte("\nSTUDYID-")), 0o644)
	key := writeFile(t, dir, "study.key", "a study key of enough length to pseudonymize with\n")
	common := []string{"--states", "3-5", "--bootstrap", "3", "--pseudonymize", key, "--quiet"}
	out := func(name string) []string {
		return []string{"--out", filepath.Join(dir, name+".xlsx"), "--members", filepath.Join(dir, name+".csv"), "--model", filepath.Join(dir, name+".json")}
	}
	mustRun(t, append(append([]string{"group", in}, out("one")...), common...)...)
	pieces := filepath.Join(dir, "pieces")
	mustRun(t, append(append([]string{"shard", "run", in, "--shards", "3", "--pieces", pieces}, out("split")...), common...)...)
	one, split := readBytes(t, filepath.Join(dir, "one.csv")), readBytes(t, filepath.Join(dir, "split.csv"))
	if !bytes.Equal(one, split) || bytes.Contains(one, []byte("STUDYID")) {
		t.Errorf("members: split equal to one machine's %v, study ids in them %v", bytes.Equal(one, split), bytes.Contains(one, []byte("STUDYID")))
	}
	files, _ := filepath.Glob(filepath.Join(pieces, "*"))
	if len(files) < 10 {
		t.Fatalf("pieces %v", files)
	}
	for _, f := range append(files, filepath.Join(dir, "split.json"), filepath.Join(dir, "split.xlsx")) {
		if bytes.Contains(readBytes(t, f), []byte("STUDYID")) {
			t.Errorf("%s holds a study id", f)
		}
	}
	// Read once (--split): the same members, and no study id in the split step's pieces either.
	once := filepath.Join(dir, "once")
	mustRun(t, append(append([]string{"shard", "run", in, "--shards", "3", "--split", "--pieces", once}, out("once")...), common...)...)
	if !bytes.Equal(readBytes(t, filepath.Join(dir, "once.csv")), one) {
		t.Error("members of the run read once differ from one machine's")
	}
	onceFiles, _ := filepath.Glob(filepath.Join(once, "*"))
	if censuses, _ := filepath.Glob(filepath.Join(once, "census-*")); len(censuses) > 0 || len(onceFiles) < 10 {
		t.Fatalf("the run read once left %v", onceFiles)
	}
	for _, f := range onceFiles {
		if bytes.Contains(readBytes(t, f), []byte("STUDYID")) {
			t.Errorf("%s holds a study id", f)
		}
	}
	// A sample step that reads the inputs again, without the key, is refused.
	env, _, errb := testEnv()
	code := run(context.Background(), env, []string{"shard", "sample", "--plan", filepath.Join(pieces, "plan.piece"), "--shard", "1/3", "--piece", filepath.Join(dir, "s.piece")})
	if code != 2 || !strings.Contains(errb.String(), "the census replaced the participant ids by pseudonyms: give --windows-file with the census's windows file") {
		t.Errorf("exit %d: %s", code, errb)
	}
}

// The split step draws every shard's sample as it writes the windows files: its sample pieces
// are byte for byte those the sample step writes from the plan and a windows file, and the fit
// step takes them as made from the plan.
func TestSplitDrawsTheSampleStepsPieces(t *testing.T) {
	t.Parallel()
	dir := t.TempDir()
	in := filepath.Join(dir, "c.csv")
	if _, err := synth.WriteFile(in, synth.Options{Participants: 30, Windows: 150, Seed: 4}); err != nil {
		t.Fatal(err)
	}
	p := func(name string) string { return filepath.Join(dir, name+".piece") }
	mustRun(t, "shard", "split", in, "--shards", "3", "--piece", p("plan"), "--states", "3", "--bootstrap", "2", "--quiet")
	var samples []string
	for i := 1; i <= 3; i++ {
		mustRun(t, "shard", "sample", "--plan", p("plan"), "--windows-file", p(fmt.Sprintf("windows-%d", i)), "--shard", fmt.Sprintf("%d/3", i), "--piece", p(fmt.Sprintf("drawn-%d", i)), "--quiet")
		split, drawn := readBytes(t, p(fmt.Sprintf("sample-%d", i))), readBytes(t, p(fmt.Sprintf("drawn-%d", i)))
		if !bytes.Equal(split, drawn) {
			t.Errorf("shard %d: the split step's sample piece (%d bytes) differs from the sample step's (%d bytes)", i, len(split), len(drawn))
		}
		samples = append(samples, p(fmt.Sprintf("sample-%d", i)))
	}
	mustRun(t, append(append([]string{"shard", "fit", "--plan", p("plan")}, samples...), "--piece", p("fit"), "--quiet")...)
}
