package reports

import (
	"fmt"
	"math"
	"slices"
	"strings"

	"github.com/xuri/excelize/v2"

	"github.com/cohortmix/cohortmix/cohort"
	"github.com/cohortmix/cohortmix/cohort/group"
	"github.com/cohortmix/cohortmix/cohort/job"
	"github.com/cohortmix/cohortmix/cohort/note"
	"github.com/cohortmix/cohortmix/profile"
)

// summarySheet is the first screen, for a clinician reading without the analyst: what the
// workbook is, the groups and the states in plain words, the cautions, a guide to the sheets,
// and then the details. Method names and codes stay on the Settings sheet.
func summarySheet(f *excelize.File, st *styles, r *Result) error {
	t, err := newTable(f, st, SheetSummary, []float64{26, 100})
	if err != nil {
		return err
	}
	sp := summaryPage{t: t, st: st, r: r}
	for _, part := range []func() error{sp.head, sp.groups, sp.states, sp.cautions, sp.guideAndDetails} {
		if err := part(); err != nil {
			return err
		}
	}
	return t.close(false)
}

// summaryPage is the Summary sheet as it is written, part by part.
type summaryPage struct {
	t  *table
	st *styles
	r  *Result
}

func (sp summaryPage) put(a, b string) error { return sp.t.put(v{a, sp.st.header}, v{b, sp.st.wrap}) }
func (sp summaryPage) title(s string) error  { return sp.t.put(v{s, sp.st.title}) }

// head is the title, the mark of synthetic data and the run in short.
func (sp summaryPage) head() error {
	if err := sp.title(summaryTitle(sp.r)); err != nil {
		return err
	}
	if sp.r.Synthetic {
		if err := sp.t.put(v{"SYNTHETIC DATA", sp.st.warn}, v{"Every participant in this workbook is invented by the tool's demo generator; no real person's data is in it.", sp.st.warn}); err != nil {
			return err
		}
	}
	if err := sp.put("In short", inShort(sp.r)); err != nil {
		return err
	}
	sp.t.blank()
	return nil
}

// groups is each group in a line, marked where it is not reproducible or not stable, with who
// moved since a model, the grouping's stability as a whole and the states' say in it.
func (sp summaryPage) groups() error {
	r := sp.r
	groupsTitle := "Groups"
	if r.Grouping.K == 1 {
		groupsTitle = "No distinct groups"
	}
	if err := sp.title(groupsTitle); err != nil {
		return err
	}
	groupLines := GroupLines(r)
	for g, name := range r.GroupNames {
		line := groupLines[g]
		switch {
		case r.Reproducibility < Unreproducible:
			line = "NOT REPRODUCIBLE (see the warning below): " + line
		case statesDisagree(r):
			line = "TENTATIVE (see the warning below): " + line
		}
		if r.Grouping.K == 1 {
			name = "All"
		}
		if gs := r.Grouping.Stability; gs != nil && gs.Jaccard[g] < group.UnstableJaccard {
			line = fmt.Sprintf("UNSTABLE: this group does not hold when the participants are drawn again (bootstrap stability %.2f, below %.2f; see %s). %s", gs.Jaccard[g], group.UnstableJaccard, SheetStability, line)
		}
		if err := sp.put(name, line); err != nil {
			return err
		}
	}
	if r.Changes != nil {
		if err := sp.put("Moved since the model", capital(MovedText(r.Changes))+" (see "+SheetChanges+")"); err != nil {
			return err
		}
	}
	if ws, ok := r.Grouping.WholeStability(); ok && ws < group.UnstableGrouping {
		if err := sp.put("The grouping as a whole", wholeUnstable(ws, r.Grouping.K)); err != nil {
			return err
		}
	}
	// Which other numbers of states group the participants otherwise, where the fits disagree
	// enough for the warning: alone, that line marked as many right groupings of the benchmark
	// families as wrong ones (docs/benchmarks.md), so it stays on the Stability sheet.
	if r.SensitivityNote.Kind != "" && statesDisagree(r) {
		if err := sp.put("Number of states", capital(NoteWords(r, r.SensitivityNote))+" (see "+SheetStability+")."); err != nil {
			return err
		}
	}
	sp.t.blank()
	return nil
}

// states is each movement state in a line.
func (sp summaryPage) states() error {
	if err := sp.title("Movement states"); err != nil {
		return err
	}
	stateLines := StateLines(sp.r)
	for s, name := range sp.r.StateNames {
		if err := sp.put(name, stateLines[s]); err != nil {
			return err
		}
	}
	sp.t.blank()
	return nil
}

// cautions are the cautions and the run's warnings.
func (sp summaryPage) cautions() error {
	for _, c := range CautionsFor(sp.r) {
		if err := sp.t.put(v{"Caution", sp.st.warn}, v{c, sp.st.note}); err != nil {
			return err
		}
	}
	for _, w := range sp.r.Warnings {
		if err := sp.t.put(v{"Warning", sp.st.warn}, v{NoteWords(sp.r, w), sp.st.note}); err != nil {
			return err
		}
	}
	sp.t.blank()
	return nil
}

// guideAndDetails are the guide to the workbook's sheets and the run's details.
func (sp summaryPage) guideAndDetails() error {
	for _, part := range []struct {
		title string
		rows  [][2]string
	}{{"The sheets of this workbook", sheetGuide(sp.r)}, {"Details", detailRows(sp.r)}} {
		if part.title == "Details" {
			sp.t.blank()
		}
		if err := sp.title(part.title); err != nil {
			return err
		}
		for _, row := range part.rows {
			if err := sp.put(row[0], row[1]); err != nil {
				return err
			}
		}
	}
	return nil
}

// summaryTitle says what kind of run the workbook comes from.
func summaryTitle(r *Result) string {
	switch {
	case r.Changes == nil:
		return "Movement groups of the cohort"
	case r.Changes.Mode == "assign":
		return "New data placed in the groups of an earlier model"
	}
	return "The cohort grouped again, with the earlier groups' names kept where they hold"
}

// modelText names the model a run started from and when it was fitted.
func modelText(c *job.Changes) string {
	s := "the model " + c.Model
	if !c.ModelCreated.IsZero() {
		s += " (fitted " + c.ModelCreated.UTC().Format("2006-01-02") + ")"
	}
	return s
}

// inShort is the one paragraph a reader needs first.
func inShort(r *Result) string {
	c := r.Counts()
	weak := 0
	for _, u := range r.Units {
		if !u.Atypical && u.Mark != job.MarkNone {
			weak++
		}
	}
	who := fmt.Sprintf("%d %s", c.Grouped, UnitWord(c, c.Grouped))
	if c.Waves {
		who += fmt.Sprintf(" (%d people)", c.PeopleGrouped)
	}
	var b strings.Builder
	switch {
	case r.Changes != nil && r.Changes.Mode == "assign":
		fmt.Fprintf(&b, "Placed with a frozen model: the new data were put into the %d movement states and %d groups of %s, without refitting. %s are in a group", r.States.K, r.Grouping.K, modelText(r.Changes), capital(who))
	case r.Changes != nil:
		fmt.Fprintf(&b, "Refitted and matched: the whole updated cohort was grouped anew, and the new states and groups were matched to those of %s, so that a group keeps its name while it is still the same group. %s were grouped into %d groups by how their time divides among %d movement states", modelText(r.Changes), capital(who), r.Grouping.K, r.States.K)
	case r.Grouping.K == 1:
		fmt.Fprintf(&b, "%s were described by how their time divides among %d movement states, learned from the windows of the whole cohort. They form no distinct groups: one common pattern, with the spread shown below, describes them better than any split into groups (see %s)", capital(who), r.States.K, SheetChoice)
	default:
		fmt.Fprintf(&b, "%s were grouped into %d groups by how their time divides among %d movement states, learned from the windows of the whole cohort", capital(who), r.Grouping.K, r.States.K)
	}
	if weak > 0 {
		fmt.Fprintf(&b, "; %d of them fit their group only weakly (see %s)", weak, SheetParticipants)
	}
	b.WriteString(".")
	if r.Changes == nil && (r.Reproducibility < Unreproducible || statesDisagree(r)) {
		b.WriteString(" Read this as tentative: the warning below says why.")
	}
	if c.Atypical > 0 {
		fmt.Fprintf(&b, " %d %s lie farther from every group than the model's own members and are in no group.", c.Atypical, UnitWord(c, c.Atypical))
	}
	if c.Excluded > 0 {
		fmt.Fprintf(&b, " %d %s had too little usable data and were left out (see %s).", c.Excluded, UnitWord(c, c.Excluded), SheetQuality)
	}
	if r.Changes != nil {
		fmt.Fprintf(&b, " %s shows who moved between groups since then.", SheetChanges)
	}
	return b.String()
}

// CautionsFor are the cautions for this run: the usual ones, with the last fitted to whether
// the groups were found on these data.
func CautionsFor(r *Result) []string {
	out := append([]string(nil), Cautions[:3]...)
	if r.Changes != nil && r.Changes.Mode == "assign" {
		return append(out, "The groups were found on the earlier data of the model, not on these; the separating-variable p- and q-values only describe how the placed participants differ.")
	}
	return append(out, Cautions[3:]...)
}

// sheetGuide lists the workbook's sheets, in tab order, with one line each.
func sheetGuide(r *Result) [][2]string {
	g := [][2]string{
		{SheetSummary, "This page: the groups and states in plain words, the cautions, and the details of the run."},
		{SheetCharts, "The groups' mixtures of states and the states' features as charts, and each group's members."},
		{SheetDefinitions, "What every measure and column means, what it may and may not be taken to show, and its published source."},
		{SheetParticipants, "One row per " + UnitWord(r.Counts(), 1) + ": group, how well it fits there, and its share of time and bout length in each state."},
	}
	if r.Changes != nil {
		g = append(g, [2]string{SheetChanges, "Who moved between groups since " + modelText(r.Changes) + ", and what became of each group."})
	}
	g = append(g, [2]string{SheetGroups, "Each group's size, fit and mean mixture of states."})
	if r.TimeOfDay != nil {
		g = append(g, [2]string{SheetTimeOfDay, "Each group's day hour by hour, its weekdays against its weekends, and its parts of the day."})
	}
	if r.Grouping.Stability != nil || len(r.Sensitivity) > 0 {
		g = append(g, [2]string{SheetStability, "How well each group holds when the participants are drawn again, and whether the groups depend on the choices of method."})
	}
	g = append(g, [2]string{SheetSeparating, "The variables that differ most between the groups, with each group's median."},
		[2]string{SheetStates, "Each movement state's mean features in the original units."},
		[2]string{SheetChoice, "How the numbers of states and groups were chosen."},
		[2]string{SheetQuality, "Every participant and window accounted for, what was left out and why, and how much each feature differs between participants."},
		[2]string{SheetSettings, "Every setting of the run, the seed, and each input file's fingerprint (SHA-256), to repeat it exactly."})
	return g
}

// detailRows are the run's particulars in words.
func detailRows(r *Result) [][2]string {
	q, c := r.Quality, r.Counts()
	window := "not known: bout lengths are counted in windows"
	if r.WindowLength > 0 {
		from := "the order column's times"
		if r.WindowSource == job.WindowGiven {
			from = "job.Options.Window"
			if r.OptionName != nil {
				from = r.OptionName(from)
			}
		}
		window = fmt.Sprintf("%s (from %s); bout lengths are given in minutes", r.WindowLength, from)
	}
	rows := [][2]string{
		{"How it was done", howDone(r)},
		{"Number of states", fmt.Sprintf("%d (%s)", r.States.K, r.States.Rule)},
		{"Number of groups", fmt.Sprintf("%d (%s)", r.Grouping.K, choiceText(r))},
		{"Reproducibility", reproducibilityText(r.Reproducibility)},
	}
	if text := statesAgreementText(r.States.Ensemble, statesDisagree(r)); text != "" {
		rows = append(rows, [2]string{"Across numbers of states", text})
	}
	rows = append(rows, [][2]string{
		{capital(UnitWord(c, 2)), participantsText(c)},
		{"Windows", windowsText(q, UnitWord(c, 2))},
		{"Window length", window},
		{"Features", fmt.Sprintf("%d used: %s", len(r.Features), join(r.Features))},
		{"Created", r.Created.UTC().Format("2006-01-02 15:04:05 UTC") + " by " + r.Tool + " " + r.Version},
	}...)
	if n := len(analystNotes(r)); n > 0 {
		rows = append(rows, [2]string{"Notes on the method", fmt.Sprintf("%d, for the analyst, on the %s sheet", n, SheetSettings)})
	}
	return rows
}

// analystNotes are the run's notes on the method and the settings: for the analyst, on the
// Settings sheet, not on the clinician's Summary.
func analystNotes(r *Result) []string {
	var notes []string
	if len(r.Grouping.Notes) > 0 {
		words := make([]string, len(r.Grouping.Notes))
		for i, n := range r.Grouping.Notes {
			words[i] = NoteWords(r, n)
		}
		notes = append(notes, strings.Join(words, "; "))
	}
	for _, n := range r.Notes {
		notes = append(notes, NoteWords(r, n))
	}
	return notes
}

// howDone tells the method in words, without codes.
func howDone(r *Result) string {
	if r.Changes != nil && r.Changes.Mode == "assign" {
		return fmt.Sprintf("Each participant's windows were standardized with the rules of %s, each window was given the nearest of its %d movement states, and each participant the nearest of its %d group centres. Nothing was refitted.", modelText(r.Changes), r.States.K, r.Grouping.K)
	}
	var within string
	switch r.Norm.Within.String() {
	case "align":
		within = "each participant's device was aligned with the movement states (its offsets were measured against the states and removed)"
		if r.Norm != nil && r.Norm.Axes != nil {
			within = "each participant's device was aligned with the movement states (how it sat turned on the body, and its offsets, were measured against the states and removed)"
		}
	case "rest":
		within = "each participant's features were shifted by the median of their quietest windows, on the features that carry device offsets"
	case "centre":
		within = "each participant's features were shifted by their own median, on the features that carry device offsets"
	case "robust-z":
		within = "each participant's features were centred and scaled by their own median and spread"
	default:
		within = "participants' features were used as measured, with no within-participant step"
	}
	method := "Ward's method on the square roots of the shares"
	switch r.Grouping.Method.String() {
	case "mixture":
		method = "a mixture model: each group has its own law of which state a bout is spent in and of how long bouts last in each state, and the number of groups, one among them, is the one the data support best by an information criterion"
	case "pam-aitchison", "pam-js":
		method = "partitioning around medoids"
	case "kmeans-clr":
		method = "k-means on the log-ratios of the shares"
	}
	given := "every window was given its nearest state"
	if r.States.PersonPrior > 0 {
		given = "every window was given the nearest state as that participant holds it (each state's centre moved a little toward the participant's own windows in it, so that a person's own way of walking or sitting stays in its state)"
	}
	return fmt.Sprintf("First %s; then every feature was put on a common scale across the cohort. %d movement states were learned from %s windows sampled from the whole cohort, and %s. The participants were grouped by how their time divides among the states (%s). The exact settings are on the %s sheet.",
		within, r.States.K, cohort.Thousands(r.States.Sampled), given, method, SheetSettings)
}

// wholeUnstable is the Summary's warning for a grouping that does not come back as a whole when
// the participants are drawn again.
func wholeUnstable(stability float64, k int) string {
	return fmt.Sprintf("TENTATIVE: when the participants are drawn again, the grouping into %d groups comes back only in part (adjusted Rand index %.2f on average, below %.2f; see %s). Another number of groups, or no clear groups at all, may describe these participants as well; read the groups as tentative.", k, stability, group.UnstableGrouping, SheetStability)
}

// statesDisagree reports whether the run warned that its groups depend on the number of states
// (job.WarnStatesDisagree).
func statesDisagree(r *Result) bool {
	return slices.ContainsFunc(r.Warnings, func(n note.Note) bool { return n.Kind == job.WarnStatesDisagree })
}

// Unreproducible is the agreement of the fits from different random starts below which the
// groups are marked as not reproducible (job.Unreproducible).
const Unreproducible = 0.8

// reproducibilityText says how alike the fits of the states from different random starts
// group the participants.
func reproducibilityText(v float64) string {
	switch {
	case math.IsNaN(v):
		return "not measured (the states were fitted once, or taken from a model)"
	case v >= Unreproducible:
		return fmt.Sprintf("%.2f: fitted again from other random starts, the movement states group the sampled participants alike (median adjusted Rand index between the fits)", v)
	}
	return fmt.Sprintf("%.2f: fitted again from other random starts, the movement states group the sampled participants differently (median adjusted Rand index between the fits, below %.2f); the grouping is not reproducible on these data", v, Unreproducible)
}

// statesAgreementText says how well the fit kept agrees with the other fits of the ensemble, at
// every number of states, and whether the run warned that its groups are tentative for it
// (warned: job.WarnStatesDisagree, below job.StatesAgree); "" when one number of states was
// fitted.
func statesAgreementText(ens []profile.EnsembleFit, warned bool) string {
	kept, lo, hi := -1, math.MaxInt, 0
	for i, e := range ens {
		lo, hi = min(lo, e.States), max(hi, e.States)
		if e.Kept {
			kept = i
		}
	}
	if kept < 0 || lo == hi {
		return ""
	}
	v := ens[kept].Agreement
	if warned {
		return fmt.Sprintf("%.2f: the fit kept and the other fits, at %d to %d states, group the sampled participants differently (their mean adjusted Rand index, below %.2f); the groups are tentative", v, lo, hi, job.StatesAgree)
	}
	return fmt.Sprintf("%.2f: the fit kept and the other fits, at %d to %d states, group the sampled participants alike enough (their mean adjusted Rand index, %.2f or more)", v, lo, hi, job.StatesAgree)
}

// windowsText accounts for the windows in a sentence: those used and where the others went.
func windowsText(q cohort.Quality, units string) string {
	s := fmt.Sprintf("%s in the input: %s used, %s dropped for missing cells", cohort.Thousands(q.WindowsIn), cohort.Thousands(q.WindowsUsed()), cohort.Thousands(q.WindowsDropped))
	if q.NonWearRule != "" {
		s += fmt.Sprintf(", %s left out as non-wear", cohort.Thousands(q.WindowsNonWear))
	}
	if q.ValidDayRule != nil {
		s += fmt.Sprintf(", %s on days that were not valid", cohort.Thousands(q.WindowsInvalidDays))
	}
	return s + fmt.Sprintf(", %s in excluded %s", cohort.Thousands(q.WindowsExcluded), units)
}
