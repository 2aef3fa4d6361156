package reports

import (
	"fmt"
	"math"
	"sort"
	"strings"
	"time"

	"github.com/cohortmix/cohortmix/profile"
)

// StateWordsOf puts every state of a result into words (DescribeStates).
func StateWordsOf(r *Result) []StateWords {
	return DescribeStates(r.StateDesc, r.Features, r.StateNames, r.Labels, r.WindowLength)
}

// StateLines describes each state of a result in a line (StateWords.Sentence).
func StateLines(r *Result) []string {
	ws := StateWordsOf(r)
	out := make([]string, len(ws))
	for s, w := range ws {
		out[s] = w.Sentence()
	}
	return out
}

// GroupLines describes each group of a result in a line: its size and how its mixture of states
// and bouts differs from the average of all grouped participants, and with the day-part
// signature where in the day it differs most; with one group, the spread of the cohort.
func GroupLines(r *Result) []string {
	names := ShortNames(StateWordsOf(r))
	lines := groupLines(r, names)
	if r.DayPartCounts != nil {
		for c, clause := range partLines(r.DayPartCounts, len(names), r.DayParts, names) {
			if clause != "" {
				lines[c] += "; by time of day, " + clause
			}
		}
	}
	return lines
}

// partLines says, for each group found on the day-part signature, the part of the day and the
// state in which its share of time differs most above the cohort's (in points of the share of
// that part of the day), as "more S3 vigorous movement in the morning (60% of their morning
// against 35% on average)"; "" where no share stands 5 points above.
func partLines(sum [][]float64, k int, parts profile.DayParts, stateNames []string) []string {
	p, groups := len(parts), len(sum)-1
	within := func(c, part, j int) float64 { // share of state j within the part
		var total float64
		for s := 0; s < k; s++ {
			total += sum[c][part*k+s]
		}
		if total == 0 {
			return math.NaN()
		}
		return sum[c][part*k+j] / total
	}
	out := make([]string, groups)
	for c := 0; c < groups; c++ {
		best, bp, bj := 0.05, -1, -1
		for part := 0; part < p; part++ {
			for j := 0; j < k; j++ {
				if d := within(c, part, j) - within(groups, part, j); d > best { // false for NaN
					best, bp, bj = d, part, j
				}
			}
		}
		if bp >= 0 {
			name := parts.Name(bp)
			out[c] = fmt.Sprintf("more %s in the %s (%s of their %s against %s on average)", stateNames[bj], name, Percent(within(c, bp, bj)), name, Percent(within(groups, bp, bj)))
		}
	}
	return out
}

// groupLines describes each group in a line, from its mixture against the mean of the grouped
// units (the result's means); atypical units (in no group) are left out. With waves it counts participant-waves and
// people apart.
func groupLines(r *Result, stateNames []string) []string {
	units, window := r.Units, r.WindowLength
	waves := false
	groups := make([]int, len(units)) // atypical units: -1, in no group
	for i, u := range units {
		waves = waves || u.Wave != ""
		groups[i] = u.Group
		if u.Atypical {
			groups[i] = -1
		}
	}
	if r.Grouping.K == 1 {
		return []string{spreadLine(r, groups, stateNames, waves)}
	}
	meanShare, meanBout := r.CohortMeans()
	groupShares, sizes, _ := r.GroupMeans()
	groupBouts := r.GroupBouts()
	lines := make([]string, len(groupShares))
	for c := range lines {
		n := sizes[c]
		if n == 0 {
			lines[c] = "no participants in this run"
			continue
		}
		count := fmt.Sprintf("%d participants", n)
		if n == 1 {
			count = "1 participant"
		}
		if waves {
			people := map[string]bool{}
			for i := range units {
				if groups[i] == c {
					people[units[i].ID] = true
				}
			}
			count = fmt.Sprintf("%d participant-waves of %d people", n, len(people))
		}
		what := "close to the average mixture of all grouped participants"
		if parts := differences(groupShares[c], meanShare, groupBouts[c], meanBout, stateNames, window); len(parts) > 0 {
			what = strings.Join(parts, ", ") + " than the others"
		}
		lines[c] = count + ": " + what
	}
	return lines
}

// differences are the clauses that say how a group's mixture (share, bout) stands from the
// cohort's (meanShare, meanBout): the state it spends most more time in and most less, and the
// state whose bouts are most longer or shorter, each by more than a tenth. A difference is told
// only when its numbers, as printed, differ.
func differences(share, meanShare, bout, meanBout []float64, stateNames []string, window time.Duration) []string {
	type diff struct {
		j int
		r float64
	}
	var ds, db []diff
	for j := range stateNames {
		if meanShare[j] > 0 && Percent(share[j]) != Percent(meanShare[j]) {
			ds = append(ds, diff{j, share[j]/meanShare[j] - 1})
		}
		if meanBout[j] > 0 && bout[j] > 0 && boutText(bout[j], window) != boutText(meanBout[j], window) { // false for NaN: no one in the state
			db = append(db, diff{j, bout[j]/meanBout[j] - 1})
		}
	}
	sort.SliceStable(ds, func(a, b int) bool { return ds[a].r > ds[b].r })
	sort.SliceStable(db, func(a, b int) bool { return db[a].r > db[b].r })
	var parts []string
	if len(ds) > 0 && ds[0].r > 0.1 {
		j := ds[0].j
		parts = append(parts, "more time in "+withNote(stateNames[j], Percent(share[j])+" of their time against "+Percent(meanShare[j])+" on average"))
	}
	if len(ds) > 1 && ds[len(ds)-1].r < -0.1 {
		j := ds[len(ds)-1].j
		parts = append(parts, "less in "+withNote(stateNames[j], Percent(share[j])+" against "+Percent(meanShare[j])))
	}
	if len(db) > 0 {
		longer, shorter := db[0], db[len(db)-1]
		switch {
		case longer.r > 0.1 && longer.r >= -shorter.r:
			parts = append(parts, "longer bouts of "+withNote(stateNames[longer.j], boutText(bout[longer.j], window)+" against "+boutText(meanBout[longer.j], window)))
		case shorter.r < -0.1:
			parts = append(parts, "shorter bouts of "+withNote(stateNames[shorter.j], boutText(bout[shorter.j], window)+" against "+boutText(meanBout[shorter.j], window)))
		}
	}
	return parts
}

// spreadLine describes participants who form one group: how many, and for each state the
// median share of time and the range of the middle 80 % (10th to 90th percentile), with the
// median bout length, so that the reader sees the spread where there are no groups to compare.
func spreadLine(r *Result, groups []int, stateNames []string, waves bool) string {
	n := 0
	people := map[string]bool{}
	for i, gr := range groups {
		if gr == 0 {
			n++
			people[r.Units[i].ID] = true
		}
	}
	count := fmt.Sprintf("%d participants", n)
	if waves {
		count = fmt.Sprintf("%d participant-waves of %d people", n, len(people))
	}
	var parts []string
	for j, sp := range r.Spread() {
		part := fmt.Sprintf("%s %s of their time (10th–90th percentile %s–%s)", stateNames[j], Percent(sp.Median), Percent(sp.P10), Percent(sp.P90))
		if !math.IsNaN(sp.Bout) {
			part += ", bouts of " + boutText(sp.Bout, r.WindowLength)
		}
		parts = append(parts, part)
	}
	return count + ", with no distinct groups: their mixtures of states vary around one common pattern. In the median, " + strings.Join(parts, "; ")
}

// withNote adds a note to a name in brackets, inside the brackets it may already have:
// "sitting (S1)" and "43%" give "sitting (S1, 43%)".
func withNote(name, note string) string {
	if strings.HasSuffix(name, ")") {
		return strings.TrimSuffix(name, ")") + ", " + note + ")"
	}
	return name + " (" + note + ")"
}

// boutText is a mean bout length in minutes when the window length is known, else in windows.
func boutText(windows float64, window time.Duration) string {
	if window > 0 {
		return fmt.Sprintf("%.3g min", windows*window.Minutes())
	}
	return fmt.Sprintf("%.3g windows", windows)
}
