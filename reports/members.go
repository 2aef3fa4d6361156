package reports

import (
	"encoding/csv"
	"io"
	"strconv"
	"strings"

	"github.com/cohortmix/cohortmix/cohort/job"
)

// MembersTo writes the plain participant, wave, group CSV for R, Stata or Python. Ids are
// written exactly as they came in, so that they join back to the study's tables; a
// participant's waves sit side by side. An atypical participant has no group and the flag
// "atypical"; an excluded one has no group and the flag "excluded: " and the reason.
func MembersTo(w io.Writer, r *Result) error {
	cw := csv.NewWriter(w)
	if err := cw.Write([]string{"participant", "wave", "group", "probability", "silhouette", "flag"}); err != nil {
		return err
	}
	for _, i := range unitOrder(r) {
		u := r.Units[i]
		sil := ""
		if u.Silhouette == u.Silhouette { // not NaN
			sil = strconv.FormatFloat(u.Silhouette, 'f', 4, 64)
		}
		prob := ""
		if u.Posterior == u.Posterior {
			prob = strconv.FormatFloat(u.Posterior, 'f', 4, 64)
		}
		group, flag := r.GroupNames[u.Group], unitFlag(r, u)
		if u.Atypical {
			group, flag = "", "atypical"
		}
		if err := cw.Write([]string{SafeCell(u.ID), SafeCell(u.Wave), SafeCell(group), prob, sil, SafeCell(flag)}); err != nil {
			return err
		}
	}
	for _, e := range r.Quality.Excluded {
		if err := cw.Write([]string{SafeCell(e.ID), SafeCell(e.Wave), "", "", "", "excluded: " + NoteWords(r, e.Reason)}); err != nil {
			return err
		}
	}
	cw.Flush()
	return cw.Error()
}

// SafeCell is a text cell as a spreadsheet opening the CSV cannot take for a formula: a cell
// that starts with =, +, -, @, a tab or a carriage return gets a leading apostrophe (the usual
// neutralisation of CSV formula injection; the README tells the CSV's readers so).
func SafeCell(s string) string {
	if s != "" && strings.ContainsRune("=+-@\t\r", rune(s[0])) {
		return "'" + s
	}
	return s
}

// unitFlag is a unit's flag in words: atypical (with its nearest group), or a weak fit.
func unitFlag(r *Result, u job.UnitRow) string {
	switch {
	case u.Atypical:
		return "atypical: farther from every group than 99% of the model's members (nearest " + r.GroupNames[u.Group] + ")"
	case u.Mark == job.MarkCloserElsewhere:
		return "weak fit: closer to another group"
	case u.Mark == job.MarkWeakFit:
		return "weak fit"
	}
	return ""
}
