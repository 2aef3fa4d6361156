package job

import (
	"github.com/cohortmix/cohortmix/cohort"
	"github.com/cohortmix/cohortmix/cohort/note"
	"github.com/cohortmix/cohortmix/cohort/raw"
)

// MadeBy is the record of how the features of these input files were made by the features
// step (cohort.FileInfo.MadeBy), the first one found; "" where none was made by it.
func MadeBy(files []cohort.FileInfo) string {
	for _, f := range files {
		if f.MadeBy != "" {
			return f.MadeBy
		}
	}
	return ""
}

// MadeByWarnings says where the input files' features were not made alike: a file made by the
// features step otherwise than the first such file, or, against a model (its record, "" for
// none), otherwise than the model's data. Features made otherwise measure other things, and
// their states and groups are not comparable.
func MadeByWarnings(files []cohort.FileInfo, model string) []note.Note {
	var out []note.Note
	ref, refName := model, "" // "": the model's data
	if ref == "" {
		for _, f := range files {
			if f.MadeBy != "" {
				ref, refName = f.MadeBy, f.Path
				break
			}
		}
	}
	if ref == "" {
		return nil
	}
	want, err := raw.ParseProvenance(refName, ref)
	if err != nil {
		return []note.Note{{Kind: WarnMadeByUnreadable, Names: []string{refName}}}
	}
	for _, f := range files {
		if f.MadeBy == "" {
			if model != "" {
				out = append(out, note.Note{Kind: WarnMadeByMissing, Names: []string{f.Path}})
			}
			continue
		}
		got, err := raw.ParseProvenance(f.Path, f.MadeBy)
		if err != nil {
			out = append(out, note.Note{Kind: WarnMadeByUnreadable, Names: []string{f.Path}})
			continue
		}
		if !got.Same(want) {
			out = append(out, note.Note{Kind: WarnMadeByDiffers, Names: []string{f.Path, refName, got.Differences(want)}})
		}
	}
	return out
}
