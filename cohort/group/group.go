package group

import (
	"context"
	"fmt"
	"math"
	"math/rand/v2"
	"slices"
	"sort"
	"strings"

	"gonum.org/v1/gonum/mat"

	"github.com/cohortmix/cohortmix/cluster"
	"github.com/cohortmix/cohortmix/cluster/mixture"
	"github.com/cohortmix/cohortmix/cluster/par"
	"github.com/cohortmix/cohortmix/cohort"
	"github.com/cohortmix/cohortmix/cohort/note"
)

// Method is how participants are grouped on their signatures.
type Method int

const (
	WardHellinger    Method = iota // Ward linkage on √share (Euclidean there is √2 × the Hellinger distance)
	PAMAitchison                   // k-medoids on the Aitchison distance (CLR with zero replacement)
	PAMJensenShannon               // k-medoids on the Jensen–Shannon distance
	KMeansCLR                      // k-means on the centred log-ratios
	Auto                           // Ward on Hellinger up to LargeCohort participants, k-means on CLR above
	// Mixture is a Dirichlet-multinomial mixture of the participants' bouts in each state and of
	// how often their windows start a bout (see BoutTable), its number of groups, one among them,
	// by an information criterion (ByBIC or ByICL).
	Mixture
)

// LargeCohort is the number of participants above which Auto switches from Ward (O(n²) time per
// tree, and one tree per bootstrap resample and gap reference) to k-means on the CLR.
const LargeCohort = 10_000

// method is what sets a grouping method apart: one row per method, from which its name, its
// parser, its help and its behaviour in Signatures all come.
type method struct {
	name, help string
	clr        bool // embeds the shares by their centred log-ratios; otherwise by their square roots
	js         bool // distances are Jensen–Shannon between the shares; otherwise Euclidean in the embedding
	medoids    bool // k-medoids on the distance matrix, with medoids for centres
	tree       bool // Ward linkage: one tree, cut at every number of groups
}

// methods lists the methods in the order their help names them.
var methods = []struct {
	m Method
	method
}{
	{Mixture, method{name: "mixture", help: "a Dirichlet-multinomial mixture of each participant's bouts in each state and how often a window starts one; one group is a possible answer"}},
	{Auto, method{name: "auto", help: "ward-hellinger, or kmeans-clr above 10,000 participants"}},
	{WardHellinger, method{name: "ward-hellinger", help: "Ward linkage on the Hellinger embedding", tree: true}},
	{PAMAitchison, method{name: "pam-aitchison", help: "k-medoids on the Aitchison distance", clr: true, medoids: true}},
	{PAMJensenShannon, method{name: "pam-js", help: "k-medoids on the Jensen–Shannon distance", js: true, medoids: true}},
	{KMeansCLR, method{name: "kmeans-clr", help: "k-means on the centred log-ratios", clr: true}},
}

func (m Method) row() method {
	for _, r := range methods {
		if r.m == m {
			return r.method
		}
	}
	return method{name: fmt.Sprintf("method(%d)", int(m))}
}

func (m Method) String() string { return m.row().name }

// MethodHelp names every grouping method with a few words on each, for a flag's help.
func MethodHelp() string {
	var parts []string
	for _, r := range methods {
		parts = append(parts, r.name+" ("+r.help+")")
	}
	return strings.Join(parts[:len(parts)-1], ", ") + " or " + parts[len(parts)-1]
}

// ParseMethod reads a grouping method name (methods).
func ParseMethod(s string) (Method, error) {
	var names []string
	for _, r := range methods {
		if r.name == s {
			return r.m, nil
		}
		names = append(names, r.name)
	}
	return 0, fmt.Errorf("group: grouping method %q: %w; use %s or %s", s, cohort.ErrBadOption, strings.Join(names[:len(names)-1], ", "), names[len(names)-1])
}

// Criterion chooses the number of groups from a range.
type Criterion int

const (
	ByGap        Criterion = iota // gap statistic, smallest k with Gap(k) ≥ Gap(k+1) − s(k+1) (Tibshirani et al. 2001)
	ByStability                   // largest mean bootstrap ARI (Lange et al. 2004)
	BySilhouette                  // largest mean silhouette (Rousseeuw 1987)
	// ByGapStable takes the gap statistic's number, then one fewer while the grouping with one
	// fewer is clearly more stable (StableStep).
	ByGapStable
	// ByGapSteady takes ByGapStable's number, then, when that grouping is tentative (its
	// stability below UnstableGrouping), the largest smaller number whose grouping is not; it
	// keeps ByGapStable's number when no smaller one is stable.
	ByGapSteady
	// ByBIC and ByICL choose the mixture method's number of groups by the smallest Bayesian
	// information criterion (Schwarz 1978) or integrated completed likelihood (Biernacki,
	// Celeux & Govaert 2000), which adds to the BIC the entropy of the memberships.
	ByBIC
	ByICL
)

// StableStep is how much more stable (mean bootstrap ARI, Lange et al. 2004) the grouping with
// one group fewer must be for ByGapStable to step down to it: a tenth of the ARI's range from
// chance to identity, about five times the median standard error of a stability over 20
// resamples in the recovery benchmark's runs (0.019; 90 % of them below 0.035), so a step is
// rarely taken on resampling noise.
const StableStep = 0.1

var criterionNames = map[Criterion]string{ByStability: "stability", ByGap: "gap", BySilhouette: "silhouette", ByGapStable: "gap-stable", ByGapSteady: "gap-stable-firm", ByBIC: "bic", ByICL: "icl"}

func (c Criterion) String() string { return criterionNames[c] }

// ParseCriterion reads a criterion name.
func ParseCriterion(s string) (Criterion, error) {
	if s == "gap-steady" { // its name until 2026-12, kept for the model files written then
		s = criterionNames[ByGapSteady]
	}
	for c, n := range criterionNames {
		if n == s {
			return c, nil
		}
	}
	return 0, fmt.Errorf("group: criterion %q: %w; use bic or icl (the mixture method), or gap-stable-firm, gap-stable, gap, stability or silhouette", s, cohort.ErrBadOption)
}

// Options sets up Signatures.
type Options struct {
	Method    Method
	Groups    []int     // candidate numbers of groups, increasing (required); 1 allowed for the mixture method
	Criterion Criterion // used when Groups has more than one value
	Bootstrap int       // resamples for stability and references for the gap; 0 means 20
	Seed      uint64
	MaxBytes  int64 // memory guard for distance matrices; 0 means 512 MiB (about 11,000 participants)
	// Valley, when above 0 and a range of numbers is given, lowers the chosen number of groups
	// while some pair of its groups forms one mode: the density of the pair's participants along
	// the line joining their centres keeps at least this share of its height between them
	// (cluster.Valley; the states' merging rule, after Hennig 2010, applied to groups).
	Valley float64
	// Counts and Bouts are each participant's windows and bouts in each state, which the mixture
	// method groups (BoutTable); the other methods do not use them. With NoBouts the mixture
	// groups the counts alone, as independent draws (windows sampled apart, whose runs are no
	// bouts); Bouts is not used then.
	Counts, Bouts [][]float64
	NoBouts       bool
	// DayParts, when set, are each participant's windows in each state within each part of the
	// day (parts·k counts, part-major), which the mixture groups in place of Counts: one block
	// of states per part (BoutTable); the other methods take day-part shares as their shares.
	DayParts [][]float64
	// NoStability leaves out the bootstrap stability of the groups chosen (Stability).
	NoStability bool
	// Quick fits the mixture from 2 starts each, to a looser tolerance (1e-4 per row) and
	// at most 100 EM iterations, and stops at the first number of groups whose criterion rises:
	// a vote among many fits, not the run's grouping.
	Quick    bool
	Workers  int
	Progress func(step string, done, total int) // after each grouping, reference set and resample; may be nil
}

// report tells opts.Progress, if set, that done of total of a step are finished.
func (o Options) report(step string, done, total int) {
	if o.Progress != nil {
		o.Progress(step, done, total)
	}
}

// KScore holds every criterion for one number of groups.
type KScore struct {
	K          int
	Silhouette float64
	Gap, GapSE float64
	Stability  float64
	// StabilitySE is the standard error of Stability, the resamples' standard deviation over
	// the square root of their number.
	StabilitySE float64
	// BIC, ICL and LogLik are the mixture method's (NaN for the others).
	BIC, ICL, LogLik float64
}

// Grouping is the frozen grouping of participants.
type Grouping struct {
	Method       Method
	Criterion    Criterion
	K            int
	Labels       []int         // group of each participant, 0-based, numbered by size (largest first)
	Silhouette   []float64     // each participant's silhouette in the grouping space
	Scores       []KScore      // every criterion over the range tried
	Centroids    [][]float64   // per group, in the grouping space (a medoid for PAM)
	Distance     []float64     // each participant's distance to its group's centroid
	Notes        []note.Note   // what the method did on its own, e.g. a switch for a large cohort (the kinds below)
	Tree         *cluster.Tree // the participants' dendrogram, for Ward
	CentroidTree *cluster.Tree // average linkage of the group centres, for a dendrogram of the groups
	Stability    *Stability
	// Mixture is the mixture method's frozen model, its components in the groups' order; nil
	// for the other methods.
	Mixture *mixture.DMM
	// Posterior is each participant's posterior probability of its group under the mixture (nil
	// for the other methods).
	Posterior []float64
	// NoBouts says the mixture grouped the counts alone (Options.NoBouts).
	NoBouts bool
}

// Embed maps a signature (shares) into the grouping space of the method.
func Embed(m Method, share []float64) []float64 {
	out := make([]float64, len(share))
	if !m.row().clr {
		for j, v := range share {
			out[j] = math.Sqrt(max(0, v))
		}
	} else if _, err := cluster.CLR(out, share, cluster.DefaultZeroDelta); err != nil {
		copy(out, share)
	}
	return out
}

// SpaceDistance is the distance the method uses between two embedded signatures.
func SpaceDistance(m Method, a, b []float64) float64 {
	if m.row().js {
		p, q := make([]float64, len(a)), make([]float64, len(b))
		for j := range a {
			p[j], q[j] = a[j]*a[j], b[j]*b[j]
		}
		d, _ := cluster.JensenShannonDistance(p, q)
		return d
	}
	var s float64
	for j := range a {
		v := a[j] - b[j]
		s += v * v
	}
	return math.Sqrt(s)
}

// Signatures groups participants by their shares (rows of shares, each summing to 1).
func Signatures(ctx context.Context, shares [][]float64, opts Options) (*Grouping, error) {
	n := len(shares)
	if err := opts.checkGroups(); err != nil {
		return nil, err
	}
	if opts.Bootstrap == 0 {
		opts.Bootstrap = 20
	}
	if opts.Method == Mixture {
		if n < 2 {
			return nil, fmt.Errorf("group: %d participants to group: %w; grouping needs at least 2", n, cohort.ErrTooFew)
		}
		return groupMixture(ctx, shares, opts)
	}
	if opts.Criterion == ByBIC || opts.Criterion == ByICL {
		return nil, fmt.Errorf("group: criterion %s is the mixture method's; %s chooses by gap-stable-firm, gap-stable, gap, stability or silhouette: %w", opts.Criterion, opts.Method, cohort.ErrBadOption)
	}
	if maxK := opts.Groups[len(opts.Groups)-1]; maxK > n-1 {
		return nil, fmt.Errorf("group: %d groups asked for but %d participants are grouped: %w; lower group.Options.Groups to at most %d", maxK, n, cohort.ErrTooFew, max(2, n-1))
	}
	if opts.MaxBytes == 0 {
		opts.MaxBytes = 512 << 20
	}
	var notes []note.Note
	if opts.Method == Auto {
		opts.Method = WardHellinger
		if n > LargeCohort {
			opts.Method = KMeansCLR
			notes = append(notes, note.Note{Kind: NoteAutoKMeans, Ints: []int{n, LargeCohort}, Option: "group.Options.Method"})
		}
	}
	g := &Grouping{Method: opts.Method, Criterion: opts.Criterion, Notes: notes}
	d := len(shares[0])
	x := mat.NewDense(n, d, nil)
	for i, s := range shares {
		x.SetRow(i, Embed(opts.Method, s))
	}
	dist, err := distances(x, shares, opts)
	if err != nil {
		return nil, err
	}
	labelsByK, err := g.labelsForEach(ctx, x, dist, opts)
	if err != nil {
		return nil, err
	}
	if err := g.chooseK(ctx, x, dist, labelsByK, opts); err != nil {
		return nil, err
	}
	if err := g.describe(ctx, x, dist, labelsByK[g.K], opts); err != nil {
		return nil, err
	}
	return g, nil
}

// checkGroups checks the numbers of groups asked for: increasing, from 1 for the mixture and
// from 2 for the other methods.
func (opts Options) checkGroups() error {
	if len(opts.Groups) == 0 {
		return fmt.Errorf("group: no number of groups given: %w; set group.Options.Groups to 3 or a range such as 1-8", cohort.ErrBadOption)
	}
	least := 2
	if opts.Method == Mixture {
		least = 1
	}
	for i, k := range opts.Groups {
		if k < least || (i > 0 && k <= opts.Groups[i-1]) {
			return fmt.Errorf("group: groups %v: %w; give increasing numbers ≥ %d", opts.Groups, cohort.ErrBadOption, least)
		}
	}
	return nil
}

// distances are the participants' distances for PAM and the silhouette (Jensen–Shannon on the
// shares, or Euclidean in the grouping space x): for PAM up to opts.MaxBytes, for the
// silhouettes alone up to SilhouetteMatrixBytes; nil past them where the method can do without.
func distances(x *mat.Dense, shares [][]float64, opts Options) (*cluster.Condensed, error) {
	n, d := x.Dims()
	var dist *cluster.Condensed
	needDist := opts.Method.row().medoids
	limit := min(opts.MaxBytes, SilhouetteMatrixBytes) // for the silhouettes alone
	if needDist {
		limit = opts.MaxBytes
	}
	if cluster.CondensedBytes(n) <= limit {
		metric := cluster.Euclidean
		if opts.Method.row().js {
			metric = cluster.JensenShannon
		}
		src := x
		if metric == cluster.JensenShannon {
			src = mat.NewDense(n, d, nil)
			for i, s := range shares {
				src.SetRow(i, s)
			}
		}
		var err error
		if dist, err = cluster.Pairwise(src, metric, opts.MaxBytes, opts.Workers); err != nil {
			return nil, err
		}
	} else if needDist {
		return nil, fmt.Errorf("group: %d participants need %d MiB of distances for PAM: %w; use group.Options.Method kmeans-clr or ward-hellinger for a cohort this large", n, cluster.CondensedBytes(n)>>20, cluster.ErrTooLarge)
	}
	return dist, nil
}

// labelsForEach groups the participants into each number of groups asked for: by cutting Ward's
// tree (kept in g.Tree), or by the method's own fit for each number.
func (g *Grouping) labelsForEach(ctx context.Context, x *mat.Dense, dist *cluster.Condensed, opts Options) (map[int][]int, error) {
	if opts.Method.row().tree {
		tree, err := cluster.WardPoints(ctx, x, cluster.WardOptions{Workers: opts.Workers})
		if err != nil {
			return nil, err
		}
		g.Tree = tree
	}
	var cut func(int) ([]int, error)
	var err error
	if g.Tree != nil {
		cut = g.Tree.Cut
	} else if cut, err = newCutter(ctx, opts.Method, x, dist, opts); err != nil {
		return nil, err
	}
	labelsByK := map[int][]int{}
	for i, k := range opts.Groups {
		lab, err := cut(k)
		if err != nil {
			return nil, err
		}
		labelsByK[k] = lab
		opts.report("grouping for each number of groups", i+1, len(opts.Groups))
	}
	return labelsByK, nil
}

// chooseK chooses the number of groups by the criterion (g.K), with the scores of every number
// in g.Scores.
func (g *Grouping) chooseK(ctx context.Context, x *mat.Dense, dist *cluster.Condensed, labelsByK map[int][]int, opts Options) error {
	n, _ := x.Dims()
	// The criteria for the number of groups (silhouette, and the gap's references and the
	// stability's resamples, which cluster the data again and again) work above LargeCohort on
	// a reproducible sample of participants, with the labels the whole cohort gave them.
	cx, cdist, clab := x, dist, labelsByK
	if n > LargeCohort && len(opts.Groups) > 1 {
		cx, clab = sampleRows(x, labelsByK, LargeCohort, opts.Seed)
		cdist = nil
		g.Notes = append(g.Notes, note.Note{Kind: NoteCriteriaSample, Ints: []int{LargeCohort, n}})
	}
	for _, k := range opts.Groups {
		sc := KScore{K: k}
		sil, err := silhouetteOf(cx, cdist, clab[k], opts)
		if err != nil {
			return err
		}
		sc.Silhouette = sil.Mean
		g.Scores = append(g.Scores, sc)
	}
	if len(opts.Groups) > 1 {
		if err := scoreGap(ctx, cx, g.Scores, clab, opts); err != nil {
			return err
		}
		if err := scoreStability(ctx, cx, cdist, g.Scores, clab, opts); err != nil {
			return err
		}
		g.K = Choose(g.Scores, opts.Criterion)
		if opts.Criterion == ByGapSteady {
			if k0 := Choose(g.Scores, ByGapStable); k0 != g.K {
				s0, _ := g.Score(k0)
				s, _ := g.Score(g.K)
				g.Notes = append(g.Notes, note.Note{Kind: NoteGapSteady, Ints: []int{k0, g.K}, Floats: []float64{s0.Stability, UnstableGrouping, s.Stability}})
			}
		}
		if opts.Valley > 0 {
			k, err := valleyCap(cx, clab, opts.Groups, g.K, opts.Valley)
			if err != nil {
				return err
			}
			if k != g.K {
				g.Notes = append(g.Notes, note.Note{Kind: NoteValleyCap, Ints: []int{g.K, k}})
			}
			g.K = k
		}
	} else {
		g.K = opts.Groups[0]
	}
	return nil
}

// describe sets what the chosen grouping says of each participant and group: labels numbered by
// size, bootstrap stability, silhouettes, centres, distances and the centres' tree.
func (g *Grouping) describe(ctx context.Context, x *mat.Dense, dist *cluster.Condensed, labels []int, opts Options) error {
	n, _ := x.Dims()
	var err error
	g.Labels = renumberBySize(labels, g.K)
	if g.Stability, err = groupStability(ctx, x, dist, g.Labels, g.K, opts); err != nil {
		return err
	}
	sil, err := silhouetteOf(x, dist, g.Labels, opts)
	if err != nil {
		return err
	}
	g.Silhouette = expand(sil, n)
	g.Centroids = centroids(opts.Method, x, dist, g.Labels, g.K)
	g.Distance = make([]float64, n)
	for i := 0; i < n; i++ {
		g.Distance[i] = SpaceDistance(opts.Method, x.RawRowView(i), g.Centroids[g.Labels[i]])
	}
	if g.CentroidTree, err = CentroidTree(ctx, opts.Method, g.Centroids); err != nil {
		return err
	}
	if dist == nil && n > silhouetteSample {
		g.Notes = append(g.Notes, note.Note{Kind: NoteSilhouetteSample, Ints: []int{silhouetteSample, n, int(cluster.CondensedBytes(n) >> 20)}})
	}
	return nil
}

// SilhouetteMatrixBytes bounds the matrix of distances held for the silhouettes alone (64 MiB,
// about 4,100 participants); past it each participant's silhouette is computed against all
// others without one (for a sample of silhouetteSample participants past that number), so that
// memory does not grow with the square of the cohort.
const SilhouetteMatrixBytes = 64 << 20

// silhouetteSample is how many participants' silhouettes are computed, each against all, where
// there is no matrix of distances.
const silhouetteSample = 5000

// The kinds of the grouping's notes (Grouping.Notes), with the order of their numbers.
const (
	// NoteAutoKMeans: the automatic method grouped Ints[0] participants, more than Ints[1], by
	// k-means on the centred log-ratios instead of Ward linkage.
	NoteAutoKMeans note.Kind = "group.auto-kmeans"
	// NoteCriteriaSample: the criteria for the number of groups were computed on a sample of
	// Ints[0] of the Ints[1] participants.
	NoteCriteriaSample note.Kind = "group.criteria-sample"
	// NoteGapSteady: the gap statistic and the stability step chose Ints[0] groups, whose
	// stability Floats[0] is below Floats[1], so Ints[1] were kept, of stability Floats[2].
	NoteGapSteady note.Kind = "group.gap-steady"
	// NoteValleyCap: the rule chose Ints[0] groups, some of which formed one mode with a
	// neighbour, so Ints[1] were kept.
	NoteValleyCap note.Kind = "group.valley-cap"
	// NoteSilhouetteSample: silhouettes were computed for a sample of Ints[0] of the Ints[1]
	// participants, each against all; a full matrix of distances would need Ints[2] MiB.
	NoteSilhouetteSample note.Kind = "group.silhouette-sample"
	// NoteMixtureSample: the mixture was fitted on a sample of Ints[0] of the Ints[1]
	// participants, and everyone was placed by it.
	NoteMixtureSample note.Kind = "group.mixture-sample"
	// NoteEmptyComponents: of the Ints[0] groups the criterion chose, Ints[1] held no
	// participant as its most probable group and were left out.
	NoteEmptyComponents note.Kind = "group.empty-components"
	// NotTestedFewGroups (a variable's reason in Separate): its values fall in only Ints[0]
	// groups, and a test needs two.
	NotTestedFewGroups note.Kind = "group.not-tested.few-groups"
	// WarnFarOutside (CheckRanges): the new participants' median of the feature Names[0] is
	// Floats[0], far outside the fitted participants' range Floats[1] to Floats[2].
	WarnFarOutside note.Kind = "group.far-outside"
)

// sampleRows draws m of x's rows without replacement (a seeded partial Fisher–Yates shuffle, kept
// in row order) with their labels for every k.
func sampleRows(x *mat.Dense, labelsByK map[int][]int, m int, seed uint64) (*mat.Dense, map[int][]int) {
	n, d := x.Dims()
	rng := rand.New(rand.NewPCG(par.SubSeed(seed, "criteria sample", 0), 1))
	perm := make([]int, n)
	for i := range perm {
		perm[i] = i
	}
	for i := 0; i < m; i++ {
		j := i + rng.IntN(n-i)
		perm[i], perm[j] = perm[j], perm[i]
	}
	rows := perm[:m]
	slices.Sort(rows)
	out := mat.NewDense(m, d, nil)
	lab := map[int][]int{}
	for r, i := range rows {
		out.SetRow(r, x.RawRowView(i))
	}
	for k, l := range labelsByK {
		sub := make([]int, m)
		for r, i := range rows {
			sub[r] = l[i]
		}
		lab[k] = sub
	}
	return out, lab
}

func expand(s *cluster.SilhouetteResult, n int) []float64 {
	out := make([]float64, n)
	for i := range out {
		out[i] = math.NaN()
	}
	for r, i := range s.Rows {
		out[i] = s.Values[r]
	}
	return out
}

func silhouetteOf(x *mat.Dense, dist *cluster.Condensed, lab []int, opts Options) (*cluster.SilhouetteResult, error) {
	if dist != nil {
		return cluster.SilhouetteCondensed(dist, lab, cluster.SilhouetteOptions{Workers: opts.Workers})
	}
	return cluster.Silhouette(x, lab, cluster.SilhouetteOptions{SampleSize: silhouetteSample, Seed: opts.Seed, Workers: opts.Workers})
}

// newCutter returns a function giving labels for k groups with the method; Ward builds its tree once.
func newCutter(ctx context.Context, m Method, x *mat.Dense, dist *cluster.Condensed, opts Options) (func(k int) ([]int, error), error) {
	switch r := m.row(); {
	case r.tree:
		tree, err := cluster.WardPoints(ctx, x, cluster.WardOptions{Workers: opts.Workers})
		if err != nil {
			return nil, err
		}
		return tree.Cut, nil
	case r.medoids:
		return func(k int) ([]int, error) {
			r, err := cluster.PAM(ctx, dist, cluster.PAMOptions{K: k})
			if err != nil {
				return nil, err
			}
			return r.Labels, nil
		}, nil
	default:
		return func(k int) ([]int, error) {
			r, err := cluster.KMeans(ctx, x, cluster.KMeansOptions{K: k, Seed: par.SubSeed(opts.Seed, "groups k-means", k), Workers: opts.Workers})
			if err != nil {
				return nil, err
			}
			return r.Labels, nil
		}, nil
	}
}

// scoreGap fills Gap and GapSE: log W_k of the data against B reference sets drawn uniformly in
// the box of the data's principal axes (Tibshirani, Walther & Hastie 2001, §3, reference (b)),
// each grouped by the Euclidean form of the method (Ward, or k-means for the others).
func scoreGap(ctx context.Context, x *mat.Dense, scores []KScore, labelsByK map[int][]int, opts Options) error {
	n, d := x.Dims()
	ks := make([]int, len(scores))
	for i, s := range scores {
		ks[i] = s.K
	}
	pca, err := cluster.FitPCA(x, cluster.PCAOptions{})
	if err != nil {
		return fmt.Errorf("group: gap statistic: %w", err)
	}
	lo, hi := principalBox(pca, x)
	logW := make([][]float64, len(ks)) // per k, per reference
	// The references are drawn and grouped side by side, each from its own seed, and their
	// log W_k gathered in reference order, so the sums are the same on any number of cores.
	err = par.Ordered(ctx, opts.Bootstrap, opts.Workers, func(b, _ int) ([]float64, error) {
		rng := rand.New(rand.NewPCG(par.SubSeed(opts.Seed, "gap reference", b), 1))
		ref := boxReference(rng, pca, lo, hi, n, d)
		m := opts.Method
		if m != WardHellinger {
			m = KMeansCLR
		}
		cut, err := newCutter(ctx, m, ref, nil, Options{Seed: par.SubSeed(opts.Seed, "gap reference grouping", b), Workers: opts.Workers})
		if err != nil {
			return nil, err
		}
		out := make([]float64, len(ks))
		for i, k := range ks {
			lab, err := cut(k)
			if err != nil {
				return nil, err
			}
			out[i] = math.Log(withinSS(ref, lab, k))
		}
		return out, nil
	}, func(b int, out []float64) error {
		for i, v := range out {
			logW[i] = append(logW[i], v)
		}
		opts.report("gap statistic: reference sets", b+1, opts.Bootstrap)
		return nil
	})
	if err != nil {
		return err
	}
	B := float64(opts.Bootstrap)
	for i, k := range ks {
		var mean, sd float64
		for _, v := range logW[i] {
			mean += v
		}
		mean /= B
		for _, v := range logW[i] {
			sd += (v - mean) * (v - mean)
		}
		sd = math.Sqrt(sd / B)
		scores[i].Gap = mean - math.Log(withinSS(x, labelsByK[k], k))
		scores[i].GapSE = sd * math.Sqrt(1+1/B)
	}
	return nil
}

// principalBox is the box of the rows of x on their principal axes: each axis's lowest and
// highest score.
func principalBox(pca *cluster.PCA, x *mat.Dense) (lo, hi []float64) {
	z, _ := pca.Transform(x)
	n, p := z.Dims()
	lo, hi = make([]float64, p), make([]float64, p)
	for c := 0; c < p; c++ {
		lo[c], hi[c] = math.Inf(1), math.Inf(-1)
		for i := 0; i < n; i++ {
			lo[c] = min(lo[c], z.At(i, c))
			hi[c] = max(hi[c], z.At(i, c))
		}
	}
	return lo, hi
}

// boxReference is a reference set of n rows drawn uniformly in the box (lo, hi) of the principal
// axes and taken back to the d original axes (z·Vᵀ + mean).
func boxReference(rng *rand.Rand, pca *cluster.PCA, lo, hi []float64, n, d int) *mat.Dense {
	p := len(lo)
	ref := mat.NewDense(n, d, nil)
	row := make([]float64, p)
	for i := 0; i < n; i++ {
		for c := 0; c < p; c++ {
			row[c] = lo[c] + rng.Float64()*(hi[c]-lo[c])
		}
		for j := 0; j < d; j++ {
			v := pca.Mean[j]
			for c := 0; c < p; c++ {
				v += row[c] * pca.Components.At(j, c)
			}
			ref.Set(i, j, v)
		}
	}
	return ref
}

// withinSS is W_k for squared Euclidean distance: Σ_r (1/2n_r) Σ_{i,j∈r} d²ᵢⱼ = Σ ‖xᵢ − c_r‖².
func withinSS(x *mat.Dense, lab []int, k int) float64 {
	n, d := x.Dims()
	c := make([]float64, k*d)
	cnt := make([]float64, k)
	for i := 0; i < n; i++ {
		cnt[lab[i]]++
		for j := 0; j < d; j++ {
			c[lab[i]*d+j] += x.At(i, j)
		}
	}
	for r := 0; r < k; r++ {
		for j := 0; j < d; j++ {
			if cnt[r] > 0 {
				c[r*d+j] /= cnt[r]
			}
		}
	}
	var w float64
	for i := 0; i < n; i++ {
		for j := 0; j < d; j++ {
			v := x.At(i, j) - c[lab[i]*d+j]
			w += v * v
		}
	}
	return max(w, 1e-300)
}

// scoreStability fills Stability: for B bootstrap resamples, the grouping of the resample is
// compared by ARI with the grouping of all participants on the resampled ones (Lange et al. 2004).
func scoreStability(ctx context.Context, x *mat.Dense, dist *cluster.Condensed, scores []KScore, labelsByK map[int][]int, opts Options) error {
	n, _ := x.Dims()
	sum, sum2 := make([]float64, len(scores)), make([]float64, len(scores))
	// The resamples are grouped side by side, each from its own seed, and their indices summed
	// in resample order, so the sums are the same on any number of cores.
	type drawn struct {
		ari     float64
		counted bool // false: too few drawn for this number of groups
	}
	err := par.Ordered(ctx, opts.Bootstrap, opts.Workers, func(b, _ int) ([]drawn, error) {
		rng := rand.New(rand.NewPCG(par.SubSeed(opts.Seed, "bootstrap", b), 1))
		seen := make([]bool, n)
		for i := 0; i < n; i++ {
			seen[rng.IntN(n)] = true
		}
		var idx []int
		for i, s := range seen {
			if s {
				idx = append(idx, i)
			}
		}
		sub, subDist := subsetRows(x, dist, idx, opts.Method)
		cut, err := newCutter(ctx, opts.Method, sub, subDist, Options{Seed: par.SubSeed(opts.Seed, "bootstrap grouping", b), Workers: opts.Workers})
		if err != nil {
			return nil, err
		}
		aris := make([]drawn, len(scores))
		for i, s := range scores {
			if s.K > len(idx)-1 {
				continue
			}
			lab, err := cut(s.K)
			if err != nil {
				return nil, err
			}
			full := make([]int, len(idx))
			for r, j := range idx {
				full[r] = labelsByK[s.K][j]
			}
			ari, err := cluster.AdjustedRand(lab, full)
			if err != nil {
				return nil, err
			}
			aris[i] = drawn{ari, true}
		}
		return aris, nil
	}, func(b int, aris []drawn) error {
		for i, a := range aris {
			if a.counted {
				sum[i] += a.ari
				sum2[i] += a.ari * a.ari
			}
		}
		opts.report("stability: resamples", b+1, opts.Bootstrap)
		return nil
	})
	if err != nil {
		return err
	}
	nb := float64(opts.Bootstrap)
	for i := range scores {
		scores[i].Stability = sum[i] / nb
		if nb > 1 {
			variance := max(0, (sum2[i]-sum[i]*sum[i]/nb)/(nb-1))
			scores[i].StabilitySE = math.Sqrt(variance / nb)
		}
	}
	return nil
}

// Choose applies the criterion to the scores (ties to the smaller k).
func Choose(scores []KScore, c Criterion) int {
	best := 0
	switch c {
	case ByGap, ByGapStable, ByGapSteady:
		i := len(scores) - 1
		for j := 0; j+1 < len(scores); j++ {
			if scores[j].Gap >= scores[j+1].Gap-scores[j+1].GapSE {
				i = j
				break
			}
		}
		if c == ByGapStable || c == ByGapSteady {
			for i > 0 && scores[i-1].K == scores[i].K-1 && scores[i-1].Stability > scores[i].Stability+StableStep {
				i--
			}
		}
		if c == ByGapSteady && scores[i].Stability < UnstableGrouping {
			for j := i - 1; j >= 0; j-- {
				if scores[j].Stability >= UnstableGrouping {
					return scores[j].K
				}
			}
		}
		return scores[i].K
	case BySilhouette:
		for i, s := range scores {
			if s.Silhouette > scores[best].Silhouette {
				best = i
			}
		}
	case ByStability:
		for i, s := range scores {
			if s.Stability > scores[best].Stability+1e-12 {
				best = i
			}
		}
	}
	return scores[best].K
}

// renumberBySize renames groups 0…k−1 from the largest to the smallest (ties to the group whose
// first member comes first), so that names do not depend on the algorithm's numbering.
func renumberBySize(lab []int, k int) []int {
	size := make([]int, k)
	first := make([]int, k)
	for i := range first {
		first[i] = math.MaxInt
	}
	for i, l := range lab {
		size[l]++
		first[l] = min(first[l], i)
	}
	order := make([]int, k)
	for i := range order {
		order[i] = i
	}
	sort.SliceStable(order, func(a, b int) bool {
		if size[order[a]] != size[order[b]] {
			return size[order[a]] > size[order[b]]
		}
		return first[order[a]] < first[order[b]]
	})
	rename := make([]int, k)
	for to, from := range order {
		rename[from] = to
	}
	out := make([]int, len(lab))
	for i, l := range lab {
		out[i] = rename[l]
	}
	return out
}

// centroids returns each group's centre in the grouping space: the mean, or for PAM the member
// with the least total distance to the others (the medoid).
func centroids(m Method, x *mat.Dense, dist *cluster.Condensed, lab []int, k int) [][]float64 {
	n, d := x.Dims()
	out := make([][]float64, k)
	if m.row().medoids && dist != nil {
		for g := 0; g < k; g++ {
			best, bestSum := -1, math.Inf(1)
			for i := 0; i < n; i++ {
				if lab[i] != g {
					continue
				}
				var s float64
				for j := 0; j < n; j++ {
					if lab[j] == g {
						s += dist.At(i, j)
					}
				}
				if s < bestSum {
					best, bestSum = i, s
				}
			}
			out[g] = append([]float64(nil), x.RawRowView(best)...)
		}
		return out
	}
	cnt := make([]float64, k)
	for g := range out {
		out[g] = make([]float64, d)
	}
	for i := 0; i < n; i++ {
		cnt[lab[i]]++
		for j, v := range x.RawRowView(i) {
			out[lab[i]][j] += v
		}
	}
	for g := range out {
		for j := range out[g] {
			out[g][j] /= cnt[g]
		}
	}
	return out
}

// CentroidTree is the average-linkage tree of group centres in the method's grouping space.
func CentroidTree(ctx context.Context, m Method, centroids [][]float64) (*cluster.Tree, error) {
	k := len(centroids)
	cd := &cluster.Condensed{N: k, D: make([]float64, k*(k-1)/2)}
	for a := 0; a < k; a++ {
		for b := a + 1; b < k; b++ {
			cd.D[cd.Index(a, b)] = SpaceDistance(m, centroids[a], centroids[b])
		}
	}
	return cluster.Hierarchical(ctx, cd, cluster.HierarchicalOptions{Linkage: cluster.Average})
}

// Place puts signatures into the nearest of fixed group centres (in the method's grouping space),
// as a frozen grouping does for new data: it returns the groups, the distances to them, and each
// signature's silhouette among the placed ones (NaN where it cannot be computed).
func Place(m Method, centroids [][]float64, shares [][]float64, workers int) (*Grouping, error) {
	n := len(shares)
	g := &Grouping{Method: m, K: len(centroids), Centroids: centroids, Labels: make([]int, n), Distance: make([]float64, n), Silhouette: make([]float64, n)}
	x := mat.NewDense(max(n, 1), len(centroids[0]), nil)
	for i, s := range shares {
		e := Embed(m, s)
		if len(e) != len(centroids[0]) {
			return nil, fmt.Errorf("group: Place: signature of %d states for centres over %d: %w", len(e), len(centroids[0]), cohort.ErrMismatch)
		}
		x.SetRow(i, e)
		best, bestD := 0, math.Inf(1)
		for c, cen := range centroids {
			if d := SpaceDistance(m, e, cen); d < bestD {
				best, bestD = c, d
			}
		}
		g.Labels[i], g.Distance[i] = best, bestD
	}
	for i := range g.Silhouette {
		g.Silhouette[i] = math.NaN()
	}
	if distinct(g.Labels) >= 2 && distinct(g.Labels) <= n-1 {
		opts := Options{Method: m, Workers: workers}
		var dist *cluster.Condensed
		if m.row().js && cluster.CondensedBytes(n) < 1<<30 {
			raw := mat.NewDense(n, len(shares[0]), nil)
			for i, s := range shares {
				raw.SetRow(i, s)
			}
			var err error
			if dist, err = cluster.Pairwise(raw, cluster.JensenShannon, 0, workers); err != nil {
				return nil, err
			}
		}
		if sil, err := silhouetteOf(x, dist, g.Labels, opts); err == nil {
			g.Silhouette = expand(sil, n)
		}
	}
	var err error
	g.CentroidTree, err = CentroidTree(context.Background(), m, centroids)
	return g, err
}

func distinct(l []int) int {
	seen := map[int]bool{}
	for _, v := range l {
		seen[v] = true
	}
	return len(seen)
}

// CheckRanges compares each feature's median over the new participants' medians with the range
// of the fitted participants' medians (1st and 99th percentiles): a median more than one range
// width outside it suggests a changed unit or scale, and is reported.
func CheckRanges(features []string, fitted [][3]float64, medians [][]float64) []note.Note {
	var out []note.Note
	for j, name := range features {
		if j >= len(fitted) || len(medians[j]) == 0 {
			continue
		}
		lo, hi := fitted[j][0], fitted[j][2]
		w := math.Max(hi-lo, 1e-12)
		m := cohort.Median(append([]float64(nil), medians[j]...))
		if m < lo-w || m > hi+w {
			out = append(out, note.Note{Kind: WarnFarOutside, Names: []string{name}, Floats: []float64{m, lo, hi}})
		}
	}
	return out
}

// valleyCap lowers the chosen number of groups, down the candidates, while some pair of groups
// forms one mode (no density valley deeper than the valley share between them, after Hennig
// 2010); it returns the number kept.
func valleyCap(x *mat.Dense, labels map[int][]int, ks []int, chosen int, valley float64) (int, error) {
	k := chosen
	for i := slices.Index(ks, chosen); i >= 0; i-- {
		k = ks[i]
		merged, err := onePairIsOneMode(x, labels[k], k, valley)
		if err != nil {
			return 0, err
		}
		if !merged || i == 0 {
			break
		}
	}
	return k, nil
}

// onePairIsOneMode tells whether any two of the k groups form one mode along the line joining
// their centres (cluster.Valley at or above the share given).
func onePairIsOneMode(x *mat.Dense, labels []int, k int, valley float64) (bool, error) {
	_, d := x.Dims()
	rows := make([][]int, k)
	for i, l := range labels {
		rows[l] = append(rows[l], i)
	}
	member := func(g int) *mat.Dense {
		m := mat.NewDense(max(1, len(rows[g])), d, nil)
		for r, i := range rows[g] {
			m.SetRow(r, x.RawRowView(i))
		}
		return m
	}
	groups := make([]*mat.Dense, k)
	for g := range groups {
		groups[g] = member(g)
	}
	for a := 0; a < k; a++ {
		for b := a + 1; b < k; b++ {
			if len(rows[a]) < 2 || len(rows[b]) < 2 {
				continue
			}
			v, err := cluster.Valley(groups[a], groups[b])
			if err != nil {
				return false, err
			}
			if v >= valley {
				return true, nil
			}
		}
	}
	return false, nil
}

// subsetRows is the rows idx of x, and for PAM their distances taken from dist (nil otherwise),
// for grouping a resample of the participants.
func subsetRows(x *mat.Dense, dist *cluster.Condensed, idx []int, m Method) (*mat.Dense, *cluster.Condensed) {
	_, d := x.Dims()
	sub := mat.NewDense(len(idx), d, nil)
	for r, i := range idx {
		sub.SetRow(r, x.RawRowView(i))
	}
	var subDist *cluster.Condensed
	if dist != nil && m.row().medoids {
		subDist = &cluster.Condensed{N: len(idx), D: make([]float64, len(idx)*(len(idx)-1)/2)}
		for a := 0; a < len(idx); a++ {
			for c := a + 1; c < len(idx); c++ {
				subDist.D[subDist.Index(a, c)] = dist.At(idx[a], idx[c])
			}
		}
	}
	return sub, subDist
}
