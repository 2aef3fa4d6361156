package reports

import (
	"fmt"
	"sort"
	"strconv"
	"strings"
)

// Counts are the numbers of participants as every sheet states them. With a wave column each
// wave of a participant is a unit of its own (a participant-wave), and people are counted apart;
// atypical units (placed by assign farther from every group than the model's members) belong to
// no group and are counted apart from the grouped ones.
type Counts struct {
	Waves                     bool // units are participant-waves
	UnitsIn, Grouped          int  // units in the input; units in a group
	Atypical, Excluded        int
	PeopleIn, PeopleGrouped   int // distinct participants, in the input and in a group
	PeopleAtypical, PeopleOut int // distinct participants with an atypical or an excluded unit
}

// Counts counts the result's participants, participant-waves and people.
func (r *Result) Counts() Counts {
	c := Counts{UnitsIn: r.Quality.UnitsIn, Excluded: len(r.Quality.Excluded)}
	in, grouped, atyp, out := map[string]bool{}, map[string]bool{}, map[string]bool{}, map[string]bool{}
	for _, u := range r.Units {
		c.Waves = c.Waves || u.Wave != ""
		in[u.ID] = true
		if u.Atypical {
			c.Atypical++
			atyp[u.ID] = true
		} else {
			c.Grouped++
			grouped[u.ID] = true
		}
	}
	for _, e := range r.Quality.Excluded {
		c.Waves = c.Waves || e.Wave != ""
		in[e.ID] = true
		out[e.ID] = true
	}
	c.PeopleIn, c.PeopleGrouped, c.PeopleAtypical, c.PeopleOut = len(in), len(grouped), len(atyp), len(out)
	return c
}

// Unit is "participant" or, with waves, "participant-wave", in the singular or plural.
func (c Counts) Unit(n int) string {
	u := "participant"
	if c.Waves {
		u = "participant-wave"
	}
	if n != 1 {
		u += "s"
	}
	return u
}

// people is " (n people)" with waves, and nothing without.
func (c Counts) people(n int) string {
	if !c.Waves {
		return ""
	}
	if n == 1 {
		return " (1 person)"
	}
	return " (" + strconv.Itoa(n) + " people)"
}

// NaturalLess orders text with the runs of digits in it taken as numbers, so that P2 comes
// before P10 and wave 9 before wave 10; otherwise it compares bytes.
func NaturalLess(a, b string) bool {
	for a != "" && b != "" {
		da, db := digitRun(a), digitRun(b)
		if da > 0 && db > 0 {
			na, nb := strings.TrimLeft(a[:da], "0"), strings.TrimLeft(b[:db], "0")
			if len(na) != len(nb) {
				return len(na) < len(nb)
			}
			if na != nb {
				return na < nb
			}
			if da != db { // the same number: fewer leading zeros first
				return da < db
			}
			a, b = a[da:], b[db:]
			continue
		}
		if a[0] != b[0] {
			return a[0] < b[0]
		}
		a, b = a[1:], b[1:]
	}
	return len(a) < len(b)
}

func digitRun(s string) int {
	n := 0
	for n < len(s) && s[n] >= '0' && s[n] <= '9' {
		n++
	}
	return n
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
		return NaturalLess(ua.Wave, ub.Wave)
	})
	return idx
}

// participantsText is the summary's line of participants: how many came in, how many are
// grouped, atypical and excluded, and with waves how many people they are.
func participantsText(c Counts) string {
	var b strings.Builder
	if c.Waves {
		fmt.Fprintf(&b, "%d %s of %d people in the input: %d grouped%s", c.UnitsIn, c.Unit(c.UnitsIn), c.PeopleIn, c.Grouped, c.people(c.PeopleGrouped))
	} else {
		fmt.Fprintf(&b, "%d in the input: %d grouped", c.UnitsIn, c.Grouped)
	}
	if c.Atypical > 0 {
		fmt.Fprintf(&b, ", %d atypical%s (farther from every group than the model's members; in no group, see %s)", c.Atypical, c.people(c.PeopleAtypical), SheetChanges)
	}
	fmt.Fprintf(&b, ", %d excluded%s (see %s)", c.Excluded, c.people(c.PeopleOut), SheetQuality)
	return b.String()
}

// capital is s with its first letter in upper case (s is plain ASCII here).
func capital(s string) string {
	if s == "" {
		return s
	}
	return strings.ToUpper(s[:1]) + s[1:]
}
