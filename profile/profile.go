// Package profile learns movement states from windows pooled across participants and describes
// each participant by a mixture signature: the share of its windows in each state and the mean
// length of its bouts in each state.
//
// # Conventions
//
// States are fitted on a reproducible sample of windows (normalize.Sampled, or participants and
// windows keyed by id with AlignSample), then every window is assigned to its nearest state.
// With the align step (FitAligned), each participant's device (a rotation of its axis means and
// an offset on every other feature) is fitted jointly with the states and, for every
// participant, alone against the frozen states (States.AlignUnit). A range of numbers of states
// is decided by merging states that form one mode (MergeStates) or by the Calinski–Harabasz
// index. Inputs are never modified; every random step is seeded (par.SubSeed).
//
// # References
//
//   - Arthur & Vassilvitskii (2007); Hamerly (2010): see package cluster (k-means).
//   - Lloyd SP (1982). Least squares quantization in PCM. IEEE Trans. Inf. Theory 28:129–137.
//   - Kabsch W (1976). A solution for the best rotation to relate two sets of vectors. Acta
//     Cryst. A32:922–923 (see cluster.Rotation3).
//   - Hennig C (2010). Methods for merging Gaussian mixture components. Adv. Data Anal. Classif.
//     4:3–34 (merging by unimodality; see cluster.Valley).
//   - Rousseeuw PJ (1987). Silhouettes. J. Comput. Appl. Math. 20:53–65.
//   - Caliński & Harabasz (1974); Davies & Bouldin (1979): see package cluster.
package profile

import (
	"context"
	"errors"
	"fmt"
	"math"
	"slices"
	"sort"

	"gonum.org/v1/gonum/mat"

	"github.com/cohortmix/cohortmix/cluster"
	"github.com/cohortmix/cohortmix/cluster/par"
	"github.com/cohortmix/cohortmix/normalize"
)

// ErrOption is wrapped by errors about options; ErrData by errors about the data.
var (
	ErrOption = errors.New("profile: invalid profile option")
	ErrData   = errors.New("profile: too little data for the states")
)

// Rule chooses the number of states from a range.
type Rule int

const (
	// ByValley fits the largest number and merges neighbouring states that form one mode
	// (MergeStates), down to at most the smallest.
	ByValley Rule = iota
	// ByCalinskiHarabasz keeps the candidate with the largest Calinski–Harabasz index.
	ByCalinskiHarabasz
)

var ruleNames = map[Rule]string{ByValley: "valley", ByCalinskiHarabasz: "ch"}

func (r Rule) String() string { return ruleNames[r] }

// ParseRule reads a rule name: valley or ch.
func ParseRule(s string) (Rule, error) {
	for r, n := range ruleNames {
		if n == s {
			return r, nil
		}
	}
	return 0, fmt.Errorf("profile: rule for the number of states %q: %w; use valley or ch", s, ErrOption)
}

// Options sets up FitStates.
type Options struct {
	States   []int   // candidate numbers of states, increasing (required); one value fixes it
	Rule     Rule    // how a range is decided
	Valley   float64 // ByValley's ratio (MergeStates); 0 means DefaultValley
	Restarts int     // k-means restarts; 0 means 10
	Seed     uint64  // drives the sample and k-means
	Workers  int
	Progress func(step string, done, total int) // after each candidate number of states; may be nil
}

// Candidate is one number of states tried, with the indices shown beside the choice.
type Candidate struct {
	K                int
	Inertia          float64
	Silhouette       float64 // on every other window of the validity sub-sample: at most 2,000 (its cost grows with the square)
	CalinskiHarabasz float64
	DaviesBouldin    float64
}

// States is the frozen fit: the state centroids in the normalized space.
type States struct {
	K          int
	Centroids  *mat.Dense // K × dimensions
	Candidates []Candidate
	Merges     []Merge // states merged because no valley parted them, in order
	Rule       string
	Sampled    int // windows in the fitting sample
	// Aligned states (FitAligned) place a participant only after aligning its device (AlignUnit):
	Posture [][]float64 // each state's mean axis means (x, y, z) once turned, in the units read; nil without axes
	Offsets []bool      // output columns that carry a participant's offset; nil when the states are not aligned
	Prior   float64     // pull of a rotation toward none, in windows' worth per window
	Rounds  int         // most alternations of state assignment and device fit for one participant
	// PersonPrior is the pull of each participant's own version of a state toward the cohort's
	// centre when its windows are assigned (AssignUnit), in windows' worth; 0: the cohort's states.
	PersonPrior float64
	// Calibrate calibrates each device's axis means on its own windows before it is turned
	// (normalize.SphereCalibration, onto the sphere of radius Gravity: the median length of the
	// sampled windows' axis means).
	Calibrate bool
	Gravity   float64
	// SampleLabels are, for states from FitAligned with one number of states, each fitted
	// unit's windows' states as the fit left them (in the order of the units given); nil
	// otherwise. A caller that keeps the states may drop them.
	SampleLabels [][]int
	// Ensemble lists the fits the states were chosen among (job's fitStates), one row per fit;
	// nil when one fit was made.
	Ensemble []EnsembleFit
	// Fine holds, for states fitted over a range and merged (FitAligned), the largest number of
	// states as fitted, before any merge; nil otherwise.
	Fine *States
}

// EnsembleFit is one fit of the states among several: its number of states and random start,
// the number of groups it groups the sampled participants into, and how well that grouping
// agrees with the others' (the mean adjusted Rand index); Kept marks the fit kept.
type EnsembleFit struct {
	States, Start, Groups int
	Agreement             float64
	Kept                  bool
	// WithKept is the adjusted Rand index between this fit's grouping and the kept fit's.
	WithKept float64
}

// Aligned reports whether a participant's device is aligned before its windows are assigned.
func (s *States) Aligned() bool { return s.Offsets != nil }

// ChoiceRule names how the number of states is chosen from a range.
const ChoiceRule = "largest Calinski–Harabasz index on a sample of windows (Caliński & Harabasz 1974)"

// Sample draws the reproducible sample of about size windows that the states are fitted on, from
// blocks of normalized windows (total windows in all), by normalize.Sampled. It is the sample
// that normalize.Options.Keep hands out during the normalizing pass at KeepRate SampleRate(size,
// total) (the same hash and rate), which is how the main job draws it without a pass of its own.
func Sample(blocks normalize.Blocks, dim, size, total int, seed uint64) *mat.Dense {
	rows := normalize.SampleRows(blocks, dim, seed, SampleRate(size, total), nil)
	if len(rows) == 0 {
		return nil
	}
	return mat.NewDense(len(rows)/dim, dim, rows)
}

// SampleRate is the share of windows that gives a sample of about size (0 means 50,000) of total.
func SampleRate(size, total int) float64 {
	if size == 0 {
		size = 50_000
	}
	return min(1, float64(size)/float64(max(1, total)))
}

// FitStates learns the states from a sample of normalized windows (see Sample). With a range of
// candidate numbers it keeps the one with the largest Calinski–Harabasz index; the mean
// silhouette and Davies–Bouldin are computed beside it for the reader. On planted cohorts
// (TestChoiceRulesOnPlantedCohorts) the silhouette picks too few states: it prefers the coarse
// split between rest and movement, merging states the data holds apart.
func FitStates(ctx context.Context, sample *mat.Dense, opts Options) (*States, error) {
	if err := checkStates(opts.States); err != nil {
		return nil, err
	}
	if opts.Rule == ByValley && len(opts.States) > 1 {
		return fitByValley(ctx, sample, opts)
	}
	n := 0
	if sample != nil {
		n, _ = sample.Dims()
	}
	maxK := opts.States[len(opts.States)-1]
	if n < 2*maxK {
		return nil, fmt.Errorf("profile: %d sampled windows for up to %d states: %w; raise job.Options.Sample or lower profile.Options.States", n, maxK, ErrData)
	}
	x := sample
	sub, silSub := validitySamples(x)
	s := &States{Sampled: n, Rule: "fixed"}
	if len(opts.States) > 1 {
		s.Rule = ChoiceRule
	}
	// Candidates of a range are compared on fits with a few restarts; the chosen one is refitted
	// with all of them (Restarts, 10 by default).
	restarts := opts.Restarts
	if restarts == 0 {
		restarts = 10
	}
	candidateRestarts := restarts
	if len(opts.States) > 1 {
		candidateRestarts = min(3, restarts)
	}
	var best *cluster.KMeansResult
	bestCH := math.Inf(-1)
	for i, k := range opts.States {
		r, err := cluster.KMeans(ctx, x, cluster.KMeansOptions{K: k, Restarts: candidateRestarts, Seed: par.SubSeed(opts.Seed, "states k-means", k), Workers: opts.Workers})
		if err != nil {
			return nil, fmt.Errorf("profile: %w", err)
		}
		c, err := scoreCandidate(r, k, sub, silSub, opts.Workers)
		if err != nil {
			return nil, err
		}
		s.Candidates = append(s.Candidates, c)
		if c.CalinskiHarabasz > bestCH || best == nil {
			best, bestCH, s.K = r, c.CalinskiHarabasz, k
		}
		if opts.Progress != nil {
			opts.Progress("fitting states for each candidate number", i+1, len(opts.States))
		}
	}
	if candidateRestarts < restarts {
		// The chosen number gets every restart; its first restarts are the candidate's own
		// (one PCG stream per restart), so this can only lower the within-state sum of squares.
		r, err := cluster.KMeans(ctx, x, cluster.KMeansOptions{K: s.K, Restarts: restarts, Seed: par.SubSeed(opts.Seed, "states k-means", s.K), Workers: opts.Workers})
		if err != nil {
			return nil, fmt.Errorf("profile: %w", err)
		}
		best = r
	}
	s.Centroids = best.Centroids
	s.Centroids, _ = orderStates(s.Centroids)
	return s, nil
}

// validitySamples are the fixed sub-samples the validity indices are computed on, the same for
// every candidate: up to 4,000 windows evenly spaced through the sample, and for the
// silhouette, whose cost grows with the square of the windows, every other one of those above
// 2,000.
func validitySamples(x *mat.Dense) (sub, silSub *mat.Dense) {
	n, dim := x.Dims()
	sub = x
	if n > 4000 {
		sub = mat.NewDense(4000, dim, nil)
		step := float64(n) / 4000
		for i := 0; i < 4000; i++ {
			sub.SetRow(i, x.RawRowView(int(float64(i)*step)))
		}
	}
	silSub = sub
	if r, _ := sub.Dims(); r > 2000 {
		silSub = mat.NewDense(r/2, dim, nil)
		for i := 0; i < r/2; i++ {
			silSub.SetRow(i, sub.RawRowView(2*i))
		}
	}
	return sub, silSub
}

// scoreCandidate is a candidate fit's (k states) validity indices on the sub-samples (NaN where one
// cannot be computed).
func scoreCandidate(r *cluster.KMeansResult, k int, sub, silSub *mat.Dense, workers int) (Candidate, error) {
	c := Candidate{K: k, Inertia: r.Inertia}
	subLab, _, err := cluster.Assign(r.Centroids, sub)
	if err != nil {
		return c, err
	}
	silLab := subLab
	if silSub != sub {
		silLab = make([]int, 0, len(subLab)/2)
		for i := 0; i+1 < len(subLab); i += 2 {
			silLab = append(silLab, subLab[i])
		}
	}
	c.Silhouette, c.CalinskiHarabasz, c.DaviesBouldin = math.NaN(), math.NaN(), math.NaN()
	if sil, err := cluster.Silhouette(silSub, silLab, cluster.SilhouetteOptions{Workers: workers}); err == nil {
		c.Silhouette = sil.Mean
	}
	if v, err := cluster.CalinskiHarabasz(sub, subLab); err == nil {
		c.CalinskiHarabasz = v
	}
	if v, err := cluster.DaviesBouldin(sub, subLab); err == nil {
		c.DaviesBouldin = v
	}
	return c, nil
}

// fitByValley fits the largest number of states by k-means and merges neighbours that form one
// mode (MergeStates), down to at most the smallest number.
func fitByValley(ctx context.Context, sample *mat.Dense, opts Options) (*States, error) {
	n := 0
	if sample != nil {
		n, _ = sample.Dims()
	}
	kmax := opts.States[len(opts.States)-1]
	if n < 2*kmax {
		return nil, fmt.Errorf("profile: %d sampled windows for up to %d states: %w; raise job.Options.Sample or lower profile.Options.States", n, kmax, ErrData)
	}
	if opts.Valley == 0 {
		opts.Valley = DefaultValley
	}
	r, err := cluster.KMeans(ctx, sample, cluster.KMeansOptions{K: kmax, Restarts: opts.Restarts, Seed: par.SubSeed(opts.Seed, "states", 0), Workers: opts.Workers})
	if err != nil {
		return nil, fmt.Errorf("profile: %w", err)
	}
	steps := kmax - opts.States[0] + 1
	if opts.Progress != nil {
		opts.Progress("fitting movement states", 1, steps)
	}
	lab, merges, err := MergeStates(sample, r.Labels, kmax, opts.States[0], opts.Valley, func(done int) {
		if opts.Progress != nil {
			opts.Progress("fitting movement states", 1+done, steps)
		}
	})
	if err != nil {
		return nil, err
	}
	k := kmax - len(merges)
	_, dim := sample.Dims()
	cent := mat.NewDense(k, dim, nil)
	cnt := make([]float64, k)
	for i, l := range lab {
		cnt[l]++
		row := cent.RawRowView(l)
		for c, v := range sample.RawRowView(i) {
			row[c] += v
		}
	}
	for l := 0; l < k; l++ {
		row := cent.RawRowView(l)
		for c := range row {
			row[c] /= cnt[l]
		}
	}
	s := &States{K: k, Sampled: n, Merges: merges,
		Rule: fmt.Sprintf("%d states fitted, then neighbours that form one mode merged (valley ratio ≥ %.2f; after Hennig 2010)", kmax, opts.Valley)}
	s.Centroids, _ = orderStates(cent)
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
	Counts   []int     // windows in each state
	Windows  int
	Gaps     int // interruptions of the recording that broke a bout (SignaturesBroken)
}

// Signatures summarizes a participant's state sequence (windows in order).
func Signatures(labels []int, k int) Signature { return SignaturesBroken(labels, k, nil) }

// SignaturesBroken is Signatures for a sequence with gaps: where gap[i] is set, window i starts
// a new bout whatever the state before it (the recording was interrupted); Gaps counts them.
func SignaturesBroken(labels []int, k int, gap []bool) Signature {
	s := Signature{Share: make([]float64, k), MeanBout: make([]float64, k), Bouts: make([]int, k), Counts: make([]int, k), Windows: len(labels)}
	for i, l := range labels {
		s.Counts[l]++
		s.Share[l]++
		broken := i > 0 && gap != nil && gap[i]
		if broken {
			s.Gaps++
		}
		if i == 0 || labels[i-1] != l || broken {
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
	// Hist counts the state's windows by their value of the feature of a known scale (the
	// Describer's anchor), in AnchorBins bins (see anchorBin); nil without one.
	Hist []float64
}

// Driver is a feature with its standardized difference from the cohort mean.
type Driver struct {
	Feature int
	Effect  float64 // (state mean − overall mean) / overall s.d.
}

// Describer accumulates, window by window, each state's feature means in the original units.
// Each participant's windows are added in floating point (Add); what Merge brings in is summed
// exactly (exactSum), so that Describers merged in any order, on one machine or several, give
// the same bits.
type Describer struct {
	d, k           int
	sum, all, all2 []float64 // windows added since the last fold, in floating point
	cnt            []float64
	n              float64
	exact          []exactSum // k·d state sums, then d sums and d sums of squares, exactly
	// anchor is the feature of a known scale (anchorOf; −1 none), and hist each state's windows
	// in each of its bins (k × AnchorBins; whole numbers, so exact in any order).
	anchor int
	hist   []float64
}

// NewDescriber prepares a Describer for d features and k states.
func NewDescriber(d, k int) *Describer {
	return &Describer{d: d, k: k, sum: make([]float64, k*d), all: make([]float64, d), all2: make([]float64, d), cnt: make([]float64, k), anchor: -1}
}

// NewDescriberOf is NewDescriber for these features: where one has a known scale (activity
// counts, ENMO), each state's windows are also counted by its value (Description.Hist), so that
// the state can be read by where its windows fall and not only by its mean.
func NewDescriberOf(features []string, k int) *Describer {
	ds := NewDescriber(len(features), k)
	j, _ := anchorOf(features)
	ds.countBy(j)
	return ds
}

// Blank is a Describer for the same features and states, counting by value as ds does, with
// nothing added: one per participant without reading the features' names again.
func (ds *Describer) Blank() *Describer {
	b := NewDescriber(ds.d, ds.k)
	b.countBy(ds.anchor)
	return b
}

// countBy has the Describer count each state's windows by their value of feature j (none
// when j < 0).
func (ds *Describer) countBy(j int) {
	if j >= 0 {
		ds.anchor, ds.hist = j, make([]float64, ds.k*AnchorBins)
	}
}

// The bins of Description.Hist: bin 0 holds values at or below 0 (and missing ones), bins 1…
// hold values on a log scale, anchorPerDecade to a decade from 10^anchorLowest (lower positive
// values in bin 1, higher than the last bin in it), wide enough for counts a window and ENMO in
// g or mg.
const (
	anchorPerDecade = 20
	anchorLowest    = -4
	AnchorBins      = 1 + 10*anchorPerDecade // 10⁻⁴ to 10⁶
)

// anchorBin is the bin of value v.
func anchorBin(v float64) int {
	if !(v > 0) {
		return 0
	}
	b := 1 + int(math.Floor((math.Log10(v)-anchorLowest)*anchorPerDecade))
	return min(max(b, 1), AnchorBins-1)
}

// anchorBinRange is the range of values bin b holds (0, 0 for bin 0).
func anchorBinRange(b int) (lo, hi float64) {
	if b <= 0 {
		return 0, 0
	}
	lo = math.Pow(10, anchorLowest+float64(b-1)/anchorPerDecade)
	return lo, lo * math.Pow(10, 1.0/anchorPerDecade)
}

// Add takes one participant's raw windows (windows × d) and their states.
func (ds *Describer) Add(raw []float64, labels []int) error {
	d := ds.d
	if len(raw) != d*len(labels) {
		return fmt.Errorf("profile: Describe: a block has %d values for %d windows of %d features: %w", len(raw), len(labels), d, ErrData)
	}
	for i, l := range labels {
		if l < 0 || l >= ds.k {
			return fmt.Errorf("profile: Describe: state %d outside 0…%d: %w", l, ds.k-1, ErrData)
		}
		if ds.anchor >= 0 {
			ds.hist[l*AnchorBins+anchorBin(raw[i*d+ds.anchor])]++
		}
		ds.cnt[l]++
		ds.n++
		for j := 0; j < d; j++ {
			v := raw[i*d+j]
			ds.sum[l*d+j] += v
			ds.all[j] += v
			ds.all2[j] += v * v
		}
	}
	return nil
}

// fold moves the floating-point sums of the windows added so far into the exact sums.
func (ds *Describer) fold() {
	if ds.exact == nil {
		ds.exact = make([]exactSum, len(ds.sum)+2*ds.d)
	}
	for a, part := range [][]float64{ds.sum, ds.all, ds.all2} {
		at := [3]int{0, len(ds.sum), len(ds.sum) + ds.d}[a]
		for i, v := range part {
			if v != 0 {
				ds.exact[at+i].add(v)
				part[i] = 0
			}
		}
	}
}

// Merge adds what another Describer for the same features and states took in, so that
// participants can be described apart (on several cores or machines) and added up exactly.
func (ds *Describer) Merge(o *Describer) {
	ds.fold()
	o.fold()
	for i := range o.exact {
		for _, v := range o.exact[i].p {
			ds.exact[i].add(v)
		}
	}
	for s, c := range o.cnt {
		ds.cnt[s] += c // whole numbers: exact
	}
	if ds.anchor == o.anchor && len(ds.hist) == len(o.hist) {
		for i, c := range o.hist {
			ds.hist[i] += c // whole numbers: exact
		}
	} else {
		ds.anchor, ds.hist = -1, nil // one side did not count: the states are read by their means
	}
	ds.n += o.n
}

// DescriberPiece is a Describer written out: the exact sums as their partials.
type DescriberPiece struct {
	D, K     int
	Count    []float64 // windows in each state
	N        float64
	Partials [][]float64
	// Anchor is the feature whose values are counted in Hist (k × AnchorBins); Hist is nil
	// without one.
	Anchor int
	Hist   []float64
}

// Piece writes the Describer out.
func (ds *Describer) Piece() DescriberPiece {
	ds.fold()
	p := DescriberPiece{D: ds.d, K: ds.k, Count: slices.Clone(ds.cnt), N: ds.n, Partials: make([][]float64, len(ds.exact)), Anchor: ds.anchor, Hist: slices.Clone(ds.hist)}
	for i, e := range ds.exact {
		p.Partials[i] = slices.Clone(e.p)
	}
	return p
}

// Describer reads a piece back.
func (p DescriberPiece) Describer() (*Describer, error) {
	ds := NewDescriber(p.D, p.K)
	ds.fold()
	if p.D < 1 || p.K < 1 || len(p.Count) != p.K || len(p.Partials) != len(ds.exact) {
		return nil, fmt.Errorf("profile: a described piece of %d features, %d states, %d counts and %d sums: %w", p.D, p.K, len(p.Count), len(p.Partials), ErrData)
	}
	if p.Hist != nil {
		if p.Anchor < 0 || p.Anchor >= p.D || len(p.Hist) != p.K*AnchorBins {
			return nil, fmt.Errorf("profile: a described piece counts feature %d of %d in %d bins for %d states: %w", p.Anchor, p.D, len(p.Hist), p.K, ErrData)
		}
		for _, c := range p.Hist {
			if !(c >= 0) || c != math.Trunc(c) {
				return nil, fmt.Errorf("profile: a described piece holds a count of %v windows: %w", c, ErrData)
			}
		}
		ds.anchor, ds.hist = p.Anchor, slices.Clone(p.Hist)
	}
	copy(ds.cnt, p.Count)
	ds.n = p.N
	for i, q := range p.Partials {
		ds.exact[i].p = slices.Clone(q)
	}
	return ds, nil
}

// Descriptions gives each state's means and the features that drive it.
func (ds *Describer) Descriptions() []Description {
	ds.fold()
	d, k, n := ds.d, ds.k, ds.n
	value := func(i int) float64 { return ds.exact[i].value() }
	out := make([]Description, k)
	for s := 0; s < k; s++ {
		desc := Description{Mean: make([]float64, d), Share: ds.cnt[s] / n}
		if ds.anchor >= 0 {
			desc.Hist = slices.Clone(ds.hist[s*AnchorBins : (s+1)*AnchorBins])
		}
		for j := 0; j < d; j++ {
			if ds.cnt[s] > 0 {
				desc.Mean[j] = value(s*d+j) / ds.cnt[s]
			} else {
				desc.Mean[j] = math.NaN()
			}
			mu := value(k*d+j) / n
			sd := math.Sqrt(max(0, value(k*d+d+j)/n-mu*mu))
			if sd > 0 && ds.cnt[s] > 0 {
				desc.Drivers = append(desc.Drivers, Driver{j, (desc.Mean[j] - mu) / sd})
			}
		}
		sort.SliceStable(desc.Drivers, func(a, b int) bool {
			return math.Abs(desc.Drivers[a].Effect) > math.Abs(desc.Drivers[b].Effect)
		})
		out[s] = desc
	}
	return out
}

// Describe computes each state's feature means in the original units from raw blocks (windows ×
// d) and the state of each of their windows.
func Describe(raw [][]float64, labels [][]int, d, k int) ([]Description, error) {
	if len(raw) != len(labels) || d < 1 || k < 1 {
		return nil, fmt.Errorf("profile: Describe: %d blocks, %d label lists, %d features, %d states: %w", len(raw), len(labels), d, k, ErrData)
	}
	ds := NewDescriber(d, k)
	for u := range raw {
		if err := ds.Add(raw[u], labels[u]); err != nil {
			return nil, err
		}
	}
	return ds.Descriptions(), nil
}

// LabelTable cross-tabulates states with known activity labels over all windows.
type LabelTable struct {
	Labels   []string
	Counts   [][]int // states × labels
	ARI, NMI float64
}

// LabelCounter accumulates the states × labels table window by window.
type LabelCounter struct {
	k      int
	index  map[string]int
	names  []string
	counts [][]int // states × labels in order of first appearance
}

// NewLabelCounter prepares a counter for k states.
func NewLabelCounter(k int) *LabelCounter { return &LabelCounter{k: k, index: map[string]int{}} }

// Add takes one participant's states and known labels.
func (lc *LabelCounter) Add(states []int, labels []string) {
	for i, l := range labels {
		lc.addCount(l, states[i], 1)
	}
}

// Merge adds another counter's table.
func (lc *LabelCounter) Merge(o *LabelCounter) {
	for j, l := range o.names {
		for s, c := range o.counts[j] {
			lc.addCount(l, s, c)
		}
	}
}

func (lc *LabelCounter) addCount(label string, state, c int) {
	j, ok := lc.index[label]
	if !ok {
		j = len(lc.names)
		lc.index[label] = j
		lc.names = append(lc.names, label)
	}
	for len(lc.counts) <= j {
		lc.counts = append(lc.counts, make([]int, lc.k))
	}
	lc.counts[j][state] += c
}

// LabelPiece is a LabelCounter written out: the windows of each label in each state.
type LabelPiece struct {
	K      int
	Labels []string
	Counts [][]int // labels × states
}

// Piece writes the counter out.
func (lc *LabelCounter) Piece() LabelPiece {
	p := LabelPiece{K: lc.k, Labels: slices.Clone(lc.names)}
	for _, c := range lc.counts {
		p.Counts = append(p.Counts, slices.Clone(c))
	}
	return p
}

// Counter reads a piece back.
func (p LabelPiece) Counter() (*LabelCounter, error) {
	lc := NewLabelCounter(p.K)
	if len(p.Counts) != len(p.Labels) {
		return nil, fmt.Errorf("profile: a label piece of %d labels and %d rows: %w", len(p.Labels), len(p.Counts), ErrData)
	}
	for j, l := range p.Labels {
		if len(p.Counts[j]) != p.K {
			return nil, fmt.Errorf("profile: a label piece row of %d states for %d: %w", len(p.Counts[j]), p.K, ErrData)
		}
		for s, c := range p.Counts[j] {
			lc.addCount(l, s, c)
		}
	}
	return lc, nil
}

// Table gives the states × labels table (labels sorted) with its ARI and NMI.
func (lc *LabelCounter) Table() (*LabelTable, error) {
	order := append([]string(nil), lc.names...)
	sort.Strings(order)
	t := &LabelTable{Labels: order, Counts: make([][]int, lc.k)}
	for s := range t.Counts {
		t.Counts[s] = make([]int, len(order))
		for c, l := range order {
			t.Counts[s][c] = lc.counts[lc.index[l]][s]
		}
	}
	var err error
	if t.ARI, err = cluster.AdjustedRandTable(t.Counts); err != nil {
		return nil, err
	}
	if t.NMI, err = cluster.NormalizedMutualInfoTable(t.Counts); err != nil {
		return nil, err
	}
	return t, nil
}
