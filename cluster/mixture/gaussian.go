package mixture

import (
	"context"
	"fmt"
	"math"

	"gonum.org/v1/gonum/mat"

	"github.com/cohortmix/cohortmix/cluster"
	"github.com/cohortmix/cohortmix/cluster/par"
)

// GaussianOptions sets up FitTiedGaussian. Zero values take the documented defaults.
type GaussianOptions struct {
	K       int     // components, 1 ≤ K ≤ rows (required)
	Starts  int     // random starts; 0 means 10 (1 when K is 1)
	MaxIter int     // EM iterations per start; 0 means 1000
	Tol     float64 // stop when the log-likelihood rises by less than Tol × |log L|; 0 means 1e-10
	// Reg is added to the covariance's diagonal, so that it stays invertible; 0 means 1e-6 (as
	// scikit-learn's reg_covar).
	Reg     float64
	Seed    uint64
	Workers int // starts run side by side; 0 means GOMAXPROCS; never changes the result
}

// Gaussian is a fitted Gaussian mixture whose components share one covariance.
type Gaussian struct {
	K, Dim    int
	Weights   []float64     // mixing weight of each component
	Means     [][]float64   // K × Dim
	Cov       *mat.SymDense // the covariance every component shares
	Posterior [][]float64   // rows × K
	Labels    []int         // each row's most probable component (ties to the lower)
	LogLik    float64
	// Params counts the free parameters: K × Dim means, Dim(Dim+1)/2 for the covariance and
	// K − 1 weights.
	Params        int
	BIC, AIC, ICL float64
	Iter, Start   int
}

// FitTiedGaussian fits a mixture of K Gaussians with one covariance shared by all to the rows
// of x, by EM from k-means starts (each start one k-means++ seeding, then Lloyd's iterations),
// and keeps the start with the highest log-likelihood. Each group is an ellipsoid of the same
// shape and orientation around its own mean: the model EEE of Fraley & Raftery (2002), the
// "tied" covariance of scikit-learn's GaussianMixture, whose M step this follows (the pooled
// within-component scatter over n, plus Reg on the diagonal).
//
// References: Dempster, Laird & Rubin (1977); Fraley & Raftery (2002), J. Am. Stat. Assoc.
// 97:611–631.
func FitTiedGaussian(ctx context.Context, x mat.Matrix, opts GaussianOptions) (*Gaussian, error) {
	rows, err := tiedGaussianRows(x, opts)
	if err != nil {
		return nil, err
	}
	n, d := len(rows), len(rows[0])
	opts = gaussianDefaults(opts)
	dense := mat.NewDense(n, d, nil)
	for i, r := range rows {
		dense.SetRow(i, r)
	}
	var best *Gaussian
	err = par.Ordered(ctx, opts.Starts, opts.Workers, func(s, _ int) (*Gaussian, error) {
		post, err := gaussianStart(ctx, dense, opts, s)
		if err != nil {
			return nil, err
		}
		return fitGaussianFrom(ctx, rows, post, opts, s)
	}, func(s int, g *Gaussian) error {
		if g != nil && (best == nil || g.LogLik > best.LogLik) {
			best = g
		}
		return nil
	})
	if err != nil {
		return nil, err
	}
	if best == nil {
		return nil, fmt.Errorf("mixture: FitTiedGaussian: no start gave a finite likelihood: %w; the data may lie on a lower-dimensional subspace", cluster.ErrNonFinite)
	}
	best.criteria(n)
	return best, nil
}

// tiedGaussianRows checks FitTiedGaussian's data and options and returns the rows.
func tiedGaussianRows(x mat.Matrix, opts GaussianOptions) ([][]float64, error) {
	if x == nil {
		return nil, fmt.Errorf("mixture: FitTiedGaussian: no data: %w", cluster.ErrEmpty)
	}
	n, d := x.Dims()
	if n == 0 || d == 0 {
		return nil, fmt.Errorf("mixture: FitTiedGaussian: data are %d×%d: %w", n, d, cluster.ErrEmpty)
	}
	if opts.K < 1 || opts.K > n {
		return nil, fmt.Errorf("mixture: FitTiedGaussian: K = %d with %d rows: %w; choose 1 ≤ K ≤ %d", opts.K, n, cluster.ErrK, n)
	}
	if opts.Starts < 0 || opts.MaxIter < 0 || opts.Tol < 0 || opts.Reg < 0 || math.IsNaN(opts.Tol+opts.Reg) {
		return nil, fmt.Errorf("mixture: FitTiedGaussian: Starts %d, MaxIter %d, Tol %v, Reg %v: %w; use values ≥ 0 (0 takes the default)",
			opts.Starts, opts.MaxIter, opts.Tol, opts.Reg, cluster.ErrDomain)
	}
	rows := make([][]float64, n)
	for i := range rows {
		rows[i] = make([]float64, d)
		for j := range rows[i] {
			v := x.At(i, j)
			if math.IsNaN(v) || math.IsInf(v, 0) {
				return nil, fmt.Errorf("mixture: FitTiedGaussian: row %d, column %d is %v: %w", i, j, v, cluster.ErrNonFinite)
			}
			rows[i][j] = v
		}
	}
	return rows, nil
}

// gaussianStart is start s's memberships: one k-means++ seeding and Lloyd's iterations.
func gaussianStart(ctx context.Context, x *mat.Dense, opts GaussianOptions, s int) ([][]float64, error) {
	n, _ := x.Dims()
	post := make([][]float64, n)
	for i := range post {
		post[i] = make([]float64, opts.K)
	}
	if opts.K == 1 {
		for i := range post {
			post[i][0] = 1
		}
		return post, nil
	}
	km, err := cluster.KMeans(ctx, x, cluster.KMeansOptions{K: opts.K, Restarts: 1, Seed: par.SubSeed(opts.Seed, "gaussian start", s), Workers: 1})
	if err != nil {
		return nil, fmt.Errorf("mixture: FitTiedGaussian: start: %w", err)
	}
	for i, l := range km.Labels {
		post[i][l] = 1
	}
	return post, nil
}

// gaussianDefaults fills the options' zero values.
func gaussianDefaults(opts GaussianOptions) GaussianOptions {
	if opts.Starts == 0 {
		opts.Starts = 10
	}
	if opts.K == 1 {
		opts.Starts = 1
	}
	if opts.MaxIter == 0 {
		opts.MaxIter = 1000
	}
	if opts.Tol == 0 {
		opts.Tol = 1e-10
	}
	if opts.Reg == 0 {
		opts.Reg = 1e-6
	}
	return opts
}

// criteria fills the information criteria of a fit to n rows.
func (g *Gaussian) criteria(n int) {
	p := float64(g.Params)
	g.BIC = -2*g.LogLik + p*math.Log(float64(n))
	g.AIC = -2*g.LogLik + 2*p
	g.ICL = g.BIC + 2*entropy(g.Posterior)
}

// FitTiedGaussianFrom runs EM from given memberships (rows × K, each row summing to 1), with
// the options' MaxIter, Tol and Reg; it is what each start of FitTiedGaussian runs, exported so
// that a fit can be compared with a reference library's from the same start.
func FitTiedGaussianFrom(ctx context.Context, x mat.Matrix, post [][]float64, opts GaussianOptions) (*Gaussian, error) {
	n, _ := x.Dims()
	if len(post) != n || n == 0 || len(post[0]) < 1 {
		return nil, fmt.Errorf("mixture: FitTiedGaussianFrom: %d memberships for %d rows: %w", len(post), n, cluster.ErrShape)
	}
	rows := make([][]float64, n)
	for i := range rows {
		rows[i] = mat.Row(nil, i, x)
	}
	opts.K = len(post[0])
	opts = gaussianDefaults(opts)
	cp := make([][]float64, n)
	for i := range post {
		cp[i] = append([]float64(nil), post[i]...)
	}
	g, err := fitGaussianFrom(ctx, rows, cp, opts, 0)
	if err != nil {
		return nil, err
	}
	if g == nil {
		return nil, fmt.Errorf("mixture: FitTiedGaussianFrom: the covariance is singular: %w", cluster.ErrNonFinite)
	}
	g.criteria(n)
	return g, nil
}

// fitGaussianFrom alternates M and E steps from the memberships post (changed in place); nil
// when the covariance turns singular.
func fitGaussianFrom(ctx context.Context, rows, post [][]float64, opts GaussianOptions, start int) (*Gaussian, error) {
	n, d, k := len(rows), len(rows[0]), opts.K
	g := &Gaussian{K: k, Dim: d, Start: start, Weights: make([]float64, k), Means: make([][]float64, k), Posterior: post,
		Params: k*d + d*(d+1)/2 + k - 1, Labels: make([]int, n)}
	for c := range g.Means {
		g.Means[c] = make([]float64, d)
	}
	prev := math.Inf(-1)
	for it := 1; it <= opts.MaxIter; it++ {
		if it%16 == 0 {
			if err := ctx.Err(); err != nil {
				return nil, err
			}
		}
		g.mStep(rows, opts.Reg)
		ll, ok := g.eStep(rows)
		if !ok {
			return nil, nil
		}
		g.LogLik, g.Iter = ll, it
		if ll-prev <= opts.Tol*math.Abs(ll) {
			break
		}
		prev = ll
	}
	return g, nil
}

// mStep sets the weights, means and the pooled within-component scatter over n plus reg on the
// diagonal (scikit-learn's tied covariance) from the memberships.
func (g *Gaussian) mStep(rows [][]float64, reg float64) {
	n, d, post := len(rows), g.Dim, g.Posterior
	diff := make([]float64, d)
	cov := mat.NewSymDense(d, nil)
	for c := 0; c < g.K; c++ {
		var w float64
		mu := g.Means[c]
		clear(mu)
		for i, r := range rows {
			z := post[i][c]
			w += z
			for j, v := range r {
				mu[j] += z * v
			}
		}
		g.Weights[c] = w / float64(n)
		if w > 0 {
			for j := range mu {
				mu[j] /= w
			}
		}
		for i, r := range rows {
			z := post[i][c]
			if z == 0 {
				continue
			}
			for j := range diff {
				diff[j] = r[j] - mu[j]
			}
			cov.SymRankOne(cov, z, mat.NewVecDense(d, diff))
		}
	}
	cov.ScaleSym(1/float64(n), cov)
	for j := 0; j < d; j++ {
		cov.SetSym(j, j, cov.At(j, j)+reg)
	}
	g.Cov = cov
}

// eStep sets the memberships and labels and returns the log-likelihood; false when the
// covariance is singular or the likelihood not a number. It whitens with L⁻¹ of the
// covariance's Cholesky factor L: the squared Mahalanobis distance of x from μ is |L⁻¹x − L⁻¹μ|².
func (g *Gaussian) eStep(rows [][]float64) (float64, bool) {
	d, k, post := g.Dim, g.K, g.Posterior
	var chol mat.Cholesky
	if !chol.Factorize(g.Cov) {
		return 0, false
	}
	var l, linv mat.TriDense
	chol.LTo(&l)
	if err := linv.InverseTri(&l); err != nil {
		return 0, false
	}
	w := linv.RawTriangular()
	whiten := func(dst, v []float64) {
		for a := 0; a < d; a++ {
			var s float64
			row := w.Data[a*w.Stride : a*w.Stride+a+1]
			for b, lv := range row {
				s += lv * v[b]
			}
			dst[a] = s
		}
	}
	wm := make([][]float64, k)
	for c := range wm {
		wm[c] = make([]float64, d)
		whiten(wm[c], g.Means[c])
	}
	logNorm := -0.5*float64(d)*math.Log(2*math.Pi) - 0.5*chol.LogDet()
	logW := make([]float64, k)
	for c := range logW {
		logW[c] = math.Log(g.Weights[c])
	}
	clear(g.Labels)
	lp := make([]float64, k)
	wx := make([]float64, d)
	var ll float64
	for i, r := range rows {
		whiten(wx, r)
		top := math.Inf(-1)
		for c := 0; c < k; c++ {
			q := 0.0
			for j, v := range wx {
				e := v - wm[c][j]
				q += e * e
			}
			lp[c] = logW[c] + logNorm - 0.5*q
			if lp[c] > top {
				top, g.Labels[i] = lp[c], c
			}
		}
		ll += membershipsInto(post[i], lp, top)
	}
	return ll, !math.IsNaN(ll)
}
