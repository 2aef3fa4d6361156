package cluster

import (
	"context"
	"fmt"
	"math"
	"sort"
)

// Linkage is the rule for the distance between two groups of points.
type Linkage int

const (
	Ward     Linkage = iota // minimum increase of within-group variance, on Euclidean input distances
	Average                 // mean distance between members (UPGMA)
	Complete                // largest distance between members
	Single                  // smallest distance between members
)

func (l Linkage) String() string {
	switch l {
	case Ward:
		return "ward"
	case Average:
		return "average"
	case Complete:
		return "complete"
	case Single:
		return "single"
	}
	return fmt.Sprintf("Linkage(%d)", int(l))
}

// Merge is one step of a dendrogram, in the convention of scipy.cluster.hierarchy.linkage: points
// are 0…n−1 and the group formed at step s is n+s; A < B; Size counts the points below.
type Merge struct {
	A, B   int
	Height float64
	Size   int
}

// Tree is the result of agglomerative clustering: n−1 merges in order of increasing height.
type Tree struct {
	N      int
	Merges []Merge
}

// HierarchicalOptions sets up Hierarchical.
type HierarchicalOptions struct {
	Linkage  Linkage
	MaxBytes int64 // refuse when the working copy of the distances would pass this; 0: no limit
}

// Hierarchical clusters n points agglomeratively from their condensed distances. Ward, average
// and complete linkage run by the nearest-neighbour chain (reducible linkages), single linkage by
// a minimum spanning tree; both give the exact dendrogram in O(n²) time. For Ward the input must
// be Euclidean distances and the heights are those of scipy: √(2·nᵢnⱼ/(nᵢ+nⱼ))·‖cᵢ − cⱼ‖.
// Merges are sorted by height (stably) and numbered as scipy does. The input is not modified; a
// working copy is made, which the memory guard counts.
//
// References: Murtagh (1983); Müllner (2011), Modern hierarchical, agglomerative clustering
// algorithms, arXiv:1109.2378, Fig. 4 (NN-chain) and Fig. 6 (MST), Lance–Williams updates Table 1.
func Hierarchical(ctx context.Context, dist *Condensed, opts HierarchicalOptions) (*Tree, error) {
	if dist == nil || dist.N < 1 || len(dist.D) != dist.N*(dist.N-1)/2 {
		return nil, fmt.Errorf("cluster: Hierarchical: condensed matrix has the wrong size: %w; build it with Pairwise or NewCondensed", ErrShape)
	}
	n := dist.N
	if need := CondensedBytes(n); opts.MaxBytes > 0 && need > opts.MaxBytes {
		return nil, fmt.Errorf("cluster: Hierarchical: %d points need %d MiB, over the %d MiB limit: %w; use k-means (or PAM on a sample) for this many points, or raise the limit",
			n, need>>20, opts.MaxBytes>>20, ErrTooLarge)
	}
	for i, v := range dist.D {
		if math.IsNaN(v) || math.IsInf(v, 0) || v < 0 {
			return nil, fmt.Errorf("cluster: Hierarchical: distance entry %d is %v: %w; distances must be finite and ≥ 0", i, v, ErrNonFinite)
		}
	}
	var raw []Merge
	var err error
	switch opts.Linkage {
	case Ward, Average, Complete:
		raw, err = nnChain(ctx, dist, opts.Linkage)
	case Single:
		raw, err = mstSingle(ctx, dist)
	default:
		return nil, fmt.Errorf("cluster: Hierarchical: unknown linkage %d: %w; use Ward, Average, Complete or Single", int(opts.Linkage), ErrDomain)
	}
	if err != nil {
		return nil, err
	}
	return &Tree{N: n, Merges: relabel(n, raw)}, nil
}

// nnChain is Müllner (2011) Fig. 4. Raw merges name points by their first member index.
func nnChain(ctx context.Context, dist *Condensed, link Linkage) ([]Merge, error) {
	n := dist.N
	g := newChainGroups(dist, link)
	merges := make([]Merge, 0, max(0, n-1))
	chain := make([]int, 0, n)
	for step := 0; step < n-1; step++ {
		if step%64 == 0 && ctx.Err() != nil {
			return nil, ctx.Err()
		}
		if len(chain) == 0 {
			chain = append(chain, g.head)
		}
		var a, b int
		var dab float64
		for {
			a = chain[len(chain)-1]
			c, dc := -1, math.Inf(1)
			if len(chain) >= 2 {
				c = chain[len(chain)-2]
				dc = g.d[g.idx(a, c)]
			}
			if x, v := g.nearest(a, dc); x >= 0 {
				c, dc = x, v
			}
			if len(chain) >= 2 && c == chain[len(chain)-2] {
				b, dab = c, dc
				chain = chain[:len(chain)-2]
				break
			}
			chain = append(chain, c)
		}
		if a > b {
			a, b = b, a
		}
		h := dab
		if link == Ward {
			h = math.Sqrt(dab)
		}
		merges = append(merges, Merge{A: a, B: b, Height: h, Size: g.size[a] + g.size[b]})
		g.merge(a, b, dab, link)
	}
	return merges, nil
}

// chainGroups are nnChain's working distances (squared for Ward: its Lance–Williams update is
// linear in them) and group sizes, with the active points in a linked list kept in increasing
// order so that ties go to the lower index.
type chainGroups struct {
	n          int
	d          []float64
	size       []int
	next, prev []int // next[i] follows i; n ends the list
	head       int
}

func newChainGroups(dist *Condensed, link Linkage) *chainGroups {
	n := dist.N
	g := &chainGroups{n: n, d: append([]float64(nil), dist.D...), size: make([]int, n), next: make([]int, n+1), prev: make([]int, n+1)}
	if link == Ward {
		for i, v := range g.d {
			g.d[i] = v * v
		}
	}
	for i := 0; i < n; i++ {
		g.size[i] = 1
		g.next[i], g.prev[i+1] = i+1, i
	}
	g.prev[0] = -1
	return g
}

// idx is the place of the distance between i and j in the condensed matrix.
func (g *chainGroups) idx(i, j int) int {
	if i > j {
		i, j = j, i
	}
	return g.n*i - i*(i+1)/2 + j - i - 1
}

// nearest is the active point closest to a strictly below the distance below, or -1.
func (g *chainGroups) nearest(a int, below float64) (int, float64) {
	c := -1
	for x := g.head; x < g.n; x = g.next[x] {
		if x == a {
			continue
		}
		if v := g.d[g.idx(a, x)]; v < below {
			c, below = x, v
		}
	}
	return c, below
}

func (g *chainGroups) remove(i int) {
	if g.prev[i] >= 0 {
		g.next[g.prev[i]] = g.next[i]
	} else {
		g.head = g.next[i]
	}
	if g.next[i] < g.n {
		g.prev[g.next[i]] = g.prev[i]
	}
}

// merge joins a < b at distance dab: the new group lives at b and a leaves the active set; its
// distances to the others follow Lance–Williams (Müllner 2011, Table 1).
func (g *chainGroups) merge(a, b int, dab float64, link Linkage) {
	na, nb := float64(g.size[a]), float64(g.size[b])
	g.remove(a)
	for x := g.head; x < g.n; x = g.next[x] {
		if x == b {
			continue
		}
		ia, ib := g.idx(a, x), g.idx(b, x)
		dax, dbx := g.d[ia], g.d[ib]
		var v float64
		switch link {
		case Ward:
			nx := float64(g.size[x])
			v = ((na+nx)*dax + (nb+nx)*dbx - nx*dab) / (na + nb + nx)
		case Average:
			v = (na*dax + nb*dbx) / (na + nb)
		case Complete:
			v = max(dax, dbx)
		}
		g.d[ib] = v
	}
	g.size[b] += g.size[a]
	g.size[a] = 0
}

// mstSingle is single linkage through Prim's minimum spanning tree, Müllner (2011) Fig. 6.
func mstSingle(ctx context.Context, dist *Condensed) ([]Merge, error) {
	n := dist.N
	merges := make([]Merge, 0, max(0, n-1))
	inTree := make([]bool, n)
	best := make([]float64, n)
	from := make([]int, n) // the tree point that gives best[x]
	for i := range best {
		best[i] = math.Inf(1)
	}
	cur := 0
	for step := 0; step < n-1; step++ {
		if step%256 == 0 && ctx.Err() != nil {
			return nil, ctx.Err()
		}
		inTree[cur] = true
		nxt, nd := -1, math.Inf(1)
		for x := 0; x < n; x++ {
			if inTree[x] {
				continue
			}
			if v := dist.At(cur, x); v < best[x] {
				best[x], from[x] = v, cur
			}
			if best[x] < nd {
				nxt, nd = x, best[x]
			}
		}
		merges = append(merges, Merge{A: from[nxt], B: nxt, Height: nd})
		cur = nxt
	}
	return merges, nil
}

// relabel sorts raw merges stably by height and names groups as scipy does, with union–find.
func relabel(n int, raw []Merge) []Merge {
	sort.SliceStable(raw, func(i, j int) bool { return raw[i].Height < raw[j].Height })
	parent := make([]int, 2*n)
	name := make([]int, 2*n) // scipy name of the set whose root is i
	size := make([]int, 2*n)
	for i := range parent {
		parent[i] = i
		name[i] = i
		size[i] = 1
	}
	find := func(i int) int {
		for parent[i] != i {
			parent[i] = parent[parent[i]]
			i = parent[i]
		}
		return i
	}
	out := make([]Merge, len(raw))
	for s, m := range raw {
		ra, rb := find(m.A), find(m.B)
		a, b := name[ra], name[rb]
		if a > b {
			a, b = b, a
		}
		parent[ra] = rb
		size[rb] += size[ra]
		name[rb] = n + s
		out[s] = Merge{A: a, B: b, Height: m.Height, Size: size[rb]}
	}
	return out
}

// Cut returns labels 0…k−1 for the k groups left after undoing the last k−1 merges. Groups are
// numbered in order of their lowest point, so the labels do not depend on merge order.
func (t *Tree) Cut(k int) ([]int, error) {
	if err := checkK("Tree.Cut", k, t.N); err != nil {
		return nil, err
	}
	parent := make([]int, 2*t.N)
	for i := range parent {
		parent[i] = i
	}
	find := func(i int) int {
		for parent[i] != i {
			parent[i] = parent[parent[i]]
			i = parent[i]
		}
		return i
	}
	for s := 0; s < t.N-k; s++ {
		m := t.Merges[s]
		parent[find(m.A)] = t.N + s
		parent[find(m.B)] = t.N + s
	}
	labels := make([]int, t.N)
	seen := map[int]int{}
	for i := 0; i < t.N; i++ {
		r := find(i)
		l, ok := seen[r]
		if !ok {
			l = len(seen)
			seen[r] = l
		}
		labels[i] = l
	}
	return labels, nil
}

// Order returns the points in the left-to-right order of the dendrogram's leaves (scipy's
// leaves_list for an unsorted tree: the lower-named child is drawn first).
func (t *Tree) Order() []int {
	if t.N == 1 {
		return []int{0}
	}
	out := make([]int, 0, t.N)
	stack := []int{t.N + len(t.Merges) - 1}
	for len(stack) > 0 {
		v := stack[len(stack)-1]
		stack = stack[:len(stack)-1]
		if v < t.N {
			out = append(out, v)
			continue
		}
		m := t.Merges[v-t.N]
		stack = append(stack, m.B, m.A)
	}
	return out
}
