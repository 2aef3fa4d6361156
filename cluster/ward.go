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
	g := newWardGroups(data, n, d, workers(opts.Workers))
	merges := make([]Merge, 0, max(0, n-1))
	chain := make([]int, 0, n) // group ids
	for step := 0; step < n-1; step++ {
		if step%64 == 0 && ctx.Err() != nil {
			return nil, ctx.Err()
		}
		if len(chain) == 0 {
			chain = append(chain, g.ids[0])
		}
		var a, b int
		var vab float64
		for {
			a = chain[len(chain)-1]
			c, vc := g.nearest(g.pos[a])
			if len(chain) >= 2 {
				prev := chain[len(chain)-2]
				if vp := g.between(g.pos[a], g.pos[prev]); vp <= vc { // prefer the previous element on ties: this closes the chain
					b, vab = prev, vp
					chain = chain[:len(chain)-2]
					break
				}
			}
			chain = append(chain, g.ids[c])
		}
		if a > b {
			a, b = b, a
		}
		size := g.merge(a, b)
		merges = append(merges, Merge{A: a, B: b, Height: math.Sqrt(2 * vab), Size: int(size)})
	}
	if n > 1 && len(merges) != n-1 {
		return nil, fmt.Errorf("cluster: WardPoints: internal: %d merges for %d points", len(merges), n)
	}
	return &Tree{N: n, Merges: relabel(n, merges)}, nil
}

// wardGroups are the active groups of WardPoints in compact arrays: position p holds group
// ids[p], with its centroid and size; pos is each group id's position.
type wardGroups struct {
	cent     []float64
	size     []float64
	ids, pos []int
	m, d, nw int
	parts    []wardBest
}

type wardBest struct {
	p int
	v float64
}

func newWardGroups(data []float64, n, d, nw int) *wardGroups {
	g := &wardGroups{cent: append([]float64(nil), data...), size: make([]float64, n), ids: make([]int, n), pos: make([]int, n), m: n, d: d, nw: nw, parts: make([]wardBest, nw)}
	for i := range g.ids {
		g.size[i], g.ids[i], g.pos[i] = 1, i, i
	}
	return g
}

// between is the halved squared Ward distance nₐnₓ/(nₐ+nₓ)·‖cₐ − cₓ‖² of the groups at
// positions pa and px.
func (g *wardGroups) between(pa, px int) float64 {
	d, sa, sx := g.d, g.size[pa], g.size[px]
	return sa * sx / (sa + sx) * sqDist(g.cent[pa*d:(pa+1)*d], g.cent[px*d:(px+1)*d])
}

// nearest returns the position of the group closest to the one at pa, by the halved squared
// Ward distance, ties to the lower point id; past 2,048 groups the scan is split among workers.
func (g *wardGroups) nearest(pa int) (int, float64) {
	scan := func(lo, hi int) wardBest {
		b := wardBest{-1, math.Inf(1)}
		for p := lo; p < hi; p++ {
			if p == pa {
				continue
			}
			v := g.between(pa, p)
			if v < b.v || (v == b.v && b.p >= 0 && g.ids[p] < g.ids[b.p]) {
				b = wardBest{p, v}
			}
		}
		return b
	}
	m := g.m
	if g.nw == 1 || m < 2048 {
		b := scan(0, m)
		return b.p, b.v
	}
	var wg sync.WaitGroup
	chunk := (m + g.nw - 1) / g.nw
	for w := 0; w < g.nw; w++ {
		wg.Add(1)
		go func(w int) {
			defer wg.Done()
			g.parts[w] = scan(min(m, w*chunk), min(m, (w+1)*chunk))
		}(w)
	}
	wg.Wait()
	b := wardBest{-1, math.Inf(1)}
	for _, q := range g.parts {
		if q.p >= 0 && (q.v < b.v || (q.v == b.v && g.ids[q.p] < g.ids[b.p])) {
			b = q
		}
	}
	return b.p, b.v
}

// merge joins groups a < b: the merged group lives at b's position with the size-weighted mean
// centroid, and the last position moves into a's place. It returns the merged size.
func (g *wardGroups) merge(a, b int) float64 {
	d := g.d
	pa, pb := g.pos[a], g.pos[b]
	sa, sb := g.size[pa], g.size[pb]
	ca, cb := g.cent[pa*d:(pa+1)*d], g.cent[pb*d:(pb+1)*d]
	for t := range cb {
		cb[t] = (sa*ca[t] + sb*cb[t]) / (sa + sb)
	}
	g.size[pb] = sa + sb
	if last := g.m - 1; pa != last {
		copy(g.cent[pa*d:(pa+1)*d], g.cent[last*d:(last+1)*d])
		g.size[pa] = g.size[last]
		g.ids[pa] = g.ids[last]
		g.pos[g.ids[pa]] = pa
	}
	g.m--
	return sa + sb
}
