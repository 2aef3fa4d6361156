package mixture

import (
	"context"
	"fmt"
	"math"
	"math/rand/v2"

	"gonum.org/v1/gonum/mat"

	"github.com/cohortmix/cohortmix/cluster"
	"github.com/cohortmix/cohortmix/cluster/par"
)

// DMMOptions sets up FitDMM. Zero values take the documented defaults.
type DMMOptions struct {
	K int // components, 1 ≤ K ≤ rows (required)
	// Blocks are the sizes of consecutive blocks of columns, each drawn from a Dirichlet-
	// multinomial of its own given the component (the rows of a transition-count matrix, say);
	// nil is one block of every column.
	Blocks  []int
	Starts  int // random starts; 0 means 10 (1 when K is 1, which has no start to choose)
	MaxIter int // EM iterations per start; 0 means 1000
	// Tol stops EM when the objective rises by less than Tol per row (the mean log-likelihood,
	// as scikit-learn's tolerance, tighter); 0 means 1e-7.
	Tol float64
	// Eta and Nu are the shape and rate of the Gamma prior on each α (on the scale of log α, as
	// Holmes et al. 2012 place it); 0 means 0.1 each, as theirs; NoPrior fits by maximum
	// likelihood instead.
	Eta, Nu float64
	NoPrior bool
	Seed    uint64
	Workers int // starts run side by side; 0 means GOMAXPROCS; never changes the result
}

// DMM is a fitted Dirichlet-multinomial mixture.
type DMM struct {
	K         int
	Weights   []float64   // mixing weight of each component
	Alpha     [][]float64 // K × columns: each component's Dirichlet parameters
	Posterior [][]float64 // rows × K: each row's posterior probability of each component
	Labels    []int       // each row's most probable component (ties to the lower)
	// LogLik is Σᵢ log Σₖ πₖ DM(xᵢ | αₖ), the multinomial coefficients included; LogPrior the
	// log prior density of the α at the fit (0 without a prior).
	LogLik, LogPrior float64
	Params           int     // free parameters: K × columns + K − 1
	BIC, AIC, ICL    float64 // on the −2 log L scale (see the package doc)
	Laplace          float64 // −2 × the Laplace approximation to the log evidence (Holmes et al. 2012)
	Iter, Start      int     // EM iterations of the start kept, and its index
	Blocks           []int   // the sizes of the column blocks fitted
	priorNu          float64 // the prior's rate, for the Hessian
}

// blockSizes are the sizes of the data's column blocks.
func (dd *dmmData) blockSizes() []int {
	out := make([]int, len(dd.blocks))
	for b, bl := range dd.blocks {
		out[b] = bl[1] - bl[0]
	}
	return out
}

// FitDMMFrom runs EM from given memberships (rows × K, each row summing to 1) with the
// options' MaxIter, Tol and prior; a warm start, as for refitting a resample of the rows with
// the memberships a fit of all of them gave. K is the memberships' width.
func FitDMMFrom(ctx context.Context, counts mat.Matrix, post [][]float64, opts DMMOptions) (*DMM, error) {
	if counts == nil {
		return nil, fmt.Errorf("mixture: FitDMMFrom: no counts: %w", cluster.ErrEmpty)
	}
	n, _ := counts.Dims()
	if len(post) != n || n == 0 || len(post[0]) < 1 {
		return nil, fmt.Errorf("mixture: FitDMMFrom: %d memberships for %d rows: %w", len(post), n, cluster.ErrShape)
	}
	data, err := newDMMData(counts, opts.Blocks)
	if err != nil {
		return nil, err
	}
	opts = dmmDefaults(opts)
	opts.K = len(post[0])
	cp := make([][]float64, n)
	for i, r := range post {
		if len(r) != opts.K {
			return nil, fmt.Errorf("mixture: FitDMMFrom: row %d has %d memberships, row 0 has %d: %w", i, len(r), opts.K, cluster.ErrShape)
		}
		cp[i] = append([]float64(nil), r...)
	}
	m, err := data.fitFrom(ctx, opts, cp, 0)
	if err != nil {
		return nil, err
	}
	m.criteria(data, opts)
	return m, nil
}

// dmmDefaults fills the options' zero values.
func dmmDefaults(opts DMMOptions) DMMOptions {
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
		opts.Tol = 1e-7
	}
	if opts.Eta == 0 {
		opts.Eta = 0.1
	}
	if opts.Nu == 0 {
		opts.Nu = 0.1
	}
	if opts.NoPrior {
		opts.Eta, opts.Nu = 0, 0
	}
	return opts
}

// Place puts new rows of counts (with the fit's columns and blocks) by the frozen
// mixture: each row's posterior probability of each component, and its most probable one.
func (m *DMM) Place(counts mat.Matrix) ([][]float64, []int, error) {
	if counts == nil {
		return nil, nil, fmt.Errorf("mixture: Place: no counts: %w", cluster.ErrEmpty)
	}
	n, d := counts.Dims()
	if len(m.Alpha) != m.K || m.K == 0 || d != len(m.Alpha[0]) {
		return nil, nil, fmt.Errorf("mixture: Place: %d columns for a mixture over %d: %w", d, len(m.Alpha[0]), cluster.ErrShape)
	}
	if n == 0 {
		return nil, nil, nil
	}
	data, err := newDMMData(counts, m.Blocks)
	if err != nil {
		return nil, nil, err
	}
	cp := &DMM{K: m.K, Weights: m.Weights, Alpha: m.Alpha, Posterior: make([][]float64, n)}
	for i := range cp.Posterior {
		cp.Posterior[i] = make([]float64, m.K)
	}
	data.eStep(cp, 0)
	return cp.Posterior, cp.Labels, nil
}

// dmmData is the count table in the form the fit uses: each row's nonzero cells and each
// block's total.
type dmmData struct {
	n, d   int
	blocks [][2]int    // [lo, hi) of each block
	nzCol  [][]int32   // per row, the columns with a count
	nzVal  [][]float64 // per row, those counts
	// blockFrom[i][b] is where block b's cells start among row i's nonzero cells (and
	// blockFrom[i][len(blocks)] their end).
	blockFrom [][]int
	total     [][]float64 // per row, each block's total
	coef      []float64   // per row, the log multinomial coefficients
	sqrtRow   [][]float64 // per row, the square roots of its proportions within each block, for k-means starts
}

// FitDMM fits a mixture of K Dirichlet-multinomial distributions to the rows of counts (non-
// negative; whole numbers in the usual case, though the likelihood takes any), by EM from K-means
// starts on the rows' square-root proportions. Each M step raises the objective by Minka's
// fixed-point update of α, with the Gamma prior's terms (a minorize–maximize step, so the
// objective never falls). It returns the start with the highest objective (log-likelihood plus
// log prior).
//
// References: Holmes, Harris & Quince (2012), PLoS ONE 7:e30126; Minka (2000), Estimating a
// Dirichlet distribution, §4; Cadez et al. (2003) for blocks as the rows of a Markov chain.
func FitDMM(ctx context.Context, counts mat.Matrix, opts DMMOptions) (*DMM, error) {
	if counts == nil {
		return nil, fmt.Errorf("mixture: FitDMM: no counts: %w", cluster.ErrEmpty)
	}
	n, d := counts.Dims()
	if n == 0 || d == 0 {
		return nil, fmt.Errorf("mixture: FitDMM: counts are %d×%d: %w; pass at least one row and one column", n, d, cluster.ErrEmpty)
	}
	if opts.K < 1 || opts.K > n {
		return nil, fmt.Errorf("mixture: FitDMM: K = %d with %d rows: %w; choose 1 ≤ K ≤ %d", opts.K, n, cluster.ErrK, n)
	}
	if opts.Starts < 0 || opts.MaxIter < 0 || opts.Tol < 0 || math.IsNaN(opts.Tol) || opts.Eta < 0 || opts.Nu < 0 {
		return nil, fmt.Errorf("mixture: FitDMM: Starts %d, MaxIter %d, Tol %v, Eta %v, Nu %v: %w; use values ≥ 0 (0 takes the default)",
			opts.Starts, opts.MaxIter, opts.Tol, opts.Eta, opts.Nu, cluster.ErrDomain)
	}
	data, err := newDMMData(counts, opts.Blocks)
	if err != nil {
		return nil, err
	}
	opts = dmmDefaults(opts)
	var best *DMM
	bestObj := math.Inf(-1)
	err = par.Ordered(ctx, opts.Starts, opts.Workers, func(s, _ int) (*DMM, error) {
		return data.fit(ctx, opts, s)
	}, func(s int, m *DMM) error {
		if obj := m.LogLik + m.LogPrior; obj > bestObj {
			best, bestObj = m, obj
		}
		return nil
	})
	if err != nil {
		return nil, err
	}
	if best == nil {
		return nil, fmt.Errorf("mixture: FitDMM: no start gave a finite likelihood: %w; check that every row holds counts", cluster.ErrNonFinite)
	}
	best.criteria(data, opts)
	return best, nil
}

func newDMMData(counts mat.Matrix, blocks []int) (*dmmData, error) {
	n, d := counts.Dims()
	dd := &dmmData{n: n, d: d}
	if blocks == nil {
		blocks = []int{d}
	}
	lo := 0
	for _, b := range blocks {
		if b < 1 {
			return nil, fmt.Errorf("mixture: FitDMM: block of %d columns: %w; give sizes ≥ 1 that sum to the %d columns", b, cluster.ErrShape, d)
		}
		dd.blocks = append(dd.blocks, [2]int{lo, lo + b})
		lo += b
	}
	if lo != d {
		return nil, fmt.Errorf("mixture: FitDMM: blocks %v sum to %d, not to the %d columns: %w", blocks, lo, d, cluster.ErrShape)
	}
	dd.nzCol, dd.nzVal = make([][]int32, n), make([][]float64, n)
	dd.total, dd.coef, dd.sqrtRow = make([][]float64, n), make([]float64, n), make([][]float64, n)
	dd.blockFrom = make([][]int, n)
	for i := 0; i < n; i++ {
		dd.total[i] = make([]float64, len(dd.blocks))
		dd.sqrtRow[i] = make([]float64, d)
		var sum float64
		for b, bl := range dd.blocks {
			dd.blockFrom[i] = append(dd.blockFrom[i], len(dd.nzCol[i]))
			for j := bl[0]; j < bl[1]; j++ {
				v := counts.At(i, j)
				if v < 0 || math.IsNaN(v) || math.IsInf(v, 0) {
					return nil, fmt.Errorf("mixture: FitDMM: row %d, column %d is %v: %w; counts must be finite and ≥ 0", i, j, v, cluster.ErrDomain)
				}
				if v > 0 {
					dd.nzCol[i] = append(dd.nzCol[i], int32(j))
					dd.nzVal[i] = append(dd.nzVal[i], v)
					lg, _ := math.Lgamma(v + 1)
					dd.coef[i] -= lg
				}
				dd.total[i][b] += v
			}
			lg, _ := math.Lgamma(dd.total[i][b] + 1)
			dd.coef[i] += lg
			sum += dd.total[i][b]
		}
		dd.blockFrom[i] = append(dd.blockFrom[i], len(dd.nzCol[i]))
		if sum == 0 {
			return nil, fmt.Errorf("mixture: FitDMM: row %d holds no counts: %w; leave out rows with no windows", i, cluster.ErrEmpty)
		}
		for b, bl := range dd.blocks {
			if t := dd.total[i][b]; t > 0 {
				for j := bl[0]; j < bl[1]; j++ {
					dd.sqrtRow[i][j] = math.Sqrt(counts.At(i, j) / t)
				}
			}
		}
	}
	return dd, nil
}

// logDM is log DM(row i | α), the multinomial coefficient left out; lgA holds each block's
// log Γ(A_b) and A each block's Σα; lgAlpha each column's log Γ(α_j).
func (dd *dmmData) logDM(i int, alpha, A, lgA, lgAlpha []float64) float64 {
	var s float64
	for b, t := range dd.total[i] {
		if t > 0 {
			s += lgA[b] - lnGamma(t+A[b])
		}
	}
	for z, j := range dd.nzCol[i] {
		s += lnGamma(dd.nzVal[i][z]+alpha[j]) - lgAlpha[j]
	}
	return s
}

// component holds what logDM needs of one component's α.
type component struct {
	alpha, A, lgA, lgAlpha []float64
}

func (dd *dmmData) component(alpha []float64) component {
	c := component{alpha: alpha, A: make([]float64, len(dd.blocks)), lgA: make([]float64, len(dd.blocks)), lgAlpha: make([]float64, dd.d)}
	for b, bl := range dd.blocks {
		for j := bl[0]; j < bl[1]; j++ {
			c.A[b] += alpha[j]
		}
		c.lgA[b] = lnGamma(c.A[b])
	}
	for j, a := range alpha {
		c.lgAlpha[j] = lnGamma(a)
	}
	return c
}

// fit runs EM from start s.
func (dd *dmmData) fit(ctx context.Context, opts DMMOptions, s int) (*DMM, error) {
	post, err := dd.startLabels(ctx, opts.K, par.SubSeed(opts.Seed, "dmm start", s))
	if err != nil {
		return nil, err
	}
	return dd.fitFrom(ctx, opts, post, s)
}

// fitFrom runs EM from the memberships post (rows × K, changed in place).
func (dd *dmmData) fitFrom(ctx context.Context, opts DMMOptions, post [][]float64, s int) (*DMM, error) {
	k := opts.K
	m := &DMM{K: k, Start: s, Weights: make([]float64, k), Alpha: make([][]float64, k), Posterior: post, Blocks: dd.blockSizes()}
	for c := range m.Alpha {
		m.Alpha[c] = dd.momentAlpha(post, c)
	}
	prev := math.Inf(-1)
	for it := 1; it <= opts.MaxIter; it++ {
		if it%16 == 0 {
			if err := ctx.Err(); err != nil {
				return nil, err
			}
		}
		inner := 3
		if it == 1 {
			inner = 50
		}
		dd.mStep(m, opts, inner)
		obj := dd.eStep(m, opts.Workers) + m.LogPrior
		m.Iter = it
		if math.IsNaN(obj) {
			return nil, fmt.Errorf("mixture: FitDMM: the likelihood became NaN: %w", cluster.ErrNonFinite)
		}
		if obj-prev <= opts.Tol*float64(dd.n) {
			break
		}
		prev = obj
	}
	return m, nil
}

// startLabels are one-hot memberships from k-means on the rows' square-root proportions.
func (dd *dmmData) startLabels(ctx context.Context, k int, seed uint64) ([][]float64, error) {
	post := make([][]float64, dd.n)
	for i := range post {
		post[i] = make([]float64, k)
	}
	if k == 1 {
		for i := range post {
			post[i][0] = 1
		}
		return post, nil
	}
	x := mat.NewDense(dd.n, dd.d, nil)
	for i, r := range dd.sqrtRow {
		x.SetRow(i, r)
	}
	rng := rand.New(rand.NewPCG(seed, 1))
	km, err := cluster.KMeans(ctx, x, cluster.KMeansOptions{K: k, Restarts: 1, Seed: rng.Uint64(), Workers: 1})
	if err != nil {
		return nil, fmt.Errorf("mixture: FitDMM: start: %w", err)
	}
	for i, l := range km.Labels {
		post[i][l] = 1
	}
	return post, nil
}

// momentAlpha is a first α for component c from its members' mean proportions in each block,
// at a precision of 10 per block (the fixed point moves it where the data put it).
func (dd *dmmData) momentAlpha(post [][]float64, c int) []float64 {
	alpha := make([]float64, dd.d)
	for b, bl := range dd.blocks {
		var w float64
		mean := make([]float64, bl[1]-bl[0])
		for i := range post {
			if t := dd.total[i][b]; t > 0 && post[i][c] > 0 {
				w += post[i][c]
				for z, j := range dd.nzCol[i] {
					if int(j) >= bl[0] && int(j) < bl[1] {
						mean[int(j)-bl[0]] += post[i][c] * dd.nzVal[i][z] / t
					}
				}
			}
		}
		for j := range mean {
			p := 1 / float64(len(mean))
			if w > 0 {
				p = (mean[j]/w)*0.99 + 0.01/float64(len(mean))
			}
			alpha[bl[0]+j] = 10 * p
		}
	}
	return alpha
}

// mStep sets the weights from the memberships and raises each component's objective in α,
// block by block (the blocks are independent given the memberships), by up to inner steps of
// Newton's method in λ = log α, the Hessian a diagonal plus a rank-one term solved by the
// Sherman–Morrison formula (Minka 2000, §3), each kept only when it raises the objective and
// replaced otherwise by Minka's fixed-point step with the prior's terms: with w the memberships,
// g_j = Σᵢ wᵢ [ψ(xᵢⱼ + αⱼ) − ψ(αⱼ)] and h = Σᵢ wᵢ [ψ(J_i + A) − ψ(A)], α_j ← (α_j g_j + η) / (h + ν)
// (Minka 2000, eq. 55), which maximizes a lower bound of the objective that touches it at the
// current α, so that no step lowers it.
func (dd *dmmData) mStep(m *DMM, opts DMMOptions, inner int) {
	n := float64(dd.n)
	wsum := make([]float64, m.K)
	for c := range wsum {
		for i := range m.Posterior {
			wsum[c] += m.Posterior[i][c]
		}
		m.Weights[c] = wsum[c] / n
	}
	// The components are raised side by side: each writes only its own α.
	par.Each(m.K, opts.Workers, func(c int) {
		if wsum[c] > 1e-10 {
			for b := range dd.blocks {
				dd.raiseBlock(m, c, b, opts, inner)
			}
		}
	})
	m.LogPrior = 0
	if opts.Eta > 0 || opts.Nu > 0 {
		// Gamma(η, ν) on α, taken on λ = log α: log p(λ) = η λ − ν e^λ + η log ν − log Γ(η).
		lgEta, _ := math.Lgamma(opts.Eta)
		for c := 0; c < m.K; c++ {
			for _, a := range m.Alpha[c] {
				m.LogPrior += opts.Eta*math.Log(a) - opts.Nu*a + opts.Eta*math.Log(opts.Nu) - lgEta
			}
		}
	}
}

// blockStats are the sums over rows, weighted by one component's memberships, that the
// objective of one block, its gradient and its Hessian in λ are made of.
type blockStats struct {
	g, gt   []float64 // Σ w [ψ(x+α) − ψ(α)] and Σ w [ψ′(x+α) − ψ′(α)], per column of the block
	h, ht   float64   // Σ w [ψ(J+A) − ψ(A)] and Σ w [ψ′(A) − ψ′(J+A)]
	objData float64   // Σ w [log Γ(A) − log Γ(J+A) + Σ (log Γ(x+α) − log Γ(α))]
}

// stats computes a block's sums at alpha (its columns only), with the trigamma terms when
// second is set.
func (dd *dmmData) stats(post [][]float64, c, b int, alpha []float64, second bool) blockStats {
	lo, hi := dd.blocks[b][0], dd.blocks[b][1]
	st := blockStats{g: make([]float64, hi-lo), gt: make([]float64, hi-lo)}
	var A float64
	for _, a := range alpha {
		A += a
	}
	lgA, psiA, triA := lnGammaTerms(A, second)
	psi := make([]float64, len(alpha))
	lg := make([]float64, len(alpha))
	tri := make([]float64, len(alpha))
	for j, a := range alpha {
		lg[j], psi[j], tri[j] = lnGammaTerms(a, second)
	}
	for i, r := range post {
		w := r[c]
		t := dd.total[i][b]
		if w < 1e-12 || t == 0 {
			continue
		}
		lgt, psit, trit := lnGammaTerms(t+A, second)
		st.objData += w * (lgA - lgt)
		st.h += w * (psit - psiA)
		st.ht += w * (triA - trit)
		for z := dd.blockFrom[i][b]; z < dd.blockFrom[i][b+1]; z++ {
			j := int(dd.nzCol[i][z]) - lo
			l, p, q := lnGammaTerms(dd.nzVal[i][z]+alpha[j], second)
			st.objData += w * (l - lg[j])
			st.g[j] += w * (p - psi[j])
			st.gt[j] += w * (q - tri[j])
		}
	}
	return st
}

// newtonHalvings is how many times raiseBlock halves a Newton step that does not raise the
// objective before it takes the fixed-point step instead.
const newtonHalvings = 4

// blockObjective is the component's objective in one block: the data's part and the prior's.
func blockObjective(st blockStats, alpha []float64, eta, nu float64) float64 {
	o := st.objData
	for _, a := range alpha {
		o += eta*math.Log(a) - nu*a
	}
	return o
}

// raiseBlock raises component c's objective in block b (see mStep).
func (dd *dmmData) raiseBlock(m *DMM, c, b int, opts DMMOptions, inner int) {
	lo, hi := dd.blocks[b][0], dd.blocks[b][1]
	alpha := m.Alpha[c][lo:hi]
	eta, nu := opts.Eta, opts.Nu
	st := dd.stats(m.Posterior, c, b, alpha, true)
	obj := blockObjective(st, alpha, eta, nu)
	next := make([]float64, len(alpha))
	for step := 0; step < inner; step++ {
		// Newton in λ: gradient γ_j = α_j (g_j − h) + η − ν α_j; Hessian diag(q) + ht·α αᵀ with
		// q_j = α_j (g_j − h) + α_j² gt_j − ν α_j.
		grad := make([]float64, len(alpha))
		q := make([]float64, len(alpha))
		ok := true
		var aDa, aDg float64
		for j, a := range alpha {
			grad[j] = a*(st.g[j]-st.h) + eta - nu*a
			q[j] = a*(st.g[j]-st.h) + a*a*st.gt[j] - nu*a
			if !(q[j] < 0) {
				ok = false
				break
			}
			aDa += a * a / q[j]
			aDg += a * grad[j] / q[j]
		}
		moved := false
		if ok && 1+st.ht*aDa > 0 {
			// (D + c a aᵀ)⁻¹ γ = D⁻¹γ − c D⁻¹a (aᵀD⁻¹γ) / (1 + c aᵀD⁻¹a); the step is minus that,
			// halved up to newtonHalvings times while it does not raise the objective.
			f := st.ht * aDg / (1 + st.ht*aDa)
			step := make([]float64, len(alpha))
			for j, a := range alpha {
				step[j] = math.Max(-3, math.Min(3, -(grad[j]-a*f)/q[j]))
			}
			for h := 0; h <= newtonHalvings && !moved; h++ {
				change := 0.0
				for j, a := range alpha {
					next[j] = a * math.Exp(step[j])
					change = math.Max(change, math.Abs(step[j]))
					step[j] /= 2
				}
				trial := dd.stats(m.Posterior, c, b, next, true)
				o := blockObjective(trial, next, eta, nu)
				if o >= obj || (change < 1e-9 && obj-o <= 1e-12*math.Abs(obj)) {
					moved = true
					copy(alpha, next)
					st, obj = trial, o
					if change < 1e-9 {
						return
					}
				}
			}
		}
		if !moved {
			change := 0.0
			for j, a := range alpha {
				v := (a*st.g[j] + eta) / (st.h + nu)
				if v < 1e-10 || math.IsNaN(v) {
					v = 1e-10
				}
				change = math.Max(change, math.Abs(v-a)/a)
				alpha[j] = v
			}
			st = dd.stats(m.Posterior, c, b, alpha, true)
			obj = blockObjective(st, alpha, eta, nu)
			if change < 1e-10 {
				return
			}
		}
	}
}

// eStep sets the memberships and labels from the weights and α, and returns the log-likelihood.
// The rows are taken in blocks side by side (workers; 0 means one per core), their
// log-likelihoods summed in row order after, so the sum is the same on any number of cores.
func (dd *dmmData) eStep(m *DMM, workers int) float64 {
	comps := make([]component, m.K)
	logW := make([]float64, m.K)
	for c := range comps {
		comps[c] = dd.component(m.Alpha[c])
		logW[c] = math.Log(m.Weights[c])
	}
	m.Labels = make([]int, dd.n)
	rowLL := make([]float64, dd.n)
	par.Each((dd.n+eStepRows-1)/eStepRows, workers, func(blk int) {
		lp := make([]float64, m.K)
		for i := blk * eStepRows; i < min(dd.n, (blk+1)*eStepRows); i++ {
			top := math.Inf(-1)
			for c := range comps {
				lp[c] = logW[c] + dd.logDM(i, comps[c].alpha, comps[c].A, comps[c].lgA, comps[c].lgAlpha)
				if lp[c] > top {
					top, m.Labels[i] = lp[c], c
				}
			}
			rowLL[i] = membershipsInto(m.Posterior[i], lp, top) + dd.coef[i]
		}
	})
	var ll float64
	for _, v := range rowLL {
		ll += v
	}
	m.LogLik = ll
	return ll
}

// eStepRows is how many rows one task of the E step takes.
const eStepRows = 256

// criteria fills the parameter count and the information criteria.
func (m *DMM) criteria(dd *dmmData, opts DMMOptions) {
	n := float64(dd.n)
	m.Params = m.K*dd.d + m.K - 1
	p := float64(m.Params)
	m.BIC = -2*m.LogLik + p*math.Log(n)
	m.AIC = -2*m.LogLik + 2*p
	m.ICL = m.BIC + 2*entropy(m.Posterior)
	m.priorNu = opts.Nu
	m.Laplace = dd.laplace(m)
}

// entropy is −Σᵢ Σₖ zᵢₖ log zᵢₖ of the memberships.
func entropy(post [][]float64) float64 {
	var e float64
	for _, r := range post {
		for _, z := range r {
			if z > 0 {
				e -= z * math.Log(z)
			}
		}
	}
	return e
}

// laplace is −2 × the Laplace approximation to the log evidence: the objective at the fit, plus
// for each component the log volume of the posterior's peak in λ = log α, from the Hessian of
// the component's complete-data objective with the memberships held, ½ p log 2π − ½ log det H
// (Holmes et al. 2012, Methods); the mixing weights add ½ (K − 1) log 2π − ½ log det of theirs,
// the Hessian of the multinomial log-likelihood of the weights, n (diag(1/π) + 1/π_K) on the
// first K − 1.
func (dd *dmmData) laplace(m *DMM) float64 {
	logEv := m.LogLik + m.LogPrior
	for c := 0; c < m.K; c++ {
		h := dd.hessian(m, c)
		var chol mat.Cholesky
		if !chol.Factorize(h) {
			return math.NaN()
		}
		logEv += 0.5*float64(dd.d)*math.Log(2*math.Pi) - 0.5*chol.LogDet()
	}
	if m.K > 1 {
		n := float64(dd.n)
		hw := mat.NewSymDense(m.K-1, nil)
		last := m.Weights[m.K-1]
		for a := 0; a < m.K-1; a++ {
			for b := a; b < m.K-1; b++ {
				v := n / last
				if a == b {
					v += n / m.Weights[a]
				}
				hw.SetSym(a, b, v)
			}
		}
		var chol mat.Cholesky
		if !chol.Factorize(hw) {
			return math.NaN()
		}
		logEv += 0.5*float64(m.K-1)*math.Log(2*math.Pi) - 0.5*chol.LogDet()
	}
	return -2 * logEv
}

// hessian is minus the Hessian, in λ = log α, of component c's complete-data objective
// Σᵢ zᵢ log DM(xᵢ | α) + η Σλ − ν Σα.
func (dd *dmmData) hessian(m *DMM, c int) *mat.SymDense {
	alpha := m.Alpha[c]
	nb := len(dd.blocks)
	A := make([]float64, nb)
	block := make([]int, dd.d)
	for b, bl := range dd.blocks {
		for j := bl[0]; j < bl[1]; j++ {
			A[b] += alpha[j]
			block[j] = b
		}
	}
	g := make([]float64, dd.d)  // Σ w [ψ(x+α) − ψ(α)]
	gt := make([]float64, dd.d) // Σ w [ψ'(x+α) − ψ'(α)]
	hA := make([]float64, nb)   // Σ w [ψ(A) − ψ(J+A)]
	hAt := make([]float64, nb)  // Σ w [ψ'(A) − ψ'(J+A)]
	for i, r := range m.Posterior {
		w := r[c]
		if w < 1e-12 {
			continue
		}
		for b, t := range dd.total[i] {
			if t > 0 {
				_, pA, tA := lnGammaTerms(A[b], true)
				_, p, q := lnGammaTerms(t+A[b], true)
				hA[b] += w * (pA - p)
				hAt[b] += w * (tA - q)
			}
		}
		for z, j := range dd.nzCol[i] {
			_, pa, ta := lnGammaTerms(alpha[j], true)
			_, p, q := lnGammaTerms(dd.nzVal[i][z]+alpha[j], true)
			g[j] += w * (p - pa)
			gt[j] += w * (q - ta)
		}
	}
	h := mat.NewSymDense(dd.d, nil)
	for j := 0; j < dd.d; j++ {
		for l := j; l < dd.d; l++ {
			var v float64
			if block[j] == block[l] {
				v = alpha[j] * alpha[l] * hAt[block[j]]
			}
			if j == l {
				v += alpha[j]*(g[j]+hA[block[j]]) + alpha[j]*alpha[j]*gt[j] - m.nu()*alpha[j]
			}
			h.SetSym(j, l, -v)
		}
	}
	return h
}

// nu is the prior's rate the fit was made with.
func (m *DMM) nu() float64 { return m.priorNu }

// Overlap is the Bhattacharyya coefficient between the laws of components a and b: over each
// block, ∫ √(Dir(p; αₐ) Dir(p; α_b)) dp = B((αₐ + α_b)/2) / √(B(αₐ) B(α_b)), with B the
// multivariate beta function, multiplied over the blocks (which are independent given the
// component). 1 for identical laws, near 0 for laws that do not overlap; the Bhattacharyya
// distance is −log of it (Bhattacharyya 1943; as a criterion for merging mixture components,
// Hennig 2010, Adv. Data Anal. Classif. 4:3–34).
func (m *DMM) Overlap(a, b int) float64 {
	lo := 0
	var logBC float64
	blocks := m.Blocks
	if blocks == nil {
		blocks = []int{len(m.Alpha[a])}
	}
	lnB := func(x []float64) float64 {
		var s, sum float64
		for _, v := range x {
			s += lnGamma(v)
			sum += v
		}
		return s - lnGamma(sum)
	}
	for _, size := range blocks {
		pa, pb := m.Alpha[a][lo:lo+size], m.Alpha[b][lo:lo+size]
		mid := make([]float64, size)
		for j := range mid {
			mid[j] = (pa[j] + pb[j]) / 2
		}
		logBC += lnB(mid) - (lnB(pa)+lnB(pb))/2
		lo += size
	}
	return math.Exp(logBC)
}
