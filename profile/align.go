package profile

import (
	"cmp"
	"context"
	"fmt"
	"math"
	"slices"

	"gonum.org/v1/gonum/floats"
	"gonum.org/v1/gonum/mat"

	"github.com/cohortmix/cohortmix/cluster"
	"github.com/cohortmix/cohortmix/cluster/groupstat"
	"github.com/cohortmix/cohortmix/cluster/par"
	"github.com/cohortmix/cohortmix/normalize"
)

// AlignOptions sets up FitAligned. Zero values take the documented defaults.
type AlignOptions struct {
	States   []int   // candidate numbers of states, increasing (required): one fixes it; a range fits the largest and merges (see MergeStates) down to at most the smallest
	Restarts int     // k-means++ restarts at each seeding; 0 means 4
	Reseeds  int     // times the states are seeded again on the aligned windows; 0 means 1, −1 none
	Starts   int     // 1: no device at first; 2 (0 means 2): also each participant's offsets at its medians, the better kept
	Rounds   int     // alternations of device and state updates after each seeding; 0 means 10
	Twins    int     // most tries at folding two states that no participant uses both of (see foldTwins); 0 means 3, −1 none
	Prior    float64 // pull of each rotation toward none, and of each calibration toward none, in windows' worth per window; 0 means 0.01
	// PersonPrior is the pull of a participant's own version of each state toward the cohort's
	// centre, in windows' worth, when every window is assigned (see States.AssignUnit); 0 means
	// DefaultPersonPrior, below 0 none (each participant's windows go to the cohort's states).
	PersonPrior float64
	// Calibrate calibrates each device's axis means on its own windows before they are turned
	// (normalize.SphereCalibration: a per-axis gain and offset, van Hees et al. 2014).
	Calibrate bool
	Valley    float64 // see MergeStates; 0 means DefaultValley
	Seed      uint64
	Workers   int
	Progress  func(step string, done, total int) // after each seeding and each merge; may be nil
}

// DefaultValley is the valley ratio at or above which two neighbouring states merge: the
// density of their pooled windows between them keeps at least half its height at the lower of
// the two. Chosen on the scenario family's seeds 1–20 and the demo's scenario (mean adjusted Rand
// index 0.932 against 0.930 at 0.6 and 0.920 at 0.7; at 0.7 a 12-feature demo cohort kept 12
// states for its 5, split at the floor its generator clips amplitudes to).
const DefaultValley = 0.5

// DefaultPersonPrior is AlignOptions.PersonPrior's default: a participant's own version of a
// state that holds n of its aligned windows sits n/(n + 5) of the way from the cohort's centre
// to those windows' mean. Chosen on the benchmark families' tuning seeds 1–8 (docs/benchmarks.md).
const DefaultPersonPrior = 5

// alignWindows is the most windows of one participant that its device is estimated on; the
// rest are spaced evenly between them. The state of every window is found after.
const alignWindows = 500

// Merge records two states merged because no valley parted them.
type Merge struct {
	From   int     // the number of states before the merge
	A, B   int     // the two states, numbered as they were then
	Valley float64 // cluster.Valley of their windows
}

// FitAligned learns the movement states jointly with each participant's device, by block
// coordinate descent on Σ‖y(x; Rᵢ) − bᵢ − μₛ‖² over the sampled windows x of each participant i:
// a window is assigned to the nearest state μₛ; each state's centre is the mean of its windows;
// each participant's rotation Rᵢ of its axis means is the one that best turns them onto its
// windows' states' postures (cluster.Rotation3, pulled toward none by Prior); each participant's
// offset bᵢ is its windows' mean residual from their states, on the columns that carry one,
// centred over participants. y is the frozen normalization fit (log scales and cohort scaling).
// What a device does to every window of a participant is taken out, and what sets a
// participant apart (more time in one state than another) stays in its mixture, because the
// offset is measured from the states and not from the participant's own median.
//
// k-means++ (cluster.KMeans) seeds the states from two starts (no device; each participant's
// offsets at its medians) and again, Reseeds times each, on the aligned windows, so that states
// that only looked apart because of the devices are found again as one; the start with the
// lower within-state sum of squares is kept. Then pairs of states that no participant uses both
// of are tried as one posture held twice, once per device slant (foldTwins). With a range of
// numbers, the largest is fitted and neighbours that are one mode are merged (MergeStates).
//
// units holds each sampled participant's windows × features as read (row-major); fit must have
// the WithinAlign step. References: Lloyd SP (1982), Least squares quantization in PCM, IEEE
// Trans. Inf. Theory 28 (the assignment and centre steps); Kabsch (1976) for the rotation.
func FitAligned(ctx context.Context, units [][]float64, fit *normalize.Fit, opts AlignOptions) (*States, error) {
	if fit == nil || fit.Within != normalize.WithinAlign {
		return nil, fmt.Errorf("profile: FitAligned needs a fit with the align step: %w", ErrOption)
	}
	if err := checkStates(opts.States); err != nil {
		return nil, err
	}
	opts, err := opts.withDefaults()
	if err != nil {
		return nil, err
	}
	kmax := opts.States[len(opts.States)-1]
	d, dim := len(fit.Features), fit.OutDim()
	total := 0
	for _, x := range units {
		total += len(x) / d
	}
	if total < 2*kmax {
		return nil, fmt.Errorf("profile: %d sampled windows for up to %d states: %w; raise job.Options.Sample or lower profile.AlignOptions.States", total, kmax, ErrData)
	}
	logged := make([][]float64, len(units))
	par.Each(len(units), opts.Workers, func(u int) { logged[u] = fit.LogInto(nil, units[u]) })
	// Each device's calibration, once, on its own windows (normalize.SphereCalibration).
	var cal []normalize.Device
	var gravity float64
	if opts.Calibrate && fit.Axes != nil {
		gravity = gravityOf(logged, d, fit.Axes)
		cal = make([]normalize.Device, len(logged))
		par.Each(len(logged), opts.Workers, func(u int) { cal[u] = calibrate(logged[u], d, fit.Axes, gravity) })
	}
	steps := opts.Starts * (1 + opts.Reseeds)
	if len(opts.States) > 1 {
		steps += kmax - opts.States[0]
	}
	done := 0
	progress := func() {
		done++
		if opts.Progress != nil {
			opts.Progress("fitting movement states with each device aligned", done, steps)
		}
	}
	a, err := bestStart(ctx, fit, logged, cal, kmax, opts, progress)
	if err != nil {
		return nil, err
	}
	if _, err := a.foldTwins(ctx, opts); err != nil {
		return nil, err
	}
	s := &States{Sampled: total, Offsets: a.offsets, Prior: opts.Prior, Rounds: opts.Rounds, PersonPrior: opts.PersonPrior, Calibrate: cal != nil, Gravity: gravity, Rule: "fixed"}
	if len(opts.States) > 1 {
		// The states as fitted, before any merge: the caller may keep them (States.Fine).
		fine := &States{K: a.k, Sampled: total, Offsets: a.offsets, Prior: opts.Prior, Rounds: opts.Rounds, PersonPrior: opts.PersonPrior, Calibrate: cal != nil, Gravity: gravity,
			Rule: fmt.Sprintf("%d states fitted with each device aligned", a.k)}
		fine.Centroids, fine.Posture = orderAligned(mat.NewDense(a.k, dim, slices.Clone(a.centres)), clonePosture(a.posture))
		s.Fine = fine
		s.Rule = fmt.Sprintf("%d states fitted with each device aligned, then neighbours that form one mode merged (valley ratio ≥ %.2f; after Hennig 2010)", kmax, opts.Valley)
		merges, err := a.merge(opts.States[0], opts.Valley, func(int) { progress() })
		if err != nil {
			return nil, err
		}
		s.Merges = merges
	}
	s.setFrom(a, dim)
	return s, nil
}

// withDefaults is the options with each zero taken as its default, or an error naming one out of
// its range.
func (opts AlignOptions) withDefaults() (AlignOptions, error) {
	if opts.Restarts == 0 {
		opts.Restarts = 4
	}
	if opts.Reseeds == 0 {
		opts.Reseeds = 1
	} else if opts.Reseeds < 0 {
		opts.Reseeds = 0
	}
	if opts.Starts == 0 {
		opts.Starts = 2
	}
	if opts.Rounds == 0 {
		opts.Rounds = 10
	}
	if opts.Twins == 0 {
		opts.Twins = 3
	} else if opts.Twins < 0 {
		opts.Twins = 0
	}
	if opts.Prior == 0 {
		opts.Prior = 0.01
	}
	if opts.Valley == 0 {
		opts.Valley = DefaultValley
	}
	if opts.PersonPrior == 0 {
		opts.PersonPrior = DefaultPersonPrior
	} else if opts.PersonPrior < 0 {
		opts.PersonPrior = 0
	}
	if opts.Restarts < 0 || opts.Rounds < 0 || opts.Prior < 0 || opts.Valley < 0 || opts.Valley > 1 || opts.Starts < 1 || opts.Starts > 2 {
		return opts, fmt.Errorf("profile: FitAligned: restarts %d, rounds %d, prior %v, valley %v: %w", opts.Restarts, opts.Rounds, opts.Prior, opts.Valley, ErrOption)
	}
	return opts, nil
}

// bestStart runs the fit from its starts, each seeded 1 + Reseeds times, and keeps the one of
// the lower within-state sum of squares.
func bestStart(ctx context.Context, fit *normalize.Fit, logged [][]float64, cal []normalize.Device, kmax int, opts AlignOptions, progress func()) (*aligner, error) {
	// Two starts, each seeded 1 + Reseeds times, kept by the lower within-state sum of squares:
	// no device at all, and each participant's offsets at its own medians (centred), which puts
	// large calibration offsets right from the first seeding.
	var a *aligner
	bestSSE := math.Inf(1)
	for start := 0; start < opts.Starts; start++ {
		b := newAligner(fit, logged, opts.Prior, opts.Workers)
		if cal != nil {
			b.cal = cal
			for u := range b.devs {
				b.devs[u] = cal[u]
			}
			b.transform()
		}
		if start == 1 {
			b.medianOffsets()
			b.transform()
		}
		var sse float64
		for r := 0; r <= opts.Reseeds; r++ {
			var err error
			if sse, err = b.descend(ctx, kmax, par.SubSeed(opts.Seed, "states", 100*start+r), opts, progress); err != nil {
				return nil, err
			}
		}
		if sse < bestSSE {
			a, bestSSE = b, sse
		}
	}
	return a, nil
}

// setFrom takes the aligner's states, ordered (orderStates), with their postures and each
// sampled window's state numbered as the states are.
func (s *States) setFrom(a *aligner, dim int) {
	s.K = a.k
	s.Centroids = mat.NewDense(a.k, dim, a.centres)
	s.Posture = a.posture
	var idx []int
	s.Centroids, idx = orderStates(s.Centroids)
	if s.Posture != nil {
		p := make([][]float64, len(idx))
		for to, from := range idx {
			p[to] = s.Posture[from]
		}
		s.Posture = p
	}
	// Each sampled window's state as the fit left it, numbered as the states are ordered.
	rename := make([]int, len(idx))
	for to, from := range idx {
		rename[from] = to
	}
	s.SampleLabels = make([][]int, len(a.labels))
	for u, lab := range a.labels {
		s.SampleLabels[u] = make([]int, len(lab))
		for w, l := range lab {
			s.SampleLabels[u][w] = rename[l]
		}
	}
}

// descend seeds kmax states by k-means++ (with the given seed) on the windows as the devices
// leave them, alternates device and state updates until no window changes state (at most
// Rounds times), and returns the within-state sum of squares.
func (a *aligner) descend(ctx context.Context, kmax int, seed uint64, opts AlignOptions, progress func()) (float64, error) {
	if err := ctx.Err(); err != nil {
		return 0, err
	}
	// At most 100 Lloyd iterations: the rounds that follow move the centres on.
	km, err := cluster.KMeans(ctx, a.pooled(), cluster.KMeansOptions{K: kmax, Restarts: opts.Restarts, MaxIter: 100, Seed: seed, Workers: opts.Workers})
	if err != nil {
		return 0, fmt.Errorf("profile: %w", err)
	}
	a.k, a.centres = kmax, km.Centroids.RawMatrix().Data
	a.assign()
	a.recentre()
	if err := a.rounds(ctx, opts.Rounds); err != nil {
		return 0, err
	}
	progress()
	return a.sse(), nil
}

// rounds alternates device and state updates until no window changes state, at most n times,
// and leaves the centres at their windows' means.
func (a *aligner) rounds(ctx context.Context, n int) error {
	for round := 0; round < n; round++ {
		if err := ctx.Err(); err != nil {
			return err
		}
		if err := a.updateDevices(); err != nil {
			return err
		}
		a.recentre()
		if !a.assign() {
			break // no window changed state: the devices and centres would stay as they are
		}
	}
	a.recentre()
	return nil
}

// sse is the within-state sum of squares of the windows as their devices leave them.
func (a *aligner) sse() float64 {
	within, _ := a.within()
	var sse float64
	for _, v := range within {
		sse += v
	}
	return sse
}

// within is each state's sum of squares and number of windows, summed in unit order.
func (a *aligner) within() ([]float64, []int) {
	sums := make([]float64, a.k)
	cnt := make([]int, a.k)
	for u, y := range a.ys {
		for w, l := range a.labels[u] {
			cnt[l]++
			for c := 0; c < a.dim; c++ {
				v := y[w*a.dim+c] - a.centres[l*a.dim+c]
				sums[l] += v * v
			}
		}
	}
	return sums, cnt
}

// twinOverlap is the most two states may share their participants (twinPairs) and still be
// tried as one posture that the descent holds twice, once per device slant.
const twinOverlap = 0.1

// foldTwins moves the descent out of one local optimum that block coordinate descent with
// per-participant devices is prone to: a posture held by two states, one for the participants
// whose devices lean one way and one for the rest. Then no participant uses both, so the
// signatures part the participants by device. For each pair of states that participants use one
// or the other of but rarely both (twinPairs, fewest shared first), it tries a split-and-merge
// move (after Ueda et al. 2000, SMEM algorithm for mixture models, Neural Computation 12; fold):
// the two are folded into one and the devices and the states left descend for Rounds rounds;
// then the state with the largest within-state sum of squares is split in two along its first
// principal axis (as in Linde, Buzo & Gray 1980) and all descend Rounds rounds more. The move is
// kept only when the within-state sum of squares ends lower than the descent's own after as
// many rounds without it, so what is kept is the move's doing and not the extra rounds'. Two
// postures that differ in truth are left apart, since no turn of the devices makes one state
// hold both. At most Twins moves are tried; it returns how many were kept.
func (a *aligner) foldTwins(ctx context.Context, opts AlignOptions) (int, error) {
	folds := 0
	for tried := 0; tried < opts.Twins; {
		pairs := a.twinPairs()
		if len(pairs) == 0 {
			break
		}
		// The baseline: the descent left to run the fold's rounds without it.
		stay := a.clone()
		if err := stay.rounds(ctx, 2*opts.Rounds); err != nil {
			return 0, err
		}
		cur := stay.sse()
		moved := false
		for _, p := range pairs {
			if tried >= opts.Twins {
				break
			}
			tried++
			b := a.clone()
			if ok, err := b.fold(ctx, p[0], p[1], opts.Rounds); err != nil {
				return 0, err
			} else if !ok {
				continue
			}
			if err := b.rounds(ctx, opts.Rounds); err != nil {
				return 0, err
			}
			if b.sse() < cur {
				*a, moved = *b, true
				folds++
				break
			}
		}
		if !moved {
			break
		}
	}
	return folds, nil
}

// twinPairs lists the pairs of states that the sampled participants share least, those sharing
// less than twinOverlap, fewest shared first: the overlap of states s and t is
// Σᵢ min(pᵢₛ, pᵢₜ) / min(Σᵢ pᵢₛ, Σᵢ pᵢₜ), pᵢₛ being participant i's share of windows in s. It
// is 0 when no participant uses both and 1 when every participant uses the lesser state as much
// as the other. States held by fewer than 1 % of the participants' time are left out.
func (a *aligner) twinPairs() [][2]int {
	share := make([][]float64, len(a.labels))
	total := make([]float64, a.k)
	for u, lab := range a.labels {
		share[u] = make([]float64, a.k)
		for _, l := range lab {
			share[u][l]++
		}
		for l := range share[u] {
			if len(lab) > 0 {
				share[u][l] /= float64(len(lab))
			}
			total[l] += share[u][l]
		}
	}
	type pair struct {
		s, t    int
		overlap float64
	}
	var pairs []pair
	least := 0.01 * float64(len(a.labels))
	for s := 0; s < a.k; s++ {
		for t := s + 1; t < a.k; t++ {
			if total[s] < least || total[t] < least {
				continue
			}
			var both float64
			for _, p := range share {
				both += min(p[s], p[t])
			}
			if o := both / min(total[s], total[t]); o < twinOverlap {
				pairs = append(pairs, pair{s, t, o})
			}
		}
	}
	slices.SortStableFunc(pairs, func(p, q pair) int { return cmp.Compare(p.overlap, q.overlap) })
	out := make([][2]int, len(pairs))
	for i, p := range pairs {
		out[i] = [2]int{p.s, p.t}
	}
	return out
}

// fold puts state t's windows in state s, lets the devices and the states left descend for
// settle rounds (a turn of the devices may now hold what the two held), and reuses t for half
// of the widest state (the largest within-state sum of squares): that state's centre moves
// σ√(2/π) along its first principal axis (cluster.FitPCA) and t's the same way back, σ² being the
// variance along that axis (the means of the two halves of a normal distribution), and every window is
// assigned again. The states are numbered anew, t taking the last number. It reports false
// when no state has two windows to split.
func (a *aligner) fold(ctx context.Context, s, t, settle int) (bool, error) {
	last := a.k - 1
	if s == last {
		s = t
	}
	for _, lab := range a.labels {
		for w, l := range lab {
			switch l {
			case t:
				lab[w] = s
			case last:
				lab[w] = t
			}
		}
	}
	if t != last {
		copy(a.centres[t*a.dim:(t+1)*a.dim], a.centres[last*a.dim:])
	}
	a.k--
	a.recentre()
	if err := a.rounds(ctx, settle); err != nil {
		return false, err
	}
	a.k++
	within, cnt := a.within()
	wide := -1
	for l := range within[:last] {
		if cnt[l] >= 2 && (wide < 0 || within[l] > within[wide]) {
			wide = l
		}
	}
	if wide < 0 {
		return false, nil
	}
	rows := make([]float64, 0, cnt[wide]*a.dim)
	for u, y := range a.ys {
		for w, l := range a.labels[u] {
			if l == wide {
				rows = append(rows, y[w*a.dim:(w+1)*a.dim]...)
			}
		}
	}
	pca, err := cluster.FitPCA(mat.NewDense(cnt[wide], a.dim, rows), cluster.PCAOptions{Components: 1})
	if err != nil {
		return false, nil // every window of the widest state alike: nothing to split
	}
	step := math.Sqrt(pca.Variance[0] * 2 / math.Pi)
	centre := a.centres[wide*a.dim : (wide+1)*a.dim]
	for c := 0; c < a.dim; c++ {
		d := step * pca.Components.At(c, 0)
		a.centres[last*a.dim+c] = centre[c] - d
		centre[c] += d
	}
	a.assign()
	a.recentre()
	return true, nil
}

// clone is a copy of the descent that can move without changing a.
func (a *aligner) clone() *aligner {
	b := *a
	b.devs = make([]normalize.Device, len(a.devs))
	for u, dev := range a.devs {
		b.devs[u] = normalize.Device{Rotation: slices.Clone(dev.Rotation), AxisScale: slices.Clone(dev.AxisScale), AxisOffset: slices.Clone(dev.AxisOffset), Offset: slices.Clone(dev.Offset)}
	}
	b.ys = make([][]float64, len(a.ys))
	b.labels = make([][]int, len(a.labels))
	for u := range a.ys {
		b.ys[u] = slices.Clone(a.ys[u])
		b.labels[u] = slices.Clone(a.labels[u])
	}
	b.centres = slices.Clone(a.centres)
	b.posture = clonePosture(a.posture)
	return &b
}

// medianOffsets sets each unit's offsets to its medians of the offset columns, centred over
// units.
func (a *aligner) medianOffsets() {
	a.each(func(u int) {
		y := a.ys[u]
		n := len(y) / a.dim
		off := make([]float64, a.dim)
		col := make([]float64, n)
		for c, on := range a.offsets {
			if !on || n == 0 {
				continue
			}
			for w := range col {
				col[w] = y[w*a.dim+c]
			}
			off[c] = groupstat.Median(col)
		}
		a.devs[u].Offset = off
	})
	a.centreOffsets()
}

// offsetColumns are the output columns that carry a participant's offset: the touched features
// other than the axis means, which the rotation aligns, or every column of a projection.
func offsetColumns(fit *normalize.Fit) []bool {
	cols := make([]bool, fit.OutDim())
	for c := range cols {
		cols[c] = fit.PCA != nil || (fit.Touched[c] && !slices.Contains(fit.Axes, c))
	}
	return cols
}

// aligner holds the block coordinate descent of FitAligned.
type aligner struct {
	fit       *normalize.Fit
	cal       []normalize.Device // each unit's calibration (normalize.SphereCalibration); nil: none
	units     [][]float64
	d, dim, k int
	prior     float64
	workers   int
	offsets   []bool
	devs      []normalize.Device
	ys        [][]float64        // each unit's windows, normalized with its device
	fixed     []*normalize.Fixed // each unit's windows' part no device moves (normalize.Fit.FixedLogged), made at the first round
	labels    [][]int
	centres   []float64   // k × dim
	posture   [][]float64 // k × 3: each state's mean axis means once turned; nil without axes
}

// newAligner starts the descent on the units' windows (on their log scales) with no device.
func newAligner(fit *normalize.Fit, logged [][]float64, prior float64, workers int) *aligner {
	a := &aligner{fit: fit, units: logged, d: len(fit.Features), dim: fit.OutDim(), prior: prior, workers: workers, offsets: offsetColumns(fit)}
	a.devs = make([]normalize.Device, len(logged))
	a.ys = make([][]float64, len(logged))
	a.fixed = make([]*normalize.Fixed, len(logged))
	a.labels = make([][]int, len(logged))
	a.transform()
	return a
}

// each runs f(u) for every unit on all cores; each call writes only what belongs to u.
func (a *aligner) each(f func(u int)) { par.Each(len(a.units), a.workers, f) }

func (a *aligner) transform() {
	a.each(func(u int) { a.ys[u] = a.fit.ApplyLoggedInto(a.ys[u], a.units[u], a.devs[u]) })
}

// assign gives every window its nearest state and reports whether any window changed state.
func (a *aligner) assign() bool {
	changed := make([]bool, len(a.units))
	a.each(func(u int) {
		y := a.ys[u]
		n := len(y) / a.dim
		if len(a.labels[u]) != n {
			a.labels[u] = make([]int, n)
			changed[u] = true
		}
		for w := range a.labels[u] {
			l, _ := cluster.Nearest(a.centres, a.k, y[w*a.dim:(w+1)*a.dim])
			if l != a.labels[u][w] {
				a.labels[u][w], changed[u] = l, true
			}
		}
	})
	return slices.Contains(changed, true)
}

// recentre sets each state's centre to the mean of its windows (a state left without windows
// keeps its centre) and its posture to the mean of its windows' turned axis means; sums run in
// unit order.
func (a *aligner) recentre() {
	sum := make([]float64, a.k*a.dim)
	cnt := make([]float64, a.k)
	axes := a.fit.Axes
	var post []float64
	if axes != nil {
		post = make([]float64, a.k*3)
	}
	for u, y := range a.ys {
		x, dev := a.units[u], a.devs[u]
		for w, l := range a.labels[u] {
			cnt[l]++
			for c, v := range y[w*a.dim : (w+1)*a.dim] {
				sum[l*a.dim+c] += v
			}
			if axes != nil {
				m := turned(x[w*a.d:(w+1)*a.d], axes, dev)
				for i := 0; i < 3; i++ {
					post[l*3+i] += m[i]
				}
			}
		}
	}
	for l := 0; l < a.k; l++ {
		if cnt[l] == 0 {
			continue
		}
		for c := 0; c < a.dim; c++ {
			a.centres[l*a.dim+c] = sum[l*a.dim+c] / cnt[l]
		}
	}
	if axes == nil {
		return
	}
	if len(a.posture) != a.k {
		a.posture = make([][]float64, a.k)
	}
	for l := 0; l < a.k; l++ {
		if a.posture[l] == nil {
			a.posture[l] = make([]float64, 3)
		}
		if cnt[l] > 0 {
			for i := 0; i < 3; i++ {
				a.posture[l][i] = post[l*3+i] / cnt[l]
			}
		}
	}
}

// updateDevices finds each unit's rotation and offsets from its windows' states, centres the
// offsets over units and leaves each unit's windows normalized with its new device. fitDevice
// has already turned and scaled them; the centred offsets are subtracted here
// (normalize.Device.SubtractOffset, the last step of the transform), so the windows are not
// transformed twice.
func (a *aligner) updateDevices() error {
	errs := make([]error, len(a.units))
	a.each(func(u int) {
		var cal normalize.Device
		if a.cal != nil {
			cal = a.cal[u]
		}
		if a.fixed[u] == nil {
			a.fixed[u] = a.fit.FixedLogged(a.units[u])
		}
		a.devs[u], a.ys[u], errs[u] = fitDevice(a.fit, a.units[u], a.fixed[u], a.labels[u], a.centres, a.posture, a.offsets, a.prior, cal, a.ys[u])
	})
	for _, err := range errs {
		if err != nil {
			return err
		}
	}
	a.centreOffsets()
	a.each(func(u int) { a.devs[u].SubtractOffset(a.ys[u], a.dim) })
	return nil
}

// centreOffsets subtracts the participants' mean offset from each, so that the offsets take
// nothing from the state centres.
func (a *aligner) centreOffsets() {
	mean := make([]float64, a.dim)
	for _, dev := range a.devs {
		for c, v := range dev.Offset {
			mean[c] += v / float64(len(a.devs))
		}
	}
	for _, dev := range a.devs {
		for c := range dev.Offset {
			dev.Offset[c] -= mean[c]
		}
	}
}

// fitDevice finds one participant's device from its windows x (on their log scales) and their
// states: the rotation that best turns its axis means, calibrated by cal (a device whose
// AxisScale and AxisOffset only are used; the zero Device for none), onto its states'
// postures (Kabsch, pulled toward none by prior); then the mean residual of its windows, so
// calibrated and turned, from their states' centres on the offset columns. It returns the
// device (with cal's calibration) and the windows normalized with its calibration and rotation
// but without its offsets, in buf (reused), from the windows' fixed part where it is given
// (normalize.Fit.FixedLogged; nil transforms them whole).
func fitDevice(fit *normalize.Fit, x []float64, fixed *normalize.Fixed, labels []int, centres []float64, posture [][]float64, offsets []bool, prior float64, cal normalize.Device, buf []float64) (normalize.Device, []float64, error) {
	d, dim := len(fit.Features), fit.OutDim()
	dev := normalize.Device{AxisScale: cal.AxisScale, AxisOffset: cal.AxisOffset}
	n := float64(len(labels))
	if fit.Axes != nil && posture != nil {
		m := make([]float64, 9)
		for w, l := range labels {
			c := dev.Calibrate(axisMeans(x[w*d:(w+1)*d], fit.Axes))
			for i := 0; i < 3; i++ {
				for j := 0; j < 3; j++ {
					m[i*3+j] += posture[l][i] * c[j]
				}
			}
		}
		for i := 0; i < 3; i++ {
			m[i*3+i] += prior * n
		}
		r, err := cluster.Rotation3(m)
		if err != nil {
			return dev, nil, fmt.Errorf("profile: aligning a device: %w", err)
		}
		dev.Rotation = r
	}
	y := fit.ApplyFixedInto(buf, fixed, x, dev)
	dev.Offset = make([]float64, dim)
	for w, l := range labels {
		for c, on := range offsets {
			if on {
				dev.Offset[c] += (y[w*dim+c] - centres[l*dim+c]) / n
			}
		}
	}
	return dev, y, nil
}

// calibrate is a participant's calibration of its axis means (normalize.SphereCalibration) on
// its windows x (row-major, d features), as a Device with only AxisScale and AxisOffset; the
// zero Device when it cannot be calibrated.
func calibrate(x []float64, d int, axes []int, gravity float64) normalize.Device {
	means := make([][3]float64, 0, len(x)/d)
	for w := 0; w+d <= len(x); w += d {
		means = append(means, axisMeans(x[w:w+d], axes))
	}
	scale, offset, ok := normalize.SphereCalibration(means, gravity)
	if !ok {
		return normalize.Device{}
	}
	return normalize.Device{AxisScale: scale[:], AxisOffset: offset[:]}
}

// gravityOf is the median length of the windows' axis means over the units: the length of
// gravity in the units read (1 in g, about 9.81 in m/s²).
func gravityOf(units [][]float64, d int, axes []int) float64 {
	var lens []float64
	for _, x := range units {
		for w := 0; w+d <= len(x); w += d {
			m := axisMeans(x[w:w+d], axes)
			lens = append(lens, math.Sqrt(m[0]*m[0]+m[1]*m[1]+m[2]*m[2]))
		}
	}
	if len(lens) == 0 {
		return 0
	}
	return groupstat.Median(lens)
}

// axisMeans are a window's axis means (x, y, z) as read.
func axisMeans(row []float64, axes []int) [3]float64 {
	return [3]float64{row[axes[0]], row[axes[1]], row[axes[2]]}
}

// turned is a window's axis means calibrated and turned by the device.
func turned(row []float64, axes []int, dev normalize.Device) [3]float64 {
	m := dev.Calibrate(axisMeans(row, axes))
	r := dev.Rotation
	if r == nil {
		return m
	}
	return [3]float64{r[0]*m[0] + r[1]*m[1] + r[2]*m[2], r[3]*m[0] + r[4]*m[1] + r[5]*m[2], r[6]*m[0] + r[7]*m[1] + r[8]*m[2]}
}

// pooled is every unit's normalized windows in one matrix, in unit order.
func (a *aligner) pooled() *mat.Dense {
	var n int
	for _, y := range a.ys {
		n += len(y) / a.dim
	}
	data := make([]float64, 0, n*a.dim)
	for _, y := range a.ys {
		data = append(data, y...)
	}
	return mat.NewDense(n, a.dim, data)
}

// merge merges states while a pair forms one mode (MergeStates), keeping at least lo states.
func (a *aligner) merge(lo int, valley float64, progress func(done int)) ([]Merge, error) {
	x := a.pooled()
	lab := make([]int, 0, x.RawMatrix().Rows)
	for _, l := range a.labels {
		lab = append(lab, l...)
	}
	merged, merges, err := MergeStates(x, lab, a.k, lo, valley, progress)
	if err != nil {
		return nil, err
	}
	i := 0
	for u := range a.labels {
		copy(a.labels[u], merged[i:i+len(a.labels[u])])
		i += len(a.labels[u])
	}
	a.k -= len(merges)
	a.centres = make([]float64, a.k*a.dim)
	a.posture = nil
	a.recentre()
	return merges, nil
}

// mergeSample is the most windows of each state that the valley between two states is measured on.
const mergeSample = 800

// MergeStates merges, one pair at a time, the two states whose windows form one mode most
// clearly (the highest cluster.Valley), as long as that valley ratio is at least valley and more
// than lo states are left. x holds the windows (rows) and labels their states 0…k−1; the valley
// of a pair is measured on at most 800 windows of each, evenly spaced. It returns the new labels
// (numbered 0…k'−1 in the order of their lowest old number) and the merges made.
func MergeStates(x *mat.Dense, labels []int, k, lo int, valley float64, progress func(done int)) ([]int, []Merge, error) {
	lab := append([]int(nil), labels...)
	var merges []Merge
	for k > lo && k > 1 {
		members := make([][]int, k)
		for i, l := range lab {
			members[l] = append(members[l], i)
		}
		rows := make([]*mat.Dense, k)
		for l, m := range members {
			if len(m) < 2 {
				continue
			}
			step := max(1, len(m)/mergeSample)
			var pick []int
			for i := 0; i < len(m) && len(pick) < mergeSample; i += step {
				pick = append(pick, m[i])
			}
			_, c := x.Dims()
			rows[l] = mat.NewDense(len(pick), c, nil)
			for r, i := range pick {
				rows[l].SetRow(r, x.RawRowView(i))
			}
		}
		bestV, ba, bb := -1.0, -1, -1
		for p := 0; p < k; p++ {
			for q := p + 1; q < k; q++ {
				if rows[p] == nil || rows[q] == nil {
					continue
				}
				v, err := cluster.Valley(rows[p], rows[q])
				if err != nil {
					return nil, nil, fmt.Errorf("profile: merging states: %w", err)
				}
				if v > bestV {
					bestV, ba, bb = v, p, q
				}
			}
		}
		if ba < 0 || bestV < valley {
			break
		}
		merges = append(merges, Merge{From: k, A: ba, B: bb, Valley: bestV})
		for i, l := range lab {
			switch {
			case l == bb:
				lab[i] = ba
			case l > bb:
				lab[i] = l - 1
			}
		}
		k--
		if progress != nil {
			progress(len(merges))
		}
	}
	return lab, merges, nil
}

func clonePosture(p [][]float64) [][]float64 {
	if p == nil {
		return nil
	}
	out := make([][]float64, len(p))
	for i, r := range p {
		out[i] = slices.Clone(r)
	}
	return out
}

// orderAligned numbers aligned states as orderStates does, quietest-looking first, with their
// postures.
func orderAligned(c *mat.Dense, posture [][]float64) (*mat.Dense, [][]float64) {
	out, idx := orderStates(c)
	if posture == nil {
		return out, nil
	}
	p := make([][]float64, len(idx))
	for to, from := range idx {
		p[to] = posture[from]
	}
	return out, p
}

// AlignUnit aligns one participant's device with the frozen states and gives the state of each
// of its windows: from no rotation and no offset, it alternates assigning windows to states and
// fitting the device (rotation and offsets, as FitAligned does, without the centring), on at
// most 500 of its windows evenly spaced, Rounds times or until the states stop changing; then
// every window is normalized with the device and assigned. dst is reused for the normalized
// windows, which are returned after the device and the labels, in the order AssignUnit returns
// them.
func (s *States) AlignUnit(fit *normalize.Fit, x, dst []float64) (normalize.Device, []int, []float64, error) {
	dev, err := s.alignDevice(fit, x)
	if err != nil {
		return dev, nil, nil, err
	}
	dst = fit.ApplyDeviceInto(dst, x, dev)
	return dev, s.assignInto(nil, dst, fit.OutDim()), dst, nil
}

// alignDevice fits one participant's device against the frozen states (see AlignUnit).
func (s *States) alignDevice(fit *normalize.Fit, x []float64) (normalize.Device, error) {
	d, dim := len(fit.Features), fit.OutDim()
	sub := fit.LogInto(nil, spaced(x, d)) // on their log scales once, for every round
	centres := s.Centroids.RawMatrix().Data
	var cal normalize.Device
	if s.Calibrate && fit.Axes != nil {
		cal = calibrate(sub, d, fit.Axes, s.Gravity) // the axis means are never on a log scale
	}
	dev := cal
	var y []float64
	var labels, before []int
	var err error
	y = fit.ApplyLoggedInto(y, sub, dev)
	for round := 0; round <= s.Rounds; round++ {
		before, labels = labels, s.assignInto(before, y, dim)
		if round == s.Rounds || (round > 0 && slices.Equal(before, labels)) {
			break
		}
		if dev, y, err = fitDevice(fit, sub, nil, labels, centres, s.Posture, s.Offsets, s.Prior, cal, y); err != nil {
			return dev, err
		}
		for i := 0; i < len(y); i += dim { // the offsets, on windows already turned
			for c, o := range dev.Offset {
				y[i+c] -= o
			}
		}
	}
	return dev, nil
}

// AssignUnit is AlignUnit for callers that need each window's state but not its normalized
// values: with a PCA, the windows are not projected one by one but scored against the state
// centres taken back into the features. For a window s (scaled features), the PCA centre m, the
// loadings C (features × components), the device offset o and a state centre c, the squared
// distance ‖C'(s − m) − o − c‖² is, apart from a term the same for every state,
// ‖c‖² + 2o·c + 2m·w − 2s·w with w = Cc: one dot product of features per state instead of a
// projection. The nearest state is the same up to rounding, which can part near ties. buf is
// reused for the scaled windows and returned.
//
// With PersonPrior above 0, each window goes to the nearest of the participant's own versions of
// the states (personStates) instead of the cohort's.
func (s *States) AssignUnit(fit *normalize.Fit, x, buf []float64) (normalize.Device, []int, []float64, error) {
	dev, err := s.alignDevice(fit, x)
	if err != nil {
		return dev, nil, buf, err
	}
	own := s
	if s.PersonPrior > 0 {
		own = s.personStates(fit, x, dev)
	}
	if fit.PCA == nil {
		buf = fit.ApplyDeviceInto(buf, x, dev)
		return dev, own.assignInto(nil, buf, fit.OutDim()), buf, nil
	}
	labels, buf := own.assignFolded(fit, x, dev, buf)
	return dev, labels, buf, nil
}

// personStateRounds is how many times personStates assigns the windows and moves the centres.
const personStateRounds = 3

// personStates is the states as this participant, with its device dev, holds them: each centre
// moved toward the mean of the participant's windows in it, n/(n + PersonPrior) of the way for n
// windows, on the columns that carry an offset. It is the best linear unbiased predictor of a
// random effect of the person on each state (a one-way random-effects model: a window is its
// state's centre, plus the person's shift of that state, plus noise; Henderson 1975, Biometrics
// 31:423), with the ratio of the noise's variance to the shift's fixed at PersonPrior. A person
// whose walking has its own cadence, or whose device leaves a trace in one posture, then keeps
// those windows in their state instead of tipping them into a neighbour, which would make
// groups of people that move alike. Assignment and centres alternate personStateRounds times,
// on the windows the device was aligned on (alignWindows, evenly spaced).
func (s *States) personStates(fit *normalize.Fit, x []float64, dev normalize.Device) *States {
	dim := fit.OutDim()
	y := fit.ApplyDeviceInto(nil, spaced(x, len(fit.Features)), dev)
	base := s.Centroids.RawMatrix()
	cohort := make([]float64, s.K*dim)
	for c := 0; c < s.K; c++ {
		copy(cohort[c*dim:(c+1)*dim], base.Data[c*base.Stride:c*base.Stride+dim])
	}
	own := slices.Clone(cohort)
	sum := make([]float64, s.K*dim)
	count := make([]float64, s.K)
	// reach[l] is how far state l's own version may move: half way to the nearest other state.
	reach := make([]float64, s.K)
	for l := range reach {
		reach[l] = math.Inf(1)
		for m := 0; m < s.K; m++ {
			if m != l {
				reach[l] = math.Min(reach[l], 0.5*floats.Distance(cohort[l*dim:(l+1)*dim], cohort[m*dim:(m+1)*dim], 2))
			}
		}
	}
	for r := 0; r < personStateRounds; r++ {
		clear(sum)
		clear(count)
		for i := 0; i < len(y); i += dim {
			l, _ := cluster.Nearest(own, s.K, y[i:i+dim])
			count[l]++
			for c, v := range y[i : i+dim] {
				sum[l*dim+c] += v - cohort[l*dim+c]
			}
		}
		for l := range count {
			f := 1 / (count[l] + s.PersonPrior)
			var moved float64
			for c := 0; c < dim; c++ {
				if s.Offsets == nil || s.Offsets[c] {
					v := sum[l*dim+c] * f
					own[l*dim+c] = cohort[l*dim+c] + v
					moved += v * v
				}
			}
			if moved = math.Sqrt(moved); moved > reach[l] {
				for c := 0; c < dim; c++ {
					own[l*dim+c] = cohort[l*dim+c] + (own[l*dim+c]-cohort[l*dim+c])*reach[l]/moved
				}
			}
		}
	}
	ps := *s
	ps.Centroids = mat.NewDense(s.K, dim, own)
	return &ps
}

// spaced is x (windows of d values) when it has at most alignWindows windows, else
// alignWindows of them evenly spaced.
func spaced(x []float64, d int) []float64 {
	n := len(x) / d
	if n <= alignWindows {
		return x
	}
	step := float64(n) / alignWindows
	sub := make([]float64, 0, alignWindows*d)
	for i := 0; i < alignWindows; i++ {
		w := int(float64(i) * step)
		sub = append(sub, x[w*d:(w+1)*d]...)
	}
	return sub
}

// assignFolded gives each window of x, with this device, its nearest state by the scores of
// AssignUnit; buf is reused for the scaled windows and returned.
func (s *States) assignFolded(fit *normalize.Fit, x []float64, dev normalize.Device, buf []float64) ([]int, []float64) {
	p := fit.PCA
	d, dim := len(fit.Features), fit.OutDim()
	comps := p.Components.RawMatrix()
	centres := s.Centroids.RawMatrix()
	w := make([]float64, s.K*d) // w[c] = C·centre c, in the features
	b := make([]float64, s.K)   // ‖c‖² + 2o·c + 2m·w
	for c := 0; c < s.K; c++ {
		cen := centres.Data[c*centres.Stride : c*centres.Stride+dim]
		wc := w[c*d : (c+1)*d]
		for j := 0; j < d; j++ {
			row := comps.Data[j*comps.Stride : j*comps.Stride+dim]
			var v float64
			for q, l := range row {
				v += l * cen[q]
			}
			wc[j] = v
		}
		var bc float64
		for q, v := range cen {
			bc += v * v
			if dev.Offset != nil {
				bc += 2 * dev.Offset[q] * v
			}
		}
		for j, m := range p.Mean {
			bc += 2 * m * wc[j]
		}
		b[c] = bc
	}
	buf = fit.ScaledInto(buf, x, normalize.Device{Rotation: dev.Rotation, AxisScale: dev.AxisScale, AxisOffset: dev.AxisOffset})
	n := len(x) / d
	labels := make([]int, n)
	for i := 0; i < n; i++ {
		row := buf[i*d : (i+1)*d]
		best, bestScore := 0, math.Inf(1)
		for c := 0; c < s.K; c++ {
			wc := w[c*d : (c+1)*d]
			var dot float64
			for j, v := range row {
				dot += v * wc[j]
			}
			if score := b[c] - 2*dot; score < bestScore {
				best, bestScore = c, score
			}
		}
		labels[i] = best
	}
	return labels, buf
}

// assignInto gives every window of y (rows of dim) its nearest state, into dst when it has room.
func (s *States) assignInto(dst []int, y []float64, dim int) []int {
	n := len(y) / dim
	if cap(dst) < n {
		dst = make([]int, n)
	}
	dst = dst[:n]
	raw := s.Centroids.RawMatrix().Data
	for i := range dst {
		dst[i], _ = cluster.Nearest(raw, s.K, y[i*dim:(i+1)*dim])
	}
	return dst
}

// checkStates checks a list of candidate numbers of states.
func checkStates(states []int) error {
	if len(states) == 0 {
		return fmt.Errorf("profile: no number of states given: %w; set profile.AlignOptions.States to 6 or a range such as 2-12", ErrOption)
	}
	for i, k := range states {
		if k < 2 || (i > 0 && k <= states[i-1]) {
			return fmt.Errorf("profile: states %v: %w; give increasing numbers ≥ 2", states, ErrOption)
		}
	}
	return nil
}

// AlignSample gives the two rates of the sample FitAligned is fitted on: of participants, and of
// windows within a sampled participant, so that about size windows (0 means 50,000) come from
// participants with about 250 windows each (all of theirs when they have fewer): enough of a
// participant's windows to find its device, and of participants to find the states.
func AlignSample(size, participants, windows int) (unitRate, windowRate float64) {
	if size == 0 {
		size = 50_000
	}
	perUnit := 250.0
	mean := float64(windows) / float64(max(1, participants))
	if mean < perUnit {
		perUnit = mean
	}
	want := math.Ceil(float64(size) / math.Max(1, perUnit))
	return min(1, want/float64(max(1, participants))), min(1, perUnit/math.Max(1, mean))
}
