package reports

import (
	"fmt"
	"sort"
	"strings"

	"github.com/xuri/excelize/v2"

	"github.com/cohortmix/cohortmix/cohort"
	"github.com/cohortmix/cohortmix/cohort/group"
	"github.com/cohortmix/cohortmix/cohort/job"
)

// SheetChanges compares a run with the model it started from.
const SheetChanges = "Changes"

// MovedText names who moved, up to ten, with their groups before and now: "P7 (G1 → G2), …";
// "no one" when no one did.
func MovedText(c *job.Changes) string {
	moved := c.MovedRows()
	if len(moved) == 0 {
		return "no one"
	}
	var parts []string
	for i, row := range moved {
		if i == 10 {
			parts = append(parts, fmt.Sprintf("and %d more", len(moved)-10))
			break
		}
		who := row.ID
		if row.Wave != "" {
			who += " (wave " + row.Wave + ")"
		}
		parts = append(parts, fmt.Sprintf("%s: %s → %s", who, row.Previous, row.Now))
	}
	return fmt.Sprintf("%d — %s", len(moved), strings.Join(parts, "; "))
}

func changesSheet(f *excelize.File, st *styles, r *Result) error {
	c := r.Changes
	if c == nil {
		return nil
	}
	idW := 12.0
	for _, row := range c.Rows {
		idW = width(idW, row.ID)
	}
	t, err := newTable(f, st, SheetChanges, []float64{idW, 8, 14, 14, 16, 14, 16, 10})
	if err != nil {
		return err
	}
	for _, part := range []func(*table, *styles, *Result) error{changesIntro, changedGroups, changedRows} {
		if err := part(t, st, r); err != nil {
			return err
		}
	}
	return t.close(true)
}

// changesIntro says against which model the changes are, how many returned, their agreement,
// who moved, what moving means and the notes of the comparison.
func changesIntro(t *table, st *styles, r *Result) error {
	c := r.Changes
	// Counts say what they count: participant-waves and people apart when there are waves.
	waves := r.Counts().Waves
	returning := fmt.Sprintf("%d returning participants", c.Returning)
	if waves {
		returning = fmt.Sprintf("%d returning participant-waves of %d people", c.Returning, c.ReturningPeople())
	}
	intro := fmt.Sprintf("%s against %s: %s", c.Mode, c.Model, returning)
	if c.ARI == c.ARI {
		intro += fmt.Sprintf("; agreement of their old and new groups: adjusted Rand index %.3f", c.ARI)
	}
	if err := t.put(v{intro, st.note}); err != nil {
		return err
	}
	if err := t.merge(8); err != nil {
		return err
	}
	if err := t.put(v{"Moved to another group: " + MovedText(c), st.warn}); err != nil {
		return err
	}
	if err := t.merge(8); err != nil {
		return err
	}
	how := "A participant has moved when its group now is not its group in the model. The distances are to the group centres in the grouping space."
	if r.Grouping.Method == group.Mixture {
		how = "A participant has moved when its group now is not its group in the model. The mixture puts each participant in its most probable group (the probability is shown); the distances to the group centres are given for reference and need not agree with it."
	}
	if err := t.put(v{how, st.note}); err != nil {
		return err
	}
	if err := t.merge(8); err != nil {
		return err
	}
	for _, n := range c.Notes {
		if err := t.put(v{NoteWords(r, n), st.note}); err != nil {
			return err
		}
	}
	return nil
}

// changedGroups is each group's fate, and each state's with a refit.
func changedGroups(t *table, st *styles, r *Result) error {
	c := r.Changes
	waves := r.Counts().Waves
	t.blank()
	unit := "participants"
	if waves {
		unit = "participant-waves"
	}
	if err := t.put(v{"group", st.header}, v{"status", st.header}, v{"members in the model", st.header}, v{unit + " in it now", st.header}, v{"centre drift", st.header}); err != nil {
		return err
	}
	for _, g := range c.Groups {
		if err := t.put(v{g.Name, st.text}, v{g.Status, st.wrap}, v{g.Before, st.integer}, v{g.After, st.integer}, v{g.Drift, st.dec3}); err != nil {
			return err
		}
	}
	if len(c.States) > 0 {
		t.blank()
		if err := t.put(v{"state", st.header}, v{"status", st.header}, v{"", st.header}, v{"", st.header}, v{"standardized drift", st.header}); err != nil {
			return err
		}
		for _, s := range c.States {
			if err := t.put(v{s.Name, st.text}, v{s.Status, st.wrap}, v{"", st.text}, v{"", st.text}, v{s.Drift, st.dec3}); err != nil {
				return err
			}
		}
	}
	return nil
}

// changedRows is one row per participant (or wave): who moved first, then those in no group,
// the new, and the rest.
func changedRows(t *table, st *styles, r *Result) error {
	c := r.Changes
	t.blank()
	if err := t.heading("participant", "wave", "previous group", "group now", "moved", "probability of the group now", "distance now", "distance to previous"); err != nil {
		return err
	}
	rows := append([]job.ChangeRow(nil), c.Rows...)
	// Who moved first, then those in no group, the new, and the rest; within each, ids in
	// natural order (P2 before P10), waves of the same participant side by side.
	rank := func(row job.ChangeRow) int {
		switch {
		case row.Moved == "yes":
			return 0
		case row.Atypical:
			return 1
		case row.Previous == "":
			return 2
		}
		return 3
	}
	sort.SliceStable(rows, func(a, b int) bool {
		if ra, rb := rank(rows[a]), rank(rows[b]); ra != rb {
			return ra < rb
		}
		if rows[a].ID != rows[b].ID {
			return cohort.NaturalLess(rows[a].ID, rows[b].ID)
		}
		return cohort.NaturalLess(rows[a].Wave, rows[b].Wave)
	})
	for _, row := range rows {
		if err := t.put(v{row.ID, st.text}, v{row.Wave, st.text}, v{row.Previous, st.text}, v{row.Now, st.text}, v{row.Moved, st.text},
			v{row.Probability, st.dec3}, v{row.DistNow, st.dec3}, v{row.DistPrevious, st.dec3}); err != nil {
			return err
		}
	}
	return nil
}
