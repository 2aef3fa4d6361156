package group

import (
	"context"
	"fmt"
	"math"
	"math/rand/v2"
	"slices"

	"gonum.org/v1/gonum/mat"

	"github.com/cohortmix/cohortmix/cluster"
	"github.com/cohortmix/cohortmix/cluster/mixture"
	"github.com/cohortmix/cohortmix/cluster/par"
	"github.com/cohortmix/cohortmix/cohort"
	"github.com/cohortmix/cohortmix/cohort/note"
)

// The mixture method's model, in a sentence: each group has its own law of how a participant's
// time divides among the states and, for each state, of how often a window in it starts a new
// bout; participants stray from their group's laws as a Dirichlet allows. Its data, per
// participant, are its shares of time in the states counted in bouts (each share times its
// number of bouts: the windows of a bout are one observation, not many), a Dirichlet-
// multinomial; and for each state the windows that continue a bout and those that start one, a
// beta-binomial (mixture.FitDMM with one block of states and one block of two per state; Holmes,
// Harris & Quince 2012; the bouts of a renewal process, after the Markov-chain mixtures of Cadez
// et al. 2003).

// mixtureFitRows is the most participants the mixture is fitted on; above it the fit uses a
// reproducible sample of them and places every participant with the frozen mixture.
const mixtureFitRows = 3000

// mixtureStarts is how many random starts each number of groups is fitted from.
const mixtureStarts = 5

// BoutTable is the mixture method's data for participants with these windows and bouts in each
// state: per row, its share of windows in each state times its number of bouts, then for each
// state the windows that continue a bout and those that start one; and the sizes of its column
// blocks. With noBouts it is the windows in each state alone (bouts is not used).
//
// With parts (each participant's windows in each state within each part of the day, part-major,
// as Options.DayParts), the first block gives way to one block of states per part, each
// cell its windows' share of the participant's times its number of bouts (or its windows, with
// noBouts): the parts' blocks add up to the whole recording's.
func BoutTable(counts, bouts, parts [][]float64, noBouts bool) (*mat.Dense, []int, error) {
	n := len(counts)
	if n == 0 || (!noBouts && len(bouts) != n) || (parts != nil && len(parts) != n) {
		return nil, nil, fmt.Errorf("group: %d participants' windows, %d participants' bouts and %d participants' parts of the day: %w", n, len(bouts), len(parts), cohort.ErrBadOption)
	}
	s := len(counts[0])
	lead, blocks, err := boutBlocks(s, parts, noBouts)
	if err != nil {
		return nil, nil, err
	}
	cols := lead + 2*s
	if noBouts {
		cols = lead
	}
	x := mat.NewDense(n, cols, nil)
	for i := range counts {
		if len(counts[i]) != s || (!noBouts && len(bouts[i]) != s) || (parts != nil && len(parts[i]) != lead) {
			return nil, nil, fmt.Errorf("group: participant %d has %d states' windows, participant 0 %d: %w", i, len(counts[i]), s, cohort.ErrBadOption)
		}
		var part []float64
		if parts != nil {
			part = parts[i]
		}
		if noBouts {
			if part == nil {
				part = counts[i]
			}
			x.SetRow(i, part)
			continue
		}
		if err := boutRow(x.RawRowView(i), i, counts[i], bouts[i], part, lead); err != nil {
			return nil, nil, err
		}
	}
	return x, blocks, nil
}

// boutBlocks is the number of columns before the bouts' (the states', or the states of every
// part of the day) and the sizes of the table's blocks.
func boutBlocks(s int, parts [][]float64, noBouts bool) (int, []int, error) {
	lead := s
	blocks := []int{s}
	if parts != nil {
		if len(parts[0])%s != 0 || len(parts[0]) == 0 {
			return 0, nil, fmt.Errorf("group: %d counts by part of the day for %d states: %w", len(parts[0]), s, cohort.ErrBadOption)
		}
		lead, blocks = len(parts[0]), nil
		for p := 0; p < lead/s; p++ {
			blocks = append(blocks, s)
		}
	}
	if !noBouts {
		for j := 0; j < s; j++ {
			blocks = append(blocks, 2)
		}
	}
	return lead, blocks, nil
}

// boutRow fills participant i's row: the first lead columns its shares (of the states, or of
// part's cells) times its number of bouts, then each state's windows that continue a bout and
// those that start one.
func boutRow(row []float64, i int, counts, bouts, part []float64, lead int) error {
	var total, runs float64
	for j, c := range counts {
		b := bouts[j]
		if b > c || b < 0 || (c > 0 && b == 0) {
			return fmt.Errorf("group: participant %d, state %d: %v bouts in %v windows: %w", i, j, b, c, cohort.ErrBadOption)
		}
		total += c
		runs += b
	}
	for j, c := range counts {
		b := bouts[j]
		if part == nil {
			row[j] = c / total * runs
		}
		row[lead+2*j] = c - b
		row[lead+2*j+1] = b
	}
	for j := range part {
		row[j] = part[j] / total * runs
	}
	return nil
}

// groupMixture is Signatures for the mixture method: the mixture is fitted for each
// number of groups in opts.Groups (1 allowed), from mixtureStarts starts each, in increasing
// order until the criterion has risen twice in a row past its best; the number with the lowest
// criterion (BIC or ICL) is kept.
func groupMixture(ctx context.Context, shares [][]float64, opts Options) (*Grouping, error) {
	n := len(shares)
	if opts.Criterion != ByBIC && opts.Criterion != ByICL {
		return nil, fmt.Errorf("group: the mixture method chooses its number of groups by bic or icl, not %s: %w", opts.Criterion, cohort.ErrBadOption)
	}
	x, blocks, err := BoutTable(opts.Counts, opts.Bouts, opts.DayParts, opts.NoBouts)
	if err != nil {
		return nil, err
	}
	if x.RawMatrix().Rows != n {
		return nil, fmt.Errorf("group: %d participants' shares and %d participants' bouts: %w", n, x.RawMatrix().Rows, cohort.ErrBadOption)
	}
	g := &Grouping{Method: Mixture, Criterion: opts.Criterion, NoBouts: opts.NoBouts}
	fitRows := x
	var sampled []int
	if n > mixtureFitRows {
		rng := rand.New(rand.NewPCG(par.SubSeed(opts.Seed, "mixture sample", 0), 1))
		sampled = rng.Perm(n)[:mixtureFitRows]
		slices.Sort(sampled)
		fitRows = mat.NewDense(len(sampled), x.RawMatrix().Cols, nil)
		for r, i := range sampled {
			fitRows.SetRow(r, x.RawRowView(i))
		}
		g.Notes = append(g.Notes, note.Note{Kind: NoteMixtureSample, Ints: []int{mixtureFitRows, n}})
	}
	best, err := g.fitEach(ctx, fitRows, blocks, opts)
	if err != nil {
		return nil, err
	}
	post, labels, best, err := g.place(best, x, sampled != nil)
	if err != nil {
		return nil, err
	}
	g.freeze(best, post, labels)
	if err := g.describeMixture(ctx, shares, x, blocks, opts); err != nil {
		return nil, err
	}
	return g, nil
}

// fitEach fits the mixture for each number of groups in turn, scoring each in g.Scores, until the
// criterion has risen twice (once when quick) past its best, and returns the best fit.
func (g *Grouping) fitEach(ctx context.Context, fitRows *mat.Dense, blocks []int, opts Options) (*mixture.DMM, error) {
	fr := fitRows.RawMatrix().Rows
	var best *mixture.DMM
	bestV, rises := math.Inf(1), 0
	for i, k := range opts.Groups {
		if k > fr {
			break
		}
		mo := mixture.DMMOptions{K: k, Blocks: blocks, Starts: mixtureStarts, Seed: par.SubSeed(opts.Seed, "mixture", k), Workers: opts.Workers}
		if opts.Quick {
			mo.Starts, mo.Tol, mo.MaxIter = 2, 1e-4, 100
		}
		m, err := mixture.FitDMM(ctx, fitRows, mo)
		if err != nil {
			return nil, fmt.Errorf("group: fitting the mixture with %d groups: %w", k, err)
		}
		opts.report("mixture for each number of groups", i+1, len(opts.Groups))
		v := m.BIC
		if opts.Criterion == ByICL {
			v = m.ICL
		}
		g.Scores = append(g.Scores, KScore{K: k, BIC: m.BIC, ICL: m.ICL, LogLik: m.LogLik, Silhouette: math.NaN(), Gap: math.NaN(), GapSE: math.NaN(), Stability: math.NaN(), StabilitySE: math.NaN()})
		switch {
		case v < bestV:
			best, bestV, rises = m, v, 0
		default:
			rises++
		}
		if (rises == 2 || opts.Quick && rises == 1) && len(opts.Groups) > 1 {
			break
		}
	}
	if best == nil {
		return nil, fmt.Errorf("group: %d participants for at least %d groups: %w", fr, opts.Groups[0], cohort.ErrTooFew)
	}
	return best, nil
}

// place gives every participant (of x) its posterior and most probable group under the fit,
// placing them again where the fit was made on a sample; a component that is no participant's
// most probable one is left out, with a note.
func (g *Grouping) place(best *mixture.DMM, x *mat.Dense, sampled bool) ([][]float64, []int, *mixture.DMM, error) {
	var err error
	post, labels := best.Posterior, best.Labels
	if sampled {
		if post, labels, err = best.Place(x); err != nil {
			return nil, nil, nil, err
		}
	}
	// A component that is no participant's most probable one is no group: it is left out, and
	// the participants are placed again by the components that hold them.
	if used := distinct(labels); used < best.K {
		chose := best.K
		kept := *best
		kept.K, kept.Weights, kept.Alpha = 0, nil, nil
		var w float64
		for c := 0; c < best.K; c++ {
			if slices.Contains(labels, c) {
				kept.K++
				kept.Weights = append(kept.Weights, best.Weights[c])
				kept.Alpha = append(kept.Alpha, best.Alpha[c])
				w += best.Weights[c]
			}
		}
		for c := range kept.Weights {
			kept.Weights[c] /= w
		}
		if post, labels, err = kept.Place(x); err != nil {
			return nil, nil, nil, err
		}
		best = &kept
		g.Notes = append(g.Notes, note.Note{Kind: NoteEmptyComponents, Ints: []int{chose, chose - used}})
	}
	return post, labels, best, nil
}

// freeze numbers the groups by size, largest first, and keeps the mixture's components in that
// order, with each participant's posterior probability of its group.
func (g *Grouping) freeze(best *mixture.DMM, post [][]float64, labels []int) {
	g.K = best.K
	// Groups numbered by size, largest first; the frozen mixture's components with them.
	g.Labels = renumberBySize(labels, g.K)
	order := make([]int, g.K) // order[new] = old
	for i, l := range labels {
		order[g.Labels[i]] = l
	}
	frozen := *best
	frozen.Weights, frozen.Alpha = make([]float64, g.K), make([][]float64, g.K)
	for to, from := range order {
		frozen.Weights[to], frozen.Alpha[to] = best.Weights[from], best.Alpha[from]
	}
	frozen.Posterior, frozen.Labels = nil, nil
	g.Mixture = &frozen
	g.Posterior = make([]float64, len(labels))
	for i := range post {
		g.Posterior[i] = post[i][labels[i]]
	}
}

// describeMixture sets the centres, distances, silhouettes and dendrogram of the mixture's groups
// in the Hellinger embedding, as for Ward linkage, and the groups' bootstrap stability.
func (g *Grouping) describeMixture(ctx context.Context, shares [][]float64, x *mat.Dense, blocks []int, opts Options) error {
	n := len(shares)
	var err error
	// The Hellinger embedding serves the centres, the distances (atypical participants), the
	// silhouettes and the dendrogram, as for Ward linkage.
	d := len(shares[0])
	emb := mat.NewDense(n, d, nil)
	for i, s := range shares {
		emb.SetRow(i, Embed(WardHellinger, s))
	}
	g.Silhouette = make([]float64, n)
	for i := range g.Silhouette {
		g.Silhouette[i] = math.NaN()
	}
	if g.K > 1 && !opts.NoStability {
		var dist *cluster.Condensed
		if cluster.CondensedBytes(n) <= SilhouetteMatrixBytes {
			if dist, err = cluster.Pairwise(emb, cluster.Euclidean, SilhouetteMatrixBytes, opts.Workers); err != nil {
				return err
			}
		}
		sil, err := silhouetteOf(emb, dist, g.Labels, opts)
		if err != nil {
			return err
		}
		g.Silhouette = expand(sil, n)
	}
	g.Centroids = centroids(WardHellinger, emb, nil, g.Labels, g.K)
	g.Distance = make([]float64, n)
	for i := 0; i < n; i++ {
		g.Distance[i] = SpaceDistance(WardHellinger, emb.RawRowView(i), g.Centroids[g.Labels[i]])
	}
	if g.K > 1 {
		if g.CentroidTree, err = CentroidTree(ctx, WardHellinger, g.Centroids); err != nil {
			return err
		}
		if !opts.NoStability {
			if g.Stability, err = mixtureStability(ctx, x, blocks, g, opts); err != nil {
				return err
			}
			for i := range g.Scores {
				if g.Scores[i].K == g.K {
					g.Scores[i].Stability = g.Stability.ARI
				}
			}
		}
	}
	return nil
}

// mixtureStability is the groups' bootstrap stability (resampleStability): each resample is
// fitted again with the same number of groups by EM from the memberships the whole fit gave its
// participants (a warm start, so that a group that holds is found again where it was).
func mixtureStability(ctx context.Context, x *mat.Dense, blocks []int, g *Grouping, opts Options) (*Stability, error) {
	n, cols := x.Dims()
	post, _, err := g.Mixture.Place(x)
	if err != nil {
		return nil, err
	}
	return resampleStability(ctx, n, g.Labels, g.K, opts, func(idx []int, b int) ([]int, error) {
		sub := mat.NewDense(len(idx), cols, nil)
		start := make([][]float64, len(idx))
		for r, i := range idx {
			sub.SetRow(r, x.RawRowView(i))
			start[r] = post[i]
		}
		m, err := mixture.FitDMMFrom(ctx, sub, start, mixture.DMMOptions{Blocks: blocks})
		if err != nil {
			return nil, err
		}
		return m.Labels, nil
	})
}

// PlaceMixture puts participants into the groups of a frozen mixture (Grouping.Mixture): each
// in its most probable group, with that probability, and its distance to the group's centre
// in the Hellinger embedding (centroids), as Signatures measured the members'.
//
// parts are the participants' windows by part of the day when the mixture was fitted on them
// (Options.DayParts), else nil; shares are then the day-part shares.
func PlaceMixture(m *mixture.DMM, centroids [][]float64, shares, counts, bouts, parts [][]float64) (*Grouping, error) {
	n := len(shares)
	g := &Grouping{Method: Mixture, K: m.K, Centroids: centroids, Mixture: m, Labels: make([]int, n), Distance: make([]float64, n), Silhouette: make([]float64, n), Posterior: make([]float64, n)}
	for i := range g.Silhouette {
		g.Silhouette[i] = math.NaN()
	}
	if n == 0 {
		return g, nil
	}
	lead := 1 // the blocks of states: one, or one per part of the day
	if parts != nil && len(counts) > 0 && len(counts[0]) > 0 {
		lead = len(parts[0]) / len(counts[0])
	}
	x, _, err := BoutTable(counts, bouts, parts, len(m.Blocks) == lead)
	if err != nil {
		return nil, err
	}
	post, labels, err := m.Place(x)
	if err != nil {
		return nil, fmt.Errorf("group: placing participants with the model's mixture: %w", err)
	}
	for i := range labels {
		g.Labels[i], g.Posterior[i] = labels[i], post[i][labels[i]]
		g.Distance[i] = SpaceDistance(WardHellinger, Embed(WardHellinger, shares[i]), centroids[labels[i]])
	}
	if m.K > 1 {
		g.CentroidTree, err = CentroidTree(context.Background(), WardHellinger, centroids)
	}
	return g, err
}
