package reports

import (
	"fmt"
	"io"
	"math"
	"slices"

	"strconv"
	"strings"

	"github.com/xuri/excelize/v2"

	"github.com/cohortmix/cohortmix/cohort"
	"github.com/cohortmix/cohortmix/cohort/group"
	"github.com/cohortmix/cohortmix/cohort/job"
	"github.com/cohortmix/cohortmix/cohort/raw"
	"github.com/cohortmix/cohortmix/cohort/scratch"
	"github.com/cohortmix/cohortmix/profile"
)

// Sheet names, in the order of the tabs.
const (
	SheetSummary      = "Summary"
	SheetParticipants = "Participants"
	SheetGroups       = "Group profiles"
	SheetSeparating   = "Separating variables"
	SheetStates       = "Movement states"
	SheetChoice       = "Choosing k"
	SheetStability    = "Stability"
	SheetQuality      = "Data quality"
	SheetSettings     = "Settings"
)

// colour scales: paper to teal, for effect sizes and shares.
func colourScale(f *excelize.File, sheet, rng string) error {
	return f.SetConditionalFormat(sheet, rng, []excelize.ConditionalFormatOptions{{Type: "2_color_scale", Criteria: "=",
		MinType: "num", MaxType: "max", MinValue: "0", MinColor: "#FBF6EC", MaxColor: "#5FB3A8"}})
}

// BuildWorkbook lays the result out as a workbook.
func BuildWorkbook(r *Result) (*excelize.File, error) {
	f := excelize.NewFile()
	st, err := newStyles(f)
	if err != nil {
		return nil, err
	}
	st.footer = "Participant-level data: handle under the study's data-protection rules"
	if r.Synthetic {
		st.footer = "Synthetic data: no real person's data"
	}
	steps := []func(*excelize.File, *styles, *Result) error{summarySheet, chartsSheet, definitionsSheet, participantsSheet, changesSheet, groupsSheet, timeOfDaySheet, stabilitySheet, separatingSheet, statesSheet, choiceSheet, qualitySheet, settingsSheet}
	for _, step := range steps {
		if err := step(f, st, r); err != nil {
			return nil, fmt.Errorf("reports: %w", err)
		}
	}
	if err := f.DeleteSheet("Sheet1"); err != nil {
		return nil, err
	}
	// Every sheet's used range, which readers that trust it (openpyxl's read-only mode) need;
	// excelize leaves it at A1 for sheets written cell by cell.
	for _, name := range f.GetSheetList() {
		if name == SheetParticipants && len(r.Units) > streamRows {
			continue // set before it was streamed
		}
		rows, err := f.GetRows(name)
		if err != nil {
			return nil, err
		}
		cols := 1
		for _, row := range rows {
			cols = max(cols, len(row))
		}
		last, _ := excelize.CoordinatesToCellName(cols, max(1, len(rows)))
		if err := f.SetSheetDimension(name, "A1:"+last); err != nil {
			return nil, err
		}
	}
	for _, name := range f.GetSheetList() {
		if name != SheetParticipants || len(r.Units) <= streamRows {
			if err := st.pageSetup(f, name); err != nil { // a streamed sheet had it before its stream
				return nil, err
			}
		}
		if h, ok := st.headers[name]; ok {
			if err := f.SetDefinedName(&excelize.DefinedName{Name: "_xlnm.Print_Titles", RefersTo: fmt.Sprintf("'%s'!$%d:$%d", name, h, h), Scope: name}); err != nil {
				return nil, err
			}
		}
	}
	f.SetActiveSheet(0)
	return f, nil
}

// WriteWorkbook writes the workbook to path atomically (scratch.WriteAtomic).
func WriteWorkbook(path string, r *Result, force bool) error {
	return scratch.WriteAtomic(path, force, func(w io.Writer) error { return WorkbookTo(w, r) })
}

// WorkbookTo builds the workbook and writes it to w.
func WorkbookTo(w io.Writer, r *Result) error {
	f, err := BuildWorkbook(r)
	if err != nil {
		return err
	}
	defer f.Close()
	_, err = f.WriteTo(w)
	return err
}

func groupLabel(r *Result, g int) string { return r.GroupNames[g] }

func choiceText(r *Result) string {
	if r.Changes != nil && r.Changes.Mode == "assign" {
		return "the model's groups, not refitted"
	}
	if len(r.Grouping.Scores) <= 1 {
		return "fixed"
	}
	switch r.Grouping.Criterion.String() {
	case "icl":
		return "the mixture's smallest ICL over " + kRange(r)
	case "bic":
		return "the mixture's smallest BIC over " + kRange(r)
	case "gap":
		return "gap statistic, Tibshirani et al. 2001, over " + kRange(r)
	case "stability":
		return "bootstrap stability, over " + kRange(r)
	case "gap-stable":
		return "gap statistic, Tibshirani et al. 2001, then fewer groups while clearly more stable, over " + kRange(r)
	case "gap-stable-firm":
		return "gap statistic, Tibshirani et al. 2001, then fewer groups while clearly more stable, and fewer still if that grouping is tentative and one with fewer is not, over " + kRange(r)
	}
	return "mean silhouette, over " + kRange(r)
}

// statesChoice is the Choosing k sheet's record of the number of states: the score of each
// number fitted (a range under the Calinski–Harabasz rule), or each merge the valley rule made,
// in order; nothing when one number was fitted and kept as it was.
func statesChoice(t *table, st *styles, s *profile.States) error {
	if len(s.Ensemble) > 0 {
		if err := t.put(v{"Each row is one fit of the movement states: each number of states fitted from several random starts, each fit grouping the sampled participants; the fit kept is the one whose grouping agrees best with all the others' (the mean adjusted Rand index of its grouping with theirs). The number of groups below is chosen by the mixture's integrated completed likelihood (ICL, Biernacki, Celeux & Govaert 2000) or BIC (Schwarz 1978), each number fitted in turn until the criterion had risen twice past its best.", st.note}); err != nil {
			return err
		}
		if err := t.merge(6); err != nil {
			return err
		}
		if err := t.heading("states", "random start", "groups", "agreement with the others", "kept"); err != nil {
			return err
		}
		for _, e := range s.Ensemble {
			if err := t.put(v{e.States, st.integer}, v{e.Start, st.integer}, v{e.Groups, st.integer}, v{e.Agreement, st.dec3}, v{mark(e.Kept), st.text}); err != nil {
				return err
			}
		}
		return nil
	}
	if len(s.Candidates) > 0 {
		if err := t.heading("states", "within SS", "silhouette", "Calinski–Harabasz", "Davies–Bouldin", "chosen"); err != nil {
			return err
		}
		for _, c := range s.Candidates {
			if err := t.put(v{c.K, st.integer}, v{c.Inertia, st.dec2}, v{c.Silhouette, st.dec3}, v{c.CalinskiHarabasz, st.dec2}, v{c.DaviesBouldin, st.dec3}, v{mark(c.K == s.K), st.text}); err != nil {
				return err
			}
		}
		return nil
	}
	if len(s.Merges) == 0 {
		return nil
	}
	if err := t.put(v{"Each row is one merge, in order: of the states then fitted, the two neighbours whose windows dip least in density along the line joining them were merged while that density kept at least the valley ratio of its height between them (no valley: one mode; after Hennig 2010).", st.note}); err != nil {
		return err
	}
	if err := t.merge(6); err != nil {
		return err
	}
	if err := t.heading("states before", "states after", "density kept between them"); err != nil {
		return err
	}
	for _, m := range s.Merges {
		if err := t.put(v{m.From, st.integer}, v{m.From - 1, st.integer}, v{m.Valley, st.dec3}); err != nil {
			return err
		}
	}
	return nil
}

func kRange(r *Result) string {
	ks := make([]int, len(r.Grouping.Scores))
	for i, s := range r.Grouping.Scores {
		ks[i] = s.K
	}
	return fmtRange(ks)
}

func participantsSheet(f *excelize.File, st *styles, r *Result) error {
	pc := participantColumnsOf(r)
	streamed := 0
	if len(r.Units) > streamRows {
		streamed = 1 + len(r.Units)
	}
	t, err := openTable(f, st, SheetParticipants, pc.widths(r), streamed)
	if err != nil {
		return err
	}
	if err := t.freeze(1); err != nil {
		return err
	}
	head := pc.head(r)
	text := map[string]bool{"participant": true, "wave": true, "group": true, "flag": true, "least-worn day": true}
	numeric := make([]bool, len(head))
	for i, h := range head {
		numeric[i] = !text[h]
	}
	if err := t.headingAligned(head, numeric); err != nil {
		return err
	}
	for _, i := range unitOrder(r) {
		if err := t.put(pc.cells(r, st, r.Units[i])...); err != nil {
			return err
		}
	}
	return t.close(true)
}

// participantColumns are the Participants sheet's optional columns, each there when some
// participant has a value for it: the non-wear windows, the wear-time summary (after the
// non-wear column, at column at), the bootstrap stay, the device's turn and the rest-activity
// measures.
type participantColumns struct {
	nonWear, wear, stay, turn, cal, rhythm bool
	at                                     int
}

func participantColumnsOf(r *Result) participantColumns {
	pc := participantColumns{nonWear: r.Quality.WindowsNonWear > 0, wear: r.Quality.ValidDayRule != nil, at: 3}
	if pc.nonWear {
		pc.at = 4
	}
	for _, u := range r.Units {
		pc.stay = pc.stay || !math.IsNaN(u.Stay)
		pc.turn = pc.turn || !math.IsNaN(u.Turn)
		pc.cal = pc.cal || !math.IsNaN(u.Calibration)
		pc.rhythm = pc.rhythm || !math.IsNaN(u.Rhythm.IS)
	}
	return pc
}

// widths are the columns' widths, the first fitting the longest id.
func (pc participantColumns) widths(r *Result) []float64 {
	idW := 12.0
	for _, u := range r.Units {
		idW = width(idW, u.ID)
	}
	widths := []float64{idW, 8, 10, 9, 11, 11, 11, 34} // participant, wave, windows, group, probability, silhouette, distance, flag
	if pc.nonWear {
		widths = slices.Insert(widths, 3, 11)
	}
	if pc.wear {
		widths = slices.Insert(widths, pc.at, 9, 10, 12, 11)
	}
	if pc.stay {
		widths = append(widths, 13)
	}
	if pc.turn {
		widths = append(widths, 11)
	}
	if pc.cal {
		widths = append(widths, 12)
	}
	for i := 0; i < 2*r.States.K; i++ {
		widths = append(widths, 10)
	}
	if pc.rhythm {
		for range rhythmHeads {
			widths = append(widths, 11)
		}
	}
	return widths
}

// head is the sheet's header row.
func (pc participantColumns) head(r *Result) []string {
	head := []string{"participant", "wave", "windows", "group", "probability of the group", "silhouette", "distance to centre", "flag"}
	if pc.nonWear {
		head = slices.Insert(head, 3, "non-wear windows left out")
	}
	if pc.wear {
		head = slices.Insert(head, pc.at, "valid days", "wear (h) per valid day", "least-worn day", "its wear (h)")
	}
	if pc.stay {
		head = append(head, "stays with its group (share of resamples)")
	}
	if pc.turn {
		head = append(head, "device turned (degrees)")
	}
	if pc.cal {
		head = append(head, "calibration offset (g)")
	}
	for s := 0; s < r.States.K; s++ {
		head = append(head, "share "+r.StateNames[s])
	}
	// Bouts in one unit, so that the sheet prints at a readable size: minutes when the window
	// length is known, windows otherwise.
	for s := 0; s < r.States.K; s++ {
		if r.WindowLength > 0 {
			head = append(head, "bout "+r.StateNames[s]+" (min)")
		} else {
			head = append(head, "bout "+r.StateNames[s]+" (windows)")
		}
	}
	if pc.rhythm {
		head = append(head, rhythmHeads...)
	}
	return head
}

// cells are one participant's row.
func (pc participantColumns) cells(r *Result, st *styles, u job.UnitRow) []v {
	group := groupLabel(r, u.Group)
	if u.Atypical {
		group = ""
	}
	cells := []v{{u.ID, st.text}, {u.Wave, st.text}, {u.Windows, st.integer}, {group, st.text},
		{u.Posterior, st.dec3}, {u.Silhouette, st.dec3}, {u.Distance, st.dec3}, {unitFlag(r, u), st.text}}
	if pc.nonWear {
		cells = slices.Insert(cells, 3, v{u.NonWear, st.integer})
	}
	if pc.wear {
		cells = slices.Insert(cells, pc.at, v{u.Wear.ValidDays, st.integer}, v{u.Wear.MeanHours, st.dec1}, v{u.Wear.Worst, st.text}, v{u.Wear.WorstHours, st.dec1})
	}
	if pc.stay {
		cells = append(cells, v{u.Stay, st.pct})
	}
	if pc.turn {
		cells = append(cells, v{u.Turn, st.dec1})
	}
	if pc.cal {
		cells = append(cells, v{u.Calibration, st.dec3})
	}
	for _, x := range u.Share {
		cells = append(cells, v{x, st.pct})
	}
	for _, x := range u.Bout {
		if r.WindowLength > 0 {
			cells = append(cells, v{boutCell(x) * r.WindowLength.Minutes(), st.dec1})
		} else {
			cells = append(cells, v{boutCell(x), st.dec2})
		}
	}
	if pc.rhythm {
		rh := u.Rhythm
		onset := func(h int) any {
			if h < 0 {
				return nil
			}
			return h
		}
		cells = append(cells, v{rh.IS, st.dec3}, v{rh.IV, st.dec3}, st.sig3(rh.L5), v{onset(rh.L5Onset), st.integer}, st.sig3(rh.M10), v{onset(rh.M10Onset), st.integer}, v{rh.RA, st.dec3})
	}
	return cells
}

func groupsSheet(f *excelize.File, st *styles, r *Result) error {
	k := r.States.K
	stable := r.Grouping.Stability != nil
	widths := []float64{8, 10, 11, 60}
	if stable {
		widths = []float64{8, 10, 11, 12, 60}
	}
	for i := 0; i < 2*k; i++ {
		widths = append(widths, 10)
	}
	t, err := newTable(f, st, SheetGroups, widths)
	if err != nil {
		return err
	}
	if err := t.freeze(1); err != nil {
		return err
	}
	if err := t.heading(groupsHead(r, stable)...); err != nil {
		return err
	}
	// The group means are over the members in the group (an empty cell for a group with none);
	// a bout length over the members who entered the state, as on the Summary's group lines.
	shares, sizes, sils := r.GroupMeans()
	bouts := r.GroupBouts()
	groupLines := GroupLines(r)
	for g := range r.GroupNames {
		n, sil, share := sizes[g], sils[g], slices.Clone(shares[g])
		if n == 0 {
			sil = math.NaN()
			for s := range share {
				share[s] = math.NaN()
			}
		}
		cells := []v{{r.GroupNames[g], st.text}, {n, st.integer}, {sil, st.dec3}, {groupLines[g], st.wrap}}
		if stable {
			cells = slices.Insert(cells, 3, v{r.Grouping.Stability.Jaccard[g], st.dec2})
		}
		for s := 0; s < k; s++ {
			cells = append(cells, v{share[s], st.pct})
		}
		for s := 0; s < k; s++ {
			if r.WindowLength > 0 {
				cells = append(cells, v{bouts[g][s] * r.WindowLength.Minutes(), st.dec1})
			} else {
				cells = append(cells, v{bouts[g][s], st.dec2})
			}
		}
		if err := t.put(cells...); err != nil {
			return err
		}
	}
	if err := t.close(true); err != nil {
		return err
	}
	off := 4
	if stable {
		off = 5
	}
	first, _ := excelize.CoordinatesToCellName(off+1, 2)
	last, _ := excelize.CoordinatesToCellName(off+k, 1+len(r.GroupNames))
	return colourScale(f, SheetGroups, first+":"+last)
}

// groupsHead is the Groups sheet's header row.
func groupsHead(r *Result, stable bool) []string {
	members := "members"
	if r.Counts().Waves {
		members = "members (participant-waves)"
	}
	head := []string{"group", members, "mean silhouette", "description"}
	if stable {
		head = []string{"group", members, "mean silhouette", "stability (bootstrap Jaccard)", "description"}
	}
	for s := 0; s < r.States.K; s++ {
		head = append(head, "mean share "+r.StateNames[s])
	}
	for s := 0; s < r.States.K; s++ { // in one unit, as on Participants
		if r.WindowLength > 0 {
			head = append(head, "mean bout "+r.StateNames[s]+" (min)")
		} else {
			head = append(head, "mean bout "+r.StateNames[s]+" (windows)")
		}
	}
	return head
}

// stabilityReading puts a group's bootstrap stability in words, after Hennig (2007).
func stabilityReading(j float64) string {
	switch {
	case math.IsNaN(j):
		return ""
	case j < group.UnstableJaccard:
		return "does not hold: it dissolves in many resamples"
	case j < 0.75:
		return "a pattern, not a firm group"
	case j < 0.85:
		return "stable"
	}
	return "highly stable"
}

// stabilitySheet shows how well each group holds when the participants are drawn again, and
// whether the groups depend on the choices made.
func stabilitySheet(f *excelize.File, st *styles, r *Result) error {
	gs := r.Grouping.Stability
	if gs == nil && len(r.Sensitivity) == 0 {
		return nil
	}
	t, err := newTable(f, st, SheetStability, []float64{30, 26, 14, 14, 60})
	if err != nil {
		return err
	}
	if gs != nil {
		if err := groupStabilityPart(t, st, r); err != nil {
			return err
		}
	}
	if len(r.Sensitivity) > 0 {
		if err := sensitivityPart(t, st, r); err != nil {
			return err
		}
	}
	return t.close(false)
}

// groupStabilityPart is the stability sheet's table of how well each group, and the grouping
// as a whole, comes back when the participants are drawn again.
func groupStabilityPart(t *table, st *styles, r *Result) error {
	gs := r.Grouping.Stability
	if err := t.put(v{"How well each group holds", st.title}); err != nil {
		return err
	}
	if err := t.put(v{fmt.Sprintf("The participants were drawn again %d times with replacement and grouped anew with the same method and number of groups; each group's stability is the mean, over those resamples, of its best Jaccard similarity with a group found anew (Hennig 2007). Below %.2f a group is flagged.", gs.Resamples, group.UnstableJaccard), st.note}); err != nil {
		return err
	}
	if err := t.merge(5); err != nil {
		return err
	}
	if err := t.heading("group", "members", "stability", "", "reading"); err != nil {
		return err
	}
	size := make([]int, len(r.GroupNames))
	for _, u := range r.Units {
		size[u.Group]++
	}
	for g, name := range r.GroupNames {
		if err := t.put(v{name, st.text}, v{size[g], st.integer}, v{gs.Jaccard[g], st.dec2}, v{"", st.text}, v{stabilityReading(gs.Jaccard[g]), st.wrap}); err != nil {
			return err
		}
	}
	if ws, ok := r.Grouping.WholeStability(); ok {
		reading := fmt.Sprintf("comes back as a whole: the adjusted Rand index between the groups and those found anew, on average over the resamples (Lange et al. 2004); below %.2f the grouping is flagged as tentative", group.UnstableGrouping)
		if ws < group.UnstableGrouping {
			reading = fmt.Sprintf("TENTATIVE: comes back only in part (the adjusted Rand index between the groups and those found anew, on average over the resamples, is below %.2f; Lange et al. 2004)", group.UnstableGrouping)
		}
		if err := t.put(v{"the grouping as a whole", st.text}, v{len(r.Units), st.integer}, v{ws, st.dec2}, v{"", st.text}, v{reading, st.wrap}); err != nil {
			return err
		}
	}
	t.blank()
	return nil
}

// sensitivityPart is the stability sheet's table of the groups under other choices.
func sensitivityPart(t *table, st *styles, r *Result) error {
	if err := t.put(v{"Do the groups depend on a choice?", st.title}); err != nil {
		return err
	}
	if err := t.put(v{"The adjusted Rand index between the groups made and the groups under another choice, with the same number of groups (1: the same groups; 0: no more alike than chance). Other grouping methods group the same signatures. Other within steps, the align step turning the axis means alone, and other numbers of states were fitted anew on the sampled windows of sampled participants: read those rows against the first of them, the same settings on the same sampled windows.", st.note}); err != nil {
		return err
	}
	if err := t.merge(5); err != nil {
		return err
	}
	if err := t.heading("choice", "alternative", "participants", "adjusted Rand index", "fitted on"); err != nil {
		return err
	}
	for _, s := range r.Sensitivity {
		on := "all windows of every participant"
		if s.OnSample {
			on = "the sampled windows of sampled participants"
		}
		if err := t.put(v{s.Choice, st.wrap}, v{s.Alternative, st.text}, v{s.Participants, st.integer}, v{s.ARI, st.dec2}, v{on, st.wrap}); err != nil {
			return err
		}
	}
	t.blank()
	if err := t.put(v{StabilityReading, st.note}); err != nil {
		return err
	}
	if err := t.merge(5); err != nil {
		return err
	}
	if r.SensitivityNote.Kind != "" {
		if err := t.put(v{capital(NoteWords(r, r.SensitivityNote)) + ".", st.warn}); err != nil {
			return err
		}
		return t.merge(5)
	}
	return nil
}

// StabilityReading says how to read the sensitivity table.
const StabilityReading = "How to read this table: each row fits again with one choice changed and gives the agreement of its groups with the groups shown (adjusted Rand index: 1 the same, near 0 no more than chance). The other grouping methods and within-participant steps recovered planted groups less well on the tool's test families, so a low agreement under them shows what that choice does, not that the groups are in doubt. Whether the groups depend on the number of movement states is read from the fits the states were chosen among (Choosing k); where the fit kept agrees little with those at other numbers of states, the Summary marks the groups tentative."

func separatingSheet(f *excelize.File, st *styles, r *Result) error {
	g := len(r.GroupNames)
	widths := []float64{22, 15, 9, 10, 11, 11}
	for i := 0; i < 3*g; i++ {
		widths = append(widths, 12)
	}
	t, err := newTable(f, st, SheetSeparating, widths)
	if err != nil {
		return err
	}
	if err := t.freeze(2); err != nil {
		return err
	}
	note := "Descriptive only: the groups were found on these data, so the p- and q-values do not confirm a difference."
	if r.SeparationBasis != "" {
		note += " " + r.SeparationBasis
	}
	if err := t.put(v{note, st.note}); err != nil {
		return err
	}
	head := []string{"variable", "kind", "ε²", "H", "p", "q (BH)"}
	for _, n := range r.GroupNames {
		head = append(head, n+" median")
	}
	for _, n := range r.GroupNames {
		head = append(head, n+" IQR")
	}
	for _, n := range r.GroupNames {
		head = append(head, n+" Cliff δ")
	}
	if err := t.heading(head...); err != nil {
		return err
	}
	for _, s := range r.Separations {
		cells := []v{{s.Name, st.text}, {s.Kind, st.text}, {s.Epsilon2, st.dec3}, {s.H, st.dec2}, {s.P, st.pvalue}, {s.Q, st.pvalue}}
		for i := 0; i < g; i++ {
			if s.Kind == "share" {
				cells = append(cells, v{s.Median[i], st.pct})
			} else {
				cells = append(cells, st.sig3(s.Median[i]))
			}
		}
		for i := 0; i < g; i++ {
			iqr := fmt.Sprintf("%.3g – %.3g", s.Q1[i], s.Q3[i])
			if s.Kind == "share" {
				iqr = fmt.Sprintf("%.1f%% – %.1f%%", 100*s.Q1[i], 100*s.Q3[i])
			}
			cells = append(cells, v{iqr, st.text})
		}
		for i := 0; i < g; i++ {
			cells = append(cells, v{s.Delta[i], st.dec3})
		}
		if err := t.put(cells...); err != nil {
			return err
		}
	}
	for _, n := range r.NotTested {
		if err := t.put(v{n.Name, st.text}, v{NoteWords(r, n.Reason), st.text}); err != nil {
			return err
		}
	}
	if err := t.close(true); err != nil {
		return err
	}
	if len(r.Separations) == 0 {
		return nil
	}
	return colourScale(f, SheetSeparating, fmt.Sprintf("C3:C%d", 2+len(r.Separations)))
}

func statesSheet(f *excelize.File, st *styles, r *Result) error {
	widths := []float64{8, 10, 60}
	for range r.Features {
		widths = append(widths, 11)
	}
	t, err := newTable(f, st, SheetStates, widths)
	if err != nil {
		return err
	}
	if err := t.freeze(1); err != nil {
		return err
	}
	head := []string{"state", "share of windows", "description"}
	for _, name := range r.Features {
		head = append(head, "mean "+name)
	}
	if err := t.heading(head...); err != nil {
		return err
	}
	stateLines := StateLines(r)
	for s, d := range r.StateDesc {
		cells := []v{{r.StateNames[s], st.text}, {d.Share, st.pct}, {stateLines[s], st.wrap}}
		for _, m := range d.Mean {
			cells = append(cells, v{m, st.dec4})
		}
		if err := t.put(cells...); err != nil {
			return err
		}
	}
	if lt := r.Labels; lt != nil {
		t.blank()
		if err := t.put(v{"States against the known activity labels (windows)", st.title}); err != nil {
			return err
		}
		if err := t.put(v{fmt.Sprintf("adjusted Rand index %.4f, normalized mutual information %.4f", lt.ARI, lt.NMI), st.text}); err != nil {
			return err
		}
		head := []v{{"state", st.header}}
		for _, l := range lt.Labels {
			head = append(head, v{l, st.header})
		}
		if err := t.put(head...); err != nil {
			return err
		}
		for s, row := range lt.Counts {
			cells := []v{{r.StateNames[s], st.text}}
			for _, c := range row {
				cells = append(cells, v{c, st.integer})
			}
			if err := t.put(cells...); err != nil {
				return err
			}
		}
	}
	return t.close(true)
}

func choiceSheet(f *excelize.File, st *styles, r *Result) error {
	t, err := newTable(f, st, SheetChoice, []float64{14, 16, 14, 18, 16, 14})
	if err != nil {
		return err
	}
	if err := t.put(v{"Number of movement states: " + r.States.Rule, st.title}); err != nil {
		return err
	}
	if err := statesChoice(t, st, r.States); err != nil {
		return err
	}
	t.blank()
	if err := t.put(v{"Number of participant groups: " + choiceText(r), st.title}); err != nil {
		return err
	}
	if r.Grouping.Method == group.Mixture {
		return mixtureChoice(t, st, r)
	}
	if err := t.put(v{"groups", st.header}, v{"silhouette", st.header}, v{"gap", st.header}, v{"gap s.e.", st.header}, v{"stability (ARI)", st.header}, v{"chosen", st.header}); err != nil {
		return err
	}
	for _, s := range r.Grouping.Scores {
		gap, se, stab := s.Gap, s.GapSE, s.Stability
		if len(r.Grouping.Scores) == 1 {
			gap, se, stab = math.NaN(), math.NaN(), math.NaN() // not computed for a fixed number
		}
		if err := t.put(v{s.K, st.integer}, v{s.Silhouette, st.dec3}, v{gap, st.dec3}, v{se, st.dec3}, v{stab, st.dec3}, v{mark(s.K == r.Grouping.K), st.text}); err != nil {
			return err
		}
	}
	return t.close(false)
}

// mixtureChoice is the mixture method's table: each number of groups fitted, its
// log-likelihood and information criteria, and the one chosen.
func mixtureChoice(t *table, st *styles, r *Result) error {
	if err := t.put(v{"groups", st.header}, v{"log-likelihood", st.header}, v{"BIC", st.header}, v{"ICL", st.header}, v{"stability (ARI)", st.header}, v{"chosen", st.header}); err != nil {
		return err
	}
	for _, s := range r.Grouping.Scores {
		if err := t.put(v{s.K, st.integer}, v{s.LogLik, st.dec1}, v{s.BIC, st.dec1}, v{s.ICL, st.dec1}, v{s.Stability, st.dec3}, v{mark(s.K == r.Grouping.K), st.text}); err != nil {
			return err
		}
	}
	return t.close(false)
}

func mark(b bool) string {
	if b {
		return "◆ chosen"
	}
	return ""
}

func qualitySheet(f *excelize.File, st *styles, r *Result) error {
	t, err := newTable(f, st, SheetQuality, []float64{24, 10, 12, 12, 80})
	if err != nil {
		return err
	}
	for _, part := range []func(*table, *styles, *Result) error{qualityAccounting, qualityLeftOut, qualityICC} {
		if err := part(t, st, r); err != nil {
			return err
		}
	}
	return t.close(false)
}

// qualityAccounting is the accounting of participants and windows, and the policies applied.
func qualityAccounting(t *table, st *styles, r *Result) error {
	q, c := r.Quality, r.Counts()
	if err := t.put(v{"Accounting", st.title}); err != nil {
		return err
	}
	type count struct {
		a string
		n int
	}
	u := UnitWord(c, 2)
	counts := []count{{u + " in", q.UnitsIn}, {u + " grouped", c.Grouped}}
	if c.Atypical > 0 {
		counts = append(counts, count{u + " atypical (in no group)", c.Atypical})
	}
	counts = append(counts, count{u + " excluded", len(q.Excluded)})
	if c.Waves {
		counts = append(counts, count{"people in", c.PeopleIn}, count{"people with a grouped wave", c.PeopleGrouped})
	}
	counts = append(counts, count{"windows in", q.WindowsIn}, count{"windows used", q.WindowsUsed()},
		count{"windows dropped (missing cells)", q.WindowsDropped})
	if q.NonWearRule != "" {
		counts = append(counts, count{"windows left out as non-wear", q.WindowsNonWear})
	}
	if q.ValidDayRule != nil {
		counts = append(counts, count{"windows on days that were not valid", q.WindowsInvalidDays})
	}
	counts = append(counts, count{"windows of excluded " + u, q.WindowsExcluded}, count{"cells imputed", q.CellsImputed})
	for _, row := range counts {
		if err := t.put(v{row.a, st.text}, v{row.n, st.integer}); err != nil {
			return err
		}
	}
	for _, n := range q.Notes {
		if err := t.put(v{"policy applied", st.text}, v{"", st.text}, v{"", st.text}, v{"", st.text}, v{NoteWords(r, n), st.wrap}); err != nil {
			return err
		}
	}
	return nil
}

// qualityLeftOut are the participants excluded and the columns not used, each with why.
func qualityLeftOut(t *table, st *styles, r *Result) error {
	q := r.Quality
	t.blank()
	if err := t.put(v{"participant", st.header}, v{"wave", st.header}, v{"windows", st.header}, v{"", st.header}, v{"why excluded", st.header}); err != nil {
		return err
	}
	for _, e := range q.Excluded {
		if err := t.put(v{e.ID, st.text}, v{e.Wave, st.text}, v{e.Windows, st.integer}, v{"", st.text}, v{NoteWords(r, e.Reason), st.wrap}); err != nil {
			return err
		}
	}
	t.blank()
	if err := t.put(v{"column", st.header}, v{"", st.header}, v{"", st.header}, v{"", st.header}, v{"why not used", st.header}); err != nil {
		return err
	}
	for _, n := range append(append([]cohort.LeftOut(nil), q.DroppedFeatures...), q.IgnoredColumns...) {
		if err := t.put(v{n.Name, st.text}, v{"", st.text}, v{"", st.text}, v{"", st.text}, v{NoteWords(r, n.Reason), st.wrap}); err != nil {
			return err
		}
	}
	t.blank()
	return nil
}

// qualityICC is each feature's ICC(1) before and after the within step, with what it means.
func qualityICC(t *table, st *styles, r *Result) error {
	if r.Changes != nil && r.Changes.Mode == "assign" {
		if err := t.put(v{"The ICC(1) values below are those of the cohort " + modelText(r.Changes) + " was fitted on, kept in the model; they were not measured on these data.", st.note}); err != nil {
			return err
		}
		if err := t.merge(5); err != nil {
			return err
		}
	}
	if err := t.put(v{"feature", st.header}, v{"ICC(1)", st.header}, v{"within step", st.header}, v{"ICC(1) after it", st.header}, v{"meaning", st.header}); err != nil {
		return err
	}
	for j, name := range r.Norm.Features {
		touched := "untouched"
		if r.Norm.Touched[j] && r.Norm.Within.String() != "none" {
			touched = r.Norm.Within.String()
		}
		meaning := "mostly varies within participants"
		if r.Norm.ICC[j] >= 0.3 {
			meaning = "a large share of its variance lies between participants: it may carry device or person offsets"
		}
		// After the step: close to the untouched features' values when the step removed the
		// offsets; still high when it could not (an offset that changes the feature
		// non-linearly). Empty for a fit read from a model file, which does not keep it.
		after := math.NaN()
		if j < len(r.Norm.ICCAfter) {
			after = r.Norm.ICCAfter[j]
		}
		if err := t.put(v{name, st.text}, v{r.Norm.ICC[j], st.dec3}, v{touched, st.text}, v{after, st.dec3}, v{meaning, st.wrap}); err != nil {
			return err
		}
	}
	return nil
}

func settingsSheet(f *excelize.File, st *styles, r *Result) error {
	t, err := newTable(f, st, SheetSettings, []float64{28, 70, 20})
	if err != nil {
		return err
	}
	if err := t.freeze(1); err != nil {
		return err
	}
	if err := t.heading("setting", "value", ""); err != nil {
		return err
	}
	for _, s := range r.Settings {
		if err := t.put(v{s.Name, st.text}, v{s.Value, st.wrap}); err != nil {
			return err
		}
	}
	if err := t.put(v{"command", st.text}, v{r.Command, st.wrap}); err != nil {
		return err
	}
	if err := t.put(v{"tool version", st.text}, v{r.Tool + " " + r.Version, st.text}); err != nil {
		return err
	}
	if made := madeByText(r); made != "" {
		if err := t.put(v{"how the features were made", st.text}, v{made, st.wrap}); err != nil {
			return err
		}
	}
	for _, n := range analystNotes(r) {
		if err := t.put(v{"note on the method", st.text}, v{n, st.wrap}); err != nil {
			return err
		}
	}
	t.blank()
	if err := t.put(v{"input file", st.header}, v{"SHA-256", st.header}, v{"rows", st.header}); err != nil {
		return err
	}
	for _, fi := range r.Files {
		if err := t.put(v{fi.Path, st.wrap}, v{fi.SHA256, st.text}, v{fi.Rows, st.integer}); err != nil {
			return err
		}
	}
	return t.close(true)
}

// madeByText says in a line how the features were made, where the features step made them (the
// first input's record; the warnings say where the inputs differ); "" otherwise.
func madeByText(r *Result) string {
	made := job.MadeBy(r.Files)
	if made == "" {
		return ""
	}
	p, err := raw.ParseProvenance("", made)
	if err != nil {
		return "by the features step, in a record this version cannot read"
	}
	rate := "read from the times"
	if p.Rate > 0 {
		rate = strconv.FormatFloat(p.Rate, 'g', -1, 64) + " Hz"
	}
	cal := "each device autocalibrated on its still periods (van Hees et al. 2014)"
	if !p.Calibration {
		cal = "no calibration"
	}
	return fmt.Sprintf("%s, features step (features version %d): windows of %s; units %s; sampling rate %s; sensor range %g g; %s; non-wear by %s; %d features (%s)",
		p.Tool, p.Version, p.Window, p.Units, rate, p.Range, cal, p.NonWear, len(p.Features), strings.Join(p.Features, ", "))
}

// rhythmHeads are the Participants sheet's columns of rest-activity measures.
var rhythmHeads = []string{"interdaily stability (IS)", "intradaily variability (IV)", "L5 (least active 5 h)", "L5 onset (hour)", "M10 (most active 10 h)", "M10 onset (hour)", "relative amplitude (RA)"}

// boutCell is a participant's mean bout length in a state, or NaN (an empty cell) for 0: a state
// it never entered has no bout length.
func boutCell(x float64) float64 {
	if x == 0 {
		return math.NaN()
	}
	return x
}
