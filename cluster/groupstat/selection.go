package groupstat

import (
	"math/bits"
	"slices"
)

// quickSelect reorders a so that a[k] is its k-th smallest value (from 0), with no larger value
// before it and no smaller one after, and returns it; a holds no NaN. It is Hoare's FIND
// (Hoare CAR (1961), Algorithm 65, Commun. ACM 4(7):321) with a median-of-three pivot and
// Lomuto's partition written without branches, so that its time does not depend on how well
// the branch predictor guesses the comparisons, which on real data it cannot.
//
// A range that has not halved in size after 2·log₂ n rounds (an input built against the pivot
// rule) is sorted instead, so the worst case is O(n log n), as in Musser's introselect (Musser DR
// (1997), Introspective sorting and selection algorithms, Softw. Pract. Exper. 27(8):983).
func quickSelect(a []float64, k int) float64 {
	return quickSelectWithin(a, k, 2*bits.Len(uint(len(a))))
}

// quickSelectWithin is quickSelect with a budget of partitioning rounds before it sorts.
func quickSelectWithin(a []float64, k, budget int) float64 {
	lo, hi := 0, len(a)-1
	for hi-lo >= 16 {
		if budget--; budget < 0 {
			slices.Sort(a[lo : hi+1])
			return a[k]
		}
		// The median of the first, middle and last values goes to a[hi] as the pivot.
		mid := lo + (hi-lo)/2
		if a[mid] < a[lo] {
			a[mid], a[lo] = a[lo], a[mid]
		}
		if a[hi] < a[lo] {
			a[hi], a[lo] = a[lo], a[hi]
		}
		if a[mid] < a[hi] {
			a[mid], a[hi] = a[hi], a[mid]
		}
		p := a[hi]
		// Values below p to the front: every step swaps a[i] and a[j] and moves i on when
		// a[j] < p; the values between i and j are never below p.
		i := lo
		for j := lo; j < hi; j++ {
			v := a[j]
			a[j] = a[i]
			a[i] = v
			step := 0
			if v < p {
				step = 1
			}
			i += step
		}
		a[hi], a[i] = a[i], p
		switch {
		case k < i:
			hi = i - 1
			continue
		case k == i:
			return p
		}
		// Values equal to p next to it, so that many ties cannot make the loop quadratic.
		e := i + 1
		for j := i + 1; j <= hi; j++ {
			v := a[j]
			a[j] = a[e]
			a[e] = v
			step := 0
			if v == p {
				step = 1
			}
			e += step
		}
		if k < e {
			return p
		}
		lo = e
	}
	// Insertion sort of the last few.
	for i := lo + 1; i <= hi; i++ {
		v := a[i]
		j := i
		for ; j > lo && a[j-1] > v; j-- {
			a[j] = a[j-1]
		}
		a[j] = v
	}
	return a[k]
}
