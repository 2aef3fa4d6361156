package cluster

import (
	"context"
	"fmt"
	"math"
	"math/rand/v2"

	"github.com/cohortmix/cohortmix/cluster/par"
	"gonum.org/v1/gonum/mat"
)

// MiniBatchOptions sets up MiniBatchKMeans. Zero values take the documented defaults.
type MiniBatchOptions struct {
	K         int     // 1 ≤ K ≤ rows (required)
	BatchSize int     // rows per step; 0 means 1024
	Steps     int     // mini-batch steps; 0 means 100 + 10·rows/BatchSize, at most 2000
	InitSize  int     // rows drawn for the k-means++ start; 0 means min(rows, 3·BatchSize, ≥ 3K)
	Restarts  int     // k-means++ starts on the init sample, best kept; 0 means 3
	Seed      uint64  // fixes the result exactly
	Tol       float64 // stop early when a step moves no centre more than Tol × mean column s.d.; 0 means 1e-4
}

// MiniBatchKMeans groups the rows of x by Sculley's mini-batch k-means: each step draws BatchSize
// rows, assigns them to the nearest centre, and moves each centre toward its rows with the
// per-centre learning rate 1/count. It is for row sets too large to iterate in full; the result's
// labels and inertia come from a final exact pass over every row.
//
// Reference: Sculley D (2010), Web-scale k-means clustering, Proc. WWW, Algorithm 1.
func MiniBatchKMeans(ctx context.Context, x mat.Matrix, opts MiniBatchOptions) (*KMeansResult, error) {
	data, n, d, err := checkMatrix("MiniBatchKMeans", x)
	if err != nil {
		return nil, err
	}
	if err := checkK("MiniBatchKMeans", opts.K, n); err != nil {
		return nil, err
	}
	if opts.BatchSize < 0 || opts.Steps < 0 || opts.InitSize < 0 || opts.Restarts < 0 || opts.Tol < 0 {
		return nil, fmt.Errorf("cluster: MiniBatchKMeans: negative option: %w; use values ≥ 0 (0 takes the default)", ErrDomain)
	}
	k := opts.K
	batch := opts.BatchSize
	if batch == 0 {
		batch = 1024
	}
	steps := opts.Steps
	if steps == 0 {
		steps = min(2000, 100+10*n/batch)
	}
	initSize := opts.InitSize
	if initSize == 0 {
		initSize = max(3*batch, 3*k)
	}
	initSize = min(max(initSize, k), n)
	restarts := opts.Restarts
	if restarts == 0 {
		restarts = 3
	}
	tol := opts.Tol
	if tol == 0 {
		tol = 1e-4
	}
	tol *= math.Sqrt(meanColumnVariance(data, n, d))
	rng := rand.New(rand.NewPCG(opts.Seed, 0))

	// Start: k-means++ with a few Lloyd steps on a random sample, best of Restarts.
	perm := rng.Perm(n)[:initSize]
	sample := make([]float64, initSize*d)
	for i, r := range perm {
		copy(sample[i*d:(i+1)*d], data[r*d:(r+1)*d])
	}
	init, err := KMeans(ctx, mat.NewDense(initSize, d, sample), KMeansOptions{K: k, Restarts: restarts, MaxIter: 20, Seed: par.SubSeed(opts.Seed, "mini-batch start", 0), Workers: 1})
	if err != nil {
		return nil, err
	}
	centers := append([]float64(nil), init.Centroids.RawMatrix().Data...)
	counts := make([]float64, k)
	before := make([]float64, k*d)
	lab := make([]int, batch)
	idx := make([]int, batch)
	for s := 0; s < steps; s++ {
		if s%16 == 0 && ctx.Err() != nil {
			return nil, ctx.Err()
		}
		for b := range idx {
			idx[b] = rng.IntN(n)
			lab[b], _ = Nearest(centers, k, data[idx[b]*d:(idx[b]+1)*d])
		}
		copy(before, centers)
		for b, r := range idx {
			c := centers[lab[b]*d : (lab[b]+1)*d]
			counts[lab[b]]++
			eta := 1 / counts[lab[b]]
			for t, v := range data[r*d : (r+1)*d] {
				c[t] += eta * (v - c[t]) // gradient step, Sculley (2010) Alg. 1 line 13
			}
		}
		maxMove := 0.0
		for j := 0; j < k; j++ {
			maxMove = max(maxMove, math.Sqrt(sqDist(before[j*d:(j+1)*d], centers[j*d:(j+1)*d])))
		}
		if maxMove <= tol && s > 10 {
			break
		}
	}
	labels, dist, err := Assign(mat.NewDense(k, d, centers), x)
	if err != nil {
		return nil, err
	}
	res := &KMeansResult{Centroids: mat.NewDense(k, d, centers), Labels: labels, Sizes: make([]int, k)}
	for i, l := range labels {
		res.Sizes[l]++
		res.Inertia += dist[i] * dist[i]
	}
	return res, nil
}
