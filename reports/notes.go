package reports

import (
	"fmt"

	"github.com/cohortmix/cohortmix/cohort"
	"github.com/cohortmix/cohortmix/cohort/group"
	"github.com/cohortmix/cohortmix/cohort/note"
)

// NoteWords puts a typed note of the library into words, naming its option as the reader sets it
// (Result.OptionName). A kind this version does not know is given by its name and numbers.
func NoteWords(r *Result, n note.Note) string {
	i := func(k int) int {
		if k < len(n.Ints) {
			return n.Ints[k]
		}
		return 0
	}
	x := func(k int) float64 {
		if k < len(n.Floats) {
			return n.Floats[k]
		}
		return 0
	}
	option := n.Option
	if r != nil && r.OptionName != nil && option != "" {
		option = r.OptionName(option)
	}
	switch n.Kind {
	case group.NoteAutoKMeans:
		return fmt.Sprintf("%s participants are more than %s: they were grouped by k-means on the centred log-ratios, which scales, instead of Ward linkage (set %s ward-hellinger to insist)",
			cohort.Thousands(i(0)), cohort.Thousands(i(1)), option)
	case group.NoteCriteriaSample:
		return fmt.Sprintf("the mean silhouettes, the gap statistic and the stability of each number of groups were computed on a reproducible sample of %s of the %s participants",
			cohort.Thousands(i(0)), cohort.Thousands(i(1)))
	case group.NoteGapSteady:
		return fmt.Sprintf("the gap statistic and the stability step chose %d groups, a tentative grouping (bootstrap stability %.2f, below %.2f), so %d were kept, the largest smaller number whose grouping is stable (%.2f)",
			i(0), x(0), x(1), i(1), x(2))
	case group.NoteValleyCap:
		return fmt.Sprintf("the rule for the number of groups chose %d, but some of those groups formed one mode with a neighbour (no density valley between them, after Hennig 2010), so %d were kept", i(0), i(1))
	case group.NoteSilhouetteSample:
		return fmt.Sprintf("silhouettes were computed for a sample of %s participants (each against all): a full distance matrix on %s would need %s MiB",
			cohort.Thousands(i(0)), cohort.Thousands(i(1)), cohort.Thousands(i(2)))
	case group.NoteMixtureSample:
		return fmt.Sprintf("the mixture was fitted on a reproducible sample of %s of the %s participants, and every participant was placed by it", cohort.Thousands(i(0)), cohort.Thousands(i(1)))
	case group.NoteEmptyComponents:
		return fmt.Sprintf("of the %d groups the criterion chose, %d held no participant as its most probable group and were left out", i(0), i(1))
	}
	return fmt.Sprintf("%s %v %v %s", n.Kind, n.Ints, n.Floats, option)
}
