package main

import (
	"path/filepath"
	"regexp"
	"strings"
	"testing"

	"github.com/xuri/excelize/v2"

	"github.com/cohortmix/cohortmix/cohort/synth"
)

// The workbook a clinician is handed reads without the analyst: a Summary in plain words with a
// guide to every sheet, units on bout lengths (minutes from the ISO-8601 times of the order
// column), p-values as "<0.001", thousands separators, a repeated header row and a footer on
// every printed sheet, a title on every chart axis, and no sentence with an empty piece
// (planted structure: synth seed 31, with times and labels).
func TestWorkbookReadsForClinicians(t *testing.T) {
	t.Parallel()
	dir := t.TempDir()
	in := filepath.Join(dir, "c.csv")
	if _, err := synth.WriteFile(in, synth.Options{Participants: 60, Windows: 400, Seed: 31, Times: true, Labels: true}); err != nil {
		t.Fatal(err)
	}
	out := filepath.Join(dir, "r.xlsx")
	mustRun(t, "group", in, "--label", "activity", "--out", out, "--states", "5", "--groups", "3")
	f, err := excelize.OpenFile(out)
	if err != nil {
		t.Fatal(err)
	}
	defer f.Close()
	summary := sheetText(t, out, "Summary")
	for _, want := range []string{"In short", "60 participants were grouped into ", "The sheets of this workbook", "Window length|1m0s (from the order column's times)", " min against ", "mostly labelled "} {
		if !strings.Contains(summary, want) {
			t.Errorf("Summary lacks %q:\n%s", want, summary)
		}
	}
	for _, line := range strings.Split(summary, "\n") {
		if emptyFragment.MatchString(line) {
			t.Errorf("Summary line with an empty fragment: %q", line)
		}
	}
	for _, jargon := range []string{"ward-hellinger", "criterion for groups", "Options"} {
		if strings.Contains(summary, jargon) {
			t.Errorf("Summary shows the code %q; codes belong on Settings", jargon)
		}
	}
	for _, sheet := range f.GetSheetList() {
		if strings.Contains(summary, "\n"+sheet+"|") == false {
			t.Errorf("the guide on the Summary does not list the sheet %q", sheet)
		}
	}
	head, _ := f.GetRows("Participants")
	// Bouts in one unit (issue 29: given twice, the sheet printed at about 5 pt).
	if hs := strings.Join(head[0], "|"); strings.Contains(hs, "bout S1 (windows)") || !strings.Contains(hs, "bout S1 (min)") {
		t.Errorf("Participants header should give bout lengths in minutes alone: %v", head[0])
	}
	// Formats: p below 0.001 as text, integers with thousands separators.
	zipText := string(readZipText(t, out))
	if !strings.Contains(zipText, `formatCode="[&lt;0.001]&#34;&lt;0.001&#34;;0.000"`) {
		t.Error("no p-value format that shows <0.001")
	}
	if quality := sheetText(t, out, "Data quality"); !strings.Contains(quality, "windows in|24,000") {
		t.Errorf("window counts without thousands separators:\n%.300s", quality)
	}
	// Print: every sheet has a footer; sheets with a column header repeat it on every page.
	if n := strings.Count(zipText, "<oddFooter>"); n != len(f.GetSheetList()) {
		t.Errorf("%d footers for %d sheets", n, len(f.GetSheetList()))
	}
	for _, sheet := range []string{"Participants", "Group profiles", "Separating variables", "Definitions"} {
		if !regexp.MustCompile(`name="_xlnm.Print_Titles">&#39;` + regexp.QuoteMeta(sheet) + `&#39;!\$\d+:\$\d+<`).MatchString(zipText) {
			t.Errorf("%s repeats no header row when printed", sheet)
		}
	}
	// Charts: every axis has a title.
	charts, titled := strings.Count(zipText, "<catAx>")+strings.Count(zipText, "<valAx>"), 0
	for _, axis := range regexp.MustCompile(`(?s)<(catAx|valAx)>.*?</(catAx|valAx)>`).FindAllString(zipText, -1) {
		if strings.Contains(axis, "<title>") {
			titled++
		}
	}
	if charts == 0 || titled != charts {
		t.Errorf("%d of %d chart axes have a title", titled, charts)
	}
}
