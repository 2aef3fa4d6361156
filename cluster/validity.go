package cluster

import (
	"fmt"
	"math"
	"math/rand/v2"
	"sort"
	"sync"

	"gonum.org/v1/gonum/mat"
)

// codes maps arbitrary labels to 0…m−1 in order of first appearance of the sorted distinct values.
func codes(labels []int) ([]int, int) {
	distinct := map[int]int{}
	for _, l := range labels {
		distinct[l] = 0
	}
	keys := make([]int, 0, len(distinct))
	for l := range distinct {
		keys = append(keys, l)
	}
	sort.Ints(keys)
	for i, l := range keys {
		distinct[l] = i
	}
	out := make([]int, len(labels))
	for i, l := range labels {
		out[i] = distinct[l]
	}
	return out, len(keys)
}

func checkLabels(fn string, n int, labels []int) ([]int, int, error) {
	if len(labels) != n {
		return nil, 0, fmt.Errorf("cluster: %s: %d labels for %d rows: %w; give one label per row", fn, len(labels), n, ErrShape)
	}
	c, k := codes(labels)
	return c, k, nil
}

// SilhouetteOptions sets up Silhouette.
type SilhouetteOptions struct {
	SampleSize int    // 0: every row; else the silhouette of this many rows drawn without replacement, each against all rows
	Seed       uint64 // draws the sample
	Workers    int    // 0 means GOMAXPROCS; never changes the result
}

// SilhouetteResult holds the silhouette of each scored row and their mean.
type SilhouetteResult struct {
	Rows   []int     // the rows scored, increasing (all rows without sampling)
	Values []float64 // silhouette of each scored row, in [−1, 1]; 0 for a row alone in its group
	Mean   float64
}

// Silhouette computes Rousseeuw's silhouette with Euclidean distances between the rows of x:
// s = (b − a)/max(a, b), where a is the mean distance to the other members of the row's own
// group and b the smallest mean distance to another group. It needs 2 ≤ groups ≤ rows − 1, as
// sklearn.metrics.silhouette_score does. Memory is O(n·groups); time O(n²·columns), in parallel.
//
// Reference: Rousseeuw PJ (1987), Silhouettes: a graphical aid to the interpretation and
// validation of cluster analysis, J. Comput. Appl. Math. 20:53–65.
func Silhouette(x mat.Matrix, labels []int, opts SilhouetteOptions) (*SilhouetteResult, error) {
	data, n, d, err := checkMatrix("Silhouette", x)
	if err != nil {
		return nil, err
	}
	// Sum distances from row i to every row, by group, four rows at a time so that their
	// sums run as independent chains (the O(n²) hot loop).
	return silhouette(n, labels, opts, nil, func(i int, lab []int, sums []float64) {
		xi := data[i*d : (i+1)*d]
		var dist [4]float64
		j := 0
		for ; j+4 <= n; j += 4 {
			sqDistsTo(dist[:], xi, data[j*d:(j+4)*d], d)
			sums[lab[j]] += math.Sqrt(dist[0])
			sums[lab[j+1]] += math.Sqrt(dist[1])
			sums[lab[j+2]] += math.Sqrt(dist[2])
			sums[lab[j+3]] += math.Sqrt(dist[3])
		}
		for ; j < n; j++ {
			sums[lab[j]] += math.Sqrt(sqDist(xi, data[j*d:(j+1)*d]))
		}
	})
}

// SilhouetteCondensed is Silhouette on precomputed distances.
func SilhouetteCondensed(dist *Condensed, labels []int, opts SilhouetteOptions) (*SilhouetteResult, error) {
	if dist == nil || len(dist.D) != dist.N*(dist.N-1)/2 {
		return nil, fmt.Errorf("cluster: SilhouetteCondensed: condensed matrix has the wrong size: %w", ErrShape)
	}
	return silhouette(dist.N, labels, opts, dist.At, nil)
}

// silhouette scores rows from per-group distance sums, made by rowSums when given (it may add the
// zero self-distance) or else pair by pair from dist.
func silhouette(n int, labels []int, opts SilhouetteOptions, dist func(i, j int) float64, rowSums func(i int, lab []int, sums []float64)) (*SilhouetteResult, error) {
	lab, k, err := checkLabels("Silhouette", n, labels)
	if err != nil {
		return nil, err
	}
	if k < 2 || k > n-1 {
		return nil, fmt.Errorf("cluster: Silhouette: %d groups among %d rows: %w; the silhouette needs 2 ≤ groups ≤ rows − 1", k, n, ErrK)
	}
	if opts.SampleSize < 0 {
		return nil, fmt.Errorf("cluster: Silhouette: SampleSize %d: %w; use 0 for all rows", opts.SampleSize, ErrDomain)
	}
	rows := make([]int, n)
	for i := range rows {
		rows[i] = i
	}
	if opts.SampleSize > 0 && opts.SampleSize < n {
		rng := rand.New(rand.NewPCG(opts.Seed, 0))
		rows = rng.Perm(n)[:opts.SampleSize]
		sort.Ints(rows)
	}
	size := make([]float64, k)
	for _, l := range lab {
		size[l]++
	}
	vals := make([]float64, len(rows))
	nw := workers(opts.Workers)
	var wg sync.WaitGroup
	for w := 0; w < nw; w++ {
		wg.Add(1)
		go func(w int) {
			defer wg.Done()
			sums := make([]float64, k)
			for r := w; r < len(rows); r += nw {
				i := rows[r]
				for c := range sums {
					sums[c] = 0
				}
				if rowSums != nil {
					rowSums(i, lab, sums)
				} else {
					for j := 0; j < n; j++ {
						if j != i {
							sums[lab[j]] += dist(i, j)
						}
					}
				}
				own := lab[i]
				if size[own] <= 1 {
					vals[r] = 0
					continue
				}
				a := sums[own] / (size[own] - 1)
				b := math.Inf(1)
				for c := 0; c < k; c++ {
					if c != own && size[c] > 0 {
						b = min(b, sums[c]/size[c])
					}
				}
				if m := max(a, b); m > 0 {
					vals[r] = (b - a) / m
				}
			}
		}(w)
	}
	wg.Wait()
	var mean float64
	for _, v := range vals {
		mean += v
	}
	return &SilhouetteResult{Rows: rows, Values: vals, Mean: mean / float64(len(vals))}, nil
}

// groupMeans returns the group centroids (k × d) and sizes of x's rows under compact labels.
func groupMeans(data []float64, n, d int, lab []int, k int) ([]float64, []float64) {
	cent := make([]float64, k*d)
	size := make([]float64, k)
	for i := 0; i < n; i++ {
		size[lab[i]]++
		for j := 0; j < d; j++ {
			cent[lab[i]*d+j] += data[i*d+j]
		}
	}
	for c := 0; c < k; c++ {
		for j := 0; j < d; j++ {
			cent[c*d+j] /= size[c]
		}
	}
	return cent, size
}

// CalinskiHarabasz is the ratio of between-group to within-group dispersion, each divided by its
// degrees of freedom: [B/(k − 1)] / [W/(n − k)]. It needs 2 ≤ groups ≤ rows − 1 and is 1 when
// W = 0, as in sklearn.metrics.calinski_harabasz_score.
// Reference: Caliński T, Harabasz J (1974), A dendrite method for cluster analysis, Commun. Stat. 3:1–27.
func CalinskiHarabasz(x mat.Matrix, labels []int) (float64, error) {
	data, n, d, err := checkMatrix("CalinskiHarabasz", x)
	if err != nil {
		return 0, err
	}
	lab, k, err := checkLabels("CalinskiHarabasz", n, labels)
	if err != nil {
		return 0, err
	}
	if k < 2 || k > n-1 {
		return 0, fmt.Errorf("cluster: CalinskiHarabasz: %d groups among %d rows: %w; needs 2 ≤ groups ≤ rows − 1", k, n, ErrK)
	}
	cent, size := groupMeans(data, n, d, lab, k)
	mean := make([]float64, d)
	for i := 0; i < n; i++ {
		for j := 0; j < d; j++ {
			mean[j] += data[i*d+j]
		}
	}
	for j := range mean {
		mean[j] /= float64(n)
	}
	var between, within float64
	for c := 0; c < k; c++ {
		between += size[c] * sqDist(cent[c*d:(c+1)*d], mean)
	}
	for i := 0; i < n; i++ {
		within += sqDist(data[i*d:(i+1)*d], cent[lab[i]*d:(lab[i]+1)*d])
	}
	if within == 0 {
		return 1, nil
	}
	return between * float64(n-k) / (within * float64(k-1)), nil
}

// DaviesBouldin is the mean over groups of the largest (sᵢ + sⱼ)/dᵢⱼ, where s is the mean distance
// of a group's rows to its centroid and d the distance between centroids; lower is better.
// Coinciding centroids are skipped, as in sklearn.metrics.davies_bouldin_score.
// Reference: Davies DL, Bouldin DW (1979), A cluster separation measure, IEEE TPAMI 1:224–227.
func DaviesBouldin(x mat.Matrix, labels []int) (float64, error) {
	data, n, d, err := checkMatrix("DaviesBouldin", x)
	if err != nil {
		return 0, err
	}
	lab, k, err := checkLabels("DaviesBouldin", n, labels)
	if err != nil {
		return 0, err
	}
	if k < 2 || k > n-1 {
		return 0, fmt.Errorf("cluster: DaviesBouldin: %d groups among %d rows: %w; needs 2 ≤ groups ≤ rows − 1", k, n, ErrK)
	}
	cent, size := groupMeans(data, n, d, lab, k)
	s := make([]float64, k)
	for i := 0; i < n; i++ {
		s[lab[i]] += math.Sqrt(sqDist(data[i*d:(i+1)*d], cent[lab[i]*d:(lab[i]+1)*d]))
	}
	for c := range s {
		s[c] /= size[c]
	}
	var total float64
	for a := 0; a < k; a++ {
		worst := 0.0
		for b := 0; b < k; b++ {
			if a == b {
				continue
			}
			dab := math.Sqrt(sqDist(cent[a*d:(a+1)*d], cent[b*d:(b+1)*d]))
			if dab == 0 {
				continue
			}
			worst = max(worst, (s[a]+s[b])/dab)
		}
		total += worst
	}
	return total / float64(k), nil
}

// Contingency is the cross-table of two labelings: Counts[i][j] rows with the i-th distinct value
// of a (sorted) and the j-th of b.
type Contingency struct {
	A, B   []int // the distinct labels of each labeling, increasing
	Counts [][]int
}

// NewContingency cross-tabulates two labelings of the same rows.
func NewContingency(a, b []int) (*Contingency, error) {
	if len(a) != len(b) || len(a) == 0 {
		return nil, fmt.Errorf("cluster: NewContingency: labelings of %d and %d rows: %w; compare labelings of the same non-empty rows", len(a), len(b), ErrShape)
	}
	ca, ka := codes(a)
	cb, kb := codes(b)
	t := &Contingency{A: distinct(a), B: distinct(b), Counts: make([][]int, ka)}
	for i := range t.Counts {
		t.Counts[i] = make([]int, kb)
	}
	for i := range ca {
		t.Counts[ca[i]][cb[i]]++
	}
	return t, nil
}

func distinct(l []int) []int {
	m := map[int]bool{}
	var out []int
	for _, v := range l {
		if !m[v] {
			m[v] = true
			out = append(out, v)
		}
	}
	sort.Ints(out)
	return out
}

func comb2(x float64) float64 { return x * (x - 1) / 2 }

// AdjustedRand is the adjusted Rand index of Hubert & Arabie (1985): 1 for identical partitions,
// about 0 for independent ones. Two single-group labelings give 1, as in sklearn.
// Reference: Hubert L, Arabie P (1985), Comparing partitions, J. Classif. 2:193–218.
func AdjustedRand(a, b []int) (float64, error) {
	t, err := NewContingency(a, b)
	if err != nil {
		return 0, err
	}
	return AdjustedRandTable(t.Counts)
}

// AdjustedRandTable is AdjustedRand from a contingency table of counts.
func AdjustedRandTable(counts [][]int) (float64, error) {
	rowSum, colSum, n, err := margins(counts)
	if err != nil {
		return 0, err
	}
	var sumIJ, sumA, sumB float64
	for _, row := range counts {
		for _, c := range row {
			sumIJ += comb2(float64(c))
		}
	}
	for _, v := range rowSum {
		sumA += comb2(v)
	}
	for _, v := range colSum {
		sumB += comb2(v)
	}
	expected := sumA * sumB / comb2(n)
	maxIdx := (sumA + sumB) / 2
	if maxIdx == expected {
		return 1, nil
	}
	return (sumIJ - expected) / (maxIdx - expected), nil
}

func margins(counts [][]int) (rowSum, colSum []float64, n float64, err error) {
	if len(counts) == 0 || len(counts[0]) == 0 {
		return nil, nil, 0, fmt.Errorf("cluster: contingency table is empty: %w", ErrEmpty)
	}
	rowSum = make([]float64, len(counts))
	colSum = make([]float64, len(counts[0]))
	for i, row := range counts {
		if len(row) != len(colSum) {
			return nil, nil, 0, fmt.Errorf("cluster: contingency row %d has %d columns, row 0 %d: %w", i, len(row), len(colSum), ErrShape)
		}
		for j, c := range row {
			if c < 0 {
				return nil, nil, 0, fmt.Errorf("cluster: contingency count %d at (%d, %d): %w", c, i, j, ErrDomain)
			}
			rowSum[i] += float64(c)
			colSum[j] += float64(c)
			n += float64(c)
		}
	}
	if n == 0 {
		return nil, nil, 0, fmt.Errorf("cluster: contingency table counts nothing: %w", ErrEmpty)
	}
	return rowSum, colSum, n, nil
}

// VariationOfInformation is H(a) + H(b) − 2 I(a; b) in nats, the information lost and gained
// in going from one labeling to the other: a metric on partitions, 0 between equal ones.
// Reference: Meilă (2007), J Multivariate Anal 98:873–895, eq. (15).
func VariationOfInformation(a, b []int) (float64, error) {
	t, err := NewContingency(a, b)
	if err != nil {
		return 0, err
	}
	rowSum, colSum, n, err := margins(t.Counts)
	if err != nil {
		return 0, err
	}
	var vi float64
	for i, row := range t.Counts {
		for j, c := range row {
			if c == 0 {
				continue
			}
			// −p log(p² / (pᵢ pⱼ)) summed is H(a|b) + H(b|a).
			p := float64(c) / n
			vi -= p * (2*math.Log(float64(c)) - math.Log(rowSum[i]) - math.Log(colSum[j]))
		}
	}
	return math.Max(0, vi), nil
}

// NormalizedMutualInfo is I(a; b) / ((H(a) + H(b))/2), the arithmetic normalization that is
// sklearn.metrics.normalized_mutual_info_score's default; 1 when both labelings have one group.
// Reference: Vinh, Epps & Bailey (2010), JMLR 11:2837–2854, Table 2 (NMI_sum).
func NormalizedMutualInfo(a, b []int) (float64, error) {
	t, err := NewContingency(a, b)
	if err != nil {
		return 0, err
	}
	return NormalizedMutualInfoTable(t.Counts)
}

// NormalizedMutualInfoTable is NormalizedMutualInfo from a contingency table of counts; rows or
// columns that count nothing are ignored.
func NormalizedMutualInfoTable(counts [][]int) (float64, error) {
	rowSum, colSum, n, err := margins(counts)
	if err != nil {
		return 0, err
	}
	used := func(s []float64) int {
		k := 0
		for _, v := range s {
			if v > 0 {
				k++
			}
		}
		return k
	}
	if used(rowSum) == 1 && used(colSum) == 1 {
		return 1, nil
	}
	var mi float64
	for i, row := range counts {
		for j, c := range row {
			if c == 0 {
				continue
			}
			p := float64(c) / n
			mi += p * (math.Log(float64(c)) + math.Log(n) - math.Log(rowSum[i]) - math.Log(colSum[j]))
		}
	}
	ent := func(s []float64) float64 {
		var h float64
		for _, v := range s {
			if v > 0 {
				p := v / n
				h -= p * math.Log(p)
			}
		}
		return h
	}
	den := (ent(rowSum) + ent(colSum)) / 2
	if den == 0 {
		return 0, nil
	}
	return max(0, mi) / den, nil
}
