package reports

import (
	"fmt"
	"sort"
	"time"

	"github.com/xuri/excelize/v2"
)

// SheetChanges compares a run with the model it started from.
const SheetChanges = "Changes"

// ChangeRow is one participant (or wave) of the new run.
type ChangeRow struct {
	ID, Wave      string
	Previous, Now string  // group names; Previous is empty for a participant new to the cohort
	Moved         string  // "no", "yes" or "new participant"
	DistNow       float64 // to the centre of its group now
	DistPrevious  float64 // to the centre of its previous group (NaN when none)
	Atypical      bool    // farther from every group than almost all fitted members (assign)
}

// GroupChange is one group's fate.
type GroupChange struct {
	Name          string
	Status        string
	Before, After int
	Drift         float64 // distance its centre moved (NaN when not matched)
}

// Changes is the record of who moved between a model and a new run.
type Changes struct {
	Mode  string // "assign" or "refresh"
	Model string // the model file it started from
	// ModelCreated is when that model was fitted.
	ModelCreated time.Time
	Rows         []ChangeRow
	Groups       []GroupChange
	States       []GroupChange // state names with their drift (refresh)
	Returning    int
	ARI          float64 // agreement of old and new groups among returning participants (NaN if < 2)
	Notes        []string
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
	intro := fmt.Sprintf("%s against %s: %d returning participants", c.Mode, c.Model, c.Returning)
	if c.ARI == c.ARI {
		intro += fmt.Sprintf("; agreement of their old and new groups: adjusted Rand index %.3f", c.ARI)
	}
	if err := t.put(v{intro, st.note}); err != nil {
		return err
	}
	for _, n := range c.Notes {
		if err := t.put(v{n, st.note}); err != nil {
			return err
		}
	}
	t.blank()
	if err := t.put(v{"group", st.header}, v{"status", st.header}, v{"members before", st.header}, v{"members after", st.header}, v{"centre drift", st.header}); err != nil {
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
	t.blank()
	if err := t.heading("participant", "wave", "previous group", "group now", "moved", "distance now", "distance to previous", "atypical"); err != nil {
		return err
	}
	rows := append([]ChangeRow(nil), c.Rows...)
	// Ids in natural order (P2 before P10); waves of the same participant side by side.
	sort.SliceStable(rows, func(a, b int) bool {
		if rows[a].ID != rows[b].ID {
			return NaturalLess(rows[a].ID, rows[b].ID)
		}
		return NaturalLess(rows[a].Wave, rows[b].Wave)
	})
	for _, row := range rows {
		at := ""
		if row.Atypical {
			at = "atypical"
		}
		if err := t.put(v{row.ID, st.text}, v{row.Wave, st.text}, v{row.Previous, st.text}, v{row.Now, st.text}, v{row.Moved, st.text},
			v{row.DistNow, st.dec3}, v{row.DistPrevious, st.dec3}, v{at, st.text}); err != nil {
			return err
		}
	}
	return t.close(true)
}
