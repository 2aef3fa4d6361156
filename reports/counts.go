package reports

import (
	"fmt"
	"sort"
	"strconv"
	"strings"

	"github.com/cohortmix/cohortmix/cohort"
	"github.com/cohortmix/cohortmix/cohort/job"
)

// UnitWord is "participant" or, with waves, "participant-wave", in the singular or plural.
func UnitWord(c job.Counts, n int) string {
	u := "participant"
	if c.Waves {
		u = "participant-wave"
	}
	if n != 1 {
		u += "s"
	}
	return u
}

// peopleWord is " (n people)" with waves, and nothing without.
func peopleWord(c job.Counts, n int) string {
	if !c.Waves {
		return ""
	}
	if n == 1 {
		return " (1 person)"
	}
	return " (" + strconv.Itoa(n) + " people)"
}

// unitOrder is the order the units are listed in: as they came in, with all the waves of a
// participant side by side (at the participant's first place, waves in natural order).
func unitOrder(r *Result) []int {
	first := map[string]int{}
	idx := make([]int, len(r.Units))
	for i, u := range r.Units {
		idx[i] = i
		if _, ok := first[u.ID]; !ok {
			first[u.ID] = i
		}
	}
	sort.SliceStable(idx, func(a, b int) bool {
		ua, ub := r.Units[idx[a]], r.Units[idx[b]]
		if fa, fb := first[ua.ID], first[ub.ID]; fa != fb {
			return fa < fb
		}
		return cohort.NaturalLess(ua.Wave, ub.Wave)
	})
	return idx
}

// participantsText is the summary's line of participants: how many came in, how many are
// grouped, atypical and excluded, and with waves how many people they are.
func participantsText(c job.Counts) string {
	var b strings.Builder
	if c.Waves {
		fmt.Fprintf(&b, "%d %s of %d people in the input: %d grouped%s", c.UnitsIn, UnitWord(c, c.UnitsIn), c.PeopleIn, c.Grouped, peopleWord(c, c.PeopleGrouped))
	} else {
		fmt.Fprintf(&b, "%d in the input: %d grouped", c.UnitsIn, c.Grouped)
	}
	if c.Atypical > 0 {
		fmt.Fprintf(&b, ", %d atypical%s (farther from every group than the model's members; in no group, see %s)", c.Atypical, peopleWord(c, c.PeopleAtypical), SheetChanges)
	}
	fmt.Fprintf(&b, ", %d excluded%s (see %s)", c.Excluded, peopleWord(c, c.PeopleOut), SheetQuality)
	return b.String()
}

// capital is s with its first letter in upper case (s is plain ASCII here).
func capital(s string) string {
	if s == "" {
		return s
	}
	return strings.ToUpper(s[:1]) + s[1:]
}
