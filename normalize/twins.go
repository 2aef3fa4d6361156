package normalize

import (
	"cmp"
	"slices"
)

// minTwinValues is how many distinct values a feature needs among the windows checked before it
// can be called another's twin: fewer (a recording that starts with a night of zeros, say) say
// nothing about the order of the rest.
const minTwinValues = 50

// MonotoneTwins finds features that are monotone functions of an earlier feature on the windows
// given (rows of d features): equal values of the earlier feature go with equal values of the
// later one, and sorted by the earlier feature the later one never turns back (it may stand
// still: a log written to 4 decimals ties large counts). Such a feature (a log1p of a column of
// counts beside the counts, say) orders the windows as its twin does and is known once its twin
// is, so it adds no separation of states but a second scale on the same information, which
// weights that information twice and, where a scale stretches small values (a log), lets
// details such as a device's resting floor of a few counts set states of their own. twin[j] is
// the earlier feature j is a twin of, or −1.
func MonotoneTwins(rows []float64, d int) []int {
	n := len(rows) / d
	twin := make([]int, d)
	for j := range twin {
		twin[j] = -1
	}
	if n == 0 {
		return twin
	}
	col := func(j int) []float64 {
		c := make([]float64, n)
		for i := range c {
			c[i] = rows[i*d+j]
		}
		return c
	}
	for a := 0; a < d; a++ {
		if twin[a] >= 0 {
			continue
		}
		x := col(a)
		idx := make([]int, n)
		for i := range idx {
			idx[i] = i
		}
		slices.SortFunc(idx, func(p, q int) int { return cmp.Compare(x[p], x[q]) })
		distinct := 1
		for i := 1; i < n; i++ {
			if x[idx[i]] != x[idx[i-1]] {
				distinct++
			}
		}
		if distinct < minTwinValues {
			continue
		}
		for b := a + 1; b < d; b++ {
			if twin[b] < 0 && monotoneAlong(x, col(b), idx) {
				twin[b] = a
			}
		}
	}
	return twin
}

// monotoneAlong tells whether y, read in the order idx sorts x into, is constant within equal
// values of x and, between them, never decreasing or never increasing (and not constant).
func monotoneAlong(x, y []float64, idx []int) bool {
	dir := 0
	for i := 1; i < len(idx); i++ {
		p, q := idx[i-1], idx[i]
		if x[p] == x[q] {
			if y[p] != y[q] {
				return false
			}
			continue
		}
		step := cmp.Compare(y[q], y[p])
		if step != 0 && dir != 0 && step != dir {
			return false
		}
		if step != 0 {
			dir = step
		}
	}
	return dir != 0
}
