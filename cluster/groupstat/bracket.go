package groupstat

import (
	"math"
	"math/bits"
	"sync"
)

// bracketMin is the length from which kthPair brackets the wanted values with a sample before
// selecting; below it, selecting on the whole slice is as quick.
const bracketMin = 2048

// kthPair returns the k-th smallest value of xs (from 0) and, when pair is set and k > 0, the
// (k−1)-th; xs holds no NaN and may be reordered. For long slices it first brackets the wanted
// values between two order statistics of an evenly spaced sample of xs, copies the values inside
// the bracket to a buffer in one pass without branches, and selects among those only: the
// sampling idea of Floyd and Rivest (1975, Algorithm 489, Commun. ACM 18(3):173), with a filter
// pass that does not depend on the branch predictor. When the bracket misses (an unlucky
// sample), it selects on the whole slice, so the result is always exact.
func kthPair(xs []float64, k int, pair bool) (prev, kth float64) {
	n := len(xs)
	if n >= bracketMin {
		if prev, kth, ok := bracketed(xs, k, pair); ok {
			return prev, kth
		}
	}
	kth = SelectKth(xs, k)
	if pair && k > 0 {
		prev = xs[0]
		for _, v := range xs[1:k] {
			prev = max(prev, v)
		}
	}
	return prev, kth
}

// bracketed is kthPair's sampled path; ok is false when the bracket missed. xs is left as it
// was, and the values inside the bracket are copied to a scratch buffer.
func bracketed(xs []float64, k int, pair bool) (prev, kth float64, ok bool) {
	const m = 1024 // sample size
	n := len(xs)
	var sample [m]float64
	for i := range sample {
		sample[i] = xs[(2*i+1)*n/(2*m)]
	}
	// The rank of the k-th value in the sample has a standard deviation of at most √m/2 = 16
	// (binomial); a bracket of ±4 of those misses about once in 16,000 calls of random order.
	r := k * m / n
	const half = 64
	lo, hi := math.Inf(-1), math.Inf(1)
	if r+half < m {
		hi = SelectKth(sample[:], r+half)
	}
	if r-half-1 >= 0 {
		lo = SelectKth(sample[:min(r+half, m)], r-half-1)
	}
	// Copy the values in [lo, hi] to the buffer, counting those below lo. The buffer holds
	// twice the expected count, a power of two so the index can wrap instead of branching; a
	// bracket holding more (many values tied with a bound, say) is a miss.
	size := 1 << bits.Len(uint(2*(2*half+2)*n/m))
	bp := scratch.Get().(*[]float64)
	if cap(*bp) < size {
		*bp = make([]float64, size)
	}
	buf := (*bp)[:size]
	defer scratch.Put(bp)
	mask := size - 1
	c, below := 0, 0
	for _, v := range xs {
		in, lt := 0, 0
		if v >= lo {
			in = 1
		}
		if v > hi {
			in = 0
		}
		if v < lo {
			lt = 1
		}
		buf[c&mask] = v
		c += in
		below += lt
	}
	// Ranks k (and k−1 for the pair) must fall among the copied values.
	first := k
	if pair && k > 0 {
		first = k - 1
	}
	if c >= size || first < below || k >= below+c {
		return 0, 0, false
	}
	cand := buf[:c]
	kth = SelectKth(cand, k-below)
	if pair && k > 0 { // the copied values before place k−below are the smaller ones
		prev = cand[0]
		for _, v := range cand[1 : k-below] {
			prev = max(prev, v)
		}
	}
	return prev, kth, true
}

var scratch = sync.Pool{New: func() any { return new([]float64) }}
