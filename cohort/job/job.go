package job

import (
	"context"

	"fmt"
	"math"
	"slices"
	"sync"
	"time"

	"github.com/cohortmix/cohortmix/cluster/groupstat"

	"gonum.org/v1/gonum/mat"

	"github.com/cohortmix/cohortmix/cohort"
	"github.com/cohortmix/cohortmix/cohort/group"
	"github.com/cohortmix/cohortmix/cohort/modelfile"
	"github.com/cohortmix/cohortmix/cohort/note"
	"github.com/cohortmix/cohortmix/normalize"
	"github.com/cohortmix/cohortmix/profile"
)

// Options are the settings of one run of the main job.
type Options struct {
	Inputs    []string
	Read      cohort.ReadOptions
	Norm      normalize.Options
	States    []int
	Sample    int
	Groups    []int
	Method    group.Method
	Criterion group.Criterion
	Bootstrap int
	// Axes names the three features of the axis means that the align step turns; empty finds
	// them (normalize.FindAxes), unless NoAxes says to turn none.
	Axes   []string
	NoAxes bool
	// NoTurn turns only the axis means, not the axis s.d.s, correlations and angles found with
	// them (normalize.FindTurned).
	NoTurn     bool
	StatesRule profile.Rule
	// NoCalibration leaves each device's axis means uncalibrated in the align step (see
	// normalize.SphereCalibration).
	NoCalibration bool
	// noTwinFold leaves pairs of states that no participant uses both of as fitted
	// (profile.AlignOptions.Twins −1): a switch of the families study, not an option.
	noTwinFold bool
	// noPersonStates assigns every window to the cohort's states, not to each participant's own
	// version of them (profile.AlignOptions.PersonPrior −1): a switch of the families study.
	noPersonStates bool
	// oneSE keeps the fit of the fewest states within one standard error of the best agreement
	// (oneSE) instead of the medoid: a switch of the families study, not an option.
	oneSE bool
	// viMedoid keeps the medoid under the variation of information (viMedoid) instead of the
	// adjusted Rand index: a switch of the families study, not an option.
	viMedoid bool
	// voteFull lets the fits' votes see each sampled participant's whole recording and its
	// bouts (voteBlocks, set by FitTable), or with voteNoBouts its windows in each state only: a
	// prototype of the families study (votes=full, votes=fullcounts), in one process only,
	// measured and not kept.
	voteFull, voteNoBouts bool
	voteBlocks            func(ordinal int) ([]float64, error)
	// voteExact groups the votes with the run's own settings of the mixture instead of the
	// quicker ones (a switch of the families study, not an option).
	voteExact bool
	// Fits is how many times each number of states is fitted from different random starts, the
	// fit kept being the one whose grouping agrees best with all the others' (fitStates); 0 and
	// 1 fit once.
	Fits   int
	Valley float64 // see profile.MergeStates; 0 means profile.DefaultValley
	// GroupValley lowers the number of groups while two form one mode (group.Options.Valley).
	GroupValley float64
	// Signature is what the grouping sees of each participant: its windows in each state over
	// the whole recording (SignatureWhole, ""), or in each state within each part of the day
	// (SignatureDayParts, the parts of DayParts; nil means profile.DefaultDayParts), which
	// needs times in the order column. The bouts are seen either way.
	Signature string
	DayParts  profile.DayParts
	// KeepTwins keeps features that order the windows exactly as an earlier one does (a log of
	// a column of counts beside the counts); by default they are left out (dropTwins).
	KeepTwins bool
	Seed      uint64
	// Window is the length of one window, given on the command line (0: from the order
	// column's times, when it holds times).
	Window time.Duration
	// NoSensitivity leaves out the sensitivity table (the recovery benchmark, which scores the
	// groups only, sets it).
	NoSensitivity bool
	Workers       int
	Progress      func(step string)
	Passes        func(step string, done, total int) // progress within the passes over the participants
	Steps         func(step string, done, total int) // progress within fitting the states and the groups
}

// normSample is about how many windows the robust scales and the PCA are fitted on.
const normSample = 200_000

// Fitted is every fit of one run, before it is described.
type Fitted struct {
	// ModelFeaturesStep is, for a wave placed in a model, the record of how the model's data
	// were made by the features step (modelfile.ReadSettings.FeaturesStep), against which
	// NewResult checks the inputs' records; "" compares the inputs among themselves.
	ModelFeaturesStep string
	Table             *cohort.Table
	Fit               *normalize.Fit
	States            *profile.States
	Sigs              []profile.Signature
	Rhythm            []profile.Rhythm // each unit's rest-activity measures (NaN where they cannot be read)
	// TimeOfDay is when in the day and week each unit's windows fall, by state (nil without
	// times in the order column).
	TimeOfDay []*profile.TimeOfDay
	Signature string                // what the grouping saw (Options.Signature)
	DayParts  profile.DayParts      // the parts of the day it saw, for the day-part signature
	Medians   [][]float64           // each unit's median of each feature
	Desc      []profile.Description // the states in the original units
	Labels    *profile.LabelTable   // states × known labels, when labels are given
	Devices   []normalize.Device    // each unit's device, when the states are aligned
	sample    sampleUnits           // the participants and windows sampled for the fit
	Notes     []note.Note           // what the run decided on its own, for the reader
	Warnings  []note.Note           // what the reader must weigh before trusting the groups
	// Reproducibility is how alike the fits of the states from different random starts group
	// the sampled participants (FitPiece.Reproducibility); NaN when not measured.
	Reproducibility float64
	Grouping        *group.Grouping
	Window          time.Duration // the length of one window (0: not known)
	// WindowSource says where the window length came from.
	WindowSource WindowSource
	// Atypical marks the units assign placed farther from every group than the model's members;
	// they belong to no group (nil: none).
	Atypical []bool
	// Sensitivity compares the groups with those under other choices (FitTable only).
	Sensitivity []Sensitivity
	Workers     int // goroutines for what NewResult computes (0: one per core)
}

// findAxesIn resolves the axis means the align step turns: none, the named features, or, when
// none are named, the triple that normalize.FindAxes finds on the first windows of up to 20
// participants (first: their windows one after another, row-major). The note (NoteAxes) says
// which, for the workbook.
func findAxesIn(features []string, first []float64, names []string, none bool) ([]int, note.Note, error) {
	if none {
		return nil, note.Note{Kind: NoteAxes, Ints: []int{AxesNone, 0}, Option: "job.Options.NoAxes"}, nil
	}
	if len(names) > 0 {
		var axes []int
		for _, n := range names {
			j := slices.Index(features, n)
			if j < 0 {
				return nil, note.Note{}, fmt.Errorf("job.Options.Axes names %s, which is not among the features %v: %w; name the three axis-mean columns in x, y, z order, or set job.Options.NoAxes", n, features, cohort.ErrMismatch)
			}
			axes = append(axes, j)
		}
		return axes, note.Note{Kind: NoteAxes, Ints: []int{AxesNamed, 0}, Names: slices.Clone(names)}, nil
	}
	axes, cv := normalize.FindAxes(features, first)
	if axes == nil {
		return nil, note.Note{Kind: NoteAxes, Ints: []int{AxesNotFound, 0}, Floats: []float64{cv}, Option: "job.Options.Axes"}, nil
	}
	return axes, note.Note{Kind: NoteAxes, Ints: []int{AxesFound, 0}, Names: []string{features[axes[0]], features[axes[1]], features[axes[2]]}, Floats: []float64{cv}}, nil
}

// The ways the align step's axis means were found (NoteAxes's Ints[0]).
const (
	AxesNone     = iota // none turned (Options.NoAxes)
	AxesNamed           // named by Options.Axes
	AxesNotFound        // none found
	AxesFound           // found by normalize.FindAxes
)

// withTurned adds to an axes note what turns with the axis means (NoteAxes).
func withTurned(n note.Note, features []string, t *normalize.Turned) note.Note {
	if t == nil {
		return n
	}
	if t.SD != nil {
		n.Ints[1] = 1
		for _, j := range slices.Concat(t.SD, t.Cor) {
			n.Names = append(n.Names, features[j])
		}
	}
	for _, a := range t.Angles {
		n.Names = append(n.Names, features[a.Column])
		n.Ints = append(n.Ints, a.Axis, boolInt(a.Polar), boolInt(a.Degrees))
	}
	return n
}

func boolInt(b bool) int {
	if b {
		return 1
	}
	return 0
}

// Analyze connects the stages: read → normalize → states and signatures → grouping → what sets
// the groups apart. It holds no algorithm of its own.
func Analyze(ctx context.Context, o Options) (*Result, error) {
	f, err := FitAll(ctx, o)
	if err != nil {
		return nil, err
	}
	defer f.Table.Close()
	return NewResult(f, Numbered("S", f.States.K), Numbered("G", f.Grouping.K))
}

// Numbered gives neutral names: prefix1, prefix2, …
func Numbered(prefix string, n int) []string {
	out := make([]string, n)
	for i := range out {
		out[i] = fmt.Sprintf("%s%d", prefix, i+1)
	}
	return out
}

// FitAll reads the inputs and fits normalization, states and grouping. The table of the result
// holds the units and the accounting, not the windows, whose temporary file is removed.
func FitAll(ctx context.Context, o Options) (f *Fitted, err error) {
	if o.Progress != nil {
		o.Progress("reading")
	}
	t, err := cohort.Read(ctx, o.Inputs, o.Read)
	if err != nil {
		return nil, err
	}
	defer t.Close()
	return FitTable(ctx, t, o)
}

// rebuild maps windows from principal-component scores (rows of y, K columns) back to the
// features they came from (rows of d = components' rows), without the PCA's centre: x = y·Cᵀ.
func rebuild(dst, y []float64, comps *mat.Dense) []float64 {
	d, k := comps.Dims()
	n := len(y) / k
	if cap(dst) < n*d {
		dst = make([]float64, n*d)
	}
	dst = dst[:n*d]
	out := mat.NewDense(n, d, dst)
	out.Mul(mat.NewDense(n, k, y), comps.T())
	return dst
}

// WindowLength is the length of one window: as given, or read from the order column's times
// of the first few participants (windowFromSteps); 0 when neither is there.
func WindowLength(t *cohort.Table, given time.Duration) (time.Duration, WindowSource) {
	var steps [][]int64
	for u := 0; u < min(stepUnits, len(t.Units)); u++ {
		s, err := orderSteps(t, u)
		if err != nil {
			return 0, WindowUnknown
		}
		steps = append(steps, s)
	}
	return windowFromSteps(steps, t.OrderKind, given)
}

// FitTable fits normalization, states and grouping to a table that has been read. With the
// align step it runs the job's passes (census, sample, fit, assignment, finish) on the whole
// table, as a run split in shards runs them on each shard.
func FitTable(ctx context.Context, t *cohort.Table, o Options) (*Fitted, error) {
	c, err := CensusOf(t, o)
	if err != nil {
		return nil, err
	}
	plan, err := MergeCensus([]*Census{c})
	if err != nil {
		return nil, err
	}
	if err := checkCounts(plan, o); err != nil {
		return nil, err
	}
	o.Groups = plan.Options.Groups
	// About --sample windows from participants chosen by their id, about 250 windows each, as
	// read: the align step fits the scaling, the states and the devices on them (only their
	// windows are read), and the sensitivity table refits on them.
	sp, err := SampleOf(t, plan, cohort.Shard{})
	if err != nil {
		return nil, err
	}
	if o.voteFull {
		plan.Options.voteBlocks = func(ord int) ([]float64, error) {
			for u, un := range t.Units {
				if un.Ordinal == ord {
					return t.Block(u, nil)
				}
			}
			return nil, fmt.Errorf("job: the votes' whole recordings: no participant of ordinal %d: %w", ord, ErrPiece)
		}
	}
	if o.Norm.Within == normalize.WithinAlign {
		fp, err := FitSample(ctx, plan, []*SamplePiece{sp})
		if err != nil {
			return nil, err
		}
		if o.Progress != nil {
			o.Progress("assigning windows")
		}
		ap, err := AssignOf(ctx, t, cohort.Shard{}, fp.Fit, fp.States, o.Workers, o.Passes)
		if err != nil {
			return nil, err
		}
		return Finish(ctx, fp, []*AssignPiece{ap})
	}
	sample, err := mergeSamples(plan, []*SamplePiece{sp})
	if err != nil {
		return nil, err
	}
	return fitEveryWindow(ctx, t, plan, sample, o)
}

// fitEveryWindow fits the within steps other than align, whose normalizing pass runs over every
// window of the table (one machine only).
func fitEveryWindow(ctx context.Context, t *cohort.Table, plan *Plan, sample sampleUnits, o Options) (*Fitted, error) {
	step := func(s string) {
		if o.Progress != nil {
			o.Progress(s)
		}
	}
	step("normalizing")
	o.Norm.Seed = o.Seed
	if total := t.Quality.WindowsIn; o.Norm.SampleRate == 0 && total > normSample {
		o.Norm.SampleRate = float64(normSample) / float64(total) // robust scales and PCA from a sample
	}
	d := len(t.Features)
	if o.Norm.Log {
		o.Norm.Lowest = slices.Clone(plan.Lowest)
		o.Norm.LogStart = normalize.LogStartOf(plan.First, d)
	}
	raw := &rawBlocks{t: t}
	// The states' sample is drawn in the normalizing pass, from the same hash as its own sample.
	o.Norm.KeepRate = profile.SampleRate(o.Sample, plan.Usable)
	// Room for the expected sample and a margin, so that it is rarely copied while it grows.
	expect := o.Norm.KeepRate * float64(plan.Usable)
	kept := make([]float64, 0, d*int(expect+4*math.Sqrt(expect)+16))
	o.Norm.Keep = func(_, _ int, row []float64) { kept = append(kept, row...) }
	o.Norm.Workers, o.Norm.Progress = o.Workers, o.Passes
	fit, err := normalize.FitBlocks(ctx, t.Features, raw, o.Norm)
	if err == nil {
		err = raw.err
	}
	if err != nil {
		return nil, err
	}
	step("fitting movement states")
	var rows *mat.Dense
	if len(kept) > 0 {
		y := fit.Cohort(kept)
		rows = mat.NewDense(len(y)/fit.OutDim(), fit.OutDim(), y)
	}
	states, err := profile.FitStates(ctx, rows, profile.Options{States: o.States, Rule: o.StatesRule, Valley: o.Valley, Seed: o.Seed, Workers: o.Workers, Progress: o.Steps})
	if err != nil {
		return nil, err
	}
	step("assigning windows")
	f, err := AssignWindows(ctx, t, fit, states, o.Workers, o.Passes)
	if err != nil {
		return nil, err
	}
	f.sample, f.Window, f.WindowSource = sample, plan.Window, plan.WindowSource
	return f, groupFitted(ctx, f, o)
}

// groupFitted groups the participants on their signatures and, unless told not to, checks the
// groups against other choices.
func groupFitted(ctx context.Context, f *Fitted, o Options) error {
	shares, counts, bouts := SignatureColumns(f.Sigs)
	parts, err := f.PartColumns(o.Signature, o.DayParts)
	if err != nil {
		return err
	}
	if parts != nil {
		shares = PartShares(parts)
		f.Signature, f.DayParts = SignatureDayParts, o.DayParts
		if f.DayParts == nil {
			f.DayParts = profile.DefaultDayParts
		}
	}
	if o.Progress != nil {
		o.Progress("grouping participants")
	}
	g, err := group.Signatures(ctx, shares, group.Options{Method: o.Method, Groups: o.Groups, Criterion: o.Criterion, Bootstrap: o.Bootstrap, Seed: o.Seed, Valley: o.GroupValley,
		Counts: counts, Bouts: bouts, DayParts: parts, Workers: o.Workers, Progress: o.Steps})
	if err != nil {
		return err
	}
	f.Grouping = g
	if !o.NoSensitivity {
		if o.Progress != nil {
			o.Progress("checking the groups against other choices")
		}
		if f.Sensitivity, err = sensitivity(ctx, f, o, f.sample); err != nil {
			return err
		}
	}
	return nil
}

// The signatures the grouping can see (Options.Signature).
const (
	SignatureWhole    = "whole"
	SignatureDayParts = "day-parts"
)

// PartColumns are the units' windows in each state within each part of the day (parts·k
// counts per unit, profile.TimeOfDay.ByPart) for the day-part signature, and nil for the whole
// recording's; an error when the signature is not known or a unit has no times.
func (f *Fitted) PartColumns(signature string, parts profile.DayParts) ([][]float64, error) {
	switch signature {
	case "", SignatureWhole:
		return nil, nil
	case SignatureDayParts:
	default:
		return nil, fmt.Errorf("job: signature %q: %w; use %s or %s", signature, cohort.ErrBadOption, SignatureWhole, SignatureDayParts)
	}
	if parts == nil {
		parts = profile.DefaultDayParts
	}
	if err := parts.Check(); err != nil {
		return nil, fmt.Errorf("job: %v: %w", err, cohort.ErrBadOption)
	}
	if f.TimeOfDay == nil {
		return nil, fmt.Errorf("job: the day-part signature needs times in the order column (ISO-8601), and this table's order is %s: %w; give times, or group on the whole recording (job.Options.Signature whole)", f.Table.OrderKind, cohort.ErrBadOption)
	}
	out := make([][]float64, len(f.TimeOfDay))
	for i, td := range f.TimeOfDay {
		if td == nil {
			return nil, fmt.Errorf("job: participant %s has no times for the day-part signature: %w", f.Table.Units[i].ID, cohort.ErrBadOption)
		}
		out[i] = td.ByPart(parts)
	}
	return out, nil
}

// PartShares are each unit's shares of windows in each state within each part of the day, of
// all its windows (summing to 1 over parts and states): the day-part signature's shares.
func PartShares(parts [][]float64) [][]float64 {
	out := make([][]float64, len(parts))
	for i, row := range parts {
		var total float64
		for _, c := range row {
			total += c
		}
		out[i] = make([]float64, len(row))
		for j, c := range row {
			out[i][j] = c / total
		}
	}
	return out
}

// SignatureColumns are the signatures' shares, and their windows and bouts in each state as
// numbers, for the grouping.
func SignatureColumns(sigs []profile.Signature) (shares, counts, bouts [][]float64) {
	shares, counts, bouts = make([][]float64, len(sigs)), make([][]float64, len(sigs)), make([][]float64, len(sigs))
	for i, sg := range sigs {
		shares[i] = sg.Share
		counts[i], bouts[i] = make([]float64, len(sg.Share)), make([]float64, len(sg.Share))
		for j := range sg.Share {
			counts[i][j] = float64(sg.Counts[j])
			bouts[i][j] = float64(sg.Bouts[j])
		}
	}
	return shares, counts, bouts
}

// rawBlocks gives each unit's windows as read, so that no second copy of all windows is held. A
// failed read of the table's temporary file gives an empty block and is kept in err.
type rawBlocks struct {
	t   *cohort.Table
	mu  sync.Mutex // Block is called from several goroutines
	err error
}

func (b *rawBlocks) Len() int              { return len(b.t.Units) }
func (b *rawBlocks) Block(u int) []float64 { return b.BlockInto(u, nil) }
func (b *rawBlocks) BlockInto(u int, dst []float64) []float64 {
	x, err := b.t.Block(u, dst)
	if err != nil {
		b.mu.Lock()
		if b.err == nil {
			b.err = err
		}
		b.mu.Unlock()
	}
	return x
}

// AssignWindows gives each window of a table its state and each unit its signature (AssignOf,
// on the whole table).
func AssignWindows(ctx context.Context, t *cohort.Table, fit *normalize.Fit, states *profile.States, workers int, progress func(string, int, int)) (*Fitted, error) {
	ap, err := AssignOf(ctx, t, cohort.Shard{}, fit, states, workers, progress)
	if err != nil {
		return nil, err
	}
	units := make([]UnitInfo, len(t.Units))
	for i, u := range t.Units {
		units[i] = UnitInfo{ID: u.ID, Wave: u.Wave, Ordinal: u.Ordinal, Windows: u.Windows(), NonWear: u.NonWear, Wear: u.Wear}
	}
	f := &Fitted{Table: t, Fit: fit, States: states, Workers: workers, Reproducibility: math.NaN()}
	return f, mergeAssigned(f, units, []*AssignPiece{ap})
}

// NewResult gathers what the reports show once every unit has a group: the states in the original
// units, the states × labels table, the separating variables, and one row per unit, under the
// given state and group names.
func NewResult(f *Fitted, stateNames, groupNames []string) (*Result, error) {
	t, fit, states, g := f.Table, f.Fit, f.States, f.Grouping
	k := states.K
	res := &Result{Features: t.Features, OrderKind: t.OrderKind, Quality: t.Quality, Files: t.Files, Norm: fit, States: states, Grouping: g,
		StateDesc: f.Desc, Labels: f.Labels}
	res.Warnings = append(append(res.Warnings, fit.Warnings...), f.Warnings...)
	res.Warnings = append(res.Warnings, MadeByWarnings(t.Files, f.ModelFeaturesStep)...)
	res.Reproducibility = f.Reproducibility
	res.Notes = append(res.Notes, f.Notes...)
	if f.Sensitivity != nil {
		res.Sensitivity, res.SensitivityNote = f.Sensitivity, statesNote(f.States.Ensemble)
	}
	vars := separationVariables(f, stateNames)
	for _, v := range vars {
		if v.Kind == "feature median" {
			res.FeatureRange = append(res.FeatureRange, [3]float64{groupstat.Quantile(v.Values, 0.01), groupstat.Quantile(v.Values, 0.5), groupstat.Quantile(v.Values, 0.99)})
		}
	}
	if err := separate(res, f, vars); err != nil {
		return nil, err
	}
	res.AtypicalCut = groupstat.Quantile(g.Distance, 0.99)
	for i := range t.Units {
		res.Units = append(res.Units, unitRow(f, i))
	}
	res.StateNames, res.GroupNames = stateNames, groupNames
	res.WindowLength, res.WindowSource = f.Window, f.WindowSource
	if f.Signature == SignatureDayParts && g.K > 1 {
		res.DayPartCounts = dayPartCounts(f.TimeOfDay, g.Labels, g.K, k, f.DayParts)
	}
	res.TimeZone, res.TimeOfDay = t.TimeZone, groupTimeOfDay(f.TimeOfDay, g.Labels, g.K, k)
	res.Signature, res.DayParts = f.Signature, f.DayParts
	return res, nil
}

// separationVariables are the variables tested for what sets the groups apart, one value per
// unit: each state's share and bout length, each feature's median and the rest-activity
// measures.
func separationVariables(f *Fitted, stateNames []string) []group.Variable {
	t, sigs, k := f.Table, f.Sigs, f.States.K
	vars := make([]group.Variable, 0, 2*k+len(t.Features))
	for s := 0; s < k; s++ {
		v := group.Variable{Name: "share " + stateNames[s], Kind: "share"}
		b := group.Variable{Name: "bout " + stateNames[s], Kind: "bout length"}
		for i := range sigs {
			v.Values = append(v.Values, sigs[i].Share[s])
			b.Values = append(b.Values, boutOf(sigs[i], s))
		}
		vars = append(vars, v, b)
	}
	for j, name := range t.Features {
		v := group.Variable{Name: "median " + name, Kind: "feature median"}
		for i := range t.Units {
			v.Values = append(v.Values, f.Medians[i][j])
		}
		vars = append(vars, v)
	}
	return append(vars, rhythmVariables(f.Rhythm)...)
}

// separate tests the variables on the units the separation is based on (not the atypical ones)
// and puts the result in res.
func separate(res *Result, f *Fitted, vars []group.Variable) error {
	g := f.Grouping
	rows, basis := separationRows(f.Table.Units, f.Atypical)
	res.SeparationBasis = basis
	labels := make([]int, len(rows))
	for r, i := range rows {
		labels[r] = g.Labels[i]
	}
	tested := make([]group.Variable, len(vars))
	for j, v := range vars {
		tested[j] = group.Variable{Name: v.Name, Kind: v.Kind, Values: make([]float64, len(rows))}
		for r, i := range rows {
			tested[j].Values[r] = v.Values[i]
		}
	}
	if g.K < 2 {
		res.NotTested = []cohort.LeftOut{{Name: "every variable", Reason: note.Note{Kind: NotTestedOneGroup}}}
		return nil
	}
	var err error
	res.Separations, res.NotTested, err = group.Separate(tested, labels, g.K, f.Workers)
	return err
}

// unitRow is unit i's row of the result.
func unitRow(f *Fitted, i int) UnitRow {
	g, sigs, u := f.Grouping, f.Sigs, f.Table.Units[i]
	row := UnitRow{ID: u.ID, Wave: u.Wave, Windows: sigs[i].Windows, NonWear: u.NonWear, Wear: u.Wear, Group: g.Labels[i],
		Silhouette: g.Silhouette[i], Distance: g.Distance[i], Share: sigs[i].Share, Bout: sigs[i].MeanBout, Stay: math.NaN(), Turn: math.NaN(), Calibration: math.NaN(), Posterior: math.NaN(), Rhythm: profile.NoRhythm}
	if f.Rhythm != nil {
		row.Rhythm = f.Rhythm[i]
	}
	if g.Posterior != nil {
		row.Posterior = g.Posterior[i]
	}
	if g.Stability != nil {
		row.Stay = g.Stability.Stay[i]
	}
	if f.Devices != nil && f.Fit.Axes != nil {
		row.Turn = f.Devices[i].Angle()
		if o := f.Devices[i].AxisOffset; f.States.Calibrate && o != nil && f.States.Gravity > 0 {
			row.Calibration = math.Sqrt(o[0]*o[0]+o[1]*o[1]+o[2]*o[2]) / f.States.Gravity
		}
	}
	switch s := g.Silhouette[i]; {
	case f.Atypical != nil && f.Atypical[i]:
		row.Atypical = true
	case math.IsNaN(s):
	case s < 0:
		row.Mark = MarkCloserElsewhere
	case s < WeakSilhouette:
		row.Mark = MarkWeakFit
	}
	return row
}

// dayPartCounts adds up the windows of each group, and of the whole cohort in a last row, in
// each state within each part of the day: groups+1 rows of len(parts)·k counts, part by part.
func dayPartCounts(tds []*profile.TimeOfDay, labels []int, groups, k int, parts profile.DayParts) [][]float64 {
	sum := make([][]float64, groups+1)
	for c := range sum {
		sum[c] = make([]float64, len(parts)*k)
	}
	for i, td := range tds {
		if td == nil {
			continue
		}
		for j, v := range td.ByPart(parts) {
			sum[labels[i]][j] += v
			sum[groups][j] += v
		}
	}
	return sum
}

// groupTimeOfDay adds up the members' windows of each group by hour of the day and by weekday
// and weekend, as shares of each state (nil without times).
func groupTimeOfDay(tds []*profile.TimeOfDay, labels []int, groups, k int) []GroupTimeOfDay {
	if tds == nil {
		return nil
	}
	out := make([]GroupTimeOfDay, groups)
	byHour := make([][]int, groups) // 24·k counts per group
	weekend, all := make([][]int, groups), make([][]int, groups)
	for c := range out {
		byHour[c], weekend[c], all[c] = make([]int, 24*k), make([]int, k), make([]int, k)
	}
	for i, td := range tds {
		if td == nil {
			continue
		}
		c := labels[i]
		for h, n := range td.ByHour {
			byHour[c][h] += n
			all[c][h%k] += n
		}
		for j, n := range td.Weekend {
			weekend[c][j] += n
		}
	}
	shares := func(counts []int) ([]float64, int) {
		total := 0
		for _, n := range counts {
			total += n
		}
		if total == 0 {
			return nil, 0
		}
		out := make([]float64, len(counts))
		for j, n := range counts {
			out[j] = float64(n) / float64(total)
		}
		return out, total
	}
	for c := range out {
		g := &out[c]
		for h := 0; h < 24; h++ {
			g.ByHour[h], g.Hours[h] = shares(byHour[c][h*k : (h+1)*k])
		}
		weekday := make([]int, k)
		for j := range weekday {
			weekday[j] = all[c][j] - weekend[c][j]
		}
		g.Weekday, g.WeekdayWindows = shares(weekday)
		g.Weekend, g.WeekendWindows = shares(weekend[c])
	}
	return out
}

// rhythmVariables are the rest-activity measures as variables for the separating tests (the
// onsets, which are hours on a circle, left out), when any participant has them.
func rhythmVariables(rh []profile.Rhythm) []group.Variable {
	has := false
	for _, r := range rh {
		has = has || !math.IsNaN(r.IS)
	}
	if !has {
		return nil
	}
	vars := []group.Variable{{Name: "interdaily stability (IS)"}, {Name: "intradaily variability (IV)"}, {Name: "L5"}, {Name: "M10"}, {Name: "relative amplitude (RA)"}}
	for _, r := range rh {
		for j, x := range []float64{r.IS, r.IV, r.L5, r.M10, r.RA} {
			vars[j].Values = append(vars[j].Values, x)
		}
	}
	for j := range vars {
		vars[j].Kind = "rest-activity"
	}
	return vars
}

// separationRows are the units the separating-variable tests use, and in words which they are.
// Each person counts once: without waves every unit that is in a group; with waves each
// person's first grouped wave (in the natural order of the wave labels), since a person's waves
// are repeated measures, not independent people. Atypical units are in no group and left out.
func separationRows(units []*cohort.Unit, atypical []bool) ([]int, string) {
	first := map[string]int{}
	var rows []int
	waves := false
	for i, u := range units {
		if atypical != nil && atypical[i] {
			continue
		}
		waves = waves || u.Wave != ""
		j, seen := first[u.ID]
		switch {
		case !seen:
			first[u.ID] = len(rows)
			rows = append(rows, i)
		case cohort.NaturalLess(u.Wave, units[rows[j]].Wave):
			rows[j] = i
		}
	}
	basis := ""
	if waves {
		basis = fmt.Sprintf("Each person counts once in these tests: the values of their first grouped wave (in the natural order of the wave labels), %d people; a person's later waves are repeated measures, not other people.", len(rows))
	}
	if n := len(units) - len(rows); n > 0 && !waves {
		basis = fmt.Sprintf("The %d atypical participants are in no group and left out of these tests.", n)
	}
	return rows, basis
}

// Defaults are the settings of a run that sets nothing else, the command line's defaults: the
// align step with started log scales, each device calibrated, and PCA keeping 99 % of the
// variance; movement states fitted with 3 to 8 states from 3 random starts each, the fit
// kept the one whose grouping of the sampled participants agrees best with the others'
// (fitStates); the participants grouped by the mixture (group.Mixture) into 1 to 8 groups by
// the integrated completed likelihood; about 50,000 windows sampled for the fit; seed 1.
func Defaults(inputs ...string) Options {
	span := func(lo, hi int) []int {
		var out []int
		for k := lo; k <= hi; k++ {
			out = append(out, k)
		}
		return out
	}
	return Options{
		Inputs: inputs,
		Read: cohort.ReadOptions{ID: "participant", Order: "window", Missing: cohort.DropWindow, MinWindows: 20, NonWear: cohort.NonWearAuto,
			ValidDay: cohort.DefaultValidDay, ValidDayAuto: true, ValidDays: cohort.DefaultValidDays},
		Norm: normalize.Options{Within: normalize.WithinAlign, Scale: normalize.ScaleZ, Log: true, PCAVariance: 0.99,
			OffsetICC: 0.3, RestShare: 0.1},
		States: span(3, 8), StatesRule: profile.ByValley, Valley: profile.DefaultValley, Sample: 50_000,
		Groups: span(1, 8), Method: group.Mixture, Criterion: group.ByICL, Bootstrap: 20, Seed: 1, Fits: DefaultFits,
	}
}

// FitSettings are how a run fits, as the model file keeps them for a later refit.
func (o Options) FitSettings() *modelfile.FitSettings {
	return &modelfile.FitSettings{
		Within: o.Norm.Within.String(), WithinFeatures: o.Norm.WithinFeatures, OffsetICC: o.Norm.OffsetICC, RestShare: o.Norm.RestShare,
		Axes: o.Axes, NoAxes: o.NoAxes, NoTurn: o.NoTurn, Log: o.Norm.Log, Scale: o.Norm.Scale.String(),
		PCAComponents: o.Norm.PCAComponents, PCAVariance: o.Norm.PCAVariance, NoPCA: o.Norm.NoPCA,
		States: o.States, StatesRule: o.StatesRule.String(), NoCalibration: o.NoCalibration, Fits: o.Fits, Valley: o.Valley, Sample: o.Sample,
		Groups: o.Groups, Method: o.Method.String(), Criterion: o.Criterion.String(), GroupValley: o.GroupValley,
		Bootstrap: o.Bootstrap, Seed: o.Seed, WindowSeconds: o.Window.Seconds(), Signature: o.Signature, DayParts: o.DayParts, KeepTwins: o.KeepTwins,
	}
}

// boutOf is a participant's mean bout length in state s, or NaN when it never entered the state
// (there is no bout to measure; 0 would rank it as the shortest).
func boutOf(sig profile.Signature, s int) float64 {
	if sig.Bouts[s] == 0 {
		return math.NaN()
	}
	return sig.MeanBout[s]
}
