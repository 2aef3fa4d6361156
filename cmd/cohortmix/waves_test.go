package main

import (
	"bytes"
	"context"
	"encoding/csv"
	"fmt"
	"os"
	"path/filepath"
	"slices"
	"strconv"
	"strings"
	"testing"
	"time"

	"github.com/xuri/excelize/v2"

	"github.com/cohortmix/cohortmix/cluster"
	"github.com/cohortmix/cohortmix/cohort/modelfile"
	"github.com/cohortmix/cohortmix/cohort/synth"
)

// readMembers returns participant → group from a members CSV.
func readMembers(t *testing.T, path string) map[string]string {
	t.Helper()
	f, err := os.Open(path)
	if err != nil {
		t.Fatal(err)
	}
	defer f.Close()
	recs, err := csv.NewReader(f).ReadAll()
	if err != nil {
		t.Fatal(err)
	}
	out := map[string]string{}
	for _, r := range recs[1:] {
		out[r[0]] = r[2]
	}
	return out
}

func mustRun(t *testing.T, args ...string) string {
	t.Helper()
	env, out, errb := testEnv()
	if code := run(context.Background(), env, args); code != 0 {
		t.Fatalf("cohortmix %s: exit %d: %s", strings.Join(args, " "), code, errb)
	}
	return out.String()
}

func plantedAgreement(truth []synth.Truth, members map[string]string) float64 {
	var a, b []int
	names := map[string]int{}
	for _, tr := range truth {
		g, ok := members[tr.ID]
		if !ok || g == "" {
			continue
		}
		if _, ok := names[g]; !ok {
			names[g] = len(names)
		}
		a, b = append(a, tr.Group), append(b, names[g])
	}
	ari, _ := cluster.AdjustedRand(a, b)
	return ari
}

func TestTwoEnrolmentWaves(t *testing.T) {
	t.Parallel()
	dir := t.TempDir()
	w1, w2 := filepath.Join(dir, "wave1.csv"), filepath.Join(dir, "wave2.csv")
	// Planted structure: one invented cohort enrolled in two halves (synth, same seed).
	if _, err := synth.WriteFile(w1, synth.Options{Participants: 90, Windows: 800, Seed: 21}); err != nil {
		t.Fatal(err)
	}
	truth2, err := synth.WriteFile(w2, synth.Options{Participants: 90, Windows: 800, Seed: 21, FirstID: 90})
	if err != nil {
		t.Fatal(err)
	}
	model := filepath.Join(dir, "model.json")
	m1 := filepath.Join(dir, "m1.csv")
	mustRun(t, "group", w1, "--out", filepath.Join(dir, "w1.xlsx"), "--model", model, "--members", m1)

	t.Run("assign places the second wave", func(t *testing.T) {
		m2 := filepath.Join(dir, "m2.csv")
		out := mustRun(t, "assign", "--model", model, w2, "--out", filepath.Join(dir, "w2.xlsx"), "--members", m2)
		if ari := plantedAgreement(truth2, readMembers(t, m2)); ari < 0.9 {
			t.Errorf("second wave ARI %.3f against the planted groups, want ≥ 0.9\n%s", ari, out)
		}
		f, err := excelize.OpenFile(filepath.Join(dir, "w2.xlsx"))
		if err != nil {
			t.Fatal(err)
		}
		defer f.Close()
		rows, _ := f.GetRows("Changes")
		if len(rows) < 90 || !strings.Contains(flattenRows(rows), "new participant") {
			t.Errorf("changes sheet lacks the new participants:\n%s", flattenRows(rows[:min(8, len(rows))]))
		}
	})
	t.Run("refresh keeps the names of returning participants", func(t *testing.T) {
		m3 := filepath.Join(dir, "m3.csv")
		mustRun(t, "refresh", "--previous", model, w1, w2, "--out", filepath.Join(dir, "refresh.xlsx"), "--members", m3)
		if frac := sameGroupShare(readMembers(t, m1), readMembers(t, m3)); frac < 0.9 {
			t.Errorf("%.0f%% of returning participants kept their group name, want ≥ 90%%", 100*frac)
		}
	})
}

// sameGroupShare is the share of the participants in before whose group in after has the same
// name.
func sameGroupShare(before, after map[string]string) float64 {
	same := 0
	for id, g := range before {
		if after[id] == g {
			same++
		}
	}
	return float64(same) / float64(len(before))
}

func flattenRows(rows [][]string) string {
	var b strings.Builder
	for _, r := range rows {
		b.WriteString(strings.Join(r, "|") + "\n")
	}
	return b.String()
}

func TestRefreshReportsGoneAndNewGroups(t *testing.T) {
	t.Parallel()
	// Member 20 of the scenario family (a tuning seed: four planted groups of six states): the
	// first cohort holds planted groups 0, 1 and 2; later the group the first run made of most of
	// planted group 2 has left, whole (so that a participant the first run put there by mistake
	// does not return to it), and planted group 3 has enrolled.
	dir := t.TempDir()
	all := filepath.Join(dir, "all.csv")
	truth, err := synth.WriteFile(all, synth.Options{Scenario: 20, Seed: 20, Participants: 160, Windows: 1000})
	if err != nil {
		t.Fatal(err)
	}
	group := map[string]int{}
	for _, tr := range truth {
		group[tr.ID] = tr.Group
	}
	b, _ := os.ReadFile(all)
	lines := strings.Split(strings.TrimSpace(string(b)), "\n")
	// keep writes the rows of the participants whose id is in.
	keep := func(name string, in func(id string) bool) string {
		var w strings.Builder
		w.WriteString(lines[0] + "\n")
		for _, line := range lines[1:] {
			id, _, _ := strings.Cut(line, ",")
			if in(id) {
				w.WriteString(line + "\n")
			}
		}
		p := filepath.Join(dir, name)
		os.WriteFile(p, []byte(w.String()), 0o644)
		return p
	}
	first := keep("first.csv", func(id string) bool { return group[id] <= 2 })
	model, members := filepath.Join(dir, "model.json"), filepath.Join(dir, "first-members.csv")
	mustRun(t, "group", first, "--out", filepath.Join(dir, "first.xlsx"), "--model", model, "--members", members)
	found := readMembers(t, members)
	votes := map[string]int{}
	for id, g := range found {
		if group[id] == 2 {
			votes[g]++
		}
	}
	leaving := ""
	for g, v := range votes {
		if leaving == "" || v > votes[leaving] || v == votes[leaving] && g < leaving {
			leaving = g
		}
	}
	later := keep("later.csv", func(id string) bool { g, ok := found[id]; return ok && g != leaving })
	newcomers := keep("new.csv", func(id string) bool { return group[id] == 3 })
	out := mustRun(t, "refresh", "--previous", model, later, newcomers, "--out", filepath.Join(dir, "later.xlsx"))
	f, err := excelize.OpenFile(filepath.Join(dir, "later.xlsx"))
	if err != nil {
		t.Fatal(err)
	}
	defer f.Close()
	rows, _ := f.GetRows("Changes")
	var gone, fresh int
	for _, r := range rows {
		if len(r) > 1 && r[1] == "gone" {
			gone++
		}
		if len(r) > 1 && r[1] == "new" {
			fresh++
		}
	}
	if gone != 1 || fresh != 1 {
		t.Errorf("%d groups gone and %d new, want 1 and 1:\n%s\n%s", gone, fresh, out, flattenRows(rows[:min(12, len(rows))]))
	}
}

func TestAssignRefusesAMissingFeature(t *testing.T) {
	t.Parallel()
	dir := t.TempDir()
	w1 := filepath.Join(dir, "w1.csv")
	synth.WriteFile(w1, synth.Options{Participants: 30, Windows: 300, Seed: 4})
	model := filepath.Join(dir, "model.json")
	mustRun(t, "group", w1, "--out", filepath.Join(dir, "w1.xlsx"), "--model", model, "--groups", "3", "--states", "5")
	b, _ := os.ReadFile(w1)
	lines := strings.Split(strings.TrimSpace(string(b)), "\n")
	var cut strings.Builder
	for _, l := range lines {
		f := strings.Split(l, ",")
		cut.WriteString(strings.Join(append(f[:10:10], f[11:]...), ",") + "\n") // drop vm_peak
	}
	w2 := filepath.Join(dir, "w2.csv")
	os.WriteFile(w2, []byte(cut.String()), 0o644)
	env, _, errb := testEnv()
	code := run(context.Background(), env, []string{"assign", "--model", model, w2, "--out", filepath.Join(dir, "w2.xlsx")})
	if code != 1 || !strings.Contains(errb.String(), "feature vm_peak, which the model needs, is not in the input") {
		t.Errorf("exit %d: %s", code, errb)
	}
}

// Refreshing a model on the very data it was fitted on changes nothing: every participant keeps
// its group's name (planted structure: synth seed 21).
func TestRefreshOnTheSameDataKeepsEveryGroup(t *testing.T) {
	t.Parallel()
	dir := t.TempDir()
	in := filepath.Join(dir, "c.csv")
	if _, err := synth.WriteFile(in, synth.Options{Participants: 90, Windows: 800, Seed: 21}); err != nil {
		t.Fatal(err)
	}
	model, m1, m2 := filepath.Join(dir, "model.json"), filepath.Join(dir, "m1.csv"), filepath.Join(dir, "m2.csv")
	mustRun(t, "group", in, "--out", filepath.Join(dir, "a.xlsx"), "--model", model, "--members", m1)
	out := mustRun(t, "refresh", "--previous", model, in, "--out", filepath.Join(dir, "b.xlsx"), "--members", m2)
	before, after := readMembers(t, m1), readMembers(t, m2)
	for id, g := range before {
		if after[id] != g {
			t.Fatalf("%s was in %s and is in %s after a refresh on the same data:\n%s", id, g, after[id], out)
		}
	}
}

// The model keeps what the align step turned with the axis means (normalize.FindTurned), and a
// frozen model turns it alike: assign on the cohort the model was fitted on puts the
// participants in the groups the fit gave them. Planted structure: member 20 of the scenario family,
// with devices turned on the wrist.
func TestModelKeepsTheTurnedFeatures(t *testing.T) {
	t.Parallel()
	dir := t.TempDir()
	input := filepath.Join(dir, "c.csv")
	if _, err := synth.WriteFile(input, synth.Options{Scenario: 20, Seed: 20, Participants: 80, Windows: 600}); err != nil {
		t.Fatal(err)
	}
	model, m1, m2 := filepath.Join(dir, "model.json"), filepath.Join(dir, "m1.csv"), filepath.Join(dir, "m2.csv")
	mustRun(t, "group", input, "--out", filepath.Join(dir, "g.xlsx"), "--model", model, "--members", m1)
	m, err := modelfile.ReadFile(model)
	if err != nil {
		t.Fatal(err)
	}
	tu := m.Normalize.Turned
	name := func(j int) string { return m.Features[j] }
	if tu == nil || len(tu.SD) != 3 || name(tu.SD[0]) != "sd_x" || name(tu.Cor[2]) != "cor_yz" || len(tu.Angles) != 1 || name(tu.Angles[0].Column) != "tilt_deg" {
		t.Fatalf("model's turned features %+v, want sd_x…, cor_…yz and tilt_deg", tu)
	}
	if f := m.NormFit(); f.Turned == nil || len(f.Turned.Angles) != 1 {
		t.Fatalf("the frozen normalization turns %+v, want what the model keeps", f.Turned)
	}
	mustRun(t, "assign", "--model", model, input, "--out", filepath.Join(dir, "a.xlsx"), "--members", m2)
	// Assign places each participant at its nearest group centre while Ward's cut need not, so a
	// few on the edge of a group may land in the next one.
	if frac := sameGroupShare(readMembers(t, m1), readMembers(t, m2)); frac < 0.9 {
		t.Errorf("assign with the frozen model put %.0f%% of the participants in the group the fit gave them, want ≥ 90%%", 100*frac)
	}
}

// Issue 29: assign had no --id, yet its error said "pass --id": a later wave whose id column
// was renamed could not be placed without editing the file.
func TestAssignReadsARenamedIDColumn(t *testing.T) {
	t.Parallel()
	dir := t.TempDir()
	in := writeFile(t, dir, "w1.csv", cohortText(8, 60))
	model := filepath.Join(dir, "m.json")
	mustRun(t, "group", in, "--out", filepath.Join(dir, "w1.xlsx"), "--model", model, "--quiet")
	w2 := writeFile(t, dir, "w2.csv", strings.Replace(cohortText(8, 60), "participant,", "subject,", 1))
	env, _, errb := testEnv()
	if code := run(context.Background(), env, []string{"assign", "--model", model, w2, "--out", filepath.Join(dir, "x.xlsx")}); code != 1 || !strings.Contains(errb.String(), "pass --id with one of: subject") {
		t.Errorf("without --id: exit %d, %s", code, errb)
	}
	mustRun(t, "assign", "--model", model, w2, "--id", "subject", "--out", filepath.Join(dir, "w2.xlsx"), "--members", filepath.Join(dir, "w2.csv.members"), "--quiet")
	if b, _ := os.ReadFile(filepath.Join(dir, "w2.csv.members")); !strings.Contains(string(b), "\nPA,") {
		t.Errorf("members: %s", b)
	}
	env, _, errb = testEnv()
	if code := run(context.Background(), env, []string{"assign", "--model", model, w2, "--id", "subject", "--missing", "guess", "--out", filepath.Join(dir, "y.xlsx")}); code != 2 || !strings.Contains(errb.String(), `--missing "guess": use drop or impute`) {
		t.Errorf("a bad --missing: exit %d, %s", code, errb)
	}
}

// Issue 30: non-wear was never recognised. With --non-wear troiano, the windows of 60 minutes or
// more of zero counts are left out and counted, the workbook says so, and the model keeps the
// rule for later waves.
func TestNonWearIsLeftOut(t *testing.T) {
	t.Parallel()
	dir := t.TempDir()
	var b strings.Builder
	b.WriteString("participant,window,counts,vm_sd\n")
	t0 := time.Date(2026, 3, 2, 8, 0, 0, 0, time.UTC)
	for p := 0; p < 12; p++ {
		for i := 0; i < 400; i++ {
			c, sd := 40+(i*7+p)%300, 0.01+float64((i*3+p)%50)/100
			if p%3 == 0 && i >= 100 && i < 220 { // two hours off the wrist
				c, sd = 0, 0.001
			}
			fmt.Fprintf(&b, "P%d,%s,%d,%.3f\n", p, t0.Add(time.Duration(i)*time.Minute).Format(time.RFC3339), c, sd)
		}
	}
	in := writeFile(t, dir, "c.csv", b.String())
	model := filepath.Join(dir, "m.json")
	mustRun(t, "group", in, "--non-wear", "troiano", "--valid-day", "none", "--out", filepath.Join(dir, "r.xlsx"), "--model", model, "--members", filepath.Join(dir, "m.csv"), "--states", "3", "--quiet")
	// A run split in shards leaves out the same windows and gives the same members and sheet.
	mustRun(t, "shard", "run", in, "--shards", "2", "--non-wear", "troiano", "--valid-day", "none", "--out", filepath.Join(dir, "s.xlsx"), "--members", filepath.Join(dir, "s.csv"), "--states", "3", "--quiet")
	if a, b := readBytes(t, filepath.Join(dir, "m.csv")), readBytes(t, filepath.Join(dir, "s.csv")); !bytes.Equal(a, b) {
		t.Error("the split run's members differ")
	}
	if a, b := sheetText(t, filepath.Join(dir, "r.xlsx"), "Participants"), sheetText(t, filepath.Join(dir, "s.xlsx"), "Participants"); a != b {
		t.Error("the split run's Participants sheet differs")
	}
	if quality := sheetText(t, filepath.Join(dir, "r.xlsx"), "Data quality"); !strings.Contains(quality, "480 windows of the participants kept fell in non-wear periods") {
		t.Errorf("the workbook does not say what was left out as non-wear:\n%.1500s", quality)
	}
	if parts := sheetText(t, filepath.Join(dir, "r.xlsx"), "Participants"); !strings.Contains(parts, "non-wear windows left out") || !strings.Contains(parts, "|120|") {
		t.Errorf("the Participants sheet does not give each one's non-wear windows:\n%.600s", parts)
	}
	if m, _ := os.ReadFile(model); !strings.Contains(string(m), `"NonWear": "troiano"`) {
		t.Error("the model does not keep the non-wear rule")
	}
	env, _, errb := testEnv()
	if code := run(context.Background(), env, []string{"group", in, "--non-wear", "sleep", "--out", filepath.Join(dir, "x.xlsx")}); code != 2 || !strings.Contains(errb.String(), `--non-wear "sleep": use auto, choi, troiano or none`) {
		t.Errorf("an unknown rule: exit %d, %s", code, errb)
	}
}

// Issue 30, point 7: with times over two days or more, the Participants sheet gives each
// participant's rest-activity measures (values checked against numpy in profile).
func TestRhythmOnTheParticipantsSheet(t *testing.T) {
	t.Parallel()
	dir := t.TempDir()
	in := filepath.Join(dir, "c.csv")
	if _, err := synth.WriteFile(in, synth.Options{Participants: 12, Windows: 3000, Seed: 7, Times: true}); err != nil {
		t.Fatal(err)
	}
	out := filepath.Join(dir, "r.xlsx")
	mustRun(t, "group", in, "--out", out, "--states", "4", "--groups", "2", "--quiet")
	f, err := excelize.OpenFile(out)
	if err != nil {
		t.Fatal(err)
	}
	defer f.Close()
	rows, _ := f.GetRows("Participants")
	col := slices.Index(rows[0], "interdaily stability (IS)")
	if col < 0 || slices.Index(rows[0], "relative amplitude (RA)") < 0 {
		t.Fatalf("no rhythm columns in %v", rows[0])
	}
	for _, r := range rows[1:] {
		if v, err := strconv.ParseFloat(r[col], 64); err != nil || v < 0 || v > 1 {
			t.Errorf("%s: IS %q", r[0], r[col])
		}
	}
	if sep := sheetText(t, out, "Separating variables"); !strings.Contains(sep, "interdaily stability (IS)") {
		t.Errorf("the rest-activity measures are not among the separating variables:\n%.800s", sep)
	}
}
