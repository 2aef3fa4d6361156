package main

import (
	"bytes"
	"context"
	"encoding/csv"
	"os"
	"path/filepath"
	"strconv"
	"strings"
	"testing"
	"time"

	"github.com/cohortmix/cohortmix/cohort/job"

	"github.com/spf13/cobra"
	"github.com/xuri/excelize/v2"

	"github.com/cohortmix/cohortmix/cluster"
	"github.com/cohortmix/cohortmix/cohort/group"
	"github.com/cohortmix/cohortmix/cohort/synth"
	"github.com/cohortmix/cohortmix/normalize"
)

func testEnv() (*Env, *bytes.Buffer, *bytes.Buffer) {
	out, errb := &bytes.Buffer{}, &bytes.Buffer{}
	return &Env{IO: IO{In: strings.NewReader(""), Out: out, Err: errb}}, out, errb
}

// plantedARI runs the analysis on a demo-like planted cohort and compares with the planted groups.
func plantedARI(t *testing.T, within normalize.Within, so synth.Options) float64 {
	t.Helper()
	path := filepath.Join(t.TempDir(), "cohort.csv")
	truth, err := synth.WriteFile(path, so)
	if err != nil {
		t.Fatal(err)
	}
	res, err := job.Analyze(context.Background(), job.Options{Inputs: []string{path}, Norm: normalize.Options{Within: within},
		States: rangeOf(2, 10), Groups: rangeOf(2, 8), Method: group.WardHellinger, Criterion: group.ByGap, Bootstrap: 20, Seed: 1})
	if err != nil {
		t.Fatal(err)
	}
	want, got := make([]int, len(truth)), make([]int, len(truth))
	for i, tr := range truth {
		want[i], got[i] = tr.Group, res.Units[i].Group
	}
	ari, _ := cluster.AdjustedRand(got, want)
	return ari
}

func rangeOf(a, b int) []int {
	var out []int
	for k := a; k <= b; k++ {
		out = append(out, k)
	}
	return out
}

func TestDemoRecoversPlantedGroups(t *testing.T) {
	t.Parallel()
	// Planted structure (synth): three groups, device offsets of s.d. 0.35 g, Dirichlet spread.
	for _, seed := range []uint64{1, 2, 3} {
		so := synth.Options{Seed: seed}
		with := plantedARI(t, normalize.WithinRest, so)
		without := plantedARI(t, normalize.WithinNone, so)
		t.Logf("seed %d: ARI %.3f with the rest baseline, %.3f without", seed, with, without)
		if with < 0.9 {
			t.Errorf("seed %d: ARI %.3f with the within-participant step, want ≥ 0.9", seed, with)
		}
		if without > with-0.2 {
			t.Errorf("seed %d: ARI %.3f without the within-participant step is not visibly worse than %.3f", seed, without, with)
		}
	}
}

func TestDemoCommand(t *testing.T) {
	t.Parallel()
	env, out, errb := testEnv()
	dir := t.TempDir()
	if code := run(context.Background(), env, []string{"demo", "--dir", dir, "--participants", "60", "--windows", "400"}); code != 0 {
		t.Fatalf("exit %d: %s", code, errb)
	}
	for _, name := range []string{"demo-cohort.csv", "demo-planted-groups.csv", "demo-results.xlsx", "demo-members.csv", "demo-model.json"} {
		if _, err := os.Stat(filepath.Join(dir, name)); err != nil {
			t.Errorf("demo did not write %s", name)
		}
	}
	if !strings.Contains(out.String(), "adjusted Rand index") {
		t.Errorf("demo output lacks the comparison with the planted groups:\n%s", out)
	}
	// A second run refuses to overwrite without --force and leaves the files alone.
	before, _ := os.ReadFile(filepath.Join(dir, "demo-results.xlsx"))
	env2, _, errb2 := testEnv()
	if code := run(context.Background(), env2, []string{"demo", "--dir", dir}); code != 1 || !strings.Contains(errb2.String(), "--force") {
		t.Errorf("second demo: exit %d, %q; want 1 naming --force", code, errb2)
	}
	after, _ := os.ReadFile(filepath.Join(dir, "demo-results.xlsx"))
	if !bytes.Equal(before, after) {
		t.Error("a refused run changed the existing workbook")
	}
}

func writeFile(t *testing.T, dir, name, content string) string {
	t.Helper()
	p := filepath.Join(dir, name)
	if err := os.WriteFile(p, []byte(content), 0o644); err != nil {
		t.Fatal(err)
	}
	return p
}

// cohortText is a small valid cohort: n participants × w windows of two features.
func cohortText(n, w int) string {
	var b strings.Builder
	b.WriteString("participant,window,f1,f2\n")
	for p := 0; p < n; p++ {
		for i := 0; i < w; i++ {
			b.WriteString("P" + string(rune('A'+p)) + "," + itoa(i) + "," + itoa((i*7+p*3)%11) + "." + itoa(p%10) + "," + itoa((i*3+p)%5) + ".5\n")
		}
	}
	return b.String()
}

func itoa(i int) string { return strconv.Itoa(i) }

func TestGroupErrors(t *testing.T) {
	t.Parallel()
	dir := t.TempDir()
	good := cohortText(6, 30)
	cases := []struct {
		name, content string
		args          []string
		want          string // the one line users see, after "cohortmix: "
	}{
		{"missing id column", strings.Replace(good, "participant,", "subject,", 1), nil,
			`missing.csv:1: no column "participant" (the id); pass --id with one of: subject, window, f1, f2`},
		{"non-numeric cell", strings.Replace(good, "PA,3,", "PA,3,x", 1), nil,
			`nonnum.csv:5:6: f1: "x10.0" is not a number; feature cells hold numbers, or are empty or NA when missing (leave text columns out with --features)`},
		{"ragged row", strings.Replace(good, "PB,0,3.1,1.5\n", "PB,0,3.1\n", 1), nil,
			`ragged.csv:32: row has a different number of fields than the header; fix the row or quote fields that contain the delimiter`},
		{"empty file", "", nil, `empty.csv: file is empty; it needs a header row and at least one window`},
		{"too many groups", good, []string{"--groups", "6-8"}, // 2-8 would try 2-5, with a note
			`groups.csv: --groups asks for 6 or more groups but 6 participants are grouped: too few participants; lower --groups to at most 5`},
	}
	files := map[string]string{"missing id column": "missing.csv", "non-numeric cell": "nonnum.csv", "ragged row": "ragged.csv", "empty file": "empty.csv", "too many groups": "groups.csv"}
	for _, c := range cases {
		t.Run(c.name, func(t *testing.T) {
			in := writeFile(t, dir, files[c.name], c.content)
			out := filepath.Join(dir, files[c.name]+".xlsx")
			env, _, errb := testEnv()
			args := append([]string{"group", in, "--out", out, "--states", "2-3", "--min-windows", "5"}, c.args...)
			code := run(context.Background(), env, args)
			if code != 1 {
				t.Errorf("exit %d, want 1", code)
			}
			msg := strings.TrimSpace(errb.String())
			want := "cohortmix: " + filepath.Join(dir, c.want)
			if msg != want {
				t.Errorf("message\n got %q\nwant %q", msg, want)
			}
			if strings.Count(msg, "\n") != 0 || strings.Contains(msg, "goroutine") {
				t.Errorf("not one line: %q", msg)
			}
			if _, err := os.Stat(out); err == nil {
				t.Error("an output file was left behind")
			}
		})
	}
}

func TestExclusionsAndAccounting(t *testing.T) {
	t.Parallel()
	dir := t.TempDir()
	path := filepath.Join(dir, "cohort.csv")
	if _, err := synth.WriteFile(path, synth.Options{Participants: 40, Windows: 300, Seed: 5}); err != nil {
		t.Fatal(err)
	}
	// Add a constant feature and a participant with too few windows.
	b, _ := os.ReadFile(path)
	lines := strings.Split(strings.TrimSpace(string(b)), "\n")
	var sb strings.Builder
	for i, l := range lines {
		if i == 0 {
			sb.WriteString(l + ",battery\n")
		} else {
			sb.WriteString(l + ",1\n")
		}
	}
	for i := 0; i < 5; i++ {
		sb.WriteString(strings.Replace(lines[1], "P1,0,", "SHORT,"+itoa(i)+",", 1) + ",1\n")
	}
	if err := os.WriteFile(path, []byte(sb.String()), 0o644); err != nil {
		t.Fatal(err)
	}
	out := filepath.Join(dir, "r.xlsx")
	members := filepath.Join(dir, "m.csv")
	env, _, errb := testEnv()
	if code := run(context.Background(), env, []string{"group", path, "--out", out, "--members", members, "--states", "5", "--groups", "3"}); code != 0 {
		t.Fatalf("exit %d: %s", code, errb)
	}
	f, err := excelize.OpenFile(out)
	if err != nil {
		t.Fatal(err)
	}
	defer f.Close()
	rows, _ := f.GetRows("Data quality")
	text := ""
	for _, r := range rows {
		text += strings.Join(r, "|") + "\n"
	}
	for _, want := range []string{"SHORT||5||5 usable windows, fewer than the minimum 20 (--min-windows)", "battery||||constant (1 in every window)", "participants in|41", "participants grouped|40", "participants excluded|1", "windows in|12,005", "windows of excluded participants|5"} {
		if !strings.Contains(text, want) {
			t.Errorf("quality sheet lacks %q:\n%s", want, text)
		}
	}
	mf, _ := os.Open(members)
	recs, _ := csv.NewReader(mf).ReadAll()
	mf.Close()
	if len(recs) != 42 { // header + 40 grouped + 1 excluded
		t.Errorf("members CSV has %d rows, want 42 (every participant once)", len(recs))
	}
	part, _ := f.GetRows("Participants")
	if len(part) != 41 {
		t.Errorf("participants sheet has %d rows, want header + 40", len(part))
	}
}

func TestSameResultWhateverTheWorkers(t *testing.T) {
	t.Parallel()
	path := filepath.Join(t.TempDir(), "c.csv")
	if _, err := synth.WriteFile(path, synth.Options{Participants: 60, Windows: 400, Seed: 9}); err != nil {
		t.Fatal(err)
	}
	var first []int
	for _, w := range []int{1, 2, 4} {
		res, err := job.Analyze(context.Background(), job.Options{Inputs: []string{path}, Norm: normalize.Options{Within: normalize.WithinRest},
			States: rangeOf(3, 7), Groups: rangeOf(2, 5), Seed: 3, Workers: w, Bootstrap: 10})
		if err != nil {
			t.Fatal(err)
		}
		got := make([]int, len(res.Units))
		for i, u := range res.Units {
			got[i] = u.Group
		}
		if first == nil {
			first = got
			continue
		}
		for i := range got {
			if got[i] != first[i] {
				t.Fatalf("workers %d: participant %d in group %d, with 1 worker %d", w, i, got[i], first[i])
			}
		}
	}
}

func fixedNow() time.Time { return time.Date(2026, 12, 2, 9, 0, 0, 0, time.UTC) }

// defaultFlags are the flag defaults, as a user who passes none gets them.
func defaultFlags() mainFlags {
	var m mainFlags
	m.register(&cobra.Command{})
	return m
}

// Every participant and window that comes in is accounted for, in the workbook and the members
// CSV, on several generated cohorts with missing cells and short participants.
func TestAccountingOnGeneratedCohorts(t *testing.T) {
	t.Parallel()
	for _, seed := range []uint64{41, 42, 43} {
		for _, missing := range []string{"drop", "impute"} {
			dir := t.TempDir()
			path := filepath.Join(dir, "c.csv")
			if _, err := synth.WriteFile(path, synth.Options{Participants: 30 + int(seed%3)*5, Windows: 200, Seed: seed}); err != nil {
				t.Fatal(err)
			}
			b, _ := os.ReadFile(path)
			lines := strings.Split(strings.TrimSpace(string(b)), "\n")
			var sb strings.Builder
			blanked := 0
			for i, l := range lines {
				if i > 0 && (i*int(seed))%97 == 0 { // blank a feature cell now and then
					f := strings.Split(l, ",")
					f[3+i%5] = "NA"
					l = strings.Join(f, ",")
					blanked++
				}
				sb.WriteString(l + "\n")
			}
			short := int(seed % 4)
			for p := 0; p < short; p++ {
				for w := 0; w < 5+p; w++ {
					sb.WriteString("S" + itoa(p) + "," + itoa(w) + strings.Repeat(",1.5", 12) + "\n")
				}
			}
			os.WriteFile(path, []byte(sb.String()), 0o644)
			out, members := filepath.Join(dir, "r.xlsx"), filepath.Join(dir, "m.csv")
			mustRun(t, "group", path, "--out", out, "--members", members, "--missing", missing, "--states", "5", "--groups", "3")
			f, err := excelize.OpenFile(out)
			if err != nil {
				t.Fatal(err)
			}
			rows, _ := f.GetRows("Data quality")
			f.Close()
			n := map[string]int{}
			for _, r := range rows {
				if len(r) >= 2 {
					if v, err := strconv.Atoi(strings.ReplaceAll(r[1], ",", "")); err == nil {
						n[r[0]] = v
					}
				}
			}
			if n["participants in"] != n["participants grouped"]+n["participants excluded"] || n["participants excluded"] != short {
				t.Errorf("seed %d %s: participants %v", seed, missing, n)
			}
			if n["windows in"] != n["windows used"]+n["windows dropped (missing cells)"]+n["windows of excluded participants"] || n["windows in"] != len(lines)-1+short*5+short*(short-1)/2 {
				t.Errorf("seed %d %s: windows %v", seed, missing, n)
			}
			if missing == "drop" && n["windows dropped (missing cells)"] != blanked || missing == "impute" && n["cells imputed"] != blanked {
				t.Errorf("seed %d %s: %d cells blanked, quality sheet %v", seed, missing, blanked, n)
			}
			mf, _ := os.Open(members)
			recs, _ := csv.NewReader(mf).ReadAll()
			mf.Close()
			excluded := 0
			for _, r := range recs[1:] {
				if strings.HasPrefix(r[5], "excluded: ") {
					excluded++
				}
			}
			if len(recs)-1 != n["participants in"] || excluded != short {
				t.Errorf("seed %d %s: members CSV has %d rows (%d excluded), %d participants came in", seed, missing, len(recs)-1, excluded, n["participants in"])
			}
		}
	}
}

func TestCheckCommand(t *testing.T) {
	t.Parallel()
	dir := t.TempDir()
	p := writeFile(t, dir, "c.csv", cohortText(4, 30)+"PZ,0,1.0,2.5\n")
	out := mustRun(t, "check", p)
	for _, want := range []string{"1 files", "121 windows: 120 usable, 0 dropped for missing cells, 0 left out as non-wear, 0 on days that were not valid, 1 in excluded participants", "5 participants: 4 usable, 1 excluded", "excluded PZ: 1 usable windows, fewer than the minimum 20"} {
		if !strings.Contains(out, want) {
			t.Errorf("check output lacks %q:\n%s", want, out)
		}
	}
}
