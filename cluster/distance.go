package cluster

import (
	"fmt"
	"math"
	"sync"

	"gonum.org/v1/gonum/mat"
)

// Metric names a distance between two rows.
type Metric int

const (
	Euclidean     Metric = iota // √Σ(xᵢ − yᵢ)²
	SqEuclidean                 // Σ(xᵢ − yᵢ)²
	Hellinger                   // (1/√2)·‖√p − √q‖ on closed compositions; in [0, 1]
	JensenShannon               // √JS(p, q), natural logarithm, as scipy.spatial.distance.jensenshannon; in [0, √ln 2]
	Aitchison                   // ‖clr(p) − clr(q)‖ after multiplicative zero replacement
)

func (m Metric) String() string {
	switch m {
	case Euclidean:
		return "euclidean"
	case SqEuclidean:
		return "sqeuclidean"
	case Hellinger:
		return "hellinger"
	case JensenShannon:
		return "jensen-shannon"
	case Aitchison:
		return "aitchison"
	}
	return fmt.Sprintf("Metric(%d)", int(m))
}

// DefaultZeroDelta is the replacement value for zero parts used by Aitchison when none is given.
const DefaultZeroDelta = 1e-4

// Condensed is a symmetric distance matrix with a zero diagonal, stored as its upper triangle
// row by row (the layout of scipy.spatial.distance.pdist).
type Condensed struct {
	N int
	D []float64 // length N(N−1)/2
}

// CondensedBytes is the memory a condensed matrix on n points takes.
func CondensedBytes(n int) int64 { return int64(n) * int64(n-1) / 2 * 8 }

// NewCondensed wraps d, of length n(n−1)/2, as a condensed matrix on n points after checking it.
func NewCondensed(n int, d []float64) (*Condensed, error) {
	if n < 1 || len(d) != n*(n-1)/2 {
		return nil, fmt.Errorf("cluster: NewCondensed: %d distances for %d points: %w; a condensed matrix on n points has n(n−1)/2 entries", len(d), n, ErrShape)
	}
	for i, v := range d {
		if math.IsNaN(v) || math.IsInf(v, 0) || v < 0 {
			return nil, fmt.Errorf("cluster: NewCondensed: entry %d is %v: %w; distances must be finite and ≥ 0", i, v, ErrNonFinite)
		}
	}
	return &Condensed{N: n, D: d}, nil
}

// Index is the position of entry (i, j), i ≠ j, in D.
func (c *Condensed) Index(i, j int) int {
	if i > j {
		i, j = j, i
	}
	return c.N*i - i*(i+1)/2 + j - i - 1
}

// At is the distance between points i and j.
func (c *Condensed) At(i, j int) float64 {
	if i == j {
		return 0
	}
	return c.D[c.Index(i, j)]
}

// Pairwise computes the condensed matrix of metric between the rows of x. It refuses with
// ErrTooLarge, before allocating, when the matrix would take more than maxBytes (0: no limit).
// Rows are split among workers (0: GOMAXPROCS); the result does not depend on their number.
func Pairwise(x mat.Matrix, metric Metric, maxBytes int64, nworkers int) (*Condensed, error) {
	data, n, d, err := checkMatrix("Pairwise", x)
	if err != nil {
		return nil, err
	}
	if need := CondensedBytes(n); maxBytes > 0 && need > maxBytes {
		return nil, fmt.Errorf("cluster: Pairwise: %d rows need %d MiB of distances, over the %d MiB limit: %w; use k-means, or PAM on a sample with the rest assigned, or raise the limit",
			n, need>>20, maxBytes>>20, ErrTooLarge)
	}
	rows, err := transformRows(metric, data, n, d)
	if err != nil {
		return nil, err
	}
	out := &Condensed{N: n, D: make([]float64, n*(n-1)/2)}
	nw := min(workers(nworkers), max(1, n))
	var wg sync.WaitGroup
	for w := 0; w < nw; w++ {
		wg.Add(1)
		go func(w int) {
			defer wg.Done()
			for i := w; i < n; i += nw {
				xi := rows[i*d : (i+1)*d]
				base := out.Index(i, i+1)
				for j := i + 1; j < n; j++ {
					out.D[base+j-i-1] = pairDist(metric, xi, rows[j*d:(j+1)*d])
				}
			}
		}(w)
	}
	wg.Wait()
	return out, nil
}

// transformRows prepares rows so that pairDist is cheap: square roots for Hellinger, closure for
// Jensen–Shannon, centred log-ratios for Aitchison. Compositional metrics refuse negative parts.
func transformRows(metric Metric, data []float64, n, d int) ([]float64, error) {
	switch metric {
	case Euclidean, SqEuclidean:
		return data, nil
	case Hellinger, JensenShannon, Aitchison:
	default:
		return nil, fmt.Errorf("cluster: unknown metric %d: %w; use one of the Metric constants", int(metric), ErrDomain)
	}
	out := make([]float64, n*d)
	for i := 0; i < n; i++ {
		src, dst := data[i*d:(i+1)*d], out[i*d:(i+1)*d]
		var err error
		switch metric {
		case Hellinger:
			err = closure(dst, src)
			for j := range dst {
				dst[j] = math.Sqrt(dst[j] / 2) // so that ‖a − b‖ is the Hellinger distance
			}
		case JensenShannon:
			err = closure(dst, src)
		case Aitchison:
			_, err = CLR(dst, src, DefaultZeroDelta)
		}
		if err != nil {
			return nil, fmt.Errorf("cluster: %v: row %d: %w", metric, i, err)
		}
	}
	return out, nil
}

func pairDist(metric Metric, a, b []float64) float64 {
	switch metric {
	case SqEuclidean:
		return sqDist(a, b)
	case JensenShannon:
		return jsClosed(a, b)
	default:
		return math.Sqrt(sqDist(a, b))
	}
}

// closure writes x divided by its sum into dst; it refuses negative, non-finite or all-zero parts.
func closure(dst, x []float64) error {
	var s float64
	for j, v := range x {
		if v < 0 || math.IsNaN(v) || math.IsInf(v, 0) {
			return fmt.Errorf("part %d is %v: %w; compositions need finite parts ≥ 0", j, v, ErrDomain)
		}
		s += v
	}
	if s == 0 {
		return fmt.Errorf("all parts are zero: %w; a composition needs a positive total", ErrDomain)
	}
	for j, v := range x {
		dst[j] = v / s
	}
	return nil
}

// HellingerDistance is (1/√2)·‖√p − √q‖ between the closures of p and q.
func HellingerDistance(p, q []float64) (float64, error) {
	if len(p) != len(q) {
		return 0, fmt.Errorf("cluster: HellingerDistance: lengths %d and %d: %w", len(p), len(q), ErrShape)
	}
	a, b := make([]float64, len(p)), make([]float64, len(q))
	if err := closure(a, p); err != nil {
		return 0, fmt.Errorf("cluster: HellingerDistance: p: %w", err)
	}
	if err := closure(b, q); err != nil {
		return 0, fmt.Errorf("cluster: HellingerDistance: q: %w", err)
	}
	var s float64
	for j := range a {
		v := math.Sqrt(a[j]) - math.Sqrt(b[j])
		s += v * v
	}
	return math.Sqrt(s / 2), nil
}

// JensenShannonDistance is the square root of the Jensen–Shannon divergence (natural logarithm)
// between the closures of p and q; Endres & Schindelin (2003) show it is a metric.
func JensenShannonDistance(p, q []float64) (float64, error) {
	if len(p) != len(q) {
		return 0, fmt.Errorf("cluster: JensenShannonDistance: lengths %d and %d: %w", len(p), len(q), ErrShape)
	}
	a, b := make([]float64, len(p)), make([]float64, len(q))
	if err := closure(a, p); err != nil {
		return 0, fmt.Errorf("cluster: JensenShannonDistance: p: %w", err)
	}
	if err := closure(b, q); err != nil {
		return 0, fmt.Errorf("cluster: JensenShannonDistance: q: %w", err)
	}
	return jsClosed(a, b), nil
}

func jsClosed(a, b []float64) float64 {
	var s float64
	for j := range a {
		m := (a[j] + b[j]) / 2
		if a[j] > 0 {
			s += a[j] * math.Log(a[j]/m)
		}
		if b[j] > 0 {
			s += b[j] * math.Log(b[j]/m)
		}
	}
	return math.Sqrt(max(0, s/2))
}

// CLR writes the centred log-ratio of the composition x into dst (nil allocates) and returns it:
// clr(x)ⱼ = ln xⱼ − mean(ln x), after closing x to sum 1 and replacing zero parts by delta with
// the multiplicative replacement of Martín-Fernández et al. (2003), eq. (4): non-zero parts are
// scaled by (1 − Z·delta) so that the composition still sums to 1 and their ratios are kept.
// delta must lie in (0, 1/D).
func CLR(dst, x []float64, delta float64) ([]float64, error) {
	D := len(x)
	if D == 0 {
		return nil, fmt.Errorf("cluster: CLR: empty composition: %w", ErrEmpty)
	}
	if !(delta > 0 && delta*float64(D) < 1) {
		return nil, fmt.Errorf("cluster: CLR: zero replacement %v for %d parts: %w; choose 0 < delta < 1/%d", delta, D, ErrDomain, D)
	}
	if dst == nil {
		dst = make([]float64, D)
	}
	if len(dst) != D {
		return nil, fmt.Errorf("cluster: CLR: dst has %d parts, x %d: %w", len(dst), D, ErrShape)
	}
	if err := closure(dst, x); err != nil {
		return nil, fmt.Errorf("cluster: CLR: %w", err)
	}
	zeros := 0
	for _, v := range dst {
		if v == 0 {
			zeros++
		}
	}
	scale := 1 - float64(zeros)*delta
	var mean float64
	for j, v := range dst {
		if v == 0 {
			v = delta
		} else {
			v *= scale
		}
		dst[j] = math.Log(v)
		mean += dst[j]
	}
	mean /= float64(D)
	for j := range dst {
		dst[j] -= mean
	}
	return dst, nil
}

// AitchisonDistance is ‖clr(p) − clr(q)‖ with zero parts replaced by delta (see CLR).
func AitchisonDistance(p, q []float64, delta float64) (float64, error) {
	if len(p) != len(q) {
		return 0, fmt.Errorf("cluster: AitchisonDistance: lengths %d and %d: %w", len(p), len(q), ErrShape)
	}
	a, err := CLR(nil, p, delta)
	if err != nil {
		return 0, err
	}
	b, err := CLR(nil, q, delta)
	if err != nil {
		return 0, err
	}
	return math.Sqrt(sqDist(a, b)), nil
}
