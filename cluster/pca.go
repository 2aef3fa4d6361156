package cluster

import (
	"fmt"
	"math"

	"gonum.org/v1/gonum/mat"
)

// PCA is a frozen principal-component fit: the column means and the leading components.
type PCA struct {
	Mean       []float64  // column means subtracted before projection
	Components *mat.Dense // columns × K loadings; column c is component c, unit length
	Variance   []float64  // variance explained by each kept component (divisor n − 1)
	Ratio      []float64  // share of the total variance explained by each kept component
	TotalVar   float64    // total variance of the input (divisor n − 1)
}

// PCAOptions chooses how many components to keep: Components if > 0, else the fewest whose
// cumulative share of variance reaches VarianceTarget (in (0, 1]); both zero keeps all.
type PCAOptions struct {
	Components     int
	VarianceTarget float64
}

// FitPCA fits principal components of x through the thin singular value decomposition of the
// centred data (gonum's mat.SVD). Signs are fixed so that the entry of largest magnitude in each
// loading vector is positive (the first such entry on ties), which makes the fit deterministic.
// Reference: Jolliffe IT (2002), Principal Component Analysis, 2nd ed., Springer, §3.5 (SVD).
func FitPCA(x mat.Matrix, opts PCAOptions) (*PCA, error) {
	data, n, d, err := checkMatrix("FitPCA", x)
	if err != nil {
		return nil, err
	}
	if n < 2 {
		return nil, fmt.Errorf("cluster: FitPCA: %d row: %w; PCA needs at least 2 rows", n, ErrEmpty)
	}
	if opts.Components < 0 || opts.Components > min(n, d) {
		return nil, fmt.Errorf("cluster: FitPCA: %d components of %d×%d data: %w; choose 1…%d", opts.Components, n, d, ErrK, min(n, d))
	}
	if opts.VarianceTarget < 0 || opts.VarianceTarget > 1 || math.IsNaN(opts.VarianceTarget) {
		return nil, fmt.Errorf("cluster: FitPCA: variance target %v: %w; choose a share in (0, 1]", opts.VarianceTarget, ErrDomain)
	}
	mean := make([]float64, d)
	for i := 0; i < n; i++ {
		for j := 0; j < d; j++ {
			mean[j] += data[i*d+j]
		}
	}
	for j := range mean {
		mean[j] /= float64(n)
	}
	c := mat.NewDense(n, d, nil)
	for i := 0; i < n; i++ {
		for j := 0; j < d; j++ {
			c.Set(i, j, data[i*d+j]-mean[j])
		}
	}
	var svd mat.SVD
	if !svd.Factorize(c, mat.SVDThinV) {
		return nil, fmt.Errorf("cluster: FitPCA: singular value decomposition did not converge: %w", ErrDomain)
	}
	sv := svd.Values(nil)
	var v mat.Dense
	svd.VTo(&v)
	var total float64
	vars := make([]float64, len(sv))
	for i, s := range sv {
		vars[i] = s * s / float64(n-1)
		total += vars[i]
	}
	if total == 0 {
		return nil, fmt.Errorf("cluster: FitPCA: every column is constant: %w; PCA needs varying columns", ErrZeroVariance)
	}
	keep := len(sv)
	switch {
	case opts.Components > 0:
		keep = opts.Components
	case opts.VarianceTarget > 0:
		var cum float64
		for i := range vars {
			cum += vars[i] / total
			if cum >= opts.VarianceTarget-1e-12 {
				keep = i + 1
				break
			}
		}
	}
	comp := mat.NewDense(d, keep, nil)
	p := &PCA{Mean: mean, Components: comp, Variance: vars[:keep], Ratio: make([]float64, keep), TotalVar: total}
	for c := 0; c < keep; c++ {
		big := 0
		for j := 0; j < d; j++ {
			if math.Abs(v.At(j, c)) > math.Abs(v.At(big, c)) {
				big = j
			}
		}
		sign := 1.0
		if v.At(big, c) < 0 {
			sign = -1
		}
		for j := 0; j < d; j++ {
			comp.Set(j, c, sign*v.At(j, c))
		}
		p.Ratio[c] = vars[c] / total
	}
	return p, nil
}

// Transform projects the rows of x onto the frozen components: (x − mean)·Components.
func (p *PCA) Transform(x mat.Matrix) (*mat.Dense, error) {
	data, n, d, err := checkMatrix("PCA.Transform", x)
	if err != nil {
		return nil, err
	}
	if d != len(p.Mean) {
		return nil, fmt.Errorf("cluster: PCA.Transform: rows have %d columns, the fit %d: %w; use the same columns in the same order", d, len(p.Mean), ErrShape)
	}
	c := mat.NewDense(n, d, nil)
	for i := 0; i < n; i++ {
		for j := 0; j < d; j++ {
			c.Set(i, j, data[i*d+j]-p.Mean[j])
		}
	}
	var out mat.Dense
	out.Mul(c, p.Components)
	return &out, nil
}

// dot4 returns the dot products of l with the four rows interleaved in z (z[4j+r] is element j
// of row r), each summed from zero in the order j = 0, 1, …. It is kept out of line: inlined,
// its loop counter was kept in memory, which doubled its time.
//
//go:noinline
func dot4(z, l []float64) (s0, s1, s2, s3 float64) {
	z = z[:4*len(l)]
	for j, w := range l {
		zj := z[4*j : 4*j+4 : 4*j+4]
		s0 += zj[0] * w
		s1 += zj[1] * w
		s2 += zj[2] * w
		s3 += zj[3] * w
	}
	return
}

// TransformRow projects one row into dst (length K; nil allocates) without checking.
func (p *PCA) TransformRow(dst, x []float64) []float64 {
	_, k := p.Components.Dims()
	if dst == nil {
		dst = make([]float64, k)
	}
	raw := p.Components.RawMatrix()
	// Row by row of the loadings, so that memory is read in order; each dst[c] still sums its
	// terms in the order j = 0, 1, …, which keeps the result bit for bit that of a dot product.
	out := dst[:k]
	clear(out)
	for j, v := range x {
		v -= p.Mean[j]
		row := raw.Data[j*raw.Stride : j*raw.Stride+k]
		for c, l := range row {
			out[c] += v * l
		}
	}
	return dst
}

// TransformRows projects the rows of x (row-major, as many columns as Mean) into dst (row-major,
// k columns). It takes four rows at a time and keeps their sums in registers, so that each
// loading read serves four rows; every sum still adds its terms in the order j = 0, 1, …, from
// zero, so every value is bit for bit TransformRow's.
func (p *PCA) TransformRows(dst, x []float64) {
	d := len(p.Mean)
	_, k := p.Components.Dims()
	raw := p.Components.RawMatrix()
	n := len(x) / d
	// The loadings by component, and four centred rows.
	lt := make([]float64, k*d)
	for j := 0; j < d; j++ {
		for c := 0; c < k; c++ {
			lt[c*d+j] = raw.Data[j*raw.Stride+c]
		}
	}
	// Four centred rows, interleaved: z[4j+r] is feature j of row r.
	z := make([]float64, 4*d)
	i := 0
	for ; i+3 < n; i += 4 {
		rows := x[i*d : (i+4)*d]
		for j, m := range p.Mean {
			zj := z[4*j : 4*j+4]
			zj[0], zj[1], zj[2], zj[3] = rows[j]-m, rows[d+j]-m, rows[2*d+j]-m, rows[3*d+j]-m
		}
		out := dst[i*k : (i+4)*k]
		for c := 0; c < k; c++ {
			l := lt[c*d : (c+1)*d]
			s0, s1, s2, s3 := dot4(z, l)
			out[c], out[k+c], out[2*k+c], out[3*k+c] = s0, s1, s2, s3
		}
	}
	for ; i < n; i++ {
		p.TransformRow(dst[i*k:(i+1)*k], x[i*d:(i+1)*d])
	}
}
