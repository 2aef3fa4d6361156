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
	if dist == nil || dist.N < 1 || len(dist.D) != dist.N*(dist.N-1)/2 {
		return nil, fmt.Errorf("cluster: PAM: condensed matrix has the wrong size: %w; build it with Pairwise or NewCondensed", ErrShape)
	}
	n, k := dist.N, opts.K
	if err := checkK("PAM", k, n); err != nil {
		return nil, err
	}
	if opts.MaxSwaps < 0 {
		return nil, fmt.Errorf("cluster: PAM: MaxSwaps %d: %w; use 0 for no limit", opts.MaxSwaps, ErrDomain)
	}
	for i, v := range dist.D {
		if math.IsNaN(v) || math.IsInf(v, 0) || v < 0 {
			return nil, fmt.Errorf("cluster: PAM: distance entry %d is %v: %w; distances must be finite and ≥ 0", i, v, ErrNonFinite)
		}
	}
	isMed := make([]bool, n)
	medoids := make([]int, 0, k)
	near := make([]float64, n) // distance to nearest medoid
	for i := range near {
		near[i] = math.Inf(1)
	}
	// BUILD: each new medoid maximizes the decrease of total distance (Kaufman & Rousseeuw 1990).
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
	res := &PAMResult{Medoids: medoids}
	nearest, dn, ds := make([]int, n), make([]float64, n), make([]float64, n)
	assign := func() float64 {
		var td float64
		for j := 0; j < n; j++ {
			nearest[j], dn[j], ds[j] = -1, math.Inf(1), math.Inf(1)
			for l, m := range medoids {
				v := dist.At(m, j)
				if v < dn[j] {
					ds[j] = dn[j]
					nearest[j], dn[j] = l, v
				} else if v < ds[j] {
					ds[j] = v
				}
			}
			td += dn[j]
		}
		return td
	}
	td := assign()
	res.BuildCost = td
	delta := make([]float64, k)
	for opts.MaxSwaps == 0 || res.Swaps < opts.MaxSwaps {
		if ctx.Err() != nil {
			return nil, ctx.Err()
		}
		bestT, bestM, bestC := 0.0, -1, -1
		for c := 0; c < n; c++ {
			if isMed[c] {
				continue
			}
			// FastPAM1: the change of total distance for swapping each medoid with c.
			for l := range delta {
				delta[l] = 0
			}
			var shared float64
			for o := 0; o < n; o++ {
				doc := dist.At(o, c)
				if doc < dn[o] {
					shared += doc - dn[o] // o moves to c whichever medoid leaves
				} else {
					delta[nearest[o]] += min(doc, ds[o]) - dn[o] // o loses its medoid
				}
			}
			for l := range medoids {
				if t := shared + delta[l]; t < bestT {
					bestT, bestM, bestC = t, l, c
				}
			}
		}
		if bestM < 0 || bestT >= -1e-12*max(td, 1) {
			break
		}
		isMed[medoids[bestM]] = false
		isMed[bestC] = true
		medoids[bestM] = bestC
		res.Swaps++
		td = assign()
	}
	res.Cost = td
	res.Labels = nearest
	res.Dist = dn
	return res, nil
}
