package cluster

import (
	"errors"
	"fmt"
	"math"

	"gonum.org/v1/gonum/mat"

	"github.com/cohortmix/cohortmix/cluster/par"
)

// Sentinel causes; every error of this package wraps one of them.
var (
	ErrK            = errors.New("cluster: number of groups out of range")
	ErrNonFinite    = errors.New("cluster: value is NaN or infinite")
	ErrShape        = errors.New("cluster: sizes do not match")
	ErrEmpty        = errors.New("cluster: no data")
	ErrZeroVariance = errors.New("cluster: no variance")
	ErrTooLarge     = errors.New("cluster: memory limit exceeded")
	ErrDomain       = errors.New("cluster: value outside the method's domain")
)

// rowMajor returns the entries of x row by row, without copying when x is a compact *mat.Dense.
// The returned slice must not be written to.
func rowMajor(x mat.Matrix) (data []float64, n, d int) {
	n, d = x.Dims()
	if dx, ok := x.(*mat.Dense); ok {
		raw := dx.RawMatrix()
		if raw.Stride == d || n <= 1 {
			return raw.Data[:n*d], n, d
		}
	}
	data = make([]float64, n*d)
	for i := 0; i < n; i++ {
		for j := 0; j < d; j++ {
			data[i*d+j] = x.At(i, j)
		}
	}
	return data, n, d
}

// checkMatrix returns x's rows and an error if x is empty or holds a NaN or an infinity.
func checkMatrix(fn string, x mat.Matrix) ([]float64, int, int, error) {
	if x == nil {
		return nil, 0, 0, fmt.Errorf("cluster: %s: matrix is nil: %w", fn, ErrEmpty)
	}
	data, n, d := rowMajor(x)
	if n == 0 || d == 0 {
		return nil, 0, 0, fmt.Errorf("cluster: %s: matrix is %d×%d: %w; pass at least one row and one column", fn, n, d, ErrEmpty)
	}
	for idx, v := range data {
		if math.IsNaN(v) || math.IsInf(v, 0) {
			return nil, 0, 0, fmt.Errorf("cluster: %s: row %d, column %d is %v: %w; drop or impute that row first", fn, idx/d, idx%d, v, ErrNonFinite)
		}
	}
	return data, n, d, nil
}

func checkK(fn string, k, n int) error {
	if k < 1 || k > n {
		return fmt.Errorf("cluster: %s: k = %d with %d rows: %w; choose 1 ≤ k ≤ %d", fn, k, n, ErrK, n)
	}
	return nil
}

func workers(w int) int { return par.Workers(w) }

// sqDist is the squared Euclidean distance between two equal-length vectors.
func sqDist(a, b []float64) float64 {
	b = b[:len(a)]
	var s0, s1, s2, s3 float64
	i := 0
	for ; i+4 <= len(a); i += 4 {
		d0 := a[i] - b[i]
		d1 := a[i+1] - b[i+1]
		d2 := a[i+2] - b[i+2]
		d3 := a[i+3] - b[i+3]
		s0 += d0 * d0
		s1 += d1 * d1
		s2 += d2 * d2
		s3 += d3 * d3
	}
	for ; i < len(a); i++ {
		d := a[i] - b[i]
		s0 += d * d
	}
	return (s0 + s1) + (s2 + s3)
}
