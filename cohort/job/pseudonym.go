package job

import (
	"github.com/cohortmix/cohortmix/cohort/modelfile"
	"github.com/cohortmix/cohortmix/cohort/pseudonym"
)

// Pseudonymize replaces every participant id in the result by its pseudonym, so that no output
// (workbook, members CSV, model file) holds a study id.
func Pseudonymize(r *Result, key []byte) {
	for i := range r.Units {
		r.Units[i].ID = pseudonym.Of(key, r.Units[i].ID)
	}
	for i := range r.Quality.Excluded {
		r.Quality.Excluded[i].ID = pseudonym.Of(key, r.Quality.Excluded[i].ID)
	}
	if r.Changes != nil {
		for i := range r.Changes.Rows {
			r.Changes.Rows[i].ID = pseudonym.Of(key, r.Changes.Rows[i].ID)
		}
	}
	MarkPseudonymized(r)
}

// MarkPseudonymized records in the settings that the ids are pseudonyms, for a result whose ids
// were pseudonymized as they were read (cohort.ReadOptions.Pseudonym).
func MarkPseudonymized(r *Result) {
	r.Settings = append(r.Settings, modelfile.Setting{Name: "participant ids", Value: "pseudonymized (HMAC-SHA256 with the analyst's key)"})
}
