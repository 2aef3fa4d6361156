package job

import (
	"context"
	"fmt"
	"maps"
	"math"
	"slices"
	"sync"

	"gonum.org/v1/gonum/mat"

	"github.com/cohortmix/cohortmix/cluster"
	"github.com/cohortmix/cohortmix/cluster/par"
	"github.com/cohortmix/cohortmix/cohort/group"
	"github.com/cohortmix/cohortmix/cohort/note"
	"github.com/cohortmix/cohortmix/normalize"
	"github.com/cohortmix/cohortmix/profile"
)

// sampleUnits are the participants drawn for the fit (profile.AlignSample), each with its
// sampled windows as read, and where they stand in the table.
type sampleUnits struct {
	units [][]float64
	index []int
}

// sensitivityUnits is the most participants of the sample the sensitivity table refits on.
const sensitivityUnits = 60

// sensitivity says whether the groups depend on a choice: the adjusted Rand index between the
// grouping made and the grouping under each alternative, with the same number of groups. The
// other grouping methods group the same signatures; the other within steps, the axis means
// turned alone and the other numbers of states are fitted anew on the windows of up to 60
// sampled participants, so their rows are read against the first row, the same settings on the
// same sampled windows.
// matrixAtOnce is the size of a distance matrix above which the sensitivity table's refits by
// other methods run one at a time.
const matrixAtOnce = 32 << 20

func sensitivity(ctx context.Context, f *Fitted, o Options, sample sampleUnits) ([]Sensitivity, error) {
	k := f.Grouping.K
	if k < 2 {
		return nil, nil // one group: there are no groups for a choice to move
	}
	// Each row is a task of its own; the tasks run side by side (each seeded as it would be
	// alone) and their rows are kept in this order.
	var tasks []func() (Sensitivity, error)
	shares := make([][]float64, len(f.Sigs))
	for i, s := range f.Sigs {
		shares[i] = s.Share
	}
	// The other methods keep an n × n matrix of distances (for PAM and the silhouettes); above
	// matrixAtOnce, one of them at a time, so that the peak holds one matrix, not one per core
	// (464 MB at 5,000 participants on two cores). The rows are the same either way.
	var oneMatrix sync.Mutex
	heavy := cluster.CondensedBytes(len(shares)) > matrixAtOnce
	for _, m := range []group.Method{group.WardHellinger, group.PAMAitchison, group.KMeansCLR} {
		if m == f.Grouping.Method || (m != group.KMeansCLR && len(shares) > group.LargeCohort) {
			continue
		}
		tasks = append(tasks, func() (Sensitivity, error) {
			if heavy {
				oneMatrix.Lock()
				defer oneMatrix.Unlock()
			}
			row := Sensitivity{Choice: "grouping method", Alternative: m.String(), Participants: len(shares)}
			if need := cluster.CondensedBytes(len(shares)); m == group.PAMAitchison && need > group.SilhouetteMatrixBytes {
				row.ARI, row.Skipped = math.NaN(), fmt.Sprintf("left out: PAM would hold a matrix of distances of %d MiB for %d participants, more than the %d MiB a refit may", need>>20, len(shares), group.SilhouetteMatrixBytes>>20)
				return row, nil
			}
			g, err := group.Signatures(ctx, shares, group.Options{Method: m, Groups: []int{k}, Criterion: group.ByGap, Bootstrap: 2, Seed: o.Seed, Workers: o.Workers})
			if err != nil {
				return skipped(row, err), nil
			}
			row.ARI, _ = cluster.AdjustedRand(g.Labels, f.Grouping.Labels)
			return row, nil
		})
	}
	units, index := sample.units, sample.index
	if len(units) > sensitivityUnits {
		units, index = units[:sensitivityUnits], index[:sensitivityUnits]
	}
	if len(units) > k {
		tasks = append(tasks, sampleTasks(ctx, f, o, units, index)...)
	}
	out := make([]Sensitivity, 0, len(tasks))
	err := par.Ordered(ctx, len(tasks), o.Workers, func(i, _ int) (Sensitivity, error) {
		return tasks[i]()
	}, func(_ int, row Sensitivity) error {
		out = append(out, row)
		return nil
	})
	if err != nil {
		return nil, err
	}
	return out, nil
}

// sampleTasks are the sensitivity rows refitted on the sampled participants' windows: the
// reference (the settings used), the other within steps, the axis means turned alone (when the
// align step turns more features with them) and one state fewer and one more.
func sampleTasks(ctx context.Context, f *Fitted, o Options, units [][]float64, index []int) []func() (Sensitivity, error) {
	sr := &sampleRefit{ctx: ctx, f: f, o: o, units: units, made: make([]int, len(index))}
	for r, i := range index {
		sr.made[r] = f.Grouping.Labels[i]
	}
	// row is a refit's row: the refit with the settings given, compared, or skipped with the
	// reason where the refit fails.
	row := func(choice, alt string, within normalize.Within, states []int, noTurn bool) func() (Sensitivity, error) {
		return func() (Sensitivity, error) {
			fit, st, err := sr.refit(within, states, noTurn)
			if err != nil {
				return skipped(Sensitivity{Choice: choice, Alternative: alt, Participants: len(units), OnSample: true}, err), nil
			}
			return sr.compare(choice, alt, fit, st, false)
		}
	}
	tasks := []func() (Sensitivity, error){func() (Sensitivity, error) {
		return sr.compare("reference", "the settings used, on the sampled windows", f.Fit, f.States, true)
	}}
	for _, w := range []normalize.Within{normalize.WithinAlign, normalize.WithinRest, normalize.WithinNone} {
		if w != o.Norm.Within {
			tasks = append(tasks, row("within-participant step", w.String(), w, o.States, false))
		}
	}
	if f.Fit.Turned != nil {
		tasks = append(tasks, row("align step turns", "the axis means only", o.Norm.Within, o.States, true))
	}
	for _, ks := range []int{f.States.K - 1, f.States.K + 1} {
		if ks >= 2 {
			tasks = append(tasks, row("number of states", fmt.Sprintf("%d (fixed)", ks), o.Norm.Within, []int{ks}, false))
		}
	}
	return tasks
}

// sampleRefit refits the normalization and states on the sampled participants' windows (units)
// and compares the groups they give with the run's own groups there (made).
type sampleRefit struct {
	ctx   context.Context
	f     *Fitted
	o     Options
	units [][]float64
	made  []int
}

// compare groups the sampled participants with the given fit and states, with the run's number
// of groups, and scores the groups against the run's.
func (sr *sampleRefit) compare(choice, alt string, fit *normalize.Fit, states *profile.States, ref bool) (Sensitivity, error) {
	f, o, units := sr.f, sr.o, sr.units
	row := Sensitivity{Choice: choice, Alternative: alt, Reference: ref, Participants: len(units), OnSample: true}
	sigs := make([]profile.Signature, len(units))
	for r, x := range units {
		var labels []int
		if states.Aligned() {
			_, lab, _, err := states.AlignUnit(fit, x, nil)
			if err != nil {
				return Sensitivity{}, err
			}
			labels = lab
		} else {
			labels = states.Assign(fit.Apply(x))
		}
		sigs[r] = profile.Signatures(labels, states.K)
	}
	// The sampled windows are scattered, so their runs are no bouts: the mixture sees each
	// window as a bout of its own there.
	sh, counts, _ := SignatureColumns(sigs)
	g, err := group.Signatures(sr.ctx, sh, group.Options{Method: f.Grouping.Method, Groups: []int{f.Grouping.K}, Criterion: f.Grouping.Criterion, Bootstrap: 2, Seed: o.Seed,
		Counts: counts, Bouts: counts, Workers: o.Workers})
	if err != nil {
		return skipped(row, err), nil
	}
	row.ARI, _ = cluster.AdjustedRand(g.Labels, sr.made)
	return row, nil
}

// refit fits the normalization with another within step (or the axis means turned alone, with
// noTurn) and the states at the numbers given.
func (sr *sampleRefit) refit(within normalize.Within, states []int, noTurn bool) (*normalize.Fit, *profile.States, error) {
	ctx, f, o, units := sr.ctx, sr.f, sr.o, sr.units
	no := o.Norm
	no.Within, no.Keep, no.KeepUnit, no.Progress, no.SampleRate = within, nil, nil, nil, 1
	no.WithinFeatures = nil
	if within != o.Norm.Within {
		no.Axes, no.Turned = nil, nil
		if within == normalize.WithinAlign {
			no.Axes, no.Turned = f.Fit.Axes, f.Fit.Turned
		}
	}
	if noTurn {
		no.Turned = nil
	}
	if no.Log {
		no.LogStart = normalize.LogStartOf(units, len(f.Fit.Features))
	}
	fit, err := normalize.FitBlocks(ctx, f.Fit.Features, normalize.SliceBlocks(units), no)
	if err != nil {
		return nil, nil, err
	}
	if within == normalize.WithinAlign {
		st, err := profile.FitAligned(ctx, units, fit, profile.AlignOptions{States: states, Valley: o.Valley, Starts: 1, Reseeds: -1, Restarts: 1, Seed: o.Seed, Workers: o.Workers})
		return fit, st, err
	}
	var rows []float64
	for _, x := range units {
		rows = append(rows, fit.Apply(x)...)
	}
	st, err := profile.FitStates(ctx, mat.NewDense(len(rows)/fit.OutDim(), fit.OutDim(), rows), profile.Options{States: states, Rule: o.StatesRule, Valley: o.Valley, Restarts: 1, Seed: o.Seed, Workers: o.Workers})
	return fit, st, err
}

// skipped is a row that could not be computed, with the reason: a refit that fails on these
// data (ties among many small units, say) leaves its row empty and does not stop the run.
func skipped(row Sensitivity, err error) Sensitivity {
	row.ARI, row.Skipped = math.NaN(), err.Error()
	return row
}

// statesNote is the Summary's line on whether the groups depend on the number of movement
// states, or "" when they do not. It reads the ensemble the states were chosen from (each number
// of states fitted from several starts, each fit grouping the sampled participants; nil when one
// fit was made). A number of states is credible on these data when one of its fits agrees with
// all the others about as well as the fit kept (mean adjusted Rand index at most 0.05 below);
// the groups depend on it when that fit groups the participants otherwise than the one kept
// (adjusted Rand index below 0.8, the mark below which a grouping is called tentative). Numbers
// of states the ensemble voted down are not doubts. The sensitivity table is not read here: its
// other alternatives (grouping methods, within steps) did worse on the benchmark families
// (docs/benchmarks.md), and its refits use fewer participants than the ensemble.
func statesNote(ensemble []profile.EnsembleFit) note.Note {
	var kept profile.EnsembleFit
	for _, e := range ensemble {
		if e.Kept {
			kept = e
		}
	}
	worst := map[int]float64{}
	for _, e := range ensemble {
		if e.States == kept.States || e.Agreement < kept.Agreement-0.05 || e.WithKept >= Unreproducible {
			continue
		}
		if w, ok := worst[e.States]; !ok || e.WithKept < w {
			worst[e.States] = e.WithKept
		}
	}
	if len(worst) == 0 {
		return note.Note{}
	}
	n := note.Note{Kind: NoteStatesDepend, Ints: []int{kept.States}}
	for _, s := range slices.Sorted(maps.Keys(worst)) {
		n.Ints, n.Floats = append(n.Ints, s), append(n.Floats, worst[s])
	}
	return n
}
