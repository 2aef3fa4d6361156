// Package groupstat tests whether a variable differs between groups and how strongly: the
// Kruskal–Wallis rank test with its ε² effect size, Cliff's delta for one group against the rest,
// and Benjamini–Hochberg q-values for many such tests.
//
// # Conventions
//
// The tests never modify their inputs, and refuse NaN values; callers drop them first and say
// so. Median and SelectKth, the selection helpers, reorder the slice they are given.
//
// # References
//
//   - Kruskal WH, Wallis WA (1952). Use of ranks in one-criterion variance analysis. JASA 47:583–621.
//   - Tomczak M, Tomczak E (2014). The need to report effect size estimates revisited. Trends Sport Sci. 21:19–25 (ε² = H/(n − 1)).
//   - Cliff N (1993). Dominance statistics: ordinal analyses to answer ordinal questions. Psychol. Bull. 114:494–509.
//   - Benjamini Y, Hochberg Y (1995). Controlling the false discovery rate. J. R. Stat. Soc. B 57:289–300.
package groupstat

import (
	"cmp"
	"errors"
	"fmt"
	"math"
	"slices"
	"sort"

	"gonum.org/v1/gonum/stat/distuv"
)

// Sentinel causes.
var (
	ErrInput = errors.New("groupstat: invalid input")
	ErrNaN   = errors.New("groupstat: value is NaN")
)

// KruskalWallisResult holds the statistic, its p-value and effect size.
type KruskalWallisResult struct {
	H        float64 // tie-corrected statistic
	DF       int     // groups − 1
	P        float64 // upper tail of χ²(DF) at H
	Epsilon2 float64 // ε² = H/(n − 1), in [0, 1]
	N        int
}

// KruskalWallis tests whether the groups' values come from one distribution, from mid-ranks with
// the tie correction 1 − Σ(t³ − t)/(n³ − n), and the χ² approximation with groups − 1 degrees of
// freedom (as scipy.stats.kruskal). It needs at least two non-empty groups and some variation.
func KruskalWallis(groups [][]float64) (*KruskalWallisResult, error) {
	type obs struct {
		v float64
		g int
	}
	var all []obs
	nonEmpty := 0
	for g, vals := range groups {
		if len(vals) > 0 {
			nonEmpty++
		}
		for i, v := range vals {
			if math.IsNaN(v) {
				return nil, fmt.Errorf("groupstat: KruskalWallis: group %d, value %d is NaN: %w; drop missing values first", g, i, ErrNaN)
			}
			all = append(all, obs{v, g})
		}
	}
	if nonEmpty < 2 {
		return nil, fmt.Errorf("groupstat: KruskalWallis: %d non-empty groups: %w; compare at least two", nonEmpty, ErrInput)
	}
	n := len(all)
	// Within a run of ties every value gets the same mid-rank, so the order inside a run, and a
	// stable sort, do not matter.
	slices.SortFunc(all, func(a, b obs) int { return cmp.Compare(a.v, b.v) })
	rankSum := make([]float64, len(groups))
	var ties float64
	for i := 0; i < n; {
		j := i
		for j < n && all[j].v == all[i].v {
			j++
		}
		mid := float64(i+j+1) / 2 // mid-rank of positions i…j−1, ranks 1-based
		for t := i; t < j; t++ {
			rankSum[all[t].g] += mid
		}
		t := float64(j - i)
		ties += t*t*t - t
		i = j
	}
	fn := float64(n)
	var h float64
	for g, vals := range groups {
		if len(vals) > 0 {
			h += rankSum[g] * rankSum[g] / float64(len(vals))
		}
	}
	h = 12/(fn*(fn+1))*h - 3*(fn+1)
	corr := 1 - ties/(fn*fn*fn-fn)
	if corr <= 0 {
		return nil, fmt.Errorf("groupstat: KruskalWallis: all %d values are equal: %w; a constant variable cannot separate groups", n, ErrInput)
	}
	h /= corr
	h = max(h, 0)
	df := nonEmpty - 1
	return &KruskalWallisResult{
		H: h, DF: df, N: n,
		P:        distuv.ChiSquared{K: float64(df)}.Survival(h),
		Epsilon2: h / (fn - 1),
	}, nil
}

// BenjaminiHochberg returns the step-up q-value of each p-value: the smallest false discovery rate
// at which it would be rejected, q₍ᵢ₎ = min over j ≥ i of m·p₍ⱼ₎/j, capped at 1.
func BenjaminiHochberg(p []float64) ([]float64, error) {
	m := len(p)
	order := make([]int, m)
	for i, v := range p {
		if math.IsNaN(v) || v < 0 || v > 1 {
			return nil, fmt.Errorf("groupstat: BenjaminiHochberg: p[%d] = %v: %w; p-values lie in [0, 1]", i, v, ErrInput)
		}
		order[i] = i
	}
	sort.SliceStable(order, func(a, b int) bool { return p[order[a]] < p[order[b]] })
	q := make([]float64, m)
	run := 1.0
	for r := m - 1; r >= 0; r-- {
		i := order[r]
		run = min(run, p[i]*float64(m)/float64(r+1))
		q[i] = run
	}
	return q, nil
}

// CliffsDelta is P(X > Y) − P(X < Y) over all pairs of x and y, in [−1, 1]. It sorts both and
// counts the pairs in one sweep, in O(m log m + n log n); the counts are exact integers.
func CliffsDelta(x, y []float64) (float64, error) {
	if len(x) == 0 || len(y) == 0 {
		return 0, fmt.Errorf("groupstat: CliffsDelta: groups of %d and %d values: %w; both need values", len(x), len(y), ErrInput)
	}
	xs, ys := append([]float64(nil), x...), append([]float64(nil), y...)
	for i, v := range ys {
		if math.IsNaN(v) {
			return 0, fmt.Errorf("groupstat: CliffsDelta: y[%d] is NaN: %w", i, ErrNaN)
		}
	}
	for i, v := range xs {
		if math.IsNaN(v) {
			return 0, fmt.Errorf("groupstat: CliffsDelta: x[%d] is NaN: %w", i, ErrNaN)
		}
	}
	slices.Sort(xs)
	slices.Sort(ys)
	// For x in increasing order, lo counts the y below it and hi those at or below it; both only
	// move forward.
	var more, less, lo, hi int
	for _, v := range xs {
		for lo < len(ys) && ys[lo] < v {
			lo++
		}
		hi = max(hi, lo)
		for hi < len(ys) && ys[hi] <= v {
			hi++
		}
		more += lo
		less += len(ys) - hi
	}
	return float64(more-less) / float64(len(x)*len(y)), nil
}

// CliffsDeltaVsRest is CliffsDelta of each group against all the other groups together, from one
// sort of all the values: in each run of tied values, a group's members are counted against
// the other groups' values below and above the run. The counts are the same integers as
// CliffsDelta's, so each value is exactly CliffsDelta(groups[g], the rest). A group that is
// empty, or that holds every value, gets NaN.
func CliffsDeltaVsRest(groups [][]float64) ([]float64, error) {
	type obs struct {
		v float64
		g int
	}
	var all []obs
	for g, vals := range groups {
		for i, v := range vals {
			if math.IsNaN(v) {
				return nil, fmt.Errorf("groupstat: CliffsDeltaVsRest: group %d, value %d is NaN: %w", g, i, ErrNaN)
			}
			all = append(all, obs{v, g})
		}
	}
	slices.SortFunc(all, func(a, b obs) int { return cmp.Compare(a.v, b.v) })
	k, n := len(groups), len(all)
	below := make([]int, k) // each group's values below the current run
	run := make([]int, k)   // each group's values in it
	more, less := make([]int64, k), make([]int64, k)
	for i := 0; i < n; {
		j := i
		for j < n && all[j].v == all[i].v {
			run[all[j].g]++
			j++
		}
		for g := range groups {
			if run[g] == 0 {
				continue
			}
			restBelow := i - below[g]
			restAbove := (n - j) - (len(groups[g]) - below[g] - run[g])
			more[g] += int64(run[g]) * int64(restBelow)
			less[g] += int64(run[g]) * int64(restAbove)
		}
		for g := range groups {
			below[g] += run[g]
			run[g] = 0
		}
		i = j
	}
	out := make([]float64, k)
	for g, vals := range groups {
		m := len(vals)
		if m == 0 || m == n {
			out[g] = math.NaN()
			continue
		}
		out[g] = float64(more[g]-less[g]) / float64(m*(n-m))
	}
	return out, nil
}

// Median returns the median of xs (NaN when empty): the middle value, or the mean of the two
// middle ones. It selects rather than sorts (SelectKth), so it takes linear expected time, and
// it reorders xs.
func Median(xs []float64) float64 {
	n := len(xs)
	if n == 0 {
		return math.NaN()
	}
	for _, v := range xs {
		if v != v { // NaN: keep the order a sort gives (NaN first)
			sort.Float64s(xs)
			return middle(xs)
		}
	}
	m := n / 2
	if n%2 == 1 {
		return SelectKth(xs, m)
	}
	hi, lo := selectBelow(xs, m)
	return (lo + hi) / 2
}

func middle(sorted []float64) float64 {
	m := len(sorted) / 2
	if len(sorted)%2 == 1 {
		return sorted[m]
	}
	return (sorted[m-1] + sorted[m]) / 2
}

// SelectKth reorders xs so that xs[k] is its k-th smallest value (from 0), with no larger value
// before it and no smaller one after, and returns it, in linear expected time (quickSelect).
// xs holds no NaN.
func SelectKth(xs []float64, k int) float64 {
	return quickSelect(xs, k)
}
