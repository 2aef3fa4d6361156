package cluster

import (
	"fmt"
	"math"

	"gonum.org/v1/gonum/mat"
)

// Rotation3 returns the proper rotation R (3×3, row-major) that best turns source vectors onto
// target vectors in the least-squares sense, given their cross-product matrix
// M = Σᵢ targetᵢ·sourceᵢᵀ (row-major, 9 values): R maximizes tr(R·Mᵀ), which minimizes
// Σᵢ ‖R·sourceᵢ − targetᵢ‖². From the singular value decomposition M = U·Σ·Vᵀ,
// R = U·diag(1, 1, det(U·Vᵀ))·Vᵀ, which excludes a reflection. Adding λ·I to M pulls R toward
// the identity, as λ pairs of a vector with itself would.
//
// References: Kabsch W (1976), A solution for the best rotation to relate two sets of vectors,
// Acta Cryst. A32:922–923; Umeyama S (1991), Least-squares estimation of transformation
// parameters between two point patterns, IEEE TPAMI 13:376–380 (the determinant correction).
func Rotation3(m []float64) ([]float64, error) {
	if len(m) != 9 {
		return nil, fmt.Errorf("cluster: Rotation3: %d values: %w; give the 3×3 cross-product matrix row by row", len(m), ErrShape)
	}
	for i, v := range m {
		if math.IsNaN(v) || math.IsInf(v, 0) {
			return nil, fmt.Errorf("cluster: Rotation3: entry %d is %v: %w", i, v, ErrNonFinite)
		}
	}
	var svd mat.SVD
	if !svd.Factorize(mat.NewDense(3, 3, append([]float64(nil), m...)), mat.SVDFull) {
		return nil, fmt.Errorf("cluster: Rotation3: the singular value decomposition did not converge: %w", ErrDomain)
	}
	var u, v mat.Dense
	svd.UTo(&u)
	svd.VTo(&v)
	var r mat.Dense
	r.Mul(&u, v.T())
	if mat.Det(&r) < 0 {
		for i := 0; i < 3; i++ { // U·diag(1, 1, −1): the last column of U changes sign
			u.Set(i, 2, -u.At(i, 2))
		}
		r.Mul(&u, v.T())
	}
	out := make([]float64, 9)
	for i := 0; i < 3; i++ {
		for j := 0; j < 3; j++ {
			out[i*3+j] = r.At(i, j)
		}
	}
	return out, nil
}
