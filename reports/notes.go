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

// noteText is a note in words, with the options named by their Go names; a kind this version
// does not know is given by its name and numbers.
func noteText(n note.Note) string {
	if words, ok := noteWords[n.Kind]; ok {
		return words(noteArgs{n})
	}
	return fmt.Sprintf("%s %v %v %s", n.Kind, n.Ints, n.Floats, n.Option)
}

// noteArgs reads a note's numbers and names by place, 0 or "" past the end.
type noteArgs struct{ n note.Note }

func (a noteArgs) i(k int) int {
	if k < len(a.n.Ints) {
		return a.n.Ints[k]
	}
	return 0
}

func (a noteArgs) x(k int) float64 {
	if k < len(a.n.Floats) {
		return a.n.Floats[k]
	}
	return 0
}

func (a noteArgs) name(k int) string {
	if k < len(a.n.Names) {
		return a.n.Names[k]
	}
	return ""
}

func (a noteArgs) option() string { return a.n.Option }

// noteWords puts each kind of note into words.
var noteWords = map[note.Kind]func(a noteArgs) string{
	cohort.NoteNonWear: func(a noteArgs) string {
		return fmt.Sprintf("%s windows of the participants kept fell in non-wear periods and were left out (%s)", cohort.Thousands(a.i(0)), nonWearRule[a.name(0)])
	},
	cohort.NoteValidDays: func(a noteArgs) string {
		return fmt.Sprintf("valid days: %s; %s windows of the participants kept fell on other days and were left out", a.name(0), cohort.Thousands(a.i(0)))
	},
	cohort.NoteTrimmed: func(a noteArgs) string {
		return fmt.Sprintf("%d id or wave cells had spaces around them (the first at %s); the spaces were removed, so \"P6 \" and \"P6\" are one participant", a.i(0), a.name(0))
	},
	cohort.NoteSorted: func(a noteArgs) string {
		return fmt.Sprintf("windows of %d participants were not in order in the input and were sorted by %s", a.i(0), a.name(0))
	},
	cohort.NoteJoined: func(a noteArgs) string {
		return fmt.Sprintf("%d participants had windows in more than one file; their windows were joined", a.i(0))
	},
	cohort.ExcludedFewWindows: func(a noteArgs) string {
		text := fmt.Sprintf("%d usable windows, fewer than the minimum %d (%s)", a.i(0), a.i(1), a.option())
		if a.i(2) > 0 {
			text += fmt.Sprintf("; %d dropped for missing cells", a.i(2))
		}
		if a.i(3) > 0 {
			text += fmt.Sprintf("; %d left out as non-wear", a.i(3))
		}
		return text
	},
	cohort.ExcludedAllMissing: func(a noteArgs) string {
		return fmt.Sprintf("feature %s is missing in every window, so it cannot be imputed", a.name(0))
	},
	cohort.ExcludedFewValidDays: func(a noteArgs) string {
		return fmt.Sprintf("%d valid days (%g h or more of wear), fewer than the %d required (%s)", a.i(0), a.x(0), a.i(1), a.option())
	},
	cohort.ExcludedNoWeekendDay: func(a noteArgs) string {
		return fmt.Sprintf("no valid weekend day among its %d valid days (%s)", a.i(0), a.option())
	},
	cohort.LeftOutUnmatched: func(a noteArgs) string {
		return "not matched by " + a.option()
	},
	cohort.LeftOutText: func(a noteArgs) string {
		return fmt.Sprintf("text (%q), not a feature", a.name(0))
	},
	cohort.LeftOutColumnKind: func(a noteArgs) string {
		return fmt.Sprintf("%s column, not a feature", a.name(0))
	},
	cohort.LeftOutConstant: func(a noteArgs) string {
		return fmt.Sprintf("constant (%g in every window): it cannot separate anything", a.x(0))
	},
	job.LeftOutTwin: func(a noteArgs) string {
		return fmt.Sprintf("it orders every window as %s does (a monotone transform of it), so it would weigh the same information twice; left out (%s keeps it)", a.name(0), a.option())
	},
	job.LeftOutNotInModel: func(a noteArgs) string {
		return "not in the model: ignored"
	},
	job.LeftOutLabels: func(a noteArgs) string {
		return "the activity labels the model's cohort was described with; placing new data needs none, so assign reads no labels"
	},
	job.NotTestedOneGroup: func(a noteArgs) string {
		return "not tested: the participants form one group, so there are no groups to set apart"
	},
	group.NotTestedFewGroups: func(a noteArgs) string {
		return fmt.Sprintf("not tested: its values fall in %d of the groups, and a test needs two", a.i(0))
	},
	job.NoteGroupsCapped: func(a noteArgs) string {
		return fmt.Sprintf("with %d participants, up to %d groups were tried, of the up to %d asked for", a.i(0), a.i(1), a.i(2))
	},
	group.NoteAutoKMeans: func(a noteArgs) string {
		return fmt.Sprintf("%s participants are more than %s: they were grouped by k-means on the centred log-ratios, which scales, instead of Ward linkage (set %s ward-hellinger to insist)",
			cohort.Thousands(a.i(0)), cohort.Thousands(a.i(1)), a.option())
	},
	group.NoteCriteriaSample: func(a noteArgs) string {
		return fmt.Sprintf("the mean silhouettes, the gap statistic and the stability of each number of groups were computed on a reproducible sample of %s of the %s participants",
			cohort.Thousands(a.i(0)), cohort.Thousands(a.i(1)))
	},
	group.NoteGapSteady: func(a noteArgs) string {
		return fmt.Sprintf("the gap statistic and the stability step chose %d groups, a tentative grouping (bootstrap stability %.2f, below %.2f), so %d were kept, the largest smaller number whose grouping is stable (%.2f)",
			a.i(0), a.x(0), a.x(1), a.i(1), a.x(2))
	},
	group.NoteValleyCap: func(a noteArgs) string {
		return fmt.Sprintf("the rule for the number of groups chose %d, but some of those groups formed one mode with a neighbour (no density valley between them, after Hennig 2010), so %d were kept", a.i(0), a.i(1))
	},
	group.NoteSilhouetteSample: func(a noteArgs) string {
		return fmt.Sprintf("silhouettes were computed for a sample of %s participants (each against all): a full distance matrix on %s would need %s MiB",
			cohort.Thousands(a.i(0)), cohort.Thousands(a.i(1)), cohort.Thousands(a.i(2)))
	},
	group.NoteMixtureSample: func(a noteArgs) string {
		return fmt.Sprintf("the mixture was fitted on a reproducible sample of %s of the %s participants, and every participant was placed by it", cohort.Thousands(a.i(0)), cohort.Thousands(a.i(1)))
	},
	group.NoteEmptyComponents: func(a noteArgs) string {
		return fmt.Sprintf("of the %d groups the criterion chose, %d held no participant as its most probable group and were left out", a.i(0), a.i(1))
	},
}

// nonWearRule says each non-wear rule in words.
var nonWearRule = map[string]string{
	cohort.NonWearTroiano: "the rule of Troiano et al. 2008: 60 minutes or more of zero counts, with interruptions of up to 2 minutes of at most 100 counts a minute",
	cohort.NonWearChoi:    "the algorithm of Choi et al. 2011: 90 minutes or more of zero counts, with interruptions of up to 2 minutes that have 30 minutes of zeros before and after them",
	cohort.NonWearColumn:  "the wear column given, where it holds 0",
}
