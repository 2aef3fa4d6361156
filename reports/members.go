package reports

import (
	"encoding/csv"
	"io"
	"strconv"
)

// WriteMembers writes the members CSV (MembersTo) to path atomically (see WriteAtomic).
func WriteMembers(path string, r *Result, force bool) error {
	return WriteAtomic(path, force, func(w io.Writer) error { return MembersTo(w, r) })
}

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
		group, flag := r.GroupNames[u.Group], u.Flag
		if u.Atypical {
			group, flag = "", "atypical"
		}
		if err := cw.Write([]string{u.ID, u.Wave, group, prob, sil, flag}); err != nil {
			return err
		}
	}
	for _, e := range r.Quality.Excluded {
		if err := cw.Write([]string{e.ID, e.Wave, "", "", "", "excluded: " + e.Reason}); err != nil {
			return err
		}
	}
	cw.Flush()
	return cw.Error()
}
