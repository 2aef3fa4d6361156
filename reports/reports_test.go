package reports

import (
	"archive/zip"
	"bytes"
	"encoding/csv"
	"encoding/json"
	"errors"
	"image/color"
	"image/png"
	"io"
	"io/fs"
	"math"
	"os"
	"path/filepath"
	"regexp"
	"slices"
	"sort"
	"strconv"
	"strings"
	"testing"
	"time"

	"github.com/cohortmix/cohortmix/cohort/note"

	"github.com/xuri/excelize/v2"
	"gonum.org/v1/gonum/mat"

	"github.com/cohortmix/cohortmix/cluster"
	"github.com/cohortmix/cohortmix/cohort"
	"github.com/cohortmix/cohortmix/cohort/group"
	"github.com/cohortmix/cohortmix/cohort/job"
	"github.com/cohortmix/cohortmix/cohort/modelfile"
	"github.com/cohortmix/cohortmix/cohort/scratch"
	"github.com/cohortmix/cohortmix/normalize"
	"github.com/cohortmix/cohortmix/profile"
)

// fixture is a small invented result with n participants in three groups and four states.
func fixture(t testing.TB, n int, id func(i int) string) *Result {
	t.Helper()
	k, g := 4, 3
	features := []string{"mean_x", "sd_x", "=formula_feature"}
	r := &Result{Tool: "cohortmix", Version: "test", Created: time.Date(2026, 12, 2, 9, 0, 0, 0, time.UTC), Command: "cohortmix group x.csv", Synthetic: true,
		Features: features, OrderKind: "integer",
		Files: []cohort.FileInfo{{Path: "x.csv", SHA256: strings.Repeat("ab", 32), Rows: n * 10}},
		Norm: &normalize.Fit{Features: features, Within: normalize.WithinRest, Touched: []bool{true, false, false}, TouchedBy: "offset detection (ICC ≥ 0.30)",
			Center: []float64{0, 0, 0}, Spread: []float64{1, 1, 1}, ICC: []float64{0.8, 0.1, 0.05}, ICCAfter: []float64{0.06, 0.1, 0.05}, QuietMid: []float64{0, 0, 0}, QuietScale: []float64{1, 1, 1}},
		States:     &profile.States{K: k, Centroids: mat.NewDense(k, 3, []float64{0, 0, 0, 1, 0, 0, 0, 1, 0, 0, 0, 1}), Rule: "fixed", Sampled: 100, Candidates: []profile.Candidate{{K: 3, Silhouette: 0.6, CalinskiHarabasz: 90, DaviesBouldin: 0.8}, {K: 4, Silhouette: 0.5, CalinskiHarabasz: 100, DaviesBouldin: 0.7}}},
		StateNames: []string{"S1", "S2", "S3", "S4"},
		GroupNames: []string{"G1", "G2", "G3"},
		Quality:    cohort.Quality{UnitsIn: n + 1, WindowsIn: n*10 + 3, WindowsExcluded: 3, Excluded: []cohort.Exclusion{{ID: "@excluded", Windows: 3, Reason: note.Note{Kind: cohort.ExcludedFewWindows, Ints: []int{3, 5, 0, 0}, Option: "cohort.ReadOptions.MinWindows"}}}},
		Settings:   []modelfile.Setting{{Name: "seed", Value: "1"}, {Name: "within-participant step", Value: "rest"}},
	}
	for s := 0; s < k; s++ {
		r.StateDesc = append(r.StateDesc, profile.Description{Mean: []float64{float64(s), 1, 2}, Share: 0.25, Drivers: []profile.Driver{{Feature: s % 3, Effect: 1.5 - float64(s)}}})
	}
	labels := make([]int, n)
	for i := 0; i < n; i++ {
		labels[i] = i % g
		share := []float64{0.1, 0.2, 0.3, 0.4}
		share[i%g] += 0.1
		share[3] -= 0.1
		r.Units = append(r.Units, job.UnitRow{ID: id(i), Windows: 10, Group: i % g, Silhouette: 0.3 + 0.001*float64(i%100), Distance: 0.1, Share: share, Bout: []float64{1, 2, 3, 4}})
	}
	tree := &cluster.Tree{N: g, Merges: []cluster.Merge{{A: 0, B: 1, Height: 1, Size: 2}, {A: 2, B: 3, Height: 2, Size: 3}}}
	r.Grouping = &group.Grouping{Method: group.WardHellinger, K: g, Labels: labels, Scores: []group.KScore{{K: 2, Silhouette: 0.2, Gap: 0.1, GapSE: 0.01, Stability: 0.9}, {K: 3, Silhouette: 0.3, Gap: 0.3, GapSE: 0.01, Stability: 0.8}},
		Centroids: [][]float64{{0.5, 0.5, 0.5, 0.5}, {0.4, 0.6, 0.5, 0.5}, {0.5, 0.4, 0.6, 0.5}}, CentroidTree: tree}
	r.Separations = []group.Separation{{Name: "share S1", Kind: "share", H: 10, P: 1e-5, Q: 2e-5, Epsilon2: 0.4, Median: []float64{1, 2, 3}, Q1: []float64{0, 1, 2}, Q3: []float64{2, 3, 4}, Delta: []float64{0.1, 0.2, -0.3}}}
	r.Warnings = []note.Note{{Kind: job.WarnMadeByMissing, Names: []string{"+a file name that looks like a formula"}}}
	return r
}

func TestWorkbookOpensWithSheetsFormatsAndCharts(t *testing.T) {
	t.Parallel()
	r := fixture(t, 30, func(i int) string {
		return []string{"=1+1", "+cmd", "-2", "@SUM(A1)", "P5"}[i%5] + strings.Repeat("x", i/5)
	})
	f, path := writeAndOpen(t, r)
	defer f.Close()
	want := []string{SheetSummary, SheetCharts, SheetDefinitions, SheetParticipants, SheetGroups, SheetSeparating, SheetStates, SheetChoice, SheetQuality, SheetSettings}
	if got := f.GetSheetList(); strings.Join(got, "|") != strings.Join(want, "|") {
		t.Fatalf("sheets %v, want %v", got, want)
	}
	head, _ := f.GetRows(SheetParticipants)
	if strings.Join(head[0][:8], "|") != "participant|wave|windows|group|probability of the group|silhouette|distance to centre|flag" {
		t.Errorf("participants header %v", head[0])
	}
	// Formula-looking ids are text cells with no formula.
	for row := 2; row <= 6; row++ {
		cell := "A" + digits(row)
		typ, _ := f.GetCellType(SheetParticipants, cell)
		formula, _ := f.GetCellFormula(SheetParticipants, cell)
		val, _ := f.GetCellValue(SheetParticipants, cell)
		if formula != "" || (typ != excelize.CellTypeSharedString && typ != excelize.CellTypeInlineString) {
			t.Errorf("%s = %q: type %v, formula %q; want a text cell", cell, val, typ, formula)
		}
	}
	// Number formats: shares as percentages, p-values scientific below 0.001.
	checkFormat := func(sheet, cell, want string) {
		t.Helper()
		id, _ := f.GetCellStyle(sheet, cell)
		st, _ := f.GetStyle(id)
		if st == nil || st.CustomNumFmt == nil || *st.CustomNumFmt != want {
			got := "<none>"
			if st != nil && st.CustomNumFmt != nil {
				got = *st.CustomNumFmt
			}
			t.Errorf("%s!%s format %s, want %s", sheet, cell, got, want)
		}
	}
	checkFormat(SheetParticipants, "I2", "0.0%")
	checkFormat(SheetSeparating, "E3", `[<0.001]"<0.001";0.000`)
	checkFormat(SheetGroups, "E2", "0.0%")
	// Frozen header and filter on the participants sheet.
	panes, _ := f.GetPanes(SheetParticipants)
	if !panes.Freeze || panes.YSplit != 1 {
		t.Errorf("participants panes %+v, want the header frozen", panes)
	}
	// Colour scales on effect sizes and group shares.
	for sheet, rng := range map[string]string{SheetSeparating: "C3:C3", SheetGroups: "E2:H4"} {
		cf, _ := f.GetConditionalFormats(sheet)
		if _, ok := cf[rng]; !ok {
			t.Errorf("%s has no colour scale on %s: %v", sheet, rng, cf)
		}
	}
	// Summary: synthetic banner, the short paragraph, the guide and the cautions.
	sum, _ := f.GetRows(SheetSummary)
	text := flatten(sum)
	for _, s := range append([]string{"SYNTHETIC DATA", "In short", "The sheets of this workbook", "Movement states"}, Cautions...) {
		if !strings.Contains(text, s) {
			t.Errorf("summary lacks %q", s)
		}
	}
	defs, _ := f.GetRows(SheetDefinitions)
	for _, term := range []string{"signature share", "bout length", "silhouette", "ε² (epsilon squared)", "q (BH)", "ICC(1)"} {
		if !strings.Contains(flatten(defs), term) {
			t.Errorf("definitions lack %q", term)
		}
	}
	// Data quality: each feature's ICC(1) before and after the within step, side by side.
	quality, _ := f.GetRows(SheetQuality)
	header := -1
	for i, row := range quality {
		if len(row) > 3 && row[0] == "feature" && row[1] == "ICC(1)" && row[3] == "ICC(1) after it" {
			header = i
		}
	}
	if header < 0 || len(quality) <= header+1 || len(quality[header+1]) < 4 || quality[header+1][3] == "" {
		t.Errorf("data quality sheet lacks ICC(1) after the within step: %q", quality)
	}
	// Chart parts and the dendrogram picture are in the package.
	zr, err := zip.OpenReader(path)
	if err != nil {
		t.Fatal(err)
	}
	defer zr.Close()
	charts, pictures := 0, 0
	for _, zf := range zr.File {
		switch {
		case strings.HasPrefix(zf.Name, "xl/charts/chart"):
			charts++
		case strings.HasPrefix(zf.Name, "xl/media/image"):
			pictures++
		}
	}
	// mixture, state profiles, sizes, two for the states' choice, the groups' choice, silhouettes
	if charts != 7 || pictures != 1 {
		t.Errorf("%d charts and %d pictures, want 7 and 1", charts, pictures)
	}
}

// writeAndOpen writes r's workbook in a temporary folder and opens it.
func writeAndOpen(t *testing.T, r *Result) (*excelize.File, string) {
	t.Helper()
	path := filepath.Join(t.TempDir(), "r.xlsx")
	if err := WriteWorkbook(path, r, false); err != nil {
		t.Fatal(err)
	}
	f, err := excelize.OpenFile(path)
	if err != nil {
		t.Fatal(err)
	}
	return f, path
}

func flatten(rows [][]string) string {
	var b strings.Builder
	for _, r := range rows {
		b.WriteString(strings.Join(r, "|") + "\n")
	}
	return b.String()
}

func TestLargeCohortIsStreamed(t *testing.T) {
	t.Parallel()
	r := fixture(t, 20000, func(i int) string { return "P" + strings.Repeat("0", 5-len(digits(i))) + digits(i) })
	f, err := BuildWorkbook(r)
	if err != nil {
		t.Fatal(err)
	}
	defer f.Close() // the streamed sheet's temporary file
	var buf bytes.Buffer
	if _, err := f.WriteTo(&buf); err != nil {
		t.Fatal(err)
	}
	g, err := excelize.OpenReader(&buf)
	if err != nil {
		t.Fatal(err)
	}
	defer g.Close()
	rows, _ := g.GetRows(SheetParticipants)
	if len(rows) != 20001 {
		t.Errorf("%d rows, want 20,001", len(rows))
	}
	tables, _ := g.GetTables(SheetParticipants)
	if len(tables) != 1 {
		t.Errorf("the streamed participants sheet has %d tables (its filter), want 1", len(tables))
	}
	// Printed, it fits the page width and has the footer like every other sheet.
	hf, err := g.GetHeaderFooter(SheetParticipants)
	if err != nil || hf == nil || !strings.Contains(hf.OddFooter, "Page &P of &N") {
		t.Errorf("the streamed participants sheet has no footer: %+v %v", hf, err)
	}
	if pl, err := g.GetPageLayout(SheetParticipants); err != nil || pl.FitToWidth == nil || *pl.FitToWidth != 1 {
		t.Errorf("the streamed participants sheet does not fit the page width: %+v %v", pl, err)
	}
}

func digits(i int) string { return strconv.Itoa(i) }

func TestWriteAtomicKeepsExistingOutput(t *testing.T) {
	t.Parallel()
	dir := t.TempDir()
	p := filepath.Join(dir, "out.xlsx")
	os.WriteFile(p, []byte("earlier"), 0o644)
	if err := scratch.WriteAtomic(p, false, func(w io.Writer) error { return nil }); !errors.Is(err, scratch.ErrExists) || !strings.Contains(err.Error(), "force") {
		t.Errorf("got %v, want scratch.ErrExists naming the force option", err)
	}
	boom := errors.New("interrupted")
	if err := scratch.WriteAtomic(p, true, func(w io.Writer) error { w.Write([]byte("half")); return boom }); !errors.Is(err, boom) {
		t.Errorf("got %v", err)
	}
	if b, _ := os.ReadFile(p); string(b) != "earlier" {
		t.Errorf("a failed write changed the output to %q", b)
	}
	entries, _ := os.ReadDir(dir)
	if len(entries) != 1 {
		t.Errorf("temporary files left: %v", entries)
	}
}

func TestModelRoundTripAndDamage(t *testing.T) {
	t.Parallel()
	r := fixture(t, 12, func(i int) string { return "P" + digits(i) })
	r.Norm.PCA = nil
	r.States.PersonPrior = 5 // written as "person_prior": 5, which one case below damages
	m := job.NewModel(r, cohort.ReadOptions{ID: "participant", Order: "window"}, [][3]float64{{0, 1, 2}, {0, 1, 2}, {0, 1, 2}})
	m.Fit = &modelfile.FitSettings{Within: "align", Log: true, Scale: "z", PCAVariance: 0.99, States: []int{2, 3, 4}, StatesRule: "valley", Valley: 0.5,
		Sample: 50000, Groups: []int{2, 3}, Method: "ward-hellinger", Criterion: "gap", Bootstrap: 20, Seed: 1}
	dir := t.TempDir()
	p := filepath.Join(dir, "m.json")
	if err := modelfile.Write(p, m, false); err != nil {
		t.Fatal(err)
	}
	back, err := modelfile.ReadFile(p)
	if err != nil {
		t.Fatal(err)
	}
	if back.States.K != 4 || back.Grouping.K != 3 || len(back.Members) != 12 || back.Fit == nil || back.Fit.Method != "ward-hellinger" || len(back.Fit.States) != 3 {
		t.Errorf("read back %d states, %d groups, %d members", back.States.K, back.Grouping.K, len(back.Members))
	}
	good, _ := os.ReadFile(p)
	cases := []struct{ name, edit, want string }{
		{"not JSON", "}{", "not a model file"},
		{"older schema", strings.Replace(string(good), `"version": 6`, `"version": 1`, 1), "schema version 1, this tool reads versions 2 to 6"},
		{"other file", `{"format":"something else","version":3}`, `format is "something else"`},
		{"version 2 without its options", strings.Replace(string(good), `"version": 6`, `"version": 2`, 1), "a version 2 model without the settings it was fitted with"},
		{"settings left out", resum(t, withoutField(t, good, "fit")), "a version 6 model without the settings"},
		{"negative pull of the participants' own states", resum(t, strings.Replace(string(good), `"person_prior": 5`, `"person_prior": -1`, 1)), "person_prior is -1"},
		{"unknown field", strings.Replace(string(good), `"tool":`, `"extra": 1, "tool":`, 1), "damaged or hand-edited"},
		{"wrong size", resum(t, strings.Replace(string(good), `"k": 4`, `"k": 5`, 1)), "states: k = 5 with 4 centroids"},
		{"bad spread", resum(t, strings.Replace(string(good), `"spread": [
   1,`, `"spread": [
   -1,`, 1)), "normalize.spread[0] is -1"},
		// A value changed by hand (a centroid moved by 5.0, which once made participants
		// atypical without a word) and a copy with a flipped digit: the checksum refuses both.
		{"a value changed", strings.Replace(string(good), `"centroids": [
   [
    `, `"centroids": [
   [
    5.0`, 1), "its checksum does not match its contents"},
		// Issue 28: a centroid of 1e308 (with a checksum that fits it) reached the grouping and
		// failed there, in a message that did not name the model file.
		{"a centroid of 1e308", resum(t, regexp.MustCompile(`("centroids": \[\s*\[\s*)[-0-9.e+]+`).ReplaceAllString(string(good), "${1}1e308")), "states.centroids[0][0] is 1e+308, larger in magnitude than any fit gives (1e+12)"},
		{"two states of one name", resum(t, strings.Replace(string(good), `"S2"`, `"S1"`, 1)), `states.names holds "S1" twice`},
	}
	for _, c := range cases {
		t.Run(c.name, func(t *testing.T) {
			if c.edit == string(good) {
				t.Fatal("the edit did not apply")
			}
			_, err := modelfile.Parse("m.json", []byte(c.edit))
			if err == nil || !errors.Is(err, modelfile.ErrModel) || !strings.Contains(err.Error(), c.want) || !strings.HasPrefix(err.Error(), "m.json: ") {
				t.Errorf("got %v, want modelfile.ErrModel naming %q", err, c.want)
			}
		})
	}
}

// resum gives an edited model file a checksum that fits it, so that the edit reaches the
// checks behind the checksum.
func resum(t *testing.T, edited string) string {
	t.Helper()
	var m modelfile.Model
	if err := json.Unmarshal([]byte(edited), &m); err != nil {
		t.Fatal(err)
	}
	var b bytes.Buffer
	if err := modelfile.Encode(&b, &m); err != nil {
		t.Fatal(err)
	}
	return b.String()
}

// FuzzParseModel: a damaged or hand-edited model file is refused with modelfile.ErrModel, never a panic.
func FuzzParseModel(f *testing.F) {
	r := fixture(f, 6, func(i int) string { return "P" + digits(i) })
	m := job.NewModel(r, cohort.ReadOptions{}, [][3]float64{{0, 1, 2}, {0, 1, 2}, {0, 1, 2}})
	b, _ := json.MarshalIndent(m, "", " ")
	f.Add(b)
	f.Add([]byte(`{"format":"cohortmix model","version":1}`))
	f.Add([]byte(`{"format":"cohortmix model","version":1,"features":["a"],"normalize":{"pca_components":[[]]}}`))
	f.Fuzz(func(t *testing.T, b []byte) {
		m, err := modelfile.Parse("fuzz.json", b)
		if err != nil {
			if !errors.Is(err, modelfile.ErrModel) {
				t.Fatalf("error without modelfile.ErrModel: %v", err)
			}
			return
		}
		// An accepted model must be usable.
		fit := m.NormFit()
		x := make([]float64, 2*len(m.Features))
		y := fit.Apply(x)
		for _, v := range y {
			if math.IsNaN(v) {
				t.Fatalf("accepted model gives NaN")
			}
		}
		m.StateFit()
	})
}

// A state that no feature sets apart is described without an empty fragment; intensity words
// follow the features that measure how much the signal varies.
func TestStateWords(t *testing.T) {
	t.Parallel()
	features := []string{"mean_x", "sd_x", "dom_freq"}
	desc := []profile.Description{
		{Share: 0, Mean: []float64{math.NaN(), math.NaN(), math.NaN()}},
		{Share: 0.3, Mean: []float64{0.1, 0.01, 0.3}, Drivers: []profile.Driver{{Feature: 1, Effect: -0.9}, {Feature: 0, Effect: 0.5}}},
		{Share: 0.6, Mean: []float64{0.1, 0.03, 0.5}, Drivers: []profile.Driver{{Feature: 0, Effect: -0.6}}},
		{Share: 0.1, Mean: []float64{0.1, 0.5, 2.0}, Drivers: []profile.Driver{{Feature: 1, Effect: 2.2}, {Feature: 2, Effect: 1.1}}},
	}
	labels := &profile.LabelTable{Labels: []string{"lying", "walking"}, Counts: [][]int{{0, 0}, {90, 10}, {50, 50}, {5, 95}}}
	ws := DescribeStates(desc, features, []string{"S1", "S2", "S3", "S4"}, labels, 0)
	cases := []struct {
		state       int
		short, line string
	}{
		{0, "S1", "0% of all windows; no feature sets it apart from the average"},
		// Two states mostly labelled lying: numbered from the stillest, so no two read alike.
		{1, "lying 1 (S2)", "Lying 1: 30% of all windows, stillness; mostly labelled lying (90% of its labelled windows); features: lower sd_x, higher mean_x than average"},
		// sd_x of 0.03 lies log(3)/log(50) = 0.28 of the way from 0.01 to 0.5: still.
		{2, "lying 2 (S3)", "Lying 2: 60% of all windows, stillness; set apart most by posture (where gravity points on the device); mostly labelled lying (50% of its labelled windows); features: lower mean_x than average"},
		{3, "walking (S4)", "Walking: 10% of all windows, vigorous movement; with a quicker rhythm than average; mostly labelled walking (95% of its labelled windows); features: higher sd_x, higher dom_freq than average"},
	}
	for _, c := range cases {
		if got := ws[c.state].Short(); got != c.short {
			t.Errorf("state %d short name %q, want %q", c.state, got, c.short)
		}
		if got := ws[c.state].Sentence(); got != c.line {
			t.Errorf("state %d line\n got %q\nwant %q", c.state, got, c.line)
		}
	}
}

// Issue 29: states are named apart, anchored where a feature of a known scale is there, and a
// rare state does not stretch the scale of the others.
func TestStateNames(t *testing.T) {
	t.Parallel()
	state := func(share float64, mean ...float64) profile.Description {
		return profile.Description{Share: share, Mean: mean}
	}
	names := func(ws []StateWords) string {
		var out []string
		for _, w := range ws {
			out = append(out, w.Short())
		}
		return strings.Join(out, ", ")
	}
	codes := []string{"S1", "S2", "S3", "S4"}
	for _, c := range []struct {
		name     string
		features []string
		desc     []profile.Description
		window   time.Duration
		want     string
	}{
		// Without labels or anchors, states of one word are numbered from the stillest.
		{"relative, two alike", []string{"vm_sd"}, []profile.Description{state(0.4, 0.010), state(0.3, 0.012), state(0.2, 0.2), state(0.1, 0.5)}, 0,
			"stillness 1 (S1), stillness 2 (S2), moderate movement (S3), vigorous movement (S4)"},
		// A state of 0.06 % of the windows far above the rest no longer makes them all still.
		{"a rare extreme state", []string{"vm_sd"}, []profile.Description{state(0.5, 0.01), state(0.3, 0.1), state(0.1994, 0.5), state(0.0006, 50)}, 0,
			"stillness (S1), light movement (S2), vigorous movement 1 (S3), vigorous movement 2 (S4)"},
		// Counts of 15-s windows, per minute ×4: 20, 800, 3000, 8000 (Troiano et al. 2008).
		{"activity counts", []string{"counts", "log_counts"}, []profile.Description{state(0.4, 5, 1), state(0.3, 200, 2), state(0.2, 750, 3), state(0.1, 2000, 4)}, 15 * time.Second,
			"sedentary (S1), light activity (S2), moderate activity (S3), vigorous activity (S4)"},
		// Counts without a window length are left relative.
		{"counts, window unknown", []string{"counts"}, []profile.Description{state(0.5, 5), state(0.5, 2000)}, 0,
			"stillness (S1), vigorous movement (S2)"},
		// ENMO in g (below 3): 0.005, 0.03, 0.15, 0.6 g are 5, 30, 150, 600 mg; the two above
		// 100.6 mg are moderate and vigorous (Hildebrand et al. 2014), the two below keep their
		// relative word (30 mg lies log 6 / log 120 = 0.37 of the way up: stillness).
		{"ENMO in g", []string{"enmo"}, []profile.Description{state(0.4, 0.005), state(0.3, 0.03), state(0.2, 0.15), state(0.1, 0.6)}, time.Minute,
			"stillness 1 (S1), stillness 2 (S2), moderate activity (S3), vigorous activity (S4)"},
	} {
		if got := names(DescribeStates(c.desc, c.features, codes[:len(c.desc)], nil, c.window)); got != c.want {
			t.Errorf("%s:\n got %s\nwant %s", c.name, got, c.want)
		}
	}
}

func TestNaturalOrder(t *testing.T) {
	t.Parallel()
	ids := []string{"P10", "P2", "P1", "P100", "P02", "Q1", "P9a", "P9"}
	sort.SliceStable(ids, func(a, b int) bool { return cohort.NaturalLess(ids[a], ids[b]) })
	if got, want := strings.Join(ids, " "), "P1 P2 P02 P9 P9a P10 P100 Q1"; got != want {
		t.Errorf("natural order %q, want %q", got, want)
	}
}

// withoutField is a JSON object without one of its fields.
func withoutField(t *testing.T, b []byte, name string) string {
	var m map[string]json.RawMessage
	if err := json.Unmarshal(b, &m); err != nil {
		t.Fatal(err)
	}
	delete(m, name)
	out, _ := json.Marshal(m)
	return string(out)
}

// A grouping that does not come back as a whole when the participants are drawn again (its
// stability at the number of groups chosen below group.UnstableGrouping) is called tentative
// in words on the Summary and on the Stability sheet; at the threshold it is not, and with one
// number of groups given (no stability measured) neither sheet says anything of it.
func TestTentativeGroupingIsFlagged(t *testing.T) {
	t.Parallel()
	cases := []struct {
		name      string
		scores    []group.KScore
		tentative bool
		row       bool
	}{
		{"below the threshold", []group.KScore{{K: 2, Stability: 0.95}, {K: 3, Stability: group.UnstableGrouping - 0.01}}, true, true},
		{"at the threshold", []group.KScore{{K: 2, Stability: 0.95}, {K: 3, Stability: group.UnstableGrouping}}, false, true},
		{"one number of groups given", []group.KScore{{K: 3}}, false, false},
	}
	for _, c := range cases {
		r := fixture(t, 30, func(i int) string { return "P" + digits(i) })
		r.Grouping.Scores = c.scores
		r.Grouping.Stability = &group.Stability{Resamples: 20, Jaccard: []float64{0.9, 0.9, 0.9}, Stay: make([]float64, 30)}
		f, _ := writeAndOpen(t, r)
		sum, _ := f.GetRows(SheetSummary)
		stab, _ := f.GetRows(SheetStability)
		f.Close()
		if got := strings.Contains(flatten(sum), "TENTATIVE"); got != c.tentative {
			t.Errorf("%s: the Summary says TENTATIVE: %v, want %v", c.name, got, c.tentative)
		}
		text := flatten(stab)
		if got := strings.Contains(text, "the grouping as a whole"); got != c.row {
			t.Errorf("%s: the Stability sheet has the whole grouping's row: %v, want %v", c.name, got, c.row)
		}
		if got := strings.Contains(text, "TENTATIVE"); got != c.tentative {
			t.Errorf("%s: the Stability sheet says TENTATIVE: %v, want %v", c.name, got, c.tentative)
		}
	}
}

// When the fits at other numbers of states group the participants otherwise
// (job.WarnStatesDisagree), the Summary gives the warning, marks every group's line tentative and
// names the numbers of states that group otherwise (the line that, alone, stays on the
// Stability sheet).
func TestStatesDisagreeMarksTheGroups(t *testing.T) {
	t.Parallel()
	for _, warn := range []bool{false, true} {
		r := fixture(t, 30, func(i int) string { return "P" + digits(i) })
		r.Reproducibility = 0.95 // the fits at the number kept agree: the mark below is the only one
		r.SensitivityNote = note.Note{Kind: job.NoteStatesDepend, Ints: []int{5, 4}, Floats: []float64{0.55}}
		if warn {
			r.Warnings = append(r.Warnings, note.Note{Kind: job.WarnStatesDisagree, Ints: []int{3, 8}, Floats: []float64{0.41, job.StatesAgree}, Option: "profile.AlignOptions.States"})
		}
		f, _ := writeAndOpen(t, r)
		sum, _ := f.GetRows(SheetSummary)
		f.Close()
		lines := 0
		for _, row := range sum {
			if len(row) > 1 && slices.Contains(r.GroupNames, row[0]) && strings.HasPrefix(row[1], "TENTATIVE (see the warning below): ") {
				lines++
			}
		}
		text := flatten(sum)
		if got := strings.Contains(text, "fitted at 3 to 8 movement states, the fits group the sampled participants differently (the fit kept agrees with the others by a mean adjusted Rand index of 0.41, below 0.45)"); got != warn {
			t.Errorf("warned %v: the Summary gives the warning: %v", warn, got)
		}
		if got := strings.Contains(text, "The groups depend on the number of movement states: fitted with 4 states"); got != warn {
			t.Errorf("warned %v: the Summary names the other numbers of states: %v", warn, got)
		}
		if got := strings.Contains(text, "Read this as tentative: the warning below says why."); got != warn {
			t.Errorf("warned %v: the Summary's first lines say the groups are tentative: %v", warn, got)
		}
		if want := map[bool]int{false: 0, true: len(r.GroupNames)}[warn]; lines != want {
			t.Errorf("warned %v: %d group lines marked tentative, want %d", warn, lines, want)
		}
	}
}

// A state a participant never entered has no bout length: an empty cell on the Participants
// sheet (in windows and in minutes), where a bout that exists is written, and no part of its
// group's mean bout on the Groups sheet.
func TestNoBoutIsAnEmptyCell(t *testing.T) {
	t.Parallel()
	r := fixture(t, 6, func(i int) string { return "P" + digits(i) })
	r.WindowLength = time.Minute
	r.Units[0].Bout = []float64{1, 0, 3, 4}
	f, _ := writeAndOpen(t, r)
	defer f.Close()
	rows, _ := f.GetRows(SheetParticipants)
	col := func(name string) int {
		for j, h := range rows[0] {
			if h == name {
				return j
			}
		}
		t.Fatalf("no column %q in %q", name, rows[0])
		return -1
	}
	cell := func(row, j int) string {
		if j < len(rows[row]) {
			return rows[row][j]
		}
		return ""
	}
	for _, name := range []string{"bout S2 (min)"} {
		if got := cell(1, col(name)); got != "" {
			t.Errorf("%s of a participant never in S2: %q, want an empty cell", name, got)
		}
		if got := cell(2, col(name)); got == "" {
			t.Errorf("%s of a participant with bouts in S2 is empty", name)
		}
	}
	// The group's mean bout counts only its members who entered S2: G1 holds participants 0
	// and 3 (every third), and only 3 did, with a bout of 2 windows (2 minutes).
	groups, _ := f.GetRows(SheetGroups)
	j := -1
	for c, h := range groups[0] {
		if h == "mean bout S2 (min)" {
			j = c
		}
	}
	if j < 0 || len(groups) < 2 || j >= len(groups[1]) || groups[1][j] != "2.0" {
		t.Errorf("G1's mean bout in S2: %q, want 2.0 minutes (participant 3's alone, windows of a minute)", groups)
	}
}

// The Choosing k sheet records how the number of states was reached: each number's scores under
// a range rule, each merge of the valley rule in order with the density kept between the pair,
// or nothing beyond the rule's words when one number was fitted; the charts sheet shows a states
// block only when there are scores to chart.
func TestStatesChoiceIsRecorded(t *testing.T) {
	t.Parallel()
	cases := []struct {
		name       string
		candidates []profile.Candidate
		merges     []profile.Merge
		want       []string // rows of the Choosing k sheet, cells joined by |
		none       []string // text that must not be on it
		chartRows  bool     // the charts sheet has its States block
	}{
		{"scores of a range", []profile.Candidate{{K: 3, Silhouette: 0.6}, {K: 4, Silhouette: 0.5}}, nil,
			[]string{"states|within SS|silhouette", "3|", "4|"}, []string{"states before"}, true},
		{"merges of the valley rule", nil, []profile.Merge{{From: 6, A: 0, B: 4, Valley: 0.912}, {From: 5, A: 1, B: 2, Valley: 0.604}},
			[]string{"states before|states after|density kept between them", "6|5|0.912", "5|4|0.604"}, []string{"within SS"}, false},
		{"one number fitted", nil, nil, nil, []string{"within SS", "states before"}, false},
	}
	for _, c := range cases {
		r := fixture(t, 30, func(i int) string { return "P" + digits(i) })
		r.States.Candidates, r.States.Merges = c.candidates, c.merges
		f, _ := writeAndOpen(t, r)
		choice, _ := f.GetRows(SheetChoice)
		charts, _ := f.GetRows(SheetCharts)
		f.Close()
		text := flatten(choice)
		for _, w := range c.want {
			if !strings.Contains(text, "\n"+w) {
				t.Errorf("%s: no row starting %q on the Choosing k sheet:\n%s", c.name, w, text)
			}
		}
		for _, n := range c.none {
			if strings.Contains(text, n) {
				t.Errorf("%s: %q on the Choosing k sheet", c.name, n)
			}
		}
		if got := strings.Contains(flatten(charts), "States|Calinski–Harabasz"); got != c.chartRows {
			t.Errorf("%s: the charts sheet has a States block: %v, want %v", c.name, got, c.chartRows)
		}
	}
}

// The members CSV never hands a spreadsheet a formula: ids, waves and flags that start as a
// formula would (=, +, -, @) get a leading apostrophe; plain ids are written as they are.
func TestMembersCSVNeutralisesFormulas(t *testing.T) {
	t.Parallel()
	ids := []string{`=HYPERLINK("http://x","y")`, "+cmd|' /C calc'!A0", "@SUM(A1)", "-2", "P5"}
	r := fixture(t, 5, func(i int) string { return ids[i] })
	var b strings.Builder
	if err := MembersTo(&b, r); err != nil {
		t.Fatal(err)
	}
	recs, err := csv.NewReader(strings.NewReader(b.String())).ReadAll()
	if err != nil {
		t.Fatal(err)
	}
	got := map[string]bool{}
	for _, rec := range recs[1:] {
		got[rec[0]] = true
	}
	for _, id := range ids {
		want := "'" + id
		if id == "P5" {
			want = id
		}
		if !got[want] {
			t.Errorf("id %q: not written as %q (got %v)", id, want, got)
		}
	}
}

// The dendrogram is a PNG of the stated size in which the tree's ink and every group's colour
// appear (a picture that failed to draw its leaves or lines would lack them).
func TestDendrogramDrawsTreeAndLeaves(t *testing.T) {
	t.Parallel()
	r := fixture(t, 30, func(i int) string { return "P" + digits(i) })
	b, caption, err := Dendrogram(r)
	if err != nil || b == nil || !strings.Contains(caption, "3 group centres") {
		t.Fatalf("%d bytes, %q, %v", len(b), caption, err)
	}
	img, err := png.Decode(bytes.NewReader(b))
	if err != nil {
		t.Fatal(err)
	}
	if got := img.Bounds().Size(); got.X != dendroW || got.Y != dendroH {
		t.Errorf("size %v, want %dx%d", got, dendroW, dendroH)
	}
	seen := map[color.RGBA]int{}
	for y := 0; y < dendroH; y++ {
		for x := 0; x < dendroW; x++ {
			r, g, b, _ := img.At(x, y).RGBA()
			seen[color.RGBA{uint8(r >> 8), uint8(g >> 8), uint8(b >> 8), 0xff}]++
		}
	}
	if seen[ink] < 500 {
		t.Errorf("%d pixels of ink: the tree and axis are not drawn", seen[ink])
	}
	for g := range r.GroupNames {
		if seen[groupColour(g)] < 20 {
			t.Errorf("group %d's colour on %d pixels: its leaf and legend are not drawn", g, seen[groupColour(g)])
		}
	}
}

// The words of the grouping's typed notes, with the option named as the reader sets it.
func TestNoteWords(t *testing.T) {
	t.Parallel()
	r := &Result{OptionName: func(s string) string { return strings.ReplaceAll(s, "group.Options.Method", "--method") }}
	for _, c := range []struct {
		n    note.Note
		want string
	}{
		{note.Note{Kind: group.NoteAutoKMeans, Ints: []int{12000, 10000}, Option: "group.Options.Method"}, "12,000 participants are more than 10,000: they were grouped by k-means on the centred log-ratios, which scales, instead of Ward linkage (set --method ward-hellinger to insist)"},
		{note.Note{Kind: group.NoteGapSteady, Ints: []int{5, 3}, Floats: []float64{0.61, 0.8, 0.93}}, "the gap statistic and the stability step chose 5 groups, a tentative grouping (bootstrap stability 0.61, below 0.80), so 3 were kept, the largest smaller number whose grouping is stable (0.93)"},
		{note.Note{Kind: group.NoteMixtureSample, Ints: []int{3000, 20000}}, "the mixture was fitted on a reproducible sample of 3,000 of the 20,000 participants, and every participant was placed by it"},
		{note.Note{Kind: group.NoteEmptyComponents, Ints: []int{4, 1}}, "of the 4 groups the criterion chose, 1 held no participant as its most probable group and were left out"},
		// The words of these kinds were the library's own texts before the notes were typed;
		// they stay word for word.
		{note.Note{Kind: job.NoteCalibration, Ints: []int{12, 12}}, "sphere calibration (van Hees et al. 2014): the axis means of all 12 devices were calibrated"},
		{note.Note{Kind: job.NoteCalibration, Ints: []int{49, 200}}, "sphere calibration (van Hees et al. 2014): the axis means of 49 of the 200 devices were calibrated; the other 151 were left as read, as their windows do not reach past ±0.3 g on both sides of every axis or the fit was not a plausible calibration (gains 0.7–1.4, offsets within 0.3 g)"},
		{note.Note{Kind: job.NoteLogScales, Ints: []int{1, 1, 1}, Names: []string{"vm_sd", "mean_z", "count"}}, "taken on a log scale, log(x + c) with c the feature's first quartile: vm_sd; left linear as they take negative values: mean_z; left linear as a quarter or more of their values are 0 (c would be 0): count"},
		{note.Note{Kind: job.NoteStatesDepend, Ints: []int{5, 4}, Floats: []float64{0.55}}, "the groups depend on the number of movement states: fitted with 4 states (adjusted Rand index 0.55), which these data support about as well as the 5 kept, the sampled participants fall into other groups; read the groups with that in mind"},
		{note.Note{Kind: job.NoteAxes, Ints: []int{job.AxesFound, 1, 2, 0, 1}, Floats: []float64{0.031}, Names: []string{"mean_x", "mean_y", "mean_z", "sd_x", "sd_y", "sd_z", "cor_xy", "cor_xz", "cor_yz", "tilt_z"}},
			"the align step turns the axis means mean_x, mean_y, mean_z (their vector length varies by 3% of its mean); with the axis means it turns the axis s.d.s sd_x, sd_y, sd_z and correlations cor_xy, cor_xz, cor_yz as one covariance, and tilt_z as the elevation above the plane normal to the z axis, in degrees"},
		{note.Note{Kind: job.NoteAxes, Ints: []int{job.AxesNotFound, 0}, Floats: []float64{math.NaN()}, Option: "job.Options.Axes"}, "the align step found no axis means to turn (no three features are named alike but for x, y and z); it shifts each feature only; name them with job.Options.Axes"},
		{note.Note{Kind: job.NoteGroupChanges, Ints: []int{2, 1, 0, 1}, Names: []string{"G4", "G3 merged"}}, "groups: 2 kept their names, new: G4; gone: none; merged: G3 merged"},
		{note.Note{Kind: "later.kind", Ints: []int{1}}, "later.kind [1] [] "},
	} {
		if got := NoteWords(r, c.n); got != c.want {
			t.Errorf("%s:\n got %s\nwant %s", c.n.Kind, got, c.want)
		}
	}
}

// Every kind of note the library declares (a constant of type note.Kind) has its words here,
// so that no note reaches a reader as its kind's name.
func TestEveryNoteKindHasWords(t *testing.T) {
	t.Parallel()
	kind := regexp.MustCompile(`note\.Kind = "([^"]+)"`)
	seen := 0
	err := filepath.WalkDir("..", func(p string, d fs.DirEntry, err error) error {
		if err != nil || d.IsDir() || !strings.HasSuffix(p, ".go") || strings.HasSuffix(p, "_test.go") {
			return err
		}
		b, err := os.ReadFile(p)
		if err != nil {
			return err
		}
		for _, m := range kind.FindAllSubmatch(b, -1) {
			seen++
			if _, ok := noteWords[note.Kind(m[1])]; !ok {
				t.Errorf("%s: the kind %s has no words in noteWords", p, m[1])
			}
		}
		return nil
	})
	if err != nil || seen < 20 {
		t.Fatalf("%d kinds found, error %v", seen, err)
	}
}

// The Summary's details give the kept fit's agreement with the ensemble's other fits when they
// span several numbers of states (profile.EnsembleFit.Agreement), and say tentative where the run
// warned so (below job.StatesAgree); with one number of states there is no such row.
func TestStatesAgreementText(t *testing.T) {
	t.Parallel()
	fits := func(kept float64, states ...int) []profile.EnsembleFit {
		var ens []profile.EnsembleFit
		for i, s := range states {
			ens = append(ens, profile.EnsembleFit{States: s, Start: 1, Agreement: 0.5, Kept: i == 0})
		}
		ens[0].Agreement = kept
		return ens
	}
	for _, c := range []struct {
		name   string
		ens    []profile.EnsembleFit
		warned bool
		want   string
	}{
		{"agreed", fits(0.74, 4, 5, 6), false, "0.74: the fit kept and the other fits, at 4 to 6 states, group the sampled participants alike enough (their mean adjusted Rand index, 0.45 or more)"},
		{"disagreed", fits(0.41, 4, 5, 6), true, "0.41: the fit kept and the other fits, at 4 to 6 states, group the sampled participants differently (their mean adjusted Rand index, below 0.45); the groups are tentative"},
		{"one number of states", fits(0.41, 5, 5, 5), false, ""},
		{"no ensemble", nil, false, ""},
	} {
		if got := statesAgreementText(c.ens, c.warned); got != c.want {
			t.Errorf("%s: %q, want %q", c.name, got, c.want)
		}
	}
}
