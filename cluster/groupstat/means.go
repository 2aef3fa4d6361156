package groupstat

import (
	"math"
	"slices"
)

// Quantile is the p-quantile (0 ≤ p ≤ 1) of xs by linear interpolation between order
// statistics, numpy's default ("linear", Hyndman & Fan 1996 definition 7); NaN values are left
// out, and it is NaN when none is left. xs is not changed.
func Quantile(xs []float64, p float64) float64 {
	s := make([]float64, 0, len(xs))
	for _, v := range xs {
		if !math.IsNaN(v) {
			s = append(s, v)
		}
	}
	if len(s) == 0 {
		return math.NaN()
	}
	slices.Sort(s)
	return QuantileSorted(s, p)
}

// QuantileSorted is Quantile of values already sorted in increasing order, none NaN, at least one.
func QuantileSorted(sorted []float64, p float64) float64 {
	h := p * float64(len(sorted)-1)
	i := int(h)
	if i+1 >= len(sorted) {
		return sorted[len(sorted)-1]
	}
	return sorted[i] + (h-float64(i))*(sorted[i+1]-sorted[i])
}

// GroupMeans is each of k groups' mean of the rows in it (row i is in group labels[i]; a
// negative label leaves the row out), added in row order, with each group's size. A group
// without rows has means of 0 and size 0.
func GroupMeans(rows [][]float64, labels []int, k int) ([][]float64, []int) {
	means := make([][]float64, k)
	sizes := make([]int, k)
	for g := range means {
		if len(rows) > 0 {
			means[g] = make([]float64, len(rows[0]))
		}
	}
	for i, row := range rows {
		g := labels[i]
		if g < 0 {
			continue
		}
		sizes[g]++
		for j, v := range row {
			means[g][j] += v
		}
	}
	for g, m := range means {
		if sizes[g] == 0 {
			continue
		}
		for j := range m {
			m[j] /= float64(sizes[g])
		}
	}
	return means, sizes
}

// GroupMeansOfPositive is GroupMeans counting, in each column, only the rows whose value there
// is above 0, for measures that do not exist where they are 0 (a mean bout length of a state a
// participant never entered); a group with no such row in a column has NaN there.
func GroupMeansOfPositive(rows [][]float64, labels []int, k int) [][]float64 {
	means := make([][]float64, k)
	counts := make([][]int, k)
	for g := range means {
		if len(rows) > 0 {
			means[g] = make([]float64, len(rows[0]))
			counts[g] = make([]int, len(rows[0]))
		}
	}
	for i, row := range rows {
		g := labels[i]
		if g < 0 {
			continue
		}
		for j, v := range row {
			if v > 0 {
				means[g][j] += v
				counts[g][j]++
			}
		}
	}
	for g, m := range means {
		for j := range m {
			if counts[g][j] == 0 {
				m[j] = math.NaN()
			} else {
				m[j] /= float64(counts[g][j])
			}
		}
	}
	return means
}
