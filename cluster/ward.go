package cluster

import (
	"context"
	"fmt"
	"math"
	"sync"

	"gonum.org/v1/gonum/mat"
)

// WardOptions sets up WardPoints.
type WardOptions struct {
	Workers int // 0 means GOMAXPROCS; never changes the result
}

// WardPoints is Ward linkage on the rows of x with Euclidean distance, the same dendrogram as
// Hierarchical with Ward on Pairwise(x, Euclidean) and the heights of scipy's linkage(x, "ward"),
// without the n² distance matrix: the nearest-neighbour chain runs on group centroids, using
// Ward's distance √(2·nᵢnⱼ/(nᵢ+nⱼ))·‖cᵢ − cⱼ‖ directly. Memory is O(n·columns); time O(n²·columns),
// with each nearest-neighbour scan split among workers (ties to the lower point index).
//
// References: Ward JH (1963), Hierarchical grouping to optimize an objective function, JASA 58;
// Müllner (2011), arXiv:1109.2378, Fig. 4 (NN-chain) and §3 (centroid form of Ward's distance).
func WardPoints(ctx context.Context, x mat.Matrix, opts WardOptions) (*Tree, error) {
	data, n, d, err := checkMatrix("WardPoints", x)
	if err != nil {
		return nil, err
	}
	// Compact arrays over the active groups: position p holds group ids[p].
	cent := append([]float64(nil), data...)
	size := make([]float64, n)
	ids := make([]int, n)
	pos := make([]int, n)
	for i := range ids {
		size[i], ids[i], pos[i] = 1, i, i
	}
	m := n
	nw := workers(opts.Workers)
	type best struct {
		p int
		v float64
	}
	parts := make([]best, nw)
	// nearest returns the position of the group closest to the one at pa, by the halved squared
	// Ward distance nₐnₓ/(nₐ+nₓ)·‖cₐ − cₓ‖², ties to the lower point id.
	nearest := func(pa int) (int, float64) {
		ca, sa := cent[pa*d:(pa+1)*d], size[pa]
		scan := func(lo, hi int) best {
			b := best{-1, math.Inf(1)}
			for p := lo; p < hi; p++ {
				if p == pa {
					continue
				}
				sp := size[p]
				v := sa * sp / (sa + sp) * sqDist(ca, cent[p*d:(p+1)*d])
				if v < b.v || (v == b.v && b.p >= 0 && ids[p] < ids[b.p]) {
					b = best{p, v}
				}
			}
			return b
		}
		if nw == 1 || m < 2048 {
			b := scan(0, m)
			return b.p, b.v
		}
		var wg sync.WaitGroup
		chunk := (m + nw - 1) / nw
		for w := 0; w < nw; w++ {
			wg.Add(1)
			go func(w int) {
				defer wg.Done()
				parts[w] = scan(min(m, w*chunk), min(m, (w+1)*chunk))
			}(w)
		}
		wg.Wait()
		b := best{-1, math.Inf(1)}
		for _, q := range parts {
			if q.p >= 0 && (q.v < b.v || (q.v == b.v && ids[q.p] < ids[b.p])) {
				b = q
			}
		}
		return b.p, b.v
	}
	merges := make([]Merge, 0, max(0, n-1))
	chain := make([]int, 0, n) // group ids
	for step := 0; step < n-1; step++ {
		if step%64 == 0 && ctx.Err() != nil {
			return nil, ctx.Err()
		}
		if len(chain) == 0 {
			chain = append(chain, ids[0])
		}
		var a, b int
		var vab float64
		for {
			a = chain[len(chain)-1]
			c, vc := nearest(pos[a])
			cid := ids[c]
			if len(chain) >= 2 {
				prev := chain[len(chain)-2]
				pp := pos[prev]
				sa, sp := size[pos[a]], size[pp]
				vp := sa * sp / (sa + sp) * sqDist(cent[pos[a]*d:(pos[a]+1)*d], cent[pp*d:(pp+1)*d])
				if vp <= vc { // prefer the previous element on ties: this closes the chain
					b, vab = prev, vp
					chain = chain[:len(chain)-2]
					break
				}
			}
			chain = append(chain, cid)
		}
		if a > b {
			a, b = b, a
		}
		pa, pb := pos[a], pos[b]
		sa, sb := size[pa], size[pb]
		merges = append(merges, Merge{A: a, B: b, Height: math.Sqrt(2 * vab), Size: int(sa + sb)})
		// The merged group lives at b's position, with the size-weighted mean centroid.
		ca, cb := cent[pa*d:(pa+1)*d], cent[pb*d:(pb+1)*d]
		for t := range cb {
			cb[t] = (sa*ca[t] + sb*cb[t]) / (sa + sb)
		}
		size[pb] = sa + sb
		// Remove a: the last position moves into its place.
		last := m - 1
		if pa != last {
			copy(cent[pa*d:(pa+1)*d], cent[last*d:(last+1)*d])
			size[pa] = size[last]
			ids[pa] = ids[last]
			pos[ids[pa]] = pa
		}
		m--
	}
	if n > 1 && len(merges) != n-1 {
		return nil, fmt.Errorf("cluster: WardPoints: internal: %d merges for %d points", len(merges), n)
	}
	return &Tree{N: n, Merges: relabel(n, merges)}, nil
}
