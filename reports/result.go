// Package reports writes an analysis for people: the workbook for clinicians and the plain
// members CSV for statistics programs, from a cohort/job.Result. It makes the words (the
// sentences about states and groups, the counts in prose) and formats numbers; it computes no
// result of its own.
//
// # Conventions
//
// Outputs are written atomically (cohort/scratch.WriteAtomic): to a temporary file beside the
// target, then renamed, so an interrupted run never leaves half a file. Any cell text that a
// spreadsheet could take for a formula is stored as text.
package reports

import (
	"github.com/cohortmix/cohortmix/cohort/job"
)

// Result is the job's result, which the reports show.
type Result = job.Result

// Cautions are shown wherever results reach a person's care.
var Cautions = []string{
	"These groups describe movement patterns statistically. They are not diagnoses or clinical categories.",
	"Decisions about a participant belong to qualified clinicians, under the study protocol and local rules.",
	"This workbook holds participant-level data: handle it under the study's data-protection rules.",
	"The separating-variable p- and q-values are descriptive: the groups were found on the same data, so they do not confirm a difference.",
}
