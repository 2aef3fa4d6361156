package profile

import (
	"math"
)

// exactSum holds a sum of floating-point numbers exactly, as non-overlapping partials, so that
// its rounded value does not depend on the order the numbers were added in: sums made on
// several machines and merged give the same bits as one sum made on one. The partials are
// grown by error-free transformations (Shewchuk JR (1997), Adaptive precision floating-point
// arithmetic and fast robust geometric predicates, Discrete Comput. Geom. 18:305–363, grow-
// expansion), and the value is the correctly rounded sum, as Python's math.fsum computes it.
// Overflow to infinity is not guarded; features are far from it.
type exactSum struct{ p []float64 }

// add adds x.
func (e *exactSum) add(x float64) {
	i := 0
	for _, y := range e.p {
		if math.Abs(x) < math.Abs(y) {
			x, y = y, x
		}
		hi := x + y
		lo := y - (hi - x)
		if lo != 0 {
			e.p[i] = lo
			i++
		}
		x = hi
	}
	e.p = append(e.p[:i], x)
}

// value is the sum, correctly rounded (round half to even).
func (e *exactSum) value() float64 {
	p := e.p
	n := len(p)
	if n == 0 {
		return 0
	}
	n--
	hi := p[n]
	var lo float64
	for n > 0 {
		x := hi
		n--
		y := p[n]
		hi = x + y
		lo = y - (hi - x)
		if lo != 0 {
			break
		}
	}
	// A half-way case: the partials below decide the direction of the rounding.
	if n > 0 && (lo < 0 && p[n-1] < 0 || lo > 0 && p[n-1] > 0) {
		y := lo * 2
		x := hi + y
		if y == x-hi {
			hi = x
		}
	}
	return hi
}
