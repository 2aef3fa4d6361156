package reports

import (
	"fmt"

	"github.com/cohortmix/cohortmix/cohort"
	"github.com/cohortmix/cohortmix/cohort/group"
	"github.com/cohortmix/cohortmix/cohort/job"
	"github.com/cohortmix/cohortmix/cohort/note"
)

// NoteWords puts a typed note of the library into words, with the options it names put as the
// reader sets them (Result.OptionName; r may be nil). A kind this version does not know is given
// by its name and numbers.
func NoteWords(r *Result, n note.Note) string {
	text := noteText(n)
	if r != nil && r.OptionName != nil {
		text = r.OptionName(text)
	}
	return text
}

// noteText is a note in words, with the options named by their Go names.
func noteText(n note.Note) string {
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
	name := func(k int) string {
		if k < len(n.Names) {
			return n.Names[k]
		}
		return ""
	}
	switch n.Kind {
	case cohort.NoteNonWear:
		return fmt.Sprintf("%s windows of the participants kept fell in non-wear periods and were left out (%s)", cohort.Thousands(i(0)), nonWearRule[name(0)])
	case cohort.NoteValidDays:
		return fmt.Sprintf("valid days: %s; %s windows of the participants kept fell on other days and were left out", name(0), cohort.Thousands(i(0)))
	case cohort.NoteTrimmed:
		return fmt.Sprintf("%d id or wave cells had spaces around them (the first at %s); the spaces were removed, so \"P6 \" and \"P6\" are one participant", i(0), name(0))
	case cohort.NoteSorted:
		return fmt.Sprintf("windows of %d participants were not in order in the input and were sorted by %s", i(0), name(0))
	case cohort.NoteJoined:
		return fmt.Sprintf("%d participants had windows in more than one file; their windows were joined", i(0))
	case cohort.ExcludedFewWindows:
		text := fmt.Sprintf("%d usable windows, fewer than the minimum %d (%s)", i(0), i(1), option)
		if i(2) > 0 {
			text += fmt.Sprintf("; %d dropped for missing cells", i(2))
		}
		if i(3) > 0 {
			text += fmt.Sprintf("; %d left out as non-wear", i(3))
		}
		return text
	case cohort.ExcludedAllMissing:
		return fmt.Sprintf("feature %s is missing in every window, so it cannot be imputed", name(0))
	case cohort.ExcludedFewValidDays:
		return fmt.Sprintf("%d valid days (%g h or more of wear), fewer than the %d required (%s)", i(0), x(0), i(1), option)
	case cohort.ExcludedNoWeekendDay:
		return fmt.Sprintf("no valid weekend day among its %d valid days (%s)", i(0), option)
	case cohort.LeftOutUnmatched:
		return "not matched by " + option
	case cohort.LeftOutText:
		return fmt.Sprintf("text (%q), not a feature", name(0))
	case cohort.LeftOutColumnKind:
		return fmt.Sprintf("%s column, not a feature", name(0))
	case cohort.LeftOutConstant:
		return fmt.Sprintf("constant (%g in every window): it cannot separate anything", x(0))
	case job.LeftOutTwin:
		return fmt.Sprintf("it orders every window as %s does (a monotone transform of it), so it would weigh the same information twice; left out (%s keeps it)", name(0), option)
	case job.LeftOutNotInModel:
		return "not in the model: ignored"
	case job.LeftOutLabels:
		return "the activity labels the model's cohort was described with; placing new data needs none, so assign reads no labels"
	case job.NotTestedOneGroup:
		return "not tested: the participants form one group, so there are no groups to set apart"
	case group.NotTestedFewGroups:
		return fmt.Sprintf("not tested: its values fall in %d of the groups, and a test needs two", i(0))
	case job.NoteGroupsCapped:
		return fmt.Sprintf("with %d participants, up to %d groups were tried, of the up to %d asked for", i(0), i(1), i(2))
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

// nonWearRule says each non-wear rule in words.
var nonWearRule = map[string]string{
	cohort.NonWearTroiano: "the rule of Troiano et al. 2008: 60 minutes or more of zero counts, with interruptions of up to 2 minutes of at most 100 counts a minute",
	cohort.NonWearChoi:    "the algorithm of Choi et al. 2011: 90 minutes or more of zero counts, with interruptions of up to 2 minutes that have 30 minutes of zeros before and after them",
	cohort.NonWearColumn:  "the wear column given, where it holds 0",
}
