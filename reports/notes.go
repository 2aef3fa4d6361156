package reports

import (
	"fmt"
	"math"
	"strings"

	"github.com/cohortmix/cohortmix/cohort"
	"github.com/cohortmix/cohortmix/cohort/group"
	"github.com/cohortmix/cohortmix/cohort/job"
	"github.com/cohortmix/cohortmix/cohort/note"
	"github.com/cohortmix/cohortmix/normalize"
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

// names are the n names from Names[from] on, joined by commas; "none" when there are none.
func (a noteArgs) names(from, n int) string {
	if n == 0 || from+n > len(a.n.Names) {
		return "none"
	}
	return strings.Join(a.n.Names[from:from+n], ", ")
}

// noteWords puts each kind of note into words.
var noteWords = map[note.Kind]func(a noteArgs) string{
	cohort.NoteNonWear: func(a noteArgs) string {
		return fmt.Sprintf("%s windows of the participants kept fell in non-wear periods and were left out (%s)", cohort.Thousands(a.i(0)), nonWearRule[a.name(0)])
	},
	cohort.NoteValidDays: func(a noteArgs) string {
		rule := fmt.Sprintf("a day counts with %g h or more of wear, and a participant with %d or more such days", a.x(0), a.i(1))
		if a.i(2) == 1 {
			rule += ", one of them a Saturday or a Sunday"
		}
		if a.i(3) == 1 {
			rule += " (days by the clock the times were written in)"
		} else {
			rule += fmt.Sprintf(" (days on the wall clock of %s)", a.name(0))
		}
		return fmt.Sprintf("valid days: %s; %s windows of the participants kept fell on other days and were left out", rule, cohort.Thousands(a.i(0)))
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
	normalize.WarnWithinEverything: func(a noteArgs) string {
		return "within-participant robust z-scoring touches every feature: it erases the between-participant level differences that signatures rely on; restrict it with " + a.option()
	},
	group.WarnFarOutside: func(a noteArgs) string {
		return fmt.Sprintf("feature %s: the new participants' median is %.4g, far outside the fitted participants' range %.4g to %.4g; check its unit or scale", a.name(0), a.x(0), a.x(1), a.x(2))
	},
	job.NoteAxes: axesWords,
	job.NoteLogScales: func(a noteArgs) string {
		text := "taken on a log scale, log(x + c) with c the feature's first quartile: " + a.names(0, a.i(0))
		if a.i(1) > 0 {
			text += "; left linear as they take negative values: " + a.names(a.i(0), a.i(1))
		}
		if a.i(2) > 0 {
			text += "; left linear as a quarter or more of their values are 0 (c would be 0): " + a.names(a.i(0)+a.i(1), a.i(2))
		}
		return text
	},
	job.NoteCalibration: func(a noteArgs) string {
		if a.i(0) == a.i(1) {
			return fmt.Sprintf("sphere calibration (van Hees et al. 2014): the axis means of all %d devices were calibrated", a.i(1))
		}
		return fmt.Sprintf("sphere calibration (van Hees et al. 2014): the axis means of %d of the %d devices were calibrated; the other %d were left as read, as their windows do not reach past ±0.3 g on both sides of every axis or the fit was not a plausible calibration (gains 0.7–1.4, offsets within 0.3 g)", a.i(0), a.i(1), a.i(1)-a.i(0))
	},
	job.NoteStatesEnsemble: func(a noteArgs) string {
		var states []int
		if len(a.n.Ints) > 5 {
			states = a.n.Ints[5:]
		}
		return fmt.Sprintf("the movement states were fitted %d times (%s states, %d random starts each); the fit kept (%d states, start %d) is the one whose grouping of the %d sampled participants agrees best with the others' (median adjusted Rand index %.2f, lowest %.2f)",
			a.i(0), numbersText(states), a.i(1), a.i(2), a.i(3), a.i(4), a.x(0), a.x(1))
	},
	job.WarnNotReproducible: func(a noteArgs) string {
		return fmt.Sprintf("NOT REPRODUCIBLE: fitted again from other random starts, the movement states group the sampled participants differently (median adjusted Rand index %.2f, below %.2f). These data do not hold one grouping firmly; read the groups as tentative, and compare a run with another %s.", a.x(0), a.x(1), a.option())
	},
	job.WarnStatesDisagree: func(a noteArgs) string {
		return fmt.Sprintf("TENTATIVE: fitted at %d to %d movement states, the fits group the sampled participants differently (the fit kept agrees with the others by a mean adjusted Rand index of %.2f, below %.2f): other numbers of states give other groups. Read the groups as one possible grouping of these data; a run with %s fixed at another number shows another.", a.i(0), a.i(1), a.x(0), a.x(1), a.option())
	},
	job.NoteGaps: func(a noteArgs) string {
		return fmt.Sprintf("%d interruptions of the recording (a step to the next window over %.1f times the participant's usual one) in %d participants end the bout they fall in; the shares of time are not changed by them", a.i(0), a.x(0), a.i(1))
	},
	job.WarnMadeByUnreadable: func(a noteArgs) string {
		return fmt.Sprintf("%s: its record of how the features were made cannot be read; the features may not be comparable", madeByName(a.name(0)))
	},
	job.WarnMadeByMissing: func(a noteArgs) string {
		return fmt.Sprintf("%s has no record of the features step, whose features the model was fitted on; check that its features were made the same way", a.name(0))
	},
	job.WarnMadeByDiffers: func(a noteArgs) string {
		return fmt.Sprintf("%s: its features were made otherwise than those of %s (%s); make every wave's features with the same settings of the features step", a.name(0), madeByName(a.name(1)), a.name(2))
	},
	job.NoteGroupChanges: func(a noteArgs) string {
		return fmt.Sprintf("groups: %d kept their names, new: %s; gone: %s; merged: %s", a.i(0), a.names(0, a.i(1)), a.names(a.i(1), a.i(2)), a.names(a.i(1)+a.i(2), a.i(3)))
	},
	job.NoteStatesDepend: func(a noteArgs) string {
		var parts []string
		for k := 1; k < len(a.n.Ints); k++ {
			parts = append(parts, fmt.Sprintf("%d states (adjusted Rand index %.2f)", a.i(k), a.x(k-1)))
		}
		return fmt.Sprintf("the groups depend on the number of movement states: fitted with %s, which these data support about as well as the %d kept, the sampled participants fall into other groups; read the groups with that in mind", strings.Join(parts, " or "), a.i(0))
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

// madeByName names the data a features-step record belongs to: a file, or "" for the model's.
func madeByName(name string) string {
	if name == "" {
		return "the model's data"
	}
	return name
}

// numbersText writes numbers as "3, 4 and 5".
func numbersText(ks []int) string {
	parts := make([]string, len(ks))
	for i, k := range ks {
		parts[i] = fmt.Sprint(k)
	}
	if len(parts) <= 1 {
		return strings.Join(parts, "")
	}
	return strings.Join(parts[:len(parts)-1], ", ") + " and " + parts[len(parts)-1]
}

// axesWords says how the align step's axis means were found and what turns with them
// (job.NoteAxes).
func axesWords(a noteArgs) string {
	names := a.n.Names
	var text string
	switch a.i(0) {
	case job.AxesNone:
		return fmt.Sprintf("the align step turns no axis means (%s): it shifts each feature only", a.option())
	case job.AxesNamed:
		text = "the align step turns the axis means " + strings.Join(names[:min(3, len(names))], ", ")
	case job.AxesNotFound:
		why := "no three features are named alike but for x, y and z"
		if !math.IsNaN(a.x(0)) {
			why = fmt.Sprintf("no triple of x, y, z features has a vector length as steady as gravity's (the steadiest varies by %.0f%% of its mean)", 100*a.x(0))
		}
		return "the align step found no axis means to turn (" + why + "); it shifts each feature only; name them with " + a.option()
	default:
		text = fmt.Sprintf("the align step turns the axis means %s, %s, %s (their vector length varies by %.0f%% of its mean)", a.name(0), a.name(1), a.name(2), 100*a.x(0))
	}
	var turned []string
	at := 3
	if a.i(1) == 1 && len(names) >= 9 {
		turned = append(turned, fmt.Sprintf("the axis s.d.s %s, %s, %s and correlations %s, %s, %s as one covariance", names[3], names[4], names[5], names[6], names[7], names[8]))
		at = 9
	}
	for k := 2; k+2 < len(a.n.Ints) && at < len(names); k, at = k+3, at+1 {
		turned = append(turned, fmt.Sprintf("%s as the %s", names[at], angleWords(a.i(k), a.i(k+1) == 1, a.i(k+2) == 1)))
	}
	if len(turned) > 0 {
		text += "; with the axis means it turns " + strings.Join(turned, ", and ")
	}
	return text
}

// angleWords names an angle of the axis means: from the axis (polar) or the elevation above the
// plane normal to it, in degrees or radians.
func angleWords(axis int, polar, degrees bool) string {
	kind := "elevation above the plane normal to"
	if polar {
		kind = "angle from"
	}
	unit := "radians"
	if degrees {
		unit = "degrees"
	}
	return fmt.Sprintf("%s the %c axis, in %s", kind, "xyz"[axis%3], unit)
}
