// Package profile learns movement states from windows pooled across participants and describes
// each participant by a mixture signature: the share of its windows in each state and the mean
// length of its bouts in each state.
//
// # Conventions
//
// States are fitted by k-means on a reproducible sample of windows (normalize.Sampled), then every
// window is assigned to its nearest state. Inputs are never modified; every random step is seeded.
//
// # References
//
//   - Arthur & Vassilvitskii (2007); Hamerly (2010): see package cluster (k-means).
//   - Rousseeuw PJ (1987). Silhouettes. J. Comput. Appl. Math. 20:53–65.
//   - Caliński & Harabasz (1974); Davies & Bouldin (1979): see package cluster.
package profile

import (
	"context"
	"errors"
	"fmt"
	"math"
	"sort"

	"github.com/cohortmix/cohortmix/cluster"
	"github.com/cohortmix/cohortmix/normalize"
	"gonum.org/v1/gonum/mat"
)

// ErrOption is wrapped by errors about options; ErrData by errors about the data.
var (
	ErrOption = errors.New("invalid profile option")
	ErrData   = errors.New("too little data for the states")
)

// Options sets up FitStates.
type Options struct {
	States     []int  // candidate numbers of states, increasing (required); one value fixes it
	SampleSize int    // windows drawn for fitting; 0 means 50,000
	Restarts   int    // k-means restarts; 0 means 10
	Seed       uint64 // drives the sample and k-means
	Workers    int
	Progress   func(step string, done, total int)
}

// Candidate is one number of states tried, with the indices shown beside the choice.
type Candidate struct {
	K                int
	Inertia          float64
	Silhouette       float64 // on a sub-sample of at most 4,000 sampled windows
	CalinskiHarabasz float64
	DaviesBouldin    float64
}

// States is the frozen fit: the state centroids in the normalized space.
type States struct {
	K          int
	Centroids  *mat.Dense // K × dimensions
	Candidates []Candidate
	Rule       string
	Sampled    int // windows in the fitting sample
}

// ChoiceRule names how the number of states is chosen from a range.
const ChoiceRule = "largest Calinski–Harabasz index on a sample of windows (Caliński & Harabasz 1974)"

// FitStates learns the states from a sample of the units' normalized windows (each a block of
// windows × dim). With a range of candidate numbers it keeps the one with the largest
// Calinski–Harabasz index; the mean silhouette and Davies–Bouldin are computed beside it for the
// reader. On planted cohorts (TestStatesRuleOnPlantedCohorts) the silhouette picks too few states:
// it prefers the coarse split between rest and movement, merging states the data holds apart.
func FitStates(ctx context.Context, blocks [][]float64, dim int, opts Options) (*States, error) {
	if len(opts.States) == 0 {
		return nil, fmt.Errorf("profile: no number of states given: %w; pass --states 6 or a range such as 2-10", ErrOption)
	}
	for i, k := range opts.States {
		if k < 2 || (i > 0 && k <= opts.States[i-1]) {
			return nil, fmt.Errorf("profile: states %v: %w; give increasing numbers ≥ 2", opts.States, ErrOption)
		}
	}
	size := opts.SampleSize
	if size == 0 {
		size = 50_000
	}
	total := 0
	for _, b := range blocks {
		total += len(b) / dim
	}
	rate := min(1, float64(size)/float64(max(1, total)))
	var rows []float64
	for u, b := range blocks {
		for w := 0; w*dim < len(b); w++ {
			if normalize.Sampled(opts.Seed^0x5eed, u, w, rate) {
				rows = append(rows, b[w*dim:(w+1)*dim]...)
			}
		}
	}
	n := len(rows) / dim
	maxK := opts.States[len(opts.States)-1]
	if n < 2*maxK {
		return nil, fmt.Errorf("profile: %d sampled windows for up to %d states: %w; raise --sample or lower --states", n, maxK, ErrData)
	}
	x := mat.NewDense(n, dim, rows)
	// Validity indices on a fixed sub-sample, the same for every candidate.
	sub := x
	if n > 4000 {
		sub = mat.NewDense(4000, dim, nil)
		step := float64(n) / 4000
		for i := 0; i < 4000; i++ {
			sub.SetRow(i, x.RawRowView(int(float64(i)*step)))
		}
	}
	s := &States{Sampled: n, Rule: "fixed"}
	if len(opts.States) > 1 {
		s.Rule = ChoiceRule
	}
	var best *cluster.KMeansResult
	bestCH := math.Inf(-1)
	for i, k := range opts.States {
		if opts.Progress != nil {
			opts.Progress("fitting states", i, len(opts.States))
		}
		r, err := cluster.KMeans(ctx, x, cluster.KMeansOptions{K: k, Restarts: opts.Restarts, Seed: opts.Seed + uint64(k), Workers: opts.Workers})
		if err != nil {
			return nil, fmt.Errorf("profile: %w", err)
		}
		c := Candidate{K: k, Inertia: r.Inertia}
		subLab, _, err := cluster.Assign(r.Centroids, sub)
		if err != nil {
			return nil, err
		}
		if sil, err := cluster.Silhouette(sub, subLab, cluster.SilhouetteOptions{Workers: opts.Workers}); err == nil {
			c.Silhouette = sil.Mean
		} else {
			c.Silhouette = math.NaN()
		}
		if v, err := cluster.CalinskiHarabasz(sub, subLab); err == nil {
			c.CalinskiHarabasz = v
		} else {
			c.CalinskiHarabasz = math.NaN()
		}
		if v, err := cluster.DaviesBouldin(sub, subLab); err == nil {
			c.DaviesBouldin = v
		} else {
			c.DaviesBouldin = math.NaN()
		}
		s.Candidates = append(s.Candidates, c)
		if c.CalinskiHarabasz > bestCH || best == nil {
			best, bestCH, s.K = r, c.CalinskiHarabasz, k
		}
	}
	s.Centroids = best.Centroids
	s.Centroids, _ = orderStates(s.Centroids)
	return s, nil
}

// orderStates numbers states by the norm of their centroid, quietest-looking first, so that the
// numbering does not depend on the restart that won.
func orderStates(c *mat.Dense) (*mat.Dense, []int) {
	k, d := c.Dims()
	idx := make([]int, k)
	norm := make([]float64, k)
	for i := range idx {
		idx[i] = i
		norm[i] = mat.Norm(c.RowView(i), 2)
	}
	sort.SliceStable(idx, func(a, b int) bool { return norm[idx[a]] < norm[idx[b]] })
	out := mat.NewDense(k, d, nil)
	for to, from := range idx {
		out.SetRow(to, c.RawRowView(from))
	}
	return out, idx
}

// Assign gives every window of a block its nearest state.
func (s *States) Assign(block []float64) []int {
	_, d := s.Centroids.Dims()
	raw := s.Centroids.RawMatrix().Data
	n := len(block) / d
	lab := make([]int, n)
	for i := 0; i < n; i++ {
		lab[i], _ = cluster.Nearest(raw, s.K, block[i*d:(i+1)*d])
	}
	return lab
}

// Signature is a participant's mixture over states.
type Signature struct {
	Share    []float64 // share of windows in each state; sums to 1
	MeanBout []float64 // mean length, in windows, of runs of consecutive windows in each state; 0 when absent
	Bouts    []int     // number of runs in each state
	Windows  int
}

// Signatures summarizes a participant's state sequence (windows in order).
func Signatures(labels []int, k int) Signature {
	s := Signature{Share: make([]float64, k), MeanBout: make([]float64, k), Bouts: make([]int, k), Windows: len(labels)}
	for i, l := range labels {
		s.Share[l]++
		if i == 0 || labels[i-1] != l {
			s.Bouts[l]++
		}
	}
	for j := range s.Share {
		if s.Bouts[j] > 0 {
			s.MeanBout[j] = s.Share[j] / float64(s.Bouts[j])
		}
		if len(labels) > 0 {
			s.Share[j] /= float64(len(labels))
		}
	}
	return s
}

// Description tells what a state looks like in the original feature units.
type Description struct {
	Mean    []float64 // mean of each original feature over the state's windows
	Share   float64   // share of all windows
	Drivers []Driver  // features that set the state apart most, largest first
}

// Driver is a feature with its standardized difference from the cohort mean.
type Driver struct {
	Feature int
	Effect  float64 // (state mean − overall mean) / overall s.d.
}

// Describe computes each state's feature means in the original units from raw blocks (windows ×
// d) and the state of each of their windows.
func Describe(raw [][]float64, labels [][]int, d, k int) ([]Description, error) {
	if len(raw) != len(labels) || d < 1 || k < 1 {
		return nil, fmt.Errorf("profile: Describe: %d blocks, %d label lists, %d features, %d states: %w", len(raw), len(labels), d, k, ErrData)
	}
	for u := range raw {
		if len(raw[u]) != d*len(labels[u]) {
			return nil, fmt.Errorf("profile: Describe: block %d has %d values for %d windows of %d features: %w", u, len(raw[u]), len(labels[u]), d, ErrData)
		}
		for _, l := range labels[u] {
			if l < 0 || l >= k {
				return nil, fmt.Errorf("profile: Describe: state %d outside 0…%d: %w", l, k-1, ErrData)
			}
		}
	}
	sum := make([]float64, k*d)
	cnt := make([]float64, k)
	all := make([]float64, d)
	all2 := make([]float64, d)
	var n float64
	for u, x := range raw {
		for i, l := range labels[u] {
			cnt[l]++
			n++
			for j := 0; j < d; j++ {
				v := x[i*d+j]
				sum[l*d+j] += v
				all[j] += v
				all2[j] += v * v
			}
		}
	}
	out := make([]Description, k)
	for s := 0; s < k; s++ {
		desc := Description{Mean: make([]float64, d), Share: cnt[s] / n}
		for j := 0; j < d; j++ {
			if cnt[s] > 0 {
				desc.Mean[j] = sum[s*d+j] / cnt[s]
			} else {
				desc.Mean[j] = math.NaN()
			}
			mu := all[j] / n
			sd := math.Sqrt(max(0, all2[j]/n-mu*mu))
			if sd > 0 && cnt[s] > 0 {
				desc.Drivers = append(desc.Drivers, Driver{j, (desc.Mean[j] - mu) / sd})
			}
		}
		sort.SliceStable(desc.Drivers, func(a, b int) bool {
			return math.Abs(desc.Drivers[a].Effect) > math.Abs(desc.Drivers[b].Effect)
		})
		out[s] = desc
	}
	return out, nil
}

// LabelTable cross-tabulates states with known activity labels over all windows.
type LabelTable struct {
	Labels   []string
	Counts   [][]int // states × labels
	ARI, NMI float64
}

// CompareLabels builds the states × labels table and its ARI and NMI.
func CompareLabels(states [][]int, labels [][]string, k int) (*LabelTable, error) {
	names := map[string]int{}
	var order []string
	for _, ls := range labels {
		for _, l := range ls {
			if _, ok := names[l]; !ok {
				names[l] = 0
				order = append(order, l)
			}
		}
	}
	sort.Strings(order)
	for i, l := range order {
		names[l] = i
	}
	t := &LabelTable{Labels: order, Counts: make([][]int, k)}
	for s := range t.Counts {
		t.Counts[s] = make([]int, len(order))
	}
	var a, b []int
	for u, ls := range labels {
		for i, l := range ls {
			t.Counts[states[u][i]][names[l]]++
			a = append(a, states[u][i])
			b = append(b, names[l])
		}
	}
	var err error
	if t.ARI, err = cluster.AdjustedRand(a, b); err != nil {
		return nil, err
	}
	if t.NMI, err = cluster.NormalizedMutualInfo(a, b); err != nil {
		return nil, err
	}
	return t, nil
}
