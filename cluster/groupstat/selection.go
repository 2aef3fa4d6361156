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
	v, _ := quickSelectWithin(a, k, 2*bits.Len(uint(len(a))))
	return v
}

// selectBelow is quickSelect that also returns the largest value before place k (k ≥ 1), the
// other middle value of an even count, found among the values of the last range partitioned
// rather than the whole first half.
func selectBelow(a []float64, k int) (at, below float64) {
	at, from := quickSelectWithin(a, k, 2*bits.Len(uint(len(a))))
	return at, largestBefore(a, k, from)
}

// largestBefore is the largest of a[:k] after quickSelectWithin(a, k, …) returned from.
func largestBefore(a []float64, k, from int) float64 {
	if from >= k {
		return a[k-1]
	}
	below := a[from]
	for _, v := range a[from+1 : k] {
		below = max(below, v)
	}
	return below
}

// quickSelectWithin is quickSelect with a budget of partitioning rounds before it sorts. It
// also returns from: no value before from is larger than one after it, a[from−1] is the
// largest value before from, and from ≥ k when a[k−1] is the largest value before k.
func quickSelectWithin(a []float64, k, budget int) (float64, int) {
	lo, hi := 0, len(a)-1
	for hi-lo >= 16 {
		if budget--; budget < 0 {
			slices.Sort(a[lo : hi+1])
			return a[k], k
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
			return p, lo
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
			// a[i:e] hold p; when k > i the largest value before k is p too.
			if k > i {
				return p, k
			}
			return p, lo
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
	return a[k], k
}
