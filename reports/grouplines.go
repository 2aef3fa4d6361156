package reports

import (
	"fmt"
	"math"
	"sort"
	"strings"
	"time"

	"github.com/cohortmix/cohortmix/cluster/groupstat"
	"github.com/cohortmix/cohortmix/cohort/job"
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
	lines := groupLines(r.Units, r.Grouping.K, names, r.WindowLength)
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
// units; atypical units (in no group) are left out. With waves it counts participant-waves and
// people apart.
func groupLines(units []job.UnitRow, groupCount int, stateNames []string, window time.Duration) []string {
	k := len(stateNames)
	shares, bouts := make([][]float64, len(units)), make([][]float64, len(units))
	groups, all := make([]int, len(units)), make([]int, len(units)) // atypical units: -1, in no group
	waves := false
	for i, u := range units {
		waves = waves || u.Wave != ""
		shares[i], bouts[i], groups[i] = u.Share, u.Bout, u.Group
		if u.Atypical {
			groups[i], all[i] = -1, -1
		}
	}
	// A bout length exists only for a state the participant entered: bouts are averaged over
	// those who did.
	overShares, _ := groupstat.GroupMeans(shares, all, 1)
	meanShare, meanBout := overShares[0], groupstat.GroupMeansOfPositive(bouts, all, 1)[0]
	if groupCount == 1 {
		return []string{spreadLine(shares, bouts, groups, stateNames, units, waves, window)}
	}
	groupShares, sizes := groupstat.GroupMeans(shares, groups, groupCount)
	groupBouts := groupstat.GroupMeansOfPositive(bouts, groups, groupCount)
	lines := make([]string, groupCount)
	for c := 0; c < groupCount; c++ {
		share, bout, n := groupShares[c], groupBouts[c], float64(sizes[c])
		people := map[string]bool{}
		for i := range units {
			if groups[i] == c {
				people[units[i].ID] = true
			}
		}
		type diff struct {
			j int
			r float64
		}
		// A difference is told only when its numbers, as printed, differ.
		var ds, db []diff
		for j := 0; j < k; j++ {
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
		what := "close to the average mixture of all grouped participants"
		if len(parts) > 0 {
			what = strings.Join(parts, ", ") + " than the others"
		}
		count := fmt.Sprintf("%d participants", int(n))
		if n == 1 {
			count = "1 participant"
		}
		if waves {
			count = fmt.Sprintf("%d participant-waves of %d people", int(n), len(people))
		}
		lines[c] = count + ": " + what
		if n == 0 {
			lines[c] = "no participants in this run"
		}
	}
	return lines
}

// spreadLine describes participants who form one group: how many, and for each state the
// median share of time and the range of the middle 80 % (10th to 90th percentile), with the
// median bout length, so that the reader sees the spread where there are no groups to compare.
func spreadLine(shares, bouts [][]float64, groups []int, stateNames []string, units []job.UnitRow, waves bool, window time.Duration) string {
	n := 0
	people := map[string]bool{}
	for i, gr := range groups {
		if gr == 0 {
			n++
			people[units[i].ID] = true
		}
	}
	count := fmt.Sprintf("%d participants", n)
	if waves {
		count = fmt.Sprintf("%d participant-waves of %d people", n, len(people))
	}
	var parts []string
	for j, name := range stateNames {
		var col, bcol []float64
		for i, gr := range groups {
			if gr == 0 {
				col = append(col, shares[i][j])
				if bouts[i][j] > 0 {
					bcol = append(bcol, bouts[i][j])
				}
			}
		}
		part := fmt.Sprintf("%s %s of their time (10th–90th percentile %s–%s)", name, Percent(groupstat.Quantile(col, 0.5)),
			Percent(groupstat.Quantile(col, 0.1)), Percent(groupstat.Quantile(col, 0.9)))
		if len(bcol) > 0 {
			part += ", bouts of " + boutText(groupstat.Quantile(bcol, 0.5), window)
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
