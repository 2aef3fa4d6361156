package cluster

import (
	"fmt"

	"math"
	"slices"

	"github.com/cohortmix/cohortmix/cluster/groupstat"

	"gonum.org/v1/gonum/mat"
)

// valleyBins is how many bins the pooled projections are counted in before smoothing.
const valleyBins = 512

// Valley tells whether two groups of rows are two modes or the two halves of one. It projects
// both groups on the line joining their means, estimates the density of the pooled projections
// with a Gaussian kernel (Silverman's rule-of-thumb bandwidth, on 512 bins), and returns the
// lowest density between the two groups' medians divided by the lower of the densities at the
// two medians. Near 1, the density does not dip between them: one mode cut in two. Near 0, a
// deep valley parts them: two modes. Groups whose medians coincide give 1.
//
// The criterion follows the merging of mixture components by the unimodality of their union
// along the line that joins them (Hennig C (2010), Methods for merging Gaussian mixture
// components, Adv. Data Anal. Classif. 4:3–34: the ridgeline ratio and the dip-test methods),
// here on a kernel density of the data themselves. Bandwidth: Silverman BW (1986), Density
// Estimation for Statistics and Data Analysis, Chapman & Hall, eq. (3.31).
func Valley(a, b mat.Matrix) (float64, error) {
	pa, pb, err := valleyProjections(a, b)
	if err != nil {
		return 0, err
	}
	if pa == nil {
		return 1, nil
	}
	medA, medB := median(slices.Clone(pa)), median(slices.Clone(pb))
	if medA == medB {
		return 1, nil
	}
	all := slices.Concat(pa, pb)
	slices.Sort(all)
	h := silverman(all)
	if !(h > 0) {
		return 1, nil
	}
	lo, hi := all[0]-3*h, all[len(all)-1]+3*h
	width := (hi - lo) / valleyBins
	density := binnedDensity(all, lo, width, h)
	bin := func(x float64) int { return min(valleyBins-1, max(0, int((x-lo)/width))) }
	ia, ib := bin(medA), bin(medB)
	if ia > ib {
		ia, ib = ib, ia
	}
	low := math.Inf(1)
	for i := ia; i <= ib; i++ {
		low = math.Min(low, density[i])
	}
	return low / math.Min(density[bin(medA)], density[bin(medB)]), nil
}

// valleyProjections are the rows of a and b projected on the line from a's mean to b's, from
// a's mean; nil when the means coincide.
func valleyProjections(a, b mat.Matrix) (pa, pb []float64, err error) {
	da, na, d, err := checkMatrix("Valley", a)
	if err != nil {
		return nil, nil, err
	}
	db, nb, d2, err := checkMatrix("Valley", b)
	if err != nil {
		return nil, nil, err
	}
	if d != d2 {
		return nil, nil, fmt.Errorf("cluster: Valley: %d and %d columns: %w", d, d2, ErrShape)
	}
	if na < 2 || nb < 2 {
		return nil, nil, fmt.Errorf("cluster: Valley: %d and %d rows: %w; each group needs at least 2", na, nb, ErrEmpty)
	}
	ma, mb := colMeans(da, na, d), colMeans(db, nb, d)
	dir := make([]float64, d)
	var norm float64
	for j := range dir {
		dir[j] = mb[j] - ma[j]
		norm += dir[j] * dir[j]
	}
	if norm == 0 {
		return nil, nil, nil
	}
	norm = math.Sqrt(norm)
	project := func(data []float64, n int) []float64 {
		p := make([]float64, n)
		for i := range p {
			var s float64
			for j, v := range data[i*d : (i+1)*d] {
				s += (v - ma[j]) * dir[j] / norm
			}
			p[i] = s
		}
		return p
	}
	return project(da, na), project(db, nb), nil
}

// silverman is the rule-of-thumb bandwidth of a kernel density of the sorted values (Silverman
// 1986, eq. (3.31)).
func silverman(sorted []float64) float64 {
	n := float64(len(sorted))
	var mean, ss float64
	for _, v := range sorted {
		mean += v / n
	}
	for _, v := range sorted {
		ss += (v - mean) * (v - mean)
	}
	sd := math.Sqrt(ss / (n - 1))
	iqr := groupstat.QuantileSorted(sorted, 0.75) - groupstat.QuantileSorted(sorted, 0.25)
	spread := sd
	if iqr > 0 {
		spread = math.Min(sd, iqr/1.34)
	}
	return 0.9 * spread * math.Pow(n, -0.2)
}

// binnedDensity is the Gaussian kernel density of the values at the centres of valleyBins bins
// of the given width from lo: the counts smoothed by the kernel, cut at four bandwidths h.
func binnedDensity(values []float64, lo, width, h float64) []float64 {
	counts := make([]float64, valleyBins)
	for _, v := range values {
		counts[min(valleyBins-1, int((v-lo)/width))]++
	}
	reach := int(math.Ceil(4 * h / width))
	kernel := make([]float64, reach+1)
	for k := range kernel {
		z := float64(k) * width / h
		kernel[k] = math.Exp(-z * z / 2)
	}
	density := make([]float64, valleyBins)
	for i, c := range counts {
		if c == 0 {
			continue
		}
		for k := -reach; k <= reach; k++ {
			if j := i + k; j >= 0 && j < valleyBins {
				density[j] += c * kernel[abs(k)]
			}
		}
	}
	return density
}

func colMeans(data []float64, n, d int) []float64 {
	m := make([]float64, d)
	for i := 0; i < n; i++ {
		for j := 0; j < d; j++ {
			m[j] += data[i*d+j]
		}
	}
	for j := range m {
		m[j] /= float64(n)
	}
	return m
}

// median of xs, which it reorders.
func median(xs []float64) float64 {
	slices.Sort(xs)
	return groupstat.QuantileSorted(xs, 0.5)
}

func abs(k int) int {
	if k < 0 {
		return -k
	}
	return k
}
