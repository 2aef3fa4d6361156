package cluster

import (
	"context"
	"fmt"
	"math"
)

// PAMOptions sets up PAM.
type PAMOptions struct {
	K        int // 1 ≤ K ≤ points (required)
	MaxSwaps int // 0 means no limit other than convergence
}

// PAMResult holds the medoids and the assignment of every point to its nearest medoid.
type PAMResult struct {
	Medoids   []int     // point indices, in the order BUILD chose them; label l is Medoids[l]
	Labels    []int     // nearest medoid of each point, ties to the lower label
	Cost      float64   // total distance of points to their medoids after SWAP
	BuildCost float64   // the same after BUILD
	Swaps     int       // swaps applied
	Dist      []float64 // distance of each point to its medoid
}

// PAM is Partitioning Around Medoids on any precomputed distance: the BUILD step of Kaufman &
// Rousseeuw (1990, ch. 2) adds medoids greedily, then SWAP applies the best medoid/non-medoid
// exchange while it lowers the total distance. The cost of all exchanges for one candidate is
// computed at once as in FastPAM1 (Schubert & Rousseeuw 2019, Algorithm 2), which finds the same
// best swap as the original in O(n²) rather than O(k·n²) per pass. Ties go to the lower point
// index. The mean objective that R's cluster::pam reports is Cost / N.
func PAM(ctx context.Context, dist *Condensed, opts PAMOptions) (*PAMResult, error) {
	if err := checkPAM(dist, opts); err != nil {
		return nil, err
	}
	medoids, err := pamBuild(ctx, dist, opts.K)
	if err != nil {
		return nil, err
	}
	n := dist.N
	isMed := make([]bool, n)
	for _, m := range medoids {
		isMed[m] = true
	}
	res := &PAMResult{Medoids: medoids}
	p := &pamState{dist: dist, nearest: make([]int, n), dn: make([]float64, n), ds: make([]float64, n)}
	td := p.assign(medoids)
	res.BuildCost = td
	delta := make([]float64, opts.K)
	for opts.MaxSwaps == 0 || res.Swaps < opts.MaxSwaps {
		if ctx.Err() != nil {
			return nil, ctx.Err()
		}
		bestT, bestM, bestC := p.bestSwap(isMed, medoids, delta)
		if bestM < 0 || bestT >= -1e-12*max(td, 1) {
			break
		}
		isMed[medoids[bestM]] = false
		isMed[bestC] = true
		medoids[bestM] = bestC
		res.Swaps++
		td = p.assign(medoids)
	}
	res.Cost = td
	res.Labels = p.nearest
	res.Dist = p.dn
	return res, nil
}

// checkPAM refuses a condensed matrix of the wrong size or with entries that are not finite
// distances, and impossible options.
func checkPAM(dist *Condensed, opts PAMOptions) error {
	if dist == nil || dist.N < 1 || len(dist.D) != dist.N*(dist.N-1)/2 {
		return fmt.Errorf("cluster: PAM: condensed matrix has the wrong size: %w; build it with Pairwise or NewCondensed", ErrShape)
	}
	if err := checkK("PAM", opts.K, dist.N); err != nil {
		return err
	}
	if opts.MaxSwaps < 0 {
		return fmt.Errorf("cluster: PAM: MaxSwaps %d: %w; use 0 for no limit", opts.MaxSwaps, ErrDomain)
	}
	for i, v := range dist.D {
		if math.IsNaN(v) || math.IsInf(v, 0) || v < 0 {
			return fmt.Errorf("cluster: PAM: distance entry %d is %v: %w; distances must be finite and ≥ 0", i, v, ErrNonFinite)
		}
	}
	return nil
}

// pamBuild is PAM's BUILD step: each new medoid maximizes the decrease of total distance
// (Kaufman & Rousseeuw 1990).
func pamBuild(ctx context.Context, dist *Condensed, k int) ([]int, error) {
	n := dist.N
	isMed := make([]bool, n)
	medoids := make([]int, 0, k)
	near := make([]float64, n) // distance to nearest medoid
	for i := range near {
		near[i] = math.Inf(1)
	}
	for len(medoids) < k {
		if ctx.Err() != nil {
			return nil, ctx.Err()
		}
		best, bestGain := -1, math.Inf(-1)
		for c := 0; c < n; c++ {
			if isMed[c] {
				continue
			}
			var gain float64
			for j := 0; j < n; j++ {
				dj := dist.At(c, j)
				if math.IsInf(near[j], 1) {
					gain -= dj // first medoid: minimize the total distance
				} else if dj < near[j] {
					gain += near[j] - dj
				}
			}
			if gain > bestGain {
				best, bestGain = c, gain
			}
		}
		isMed[best] = true
		medoids = append(medoids, best)
		for j := 0; j < n; j++ {
			near[j] = min(near[j], dist.At(best, j))
		}
	}
	return medoids, nil
}

// pamState is each object's nearest medoid (by its place in the medoids), the distance to it
// and the distance to the second nearest.
type pamState struct {
	dist    *Condensed
	nearest []int
	dn, ds  []float64
}

// assign gives each object its nearest and second-nearest medoid and returns the total
// distance.
func (p *pamState) assign(medoids []int) float64 {
	var td float64
	for j := range p.nearest {
		p.nearest[j], p.dn[j], p.ds[j] = -1, math.Inf(1), math.Inf(1)
		for l, m := range medoids {
			v := p.dist.At(m, j)
			if v < p.dn[j] {
				p.ds[j] = p.dn[j]
				p.nearest[j], p.dn[j] = l, v
			} else if v < p.ds[j] {
				p.ds[j] = v
			}
		}
		td += p.dn[j]
	}
	return td
}

// bestSwap is the swap of a medoid (by its place) with a non-medoid that lowers the total
// distance most, with the change (FastPAM1, Schubert & Rousseeuw 2019); delta is scratch of
// one value per medoid.
func (p *pamState) bestSwap(isMed []bool, medoids []int, delta []float64) (bestT float64, bestM, bestC int) {
	bestM, bestC = -1, -1
	for c := range isMed {
		if isMed[c] {
			continue
		}
		for l := range delta {
			delta[l] = 0
		}
		var shared float64
		for o := range p.nearest {
			doc := p.dist.At(o, c)
			if doc < p.dn[o] {
				shared += doc - p.dn[o] // o moves to c whichever medoid leaves
			} else {
				delta[p.nearest[o]] += min(doc, p.ds[o]) - p.dn[o] // o loses its medoid
			}
		}
		for l := range medoids {
			if t := shared + delta[l]; t < bestT {
				bestT, bestM, bestC = t, l, c
			}
		}
	}
	return bestT, bestM, bestC
}
