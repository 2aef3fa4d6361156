package cluster

import (
	"fmt"
	"math"

	"gonum.org/v1/gonum/mat"
)

// MinCostMatching solves the linear assignment problem on a rows × cols cost matrix: it returns,
// for each row, its column (or −1 when rows > cols and the row is left out) so that every column
// is used at most once and the total cost is the least possible; the total is returned too. It is
// the Hungarian method in its shortest-augmenting-path form, O(rows²·cols), and agrees with
// scipy.optimize.linear_sum_assignment on the optimum.
//
// References: Kuhn (1955); Munkres (1957); Jonker R, Volgenant A (1987), A shortest augmenting path
// algorithm for dense and sparse linear assignment problems, Computing 38:325–340.
func MinCostMatching(cost mat.Matrix) ([]int, float64, error) {
	data, r, c, err := checkMatrix("MinCostMatching", cost)
	if err != nil {
		return nil, 0, err
	}
	at := func(i, j int) float64 { return data[i*c+j] }
	n, m := r, c
	if r > c { // work on the transpose so that rows ≤ columns
		n, m = c, r
		at = func(i, j int) float64 { return data[j*c+i] }
	}
	// Potentials u (rows), v (columns); p[j] is the row matched to column j (1-based, 0 free).
	u := make([]float64, n+1)
	v := make([]float64, m+1)
	p := make([]int, m+1)
	way := make([]int, m+1)
	minv := make([]float64, m+1)
	used := make([]bool, m+1)
	for i := 1; i <= n; i++ {
		p[0] = i
		j0 := 0
		for j := range minv {
			minv[j] = math.Inf(1)
			used[j] = false
		}
		for {
			used[j0] = true
			i0, delta, j1 := p[j0], math.Inf(1), 0
			for j := 1; j <= m; j++ {
				if used[j] {
					continue
				}
				if cur := at(i0-1, j-1) - u[i0] - v[j]; cur < minv[j] {
					minv[j], way[j] = cur, j0
				}
				if minv[j] < delta {
					delta, j1 = minv[j], j
				}
			}
			for j := 0; j <= m; j++ {
				if used[j] {
					u[p[j]] += delta
					v[j] -= delta
				} else {
					minv[j] -= delta
				}
			}
			j0 = j1
			if p[j0] == 0 {
				break
			}
		}
		for j0 != 0 { // augment along the path
			j1 := way[j0]
			p[j0] = p[j1]
			j0 = j1
		}
	}
	assign := make([]int, r)
	for i := range assign {
		assign[i] = -1
	}
	var total float64
	for j := 1; j <= m; j++ {
		if p[j] == 0 {
			continue
		}
		if r > c {
			assign[j-1] = p[j] - 1
		} else {
			assign[p[j]-1] = j - 1
		}
	}
	for i, j := range assign {
		if j >= 0 {
			total += data[i*c+j]
		}
	}
	return assign, total, nil
}

// MatchLabels finds the one-to-one renaming of labeling b's groups onto labeling a's that makes
// the two agree on the most rows. It returns, for each distinct label of b (increasing), the label
// of a it maps to, or −1 when b has more groups than a.
func MatchLabels(a, b []int) (map[int]int, error) {
	t, err := NewContingency(a, b)
	if err != nil {
		return nil, err
	}
	cost := mat.NewDense(len(t.B), len(t.A), nil)
	for i := range t.A {
		for j := range t.B {
			cost.Set(j, i, -float64(t.Counts[i][j]))
		}
	}
	assign, _, err := MinCostMatching(cost)
	if err != nil {
		return nil, err
	}
	out := make(map[int]int, len(t.B))
	for j, i := range assign {
		if i >= 0 {
			out[t.B[j]] = t.A[i]
		} else {
			out[t.B[j]] = -1
		}
	}
	return out, nil
}

// MatchCentroids pairs each new centroid (row of next) with a previous one (row of prev) so that
// the summed Euclidean distance is least. It returns, per new centroid, the previous index or −1,
// and the distance of each pair (NaN for −1).
func MatchCentroids(prev, next mat.Matrix) ([]int, []float64, error) {
	p, kp, dp, err := checkMatrix("MatchCentroids", prev)
	if err != nil {
		return nil, nil, err
	}
	q, kn, dn, err := checkMatrix("MatchCentroids", next)
	if err != nil {
		return nil, nil, err
	}
	if dp != dn {
		return nil, nil, fmt.Errorf("cluster: MatchCentroids: %d and %d columns: %w; centroids must live in the same space", dp, dn, ErrShape)
	}
	cost := mat.NewDense(kn, kp, nil)
	for i := 0; i < kn; i++ {
		for j := 0; j < kp; j++ {
			cost.Set(i, j, math.Sqrt(sqDist(q[i*dn:(i+1)*dn], p[j*dp:(j+1)*dp])))
		}
	}
	assign, _, err := MinCostMatching(cost)
	if err != nil {
		return nil, nil, err
	}
	dist := make([]float64, kn)
	for i, j := range assign {
		if j >= 0 {
			dist[i] = cost.At(i, j)
		} else {
			dist[i] = math.NaN()
		}
	}
	return assign, dist, nil
}
