package group

import (
	"fmt"
	"math"
	"strconv"
	"strings"

	"gonum.org/v1/gonum/mat"

	"github.com/cohortmix/cohortmix/cluster"
	"github.com/cohortmix/cohortmix/cohort"
)

// Previous is what a refresh needs of the earlier fit.
type Previous struct {
	StateNames  []string
	StateMeans  [][]float64 // each state's mean of the original features
	Scale       []float64   // per feature, to put the means on one footing (the cohort spread)
	GroupNames  []string
	GroupShares [][]float64 // each group's mean shares over the previous states
	Cut         float64     // distance in the grouping space within which a centre is the same group
	Method      Method
}

// Next is the new fit, in its own numbering.
type Next struct {
	StateMeans  [][]float64
	GroupShares [][]float64 // over the new states
	PrevGroup   []int       // for each new unit: its previous group index, or −1 when it is new
	Labels      []int       // each new unit's new group
}

// Matching names the new fit's states and groups after the previous ones.
type Matching struct {
	StateNames []string
	StatePrev  []int     // previous index of each new state, −1 for a new state
	StateDrift []float64 // standardized distance between matched state means (NaN for new)
	GroupNames []string
	GroupPrev  []int     // previous index of each new group, −1 for a new group
	GroupDrift []float64 // distance between matched centres in the grouping space (NaN for new)
	NewStatus  []string  // per new group
	PrevStatus []string  // per previous group
	// PrevCentres are the previous groups' centres in the grouping space over the union of the
	// previous and the new states; Place maps a new signature into the same space.
	PrevCentres [][]float64
	Place       func(share []float64) []float64
}

// Match pairs new states with previous ones by the Hungarian method on centroid distance (on
// their standardized feature means), and new groups with previous ones first by their people (a
// new group holding more than half of a previous group's returning members, which make up more
// than half of its own returning members, keeps that group's name) and then by the Hungarian
// method on the distance between the rest's mean shares once the states are aligned, so that a
// group keeps its name when it is still the same group. A new group matched by its centre alone
// gets a new name when that centre lies farther than Cut from every unmatched previous one; a
// previous group left without a partner is "merged into" the new group that holds most of its
// returning members when that is at least half of them, and "gone" otherwise.
func Match(prev Previous, next Next) (*Matching, error) {
	m := &Matching{}
	if err := m.matchStates(prev, next); err != nil {
		return nil, err
	}
	pg, ng := m.groupCentres(prev, next)
	// Where did the returning members of each previous group go?
	moved := make([][]int, len(prev.GroupNames))
	for i := range moved {
		moved[i] = make([]int, len(next.GroupShares))
	}
	for u, p := range next.PrevGroup {
		if p >= 0 && p < len(moved) && next.Labels[u] >= 0 && next.Labels[u] < len(next.GroupShares) {
			moved[p][next.Labels[u]]++
		}
	}
	m.GroupDrift = make([]float64, len(next.GroupShares))
	for i := range m.GroupDrift {
		m.GroupDrift[i] = math.NaN()
	}
	gp, err := matchGroups(pg, ng, moved, prev.Method, prev.Cut, m.GroupDrift)
	if err != nil {
		return nil, err
	}
	m.GroupPrev = gp
	m.GroupNames = freshNames("G", prev.GroupNames, gp)
	m.setStatus(prev, moved)
	return m, nil
}

// matchStates matches the new states to the previous ones by their feature means, each feature
// divided by the previous model's spread (a missing mean taken as 0), and names them.
func (m *Matching) matchStates(prev Previous, next Next) error {
	std := func(rows [][]float64) *mat.Dense {
		out := mat.NewDense(len(rows), len(prev.Scale), nil)
		for i, r := range rows {
			for j, v := range r {
				s := prev.Scale[j]
				if !(s > 0) {
					s = 1
				}
				if math.IsNaN(v) {
					v = 0
				}
				out.Set(i, j, v/s)
			}
		}
		return out
	}
	if len(next.StateMeans) == 0 || len(prev.StateMeans) == 0 {
		return fmt.Errorf("group: Match: no states: %w", cohort.ErrMismatch)
	}
	sp, sd, err := cluster.MatchCentroids(std(prev.StateMeans), std(next.StateMeans))
	if err != nil {
		return fmt.Errorf("group: matching states: %w", err)
	}
	m.StatePrev, m.StateDrift = sp, sd
	m.StateNames = freshNames("S", prev.StateNames, sp)
	return nil
}

// groupCentres are the previous and the new groups' centres in the grouping space over the union
// of states (the previous states first, then the new-only ones), and m.Place, which puts a new
// participant's shares there.
func (m *Matching) groupCentres(prev Previous, next Next) (pg, ng *mat.Dense) {
	sp := m.StatePrev
	// Shares over the union of states: previous states first, then the new-only ones.
	extra := 0
	col := make([]int, len(sp))
	for j, p := range sp {
		if p >= 0 {
			col[j] = p
		} else {
			col[j] = len(prev.StateNames) + extra
			extra++
		}
	}
	width := len(prev.StateNames) + extra
	pad := func(share []float64, cols []int) []float64 {
		out := make([]float64, width)
		for j, v := range share {
			out[cols[j]] += v
		}
		return out
	}
	identity := make([]int, len(prev.StateNames))
	for i := range identity {
		identity[i] = i
	}
	pg = mat.NewDense(len(prev.GroupShares), width, nil)
	for i, s := range prev.GroupShares {
		pg.SetRow(i, Embed(prev.Method, pad(s, identity)))
	}
	ng = mat.NewDense(len(next.GroupShares), width, nil)
	for i, s := range next.GroupShares {
		ng.SetRow(i, Embed(prev.Method, pad(s, col)))
	}
	for i := range prev.GroupShares {
		m.PrevCentres = append(m.PrevCentres, append([]float64(nil), pg.RawRowView(i)...))
	}
	m.Place = func(share []float64) []float64 { return Embed(prev.Method, pad(share, col)) }
	return pg, ng
}

// setStatus says what became of each group: a new group continues a previous one or is new; a
// previous group continues, merged into the new group that holds at least half of its returning
// members, or is gone.
func (m *Matching) setStatus(prev Previous, moved [][]int) {
	gp := m.GroupPrev
	m.NewStatus = make([]string, len(gp))
	kept := make([]bool, len(prev.GroupNames))
	for i, p := range gp {
		if p >= 0 {
			kept[p] = true
			m.NewStatus[i] = "continues " + prev.GroupNames[p]
		} else {
			m.NewStatus[i] = "new"
		}
	}
	m.PrevStatus = make([]string, len(prev.GroupNames))
	for p := range prev.GroupNames {
		if kept[p] {
			for i, q := range gp {
				if q == p {
					m.PrevStatus[p] = "continues as " + m.GroupNames[i]
				}
			}
			continue
		}
		total, best := 0, 0
		for i, c := range moved[p] {
			total += c
			if c > moved[p][best] {
				best = i
			}
		}
		if total > 0 && 2*moved[p][best] >= total {
			m.PrevStatus[p] = fmt.Sprintf("merged into %s (%d of its %d returning members)", m.GroupNames[best], moved[p][best], total)
		} else {
			m.PrevStatus[p] = "gone"
		}
	}
}

// mutualMajority tells whether more than half of previous group p's returning members are in
// new group i and more than half of i's returning members come from p: the same group by its
// people, wherever its centre moved.
func mutualMajority(moved [][]int, p, i int) bool {
	fromP, intoI := 0, 0
	for _, c := range moved[p] {
		fromP += c
	}
	for _, row := range moved {
		intoI += row[i]
	}
	return 2*moved[p][i] > fromP && 2*moved[p][i] > intoI
}

// matchGroups pairs each new group (rows of ng) with a previous one (rows of pg), −1 for none:
// first the pairs that share a mutual majority of returning members, then the rest by the
// Hungarian method (cluster.MinCostMatching) on the distance between centres, where a pair
// farther apart than cut costs cut, as much as leaving both unmatched, and is then left
// unmatched: a group far from every previous one does not take the partner another new group
// is close to. It writes each pair's centre distance into drift.
func matchGroups(pg, ng *mat.Dense, moved [][]int, method Method, cut float64, drift []float64) ([]int, error) {
	np, _ := pg.Dims()
	nn, _ := ng.Dims()
	gp := make([]int, nn)
	takenP := make([]bool, np)
	var restN, restP []int
	for i := range gp {
		gp[i] = -1
		for p := 0; p < np; p++ {
			if mutualMajority(moved, p, i) {
				gp[i], takenP[p] = p, true
				drift[i] = SpaceDistance(method, pg.RawRowView(p), ng.RawRowView(i))
			}
		}
		if gp[i] < 0 {
			restN = append(restN, i)
		}
	}
	for p := 0; p < np; p++ {
		if !takenP[p] {
			restP = append(restP, p)
		}
	}
	if len(restN) == 0 || len(restP) == 0 {
		return gp, nil
	}
	cost := mat.NewDense(len(restN), len(restP), nil)
	for r, i := range restN {
		for c, p := range restP {
			cost.Set(r, c, SpaceDistance(method, pg.RawRowView(p), ng.RawRowView(i)))
		}
	}
	capped := mat.DenseCopyOf(cost)
	capped.Apply(func(_, _ int, v float64) float64 { return math.Min(v, cut) }, capped)
	match, _, err := cluster.MinCostMatching(capped)
	if err != nil {
		return nil, fmt.Errorf("group: matching groups: %w", err)
	}
	for r, c := range match {
		if c >= 0 {
			drift[restN[r]] = cost.At(r, c)
			if cost.At(r, c) <= cut {
				gp[restN[r]] = restP[c]
			}
		}
	}
	return gp, nil
}

// freshNames keeps the previous name of each matched item and gives unmatched ones the next
// unused number after prefix.
func freshNames(prefix string, prev []string, match []int) []string {
	used := map[string]bool{}
	next := 1
	for _, n := range prev {
		used[n] = true
		if v, err := strconv.Atoi(strings.TrimPrefix(n, prefix)); err == nil && v >= next {
			next = v + 1
		}
	}
	out := make([]string, len(match))
	for i, p := range match {
		if p >= 0 {
			out[i] = prev[p]
			continue
		}
		for used[prefix+strconv.Itoa(next)] {
			next++
		}
		out[i] = prefix + strconv.Itoa(next)
		used[out[i]] = true
	}
	return out
}
