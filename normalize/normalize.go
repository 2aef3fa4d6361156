// Package normalize standardizes window features: on a started log scale where a feature is
// never below 0, within each participant (to remove device offsets: a baseline of the
// participant's own, or a Device fitted with the states by package profile), then across the
// cohort, then optionally projects them on principal components. Every step is a frozen fit
// that can be applied to new participants alone.
//
// # Conventions
//
// Inputs are never modified. The within-participant step uses each participant's own windows (its
// rule is frozen, its statistics are the participant's); the cohort step and the PCA are fitted
// once and stored. Sampling is by a keyed hash of (seed, participant, window), so the sample does
// not depend on the order or the number of workers.
//
// # References
//
//   - Shrout PE, Fleiss JL (1979). Intraclass correlations: uses in assessing rater reliability.
//     Psychol. Bull. 86:420–428 (ICC(1) from the one-way ANOVA).
//   - Donner A (1986). A review of inference procedures for the intraclass correlation coefficient
//     in the one-way random effects model. Int. Stat. Rev. 54:67–82 (n₀ for unequal group sizes).
//   - Rousseeuw PJ, Croux C (1993). Alternatives to the median absolute deviation. JASA 88 (MAD, 1.4826).
//   - Jolliffe IT (2002). Principal Component Analysis, 2nd ed. Springer.
//   - Tukey JW (1977). Exploratory Data Analysis. Addison-Wesley (the started logarithm).
package normalize

import (
	"context"
	"errors"
	"fmt"
	"math"
	"path"
	"slices"
	"strings"
	"sync"

	"gonum.org/v1/gonum/mat"

	"github.com/cohortmix/cohortmix/cluster"
	"github.com/cohortmix/cohortmix/cluster/groupstat"
	"github.com/cohortmix/cohortmix/cohort/note"
)

// ErrOption is wrapped by errors about options; ErrData by errors about the data.
var (
	ErrOption = errors.New("normalize: invalid normalization option")
	ErrData   = errors.New("normalize: data cannot be normalized")
)

// Within is the within-participant step.
type Within int

const (
	WithinNone    Within = iota // leave features as they are
	WithinRest                  // subtract the participant's median over its quietest windows
	WithinCentre                // subtract the participant's median
	WithinRobustZ               // subtract the participant's median, divide by its MAD
	// WithinAlign turns each participant's axis means and shifts each touched feature by a
	// Device fitted jointly with the movement states (profile.FitAligned), so that what is
	// removed is the device's and not the participant's mixture; the fit here has no baseline.
	WithinAlign
)

// withinStep is what sets a within-participant step apart: one row per step, from which its
// name, its parser, its help and its behaviour in the fit all come.
type withinStep struct {
	name, help string
	baseline   bool // finds a baseline of each participant's own, applied by ApplyBaseline
	quiet      bool // the baseline is over the participant's quietest windows
	scales     bool // the baseline also divides by the participant's spread (MAD)
}

// withinSteps lists the steps in the order their help names them.
var withinSteps = []struct {
	w Within
	withinStep
}{
	{WithinAlign, withinStep{name: "align", help: "each device's rotation and offsets, fitted with the states"}},
	{WithinRest, withinStep{name: "rest", help: "each participant's median over its quietest windows subtracted", baseline: true, quiet: true}},
	{WithinCentre, withinStep{name: "centre", help: "each participant's median subtracted", baseline: true}},
	{WithinRobustZ, withinStep{name: "robust-z", help: "each participant's median subtracted and its MAD divided out", baseline: true, scales: true}},
	{WithinNone, withinStep{name: "none", help: "features as read"}},
}

func (w Within) step() withinStep {
	for _, s := range withinSteps {
		if s.w == w {
			return s.withinStep
		}
	}
	return withinStep{name: fmt.Sprintf("within(%d)", int(w))}
}

func (w Within) String() string { return w.step().name }

// WithinHelp names every within-participant step with a few words on each, for a flag's help.
func WithinHelp() string {
	var parts []string
	for _, s := range withinSteps {
		parts = append(parts, s.name+" ("+s.help+")")
	}
	return strings.Join(parts[:len(parts)-1], ", ") + " or " + parts[len(parts)-1]
}

// ParseWithin reads a within-participant step name (withinSteps).
func ParseWithin(s string) (Within, error) {
	var names []string
	for _, st := range withinSteps {
		if st.name == s {
			return st.w, nil
		}
		names = append(names, st.name)
	}
	return 0, fmt.Errorf("normalize: within-participant step %q: %w; use %s or %s", s, ErrOption, strings.Join(names[:len(names)-1], ", "), names[len(names)-1])
}

// baseline reports whether the step finds a baseline of each participant's own (rest, centre,
// robust z); none and align have none.
func (w Within) baseline() bool { return w.step().baseline }

// Scale is the cohort-wide step.
type Scale int

const (
	ScaleZ       Scale = iota // (x − mean)/s.d. over all windows
	ScaleRobustZ              // (x − median)/(1.4826·MAD) over the sample
)

func (s Scale) String() string {
	if s == ScaleRobustZ {
		return "robust-z"
	}
	return "z"
}

// ParseScale reads a cohort step name: z or robust-z.
func ParseScale(s string) (Scale, error) {
	switch s {
	case "z":
		return ScaleZ, nil
	case "robust-z":
		return ScaleRobustZ, nil
	}
	return 0, fmt.Errorf("normalize: cohort scaling %q: %w; use z or robust-z", s, ErrOption)
}

// Options sets up Fit. Zero values take the documented defaults.
type Options struct {
	Within         Within
	WithinFeatures []string // name patterns the within step touches; empty: with align every feature, otherwise those found to carry offsets (ICC ≥ OffsetICC); "*" all
	OffsetICC      float64  // 0 means 0.3
	RestShare      float64  // share of a participant's quietest windows for the rest baseline; 0 means 0.1
	Scale          Scale
	PCAComponents  int     // > 0 keeps this many components
	PCAVariance    float64 // in (0, 1]: fewest components reaching this share; 0 with PCAComponents 0 means 0.99; 1 keeps all
	NoPCA          bool
	SampleRate     float64 // share of windows used to fit robust scaling and PCA; 0 means all (≤ 1)
	Seed           uint64
	// Log takes every feature that is never below 0 on a started log scale, log(x + c), with c
	// the feature's first quartile (LogStart): above it a gain is nearly an offset and
	// intensities spread evenly from rest to vigorous movement, while readings near the
	// sensor's floor, where noise and clipping rule, are not spread apart (the started
	// logarithm of Tukey 1977). Lowest is each feature's lowest value over every window
	// (cohort.Table.Lowest) and LogStart its first quartile over a sample (LogStartOf); both are
	// required with Log. A feature whose first quartile is 0, and the columns in Axes, keep their
	// own scale.
	Log      bool
	Lowest   []float64
	LogStart []float64
	// Axes are the three columns that hold the axis means (x, y and z), which a Device turns;
	// nil when the table has none.
	Axes []int
	// Turned are the features a Device turns with the axis means (FindTurned); nil: none.
	Turned *Turned
	// Keep, when set, is shown every window of the within-step pass that Sampled(Seed, u, w,
	// KeepRate) keeps, with its within-step values; Fit.Cohort finishes them once the fit is
	// made. It spares a caller who needs another sample of normalized windows a pass.
	Keep     func(u, w int, within []float64)
	KeepRate float64
	KeepUnit func(u int) bool // when set, Keep is shown only the windows of the participants it accepts
	KeepRaw  bool             // Keep is shown the windows as read instead of their within-step values
	Workers  int              // goroutines for the passes over the blocks; 0 means one per core; never changes the result
	// Progress, when set, is told after each participant of each pass how many are done.
	Progress func(step string, done, total int)
}

// Fit is the frozen normalization.
type Fit struct {
	Features   []string
	Logged     []bool    // features taken on a log scale
	LogShift   []float64 // c in log(x + c) of each logged feature (its first quartile)
	Axes       []int     // the columns of the axis means, which a Device turns; nil: none
	Turned     *Turned   // the features a Device turns with the axis means (FindTurned); nil: none
	Within     Within
	Touched    []bool    // features the within step changes
	TouchedBy  string    // "pattern", "offset detection (ICC ≥ x)" or "all features"
	RestShare  float64   // for WithinRest
	QuietScore []int     // features whose cohort-scaled mean ranks windows from quiet to active
	QuietMid   []float64 // cohort median of each feature (for the quiet score)
	QuietScale []float64 // cohort MAD of each feature (for the quiet score)
	ScaleKind  Scale
	Center     []float64 // cohort step, per feature
	Spread     []float64
	PCA        *cluster.PCA // nil when off
	ICC        []float64    // ICC(1) of each feature, on its log scale where it has one
	ICCAfter   []float64    // ICC(1) of each feature after the within-participant step; nil in a fit read from a model
	Warnings   []note.Note  // of kind WarnWithinEverything
	// Units holds the baseline of each participant the fit was made on, in blocks order, for
	// ApplyUnit. It is not part of the frozen model: a new participant's is found from its windows.
	Units []Baseline
}

// WarnWithinEverything (in Fit.Warnings): within-participant robust z-scoring touches every
// feature, which erases the between-participant level differences that signatures rely on
// (Options.WithinFeatures restricts it).
const WarnWithinEverything note.Kind = "normalize.within-everything"

// OutDim is the number of columns Apply produces.
func (f *Fit) OutDim() int {
	if f.PCA != nil {
		_, k := f.PCA.Components.Dims()
		return k
	}
	return len(f.Features)
}

// ICC computes ICC(1) of each column, one-way random effects with participants as groups:
// (MSB − MSW)/(MSB + (n₀ − 1)·MSW), n₀ = (N − Σnᵢ²/N)/(a − 1) (Shrout & Fleiss 1979; Donner 1986).
// units holds each participant's windows × d row-major block.
func ICC(units [][]float64, d int) []float64 { return iccBlocks(SliceBlocks(units), d) }

func iccBlocks(blocks Blocks, d int) []float64 {
	acc := newICCAcc(d)
	for u := 0; u < blocks.Len(); u++ {
		acc.merge(unitICC(blocks.Block(u), d))
	}
	return acc.icc()
}

// ICCPart is one participant's share of ICC(1), from UnitICCPart; ICCSum adds them up.
type ICCPart = iccUnit

// UnitICCPart is one participant's share of ICC(1) over its windows × d block x.
func UnitICCPart(x []float64, d int) ICCPart { return unitICC(x, d) }

// ICCSum adds up participants' shares of ICC(1), in the order they are added.
type ICCSum struct{ acc *iccAcc }

// NewICCSum prepares a sum over d columns.
func NewICCSum(d int) *ICCSum { return &ICCSum{newICCAcc(d)} }

// Add adds one participant's share.
func (s *ICCSum) Add(p ICCPart) { s.acc.merge(p) }

// ICC is ICC(1) of each column over the participants added.
func (s *ICCSum) ICC() []float64 { return s.acc.icc() }

// iccAcc gathers, one participant at a time, what ICC(1) needs: each participant's size and
// means, and the pooled within sum of squares.
type iccAcc struct {
	d          int
	N, sumN2   float64
	grand, ssw []float64
	sizes      []float64
	means      [][]float64
}

func newICCAcc(d int) *iccAcc {
	return &iccAcc{d: d, grand: make([]float64, d), ssw: make([]float64, d)}
}

// iccUnit is one participant's part of ICC(1).
type iccUnit struct {
	n         int
	sum, mean []float64
	ssw       []float64
}

func unitICC(x []float64, d int) iccUnit {
	n := len(x) / d
	if n == 0 {
		return iccUnit{}
	}
	sum, mean, ssw := make([]float64, d), make([]float64, d), make([]float64, d)
	for i := 0; i < n; i++ {
		for j, v := range x[i*d : (i+1)*d] {
			sum[j] += v
		}
	}
	for j := range mean {
		mean[j] = sum[j] / float64(n)
	}
	for i := 0; i < n; i++ {
		for j, v := range x[i*d : (i+1)*d] {
			v -= mean[j]
			ssw[j] += v * v
		}
	}
	return iccUnit{n, sum, mean, ssw}
}

func (a *iccAcc) merge(p iccUnit) {
	if p.n == 0 {
		return
	}
	for j := range a.grand {
		a.grand[j] += p.sum[j]
		a.ssw[j] += p.ssw[j]
	}
	a.sizes = append(a.sizes, float64(p.n))
	a.means = append(a.means, p.mean)
	a.N += float64(p.n)
	a.sumN2 += float64(p.n * p.n)
}

func (a *iccAcc) icc() []float64 {
	d := a.d
	k := len(a.sizes)
	out := make([]float64, d)
	if k < 2 {
		for j := range out {
			out[j] = math.NaN()
		}
		return out
	}
	grand := make([]float64, d)
	for j := range grand {
		grand[j] = a.grand[j] / a.N
	}
	ssb := make([]float64, d)
	for u, mean := range a.means {
		for j := range ssb {
			dm := mean[j] - grand[j]
			ssb[j] += a.sizes[u] * dm * dm
		}
	}
	n0 := (a.N - a.sumN2/a.N) / float64(k-1)
	for j := range out {
		msb := ssb[j] / float64(k-1)
		msw := a.ssw[j] / (a.N - float64(k))
		if den := msb + (n0-1)*msw; den > 0 {
			out[j] = (msb - msw) / den
		} else {
			out[j] = math.NaN()
		}
	}
	return out
}

// Sampled reports whether window w of participant u is in the sample of the given rate: a keyed
// hash (SplitMix64, Steele, Lea & Flood 2014) of (seed, u, w) compared with the rate, so the
// sample is the same in any order and on any number of cores.
func Sampled(seed uint64, u, w int, rate float64) bool {
	if rate >= 1 {
		return true
	}
	z := seed ^ (uint64(u)+1)*0x9e3779b97f4a7c15 ^ (uint64(w)+1)*0xbf58476d1ce4e5b9
	z = (z ^ (z >> 30)) * 0xbf58476d1ce4e5b9
	z = (z ^ (z >> 27)) * 0x94d049bb133111eb
	z ^= z >> 31
	return float64(z>>11)/(1<<53) < rate
}

// Blocks gives the participants' windows one participant at a time: Block(u) is participant u's
// windows × features, row-major, and is not modified. A fit reads each block a few times, so the
// blocks may come from a file rather than memory.
type Blocks interface {
	Len() int
	Block(u int) []float64
}

// SliceBlocks is Blocks over blocks held in memory.
type SliceBlocks [][]float64

func (s SliceBlocks) Len() int              { return len(s) }
func (s SliceBlocks) Block(u int) []float64 { return s[u] }

// FitTransform fits the normalization to the units (each a windows × len(features) block) and
// returns the fit with the transformed blocks.
func FitTransform(features []string, units [][]float64, opts Options) (*Fit, [][]float64, error) {
	if opts.Log && opts.Lowest == nil {
		opts.Lowest = LowestOf(units, len(features))
	}
	if opts.Log && opts.LogStart == nil {
		opts.LogStart = LogStartOf(units, len(features))
	}
	f, err := FitBlocks(context.Background(), features, SliceBlocks(units), opts)
	if err != nil {
		return nil, nil, err
	}
	out := make([][]float64, len(units))
	for u, x := range units {
		out[u] = f.Apply(x)
	}
	return f, out, nil
}

// FitBlocks fits the normalization in passes over the blocks, holding only one participant's
// windows and the sample at a time: ICC(1) and the sample of raw windows; then the
// within-participant step per participant, with the cohort mean and s.d. merged across
// participants (Chan, Golub & LeVeque 1979) and the sample of within-step windows; then the
// robust scales and the PCA from the sample.
func FitBlocks(ctx context.Context, features []string, blocks Blocks, opts Options) (*Fit, error) {
	d := len(features)
	if d == 0 || blocks.Len() == 0 {
		return nil, fmt.Errorf("normalize: no features or no participants: %w", ErrData)
	}
	opts, err := opts.checked()
	if err != nil {
		return nil, err
	}
	f := &Fit{Features: features, Within: opts.Within, RestShare: opts.RestShare, ScaleKind: opts.Scale}
	if err := f.setScales(opts); err != nil {
		return nil, err
	}
	f.setTouched(opts)
	if opts.Within.baseline() {
		if err := f.fitBaselineRule(ctx, blocks, opts); err != nil {
			return nil, err
		}
	}
	sample, moments, err := f.withinPass(ctx, blocks, opts)
	if err != nil {
		return nil, err
	}
	if err := f.setCohortScale(sample, moments, opts); err != nil {
		return nil, err
	}
	if !opts.NoPCA {
		if err := f.fitPCA(sample, opts); err != nil {
			return nil, err
		}
	}
	return f, nil
}

// checked is the options with their defaults, or an error naming one out of its range.
func (opts Options) checked() (Options, error) {
	if opts.OffsetICC == 0 {
		opts.OffsetICC = 0.3
	}
	if opts.RestShare == 0 {
		opts.RestShare = 0.1
	}
	if opts.RestShare < 0 || opts.RestShare > 1 || opts.OffsetICC < 0 || opts.OffsetICC > 1 {
		return opts, fmt.Errorf("normalize: rest share %v, offset ICC %v: %w; both lie in (0, 1]", opts.RestShare, opts.OffsetICC, ErrOption)
	}
	if opts.SampleRate < 0 || opts.SampleRate > 1 {
		return opts, fmt.Errorf("normalize: sample rate %v: %w; use a share in (0, 1]", opts.SampleRate, ErrOption)
	}
	if opts.SampleRate == 0 {
		opts.SampleRate = 1
	}
	return opts, nil
}

// setTouched marks the features the within step touches when the options say which: none, all,
// or those a pattern names (otherwise fitBaselineRule finds them by their ICC).
func (f *Fit) setTouched(opts Options) {
	features := f.Features
	d := len(features)
	f.Touched = make([]bool, d)
	switch {
	case opts.Within == WithinNone:
		f.TouchedBy = "none"
	case len(opts.WithinFeatures) == 1 && opts.WithinFeatures[0] == "*", opts.Within == WithinAlign && len(opts.WithinFeatures) == 0:
		f.TouchedBy = "all features"
		for j := range f.Touched {
			f.Touched[j] = true
		}
	case len(opts.WithinFeatures) > 0:
		f.TouchedBy = "pattern " + fmt.Sprint(opts.WithinFeatures)
		for j, name := range features {
			for _, p := range opts.WithinFeatures {
				if ok, _ := path.Match(p, name); ok {
					f.Touched[j] = true
				}
			}
		}
	}
}

// withinPass is pass 2 (the only one without a baseline): each participant's baseline, kept for
// ApplyUnit, and the cohort step's statistics (the moments, and the ICC after the within step)
// and sample, on the within-step windows; it hands the windows opts.Keep asks for to it.
func (f *Fit) withinPass(ctx context.Context, blocks Blocks, opts Options) ([]float64, moments, error) {
	d := len(f.Features)
	var moments moments
	var sampleParts [][]float64
	if opts.Within.baseline() {
		f.Units = make([]Baseline, blocks.Len())
	}
	step := "normalizing, pass 2 of 2"
	if !opts.Within.baseline() {
		step = "normalizing"
	}
	accAfter := newICCAcc(d)
	type part2 struct {
		base         Baseline
		icc          iccUnit
		mom          unitMoments
		sample, kept []float64
		keptAt       []int
	}
	var ys sync.Pool // within-step windows, one buffer per worker at a time
	err := EachBlock(ctx, blocks, opts.Workers, func(u int, x []float64) (part2, error) {
		var p part2
		if f.Units != nil {
			p.base = f.Baseline(x)
		}
		yp, _ := ys.Get().(*[]float64)
		if yp == nil {
			yp = new([]float64)
		}
		defer ys.Put(yp)
		y := f.withinInto(*yp, x, p.base)
		*yp = y
		p.icc = unitICC(y, d)
		p.mom = momentsFrom(p.icc, d)
		p.sample = appendSampled(nil, y, d, u, opts.Seed, opts.SampleRate)
		if opts.Keep != nil && (opts.KeepUnit == nil || opts.KeepUnit(u)) {
			from := y
			if opts.KeepRaw {
				from = x
			}
			for w := 0; w*d < len(y); w++ {
				if Sampled(opts.Seed, u, w, opts.KeepRate) {
					p.kept = append(p.kept, from[w*d:(w+1)*d]...)
					p.keptAt = append(p.keptAt, w)
				}
			}
		}
		return p, nil
	}, func(u int, p part2) error {
		if f.Units != nil {
			f.Units[u] = p.base
		}
		accAfter.merge(p.icc)
		moments.merge(p.mom)
		sampleParts = append(sampleParts, p.sample)
		for i, w := range p.keptAt {
			opts.Keep(u, w, p.kept[i*d:(i+1)*d])
		}
		if opts.Progress != nil {
			opts.Progress(step, u+1, blocks.Len())
		}
		return nil
	})
	if err != nil {
		return nil, moments, err
	}
	sample := slices.Concat(sampleParts...)
	f.ICCAfter = accAfter.icc()
	if !opts.Within.baseline() {
		f.ICC = f.ICCAfter // nothing happened between the two; with align, the states' fit says what the devices took
	}
	return sample, moments, nil
}

// setCohortScale sets the cohort step's centre and spread (z: mean and s.d.; robust-z: median and
// MAD), refusing a feature with no spread.
func (f *Fit) setCohortScale(sample []float64, moments moments, opts Options) error {
	d, features := len(f.Features), f.Features
	switch opts.Scale {
	case ScaleZ:
		f.Center, f.Spread = moments.meanSD()
	case ScaleRobustZ:
		f.Center, f.Spread = medianMAD(append([]float64(nil), sample...), d)
		for j := range f.Spread {
			f.Spread[j] *= 1.4826 // consistent with the s.d. under normality
		}
	default:
		return fmt.Errorf("normalize: cohort scaling %d: %w", opts.Scale, ErrOption)
	}
	for j, s := range f.Spread {
		if !(s > 0) {
			return fmt.Errorf("normalize: feature %s has no spread across the cohort after the within-participant step: %w; leave it out with cohort.ReadOptions.Features or use normalize.Options.Within none", features[j], ErrData)
		}
	}
	return nil
}

// fitPCA fits the PCA on the sample of scaled windows.
func (f *Fit) fitPCA(sample []float64, opts Options) error {
	d := len(f.Features)
	f.scale(sample)
	if len(sample)/d < 2 {
		return fmt.Errorf("normalize: the sample has %d windows: %w; raise the sample size", len(sample)/d, ErrData)
	}
	target := opts.PCAVariance
	if opts.PCAComponents == 0 && target == 0 {
		target = 0.99
	}
	pca, err := cluster.FitPCA(mat.NewDense(len(sample)/d, d, sample), cluster.PCAOptions{Components: opts.PCAComponents, VarianceTarget: target})
	if err != nil {
		return fmt.Errorf("normalize: %w", err)
	}
	f.PCA = pca
	return nil
}

// fitBaselineRule is pass 1 of a within step with a baseline: ICC(1) of each feature, the
// features the step touches when no pattern names them (ICC ≥ OffsetICC), and the cohort
// medians and MADs that the quiet score of the rest baseline is made of.
func (f *Fit) fitBaselineRule(ctx context.Context, blocks Blocks, opts Options) error {
	d := len(f.Features)
	// Pass 1: ICC(1) and the sample of windows, on the features' scales.
	acc := newICCAcc(d)
	var rawParts [][]float64 // joined once at the end: growing one slice would copy it again and again
	type part1 struct {
		icc    iccUnit
		sample []float64
	}
	var logs sync.Pool // windows on the features' scales, one buffer per worker at a time
	err := EachBlock(ctx, blocks, opts.Workers, func(u int, x []float64) (part1, error) {
		lp, _ := logs.Get().(*[]float64)
		if lp == nil {
			lp = new([]float64)
		}
		defer logs.Put(lp)
		x = f.scaleInto(lp, x)
		return part1{unitICC(x, d), appendSampled(nil, x, d, u, opts.Seed, opts.SampleRate)}, nil
	}, func(u int, p part1) error {
		acc.merge(p.icc)
		rawParts = append(rawParts, p.sample)
		if opts.Progress != nil {
			opts.Progress("normalizing, pass 1 of 2", u+1, blocks.Len())
		}
		return nil
	})
	if err != nil {
		return err
	}
	f.ICC = acc.icc()
	if f.TouchedBy == "" {
		f.TouchedBy = fmt.Sprintf("offset detection (ICC ≥ %.2f)", opts.OffsetICC)
		for j, v := range f.ICC {
			f.Touched[j] = v >= opts.OffsetICC
		}
	}
	all := true
	for _, t := range f.Touched {
		all = all && t
	}
	if opts.Within == WithinRobustZ && all {
		f.Warnings = append(f.Warnings, note.Note{Kind: WarnWithinEverything, Option: "normalize.Options.WithinFeatures"})
	}
	// The quiet score ranks a participant's windows by the cohort-scaled mean of the untouched
	// features (all features when every one is touched).
	f.QuietMid, f.QuietScale = medianMAD(slices.Concat(rawParts...), d)
	rawParts = nil
	for j := range f.Features {
		if !f.Touched[j] || all {
			f.QuietScore = append(f.QuietScore, j)
		}
	}
	return nil
}

// SampleRows passes over the blocks, transforming each with tf when given, and returns the
// windows (row-major, d values each) of the transformed blocks that Sampled keeps at rate.
func SampleRows(blocks Blocks, d int, seed uint64, rate float64, tf func([]float64) []float64) []float64 {
	var rows []float64
	for u := 0; u < blocks.Len(); u++ {
		x := blocks.Block(u)
		if tf != nil {
			x = tf(x)
		}
		rows = appendSampled(rows, x, d, u, seed, rate)
	}
	return rows
}

// appendSampled appends the windows of participant u's block x that Sampled keeps at rate.
func appendSampled(rows, x []float64, d, u int, seed uint64, rate float64) []float64 {
	if rows == nil && len(x) > 0 { // room for the expected count and three of its s.d.
		n := float64(len(x) / d)
		rows = make([]float64, 0, d*int(n*rate+3*math.Sqrt(n*rate*(1-rate))+1))
	}
	for w := 0; w*d < len(x); w++ {
		if Sampled(seed, u, w, rate) {
			rows = append(rows, x[w*d:(w+1)*d]...)
		}
	}
	return rows
}

// moments merges per-participant means and sums of squares into cohort ones (Chan, Golub &
// LeVeque 1979, the pairwise update), which keeps the s.d. accurate in one pass.
type moments struct {
	n        float64
	mean, m2 []float64
}

// unitMoments is one participant's size, means and sums of squared deviations.
type unitMoments struct {
	n      float64
	mu, ss []float64
}

// momentsFrom is a participant's count, column means and sums of squared deviations, taken from
// its part of ICC(1), which holds the same sums (row by row, one running sum per column, each
// summed in window order).
func momentsFrom(u iccUnit, d int) unitMoments {
	if u.n == 0 {
		return unitMoments{mu: make([]float64, d), ss: make([]float64, d)}
	}
	return unitMoments{n: float64(u.n), mu: u.mean, ss: u.ssw}
}

func (m *moments) merge(p unitMoments) {
	if p.n == 0 {
		return
	}
	d := len(p.mu)
	if m.mean == nil {
		m.mean, m.m2 = make([]float64, d), make([]float64, d)
	}
	for j := 0; j < d; j++ {
		delta := p.mu[j] - m.mean[j]
		tot := m.n + p.n
		m.mean[j] += delta * p.n / tot
		m.m2[j] += p.ss[j] + delta*delta*m.n*p.n/tot
	}
	m.n += p.n
}

// meanSD is the mean and the population s.d. (as sklearn.preprocessing.StandardScaler).
func (m *moments) meanSD() ([]float64, []float64) {
	sd := make([]float64, len(m.m2))
	for j, v := range m.m2 {
		sd[j] = math.Sqrt(v / m.n)
	}
	return m.mean, sd
}

// Baseline is one participant's within-step: each feature's centre and scale (0 and 1 for the
// features the step leaves alone).
type Baseline struct {
	Center, Scale []float64
}

// Apply transforms one new participant's windows with the frozen fit.
func (f *Fit) Apply(x []float64) []float64 { return f.ApplyBaseline(x, f.Baseline(x)) }

// ApplyUnit transforms the windows of participant u of the blocks the fit was made on, with the
// baseline found for it then; a fit without Units (one read back from a model) finds it anew,
// as Apply does.
func (f *Fit) ApplyUnit(u int, x []float64) []float64 { return f.ApplyUnitInto(nil, u, x) }

// ApplyUnitInto is ApplyUnit writing into dst, grown when it is too short, and returns the
// result, so that a caller can reuse one buffer for every participant.
func (f *Fit) ApplyUnitInto(dst []float64, u int, x []float64) []float64 {
	if f.Units == nil {
		return f.ApplyBaselineInto(dst, x, f.Baseline(x))
	}
	return f.ApplyBaselineInto(dst, x, f.Units[u])
}

// ApplyBaseline transforms a participant's windows with a baseline found for them.
func (f *Fit) ApplyBaseline(x []float64, b Baseline) []float64 {
	return f.ApplyBaselineInto(nil, x, b)
}

// applyRows is how many windows ApplyBaselineInto scales at a time before projecting them.
const applyRows = 256

// ApplyBaselineInto is ApplyBaseline writing into dst (grown when too short). It does the
// within-participant and cohort steps in one go, a few hundred windows at a time, with the same
// arithmetic as withinInto and Cohort: an untouched feature has centre 0 and scale 1, which leave
// it exactly as it was, so the result is bit for bit theirs.
func (f *Fit) ApplyBaselineInto(dst, x []float64, b Baseline) []float64 {
	return f.applyInto(dst, x, b, Device{}, false)
}

// applyInto is ApplyBaselineInto with a Device: each window is turned and put on its log
// scales (unless logged says it is already) first, and the device's offsets are taken from the
// output last.
func (f *Fit) applyInto(dst, x []float64, b Baseline, dev Device, logged bool) []float64 {
	d := len(f.Features)
	n := len(x) / d
	k := f.OutDim()
	dst = slices.Grow(dst[:0], n*k)[:n*k]
	r := f.newRowScaler(b, dev, logged, min(n, applyRows))
	defer r.release()
	if f.PCA == nil {
		for i := 0; i < n; i += applyRows {
			m := min(applyRows, n-i)
			r.rows(dst[i*d:(i+m)*d], x[i*d:(i+m)*d])
		}
	} else {
		bp := scratch(min(n, applyRows) * d)
		defer scratchPool.Put(bp)
		block := *bp
		for i := 0; i < n; i += applyRows {
			m := min(applyRows, n-i)
			r.rows(block, x[i*d:(i+m)*d])
			f.PCA.TransformRows(dst[i*k:(i+m)*k], block[:m*d])
		}
	}
	dev.SubtractOffset(dst, k)
	return dst
}

// ScaledInto is ApplyDeviceInto up to the cohort scaling: each window turned, on its log
// scales and scaled, in the features (n × features, into dst grown when too short), before the
// PCA projection and without the device's offsets, which live in the projected space.
func (f *Fit) ScaledInto(dst, x []float64, dev Device) []float64 {
	d := len(f.Features)
	n := len(x) / d
	dst = slices.Grow(dst[:0], n*d)[:n*d]
	r := f.newRowScaler(Baseline{}, dev, false, min(n, applyRows))
	defer r.release()
	for i := 0; i < n; i += applyRows {
		m := min(applyRows, n-i)
		r.rows(dst[i*d:(i+m)*d], x[i*d:(i+m)*d])
	}
	return dst
}

// rowScaler takes windows, a block at a time, through the within-participant and cohort
// scaling: turned and logged first when the fit and device ask for it.
type rowScaler struct {
	f             *Fit
	center, scale []float64
	tmp           *[]float64 // from scratchPool while prep
	inv           []float64  // Fit.inverseSpread
	dev           Device
	logCols       []int // the columns to put on their log scales once turned
	prep          bool
}

// newRowScaler scales rows windows at a time; logged says they come from LogInto.
func (f *Fit) newRowScaler(b Baseline, dev Device, logged bool, rows int) *rowScaler {
	d := len(f.Features)
	r := &rowScaler{f: f, center: make([]float64, d), scale: make([]float64, d), dev: dev}
	for j := range r.scale {
		r.scale[j] = 1
		if f.Within.baseline() && f.Touched[j] {
			r.center[j], r.scale[j] = b.Center[j], b.Scale[j]
		}
	}
	r.inv = f.inverseSpread()
	r.logCols = f.loggedAll()
	if logged {
		r.logCols = f.loggedColumns(true) // the rest were logged by LogInto
	}
	r.prep = len(r.logCols) > 0 || (dev.moves() && f.Axes != nil)
	if r.prep {
		r.tmp = scratch(rows * d)
	}
	return r
}

// release gives the scaler's scratch block back to the pool; the scaler is not used after.
func (r *rowScaler) release() {
	if r.tmp != nil {
		scratchPool.Put(r.tmp)
		r.tmp = nil
	}
}

// scratchPool holds blocks of windows that applyInto and the rowScaler work in, so that the
// align step's many small calls (a participant's sampled windows, round after round) do not
// each allocate them.
var scratchPool = sync.Pool{New: func() any { return new([]float64) }}

// scratch is a block of n values from scratchPool, with whatever values it held.
func scratch(n int) *[]float64 {
	p := scratchPool.Get().(*[]float64)
	if cap(*p) < n {
		*p = make([]float64, n)
	}
	*p = (*p)[:n]
	return p
}

// rows scales the windows of x into y (both rows × features).
func (r *rowScaler) rows(y, x []float64) {
	f, d := r.f, len(r.f.Features)
	if r.prep {
		t := (*r.tmp)[:len(x)]
		copy(t, x)
		if r.dev.moves() && f.Axes != nil {
			f.rotateRows(t, r.dev)
		}
		f.logColumns(t, r.logCols)
		x = t
	}
	center, scale, inv := r.center, r.scale, r.inv
	if !f.Within.baseline() {
		// No baseline: the cohort step alone.
		for i := 0; i+d <= len(x); i += d {
			xi, yi := x[i:i+d], y[i:i+d]
			for j, v := range xi {
				yi[j] = (v - f.Center[j]) * inv[j]
			}
		}
		return
	}
	for i := 0; i+d <= len(x); i += d {
		xi, yi := x[i:i+d], y[i:i+d]
		for j, v := range xi {
			yi[j] = ((v-center[j])/scale[j] - f.Center[j]) * inv[j]
		}
	}
}

// Cohort applies the cohort step (scaling, then the PCA projection) to windows that had the
// within-participant step, in place when there is no projection.
func (f *Fit) Cohort(y []float64) []float64 {
	f.scale(y)
	if f.PCA != nil {
		y = f.project(y)
	}
	return y
}

// Baseline finds a participant's within-step baseline from its windows: the median of each
// touched feature over its quietest windows (rest) or all windows, and for robust z the MAD.
func (f *Fit) Baseline(x []float64) Baseline {
	d := len(f.Features)
	n := len(x) / d
	b := Baseline{Center: make([]float64, d), Scale: make([]float64, d)}
	for j := range b.Scale {
		b.Scale[j] = 1
	}
	if !f.Within.baseline() || n == 0 {
		return b
	}
	if f.anyLogged() {
		var buf []float64
		x = f.scaleInto(&buf, x)
	}
	var rows []int
	if f.Within.step().quiet {
		rows = f.quietest(x, n)
	}
	count := n
	if rows != nil {
		count = len(rows)
	}
	buf := make([]float64, 0, count)
	for j := 0; j < d; j++ {
		if !f.Touched[j] {
			continue
		}
		buf = buf[:0]
		if rows != nil {
			for _, i := range rows {
				buf = append(buf, x[i*d+j])
			}
		} else {
			for i := 0; i < n; i++ {
				buf = append(buf, x[i*d+j])
			}
		}
		med := median(buf)
		b.Center[j] = med
		if f.Within.step().scales {
			for k := range buf {
				buf[k] = math.Abs(buf[k] - med)
			}
			if mad := median(buf) * 1.4826; mad > 0 {
				b.Scale[j] = mad
			}
		}
	}
	return b
}

// withinInto applies the within-participant step with baseline b, writing into dst (grown when
// too short; it may be nil) and returning it.
func (f *Fit) withinInto(dst, x []float64, b Baseline) []float64 {
	d := len(f.Features)
	y := append(dst[:0], x...)
	f.logRows(y)
	if !f.Within.baseline() {
		return y
	}
	for i := 0; i+d <= len(y); i += d {
		for j, t := range f.Touched {
			if t {
				y[i+j] = (y[i+j] - b.Center[j]) / b.Scale[j]
			}
		}
	}
	return y
}

// quietest returns the rows of the participant's RestShare quietest windows (at least one).
func (f *Fit) quietest(x []float64, n int) []int {
	d := len(f.Features)
	score := make([]float64, n)
	for i := 0; i < n; i++ {
		var s float64
		for _, j := range f.QuietScore {
			sc := f.QuietScale[j]
			if !(sc > 0) {
				sc = 1
			}
			s += (x[i*d+j] - f.QuietMid[j]) / sc
		}
		score[i] = s
	}
	// The m lowest scores, ties taken in window order: what a stable sort's first m would be.
	m := max(1, int(math.Ceil(f.RestShare*float64(n))))
	cut := groupstat.SelectKth(append([]float64(nil), score...), m-1)
	idx := make([]int, 0, m)
	for i, s := range score {
		if s < cut {
			idx = append(idx, i)
		}
	}
	for i, s := range score {
		if len(idx) == m {
			break
		}
		if s == cut {
			idx = append(idx, i)
		}
	}
	return idx
}

// inverseSpread is 1/Spread of each feature: the cohort step multiplies by it, which is quicker
// than dividing, in Fit.scale and the rowScaler alike, so both give the same bits.
func (f *Fit) inverseSpread() []float64 {
	inv := make([]float64, len(f.Spread))
	for j, s := range f.Spread {
		inv[j] = 1 / s
	}
	return inv
}

func (f *Fit) scale(x []float64) {
	d := len(f.Features)
	inv := f.inverseSpread()
	for i := 0; i+d <= len(x); i += d {
		for j := 0; j < d; j++ {
			x[i+j] = (x[i+j] - f.Center[j]) * inv[j]
		}
	}
}

func (f *Fit) project(x []float64) []float64 {
	d := len(f.Features)
	k := f.OutDim()
	n := len(x) / d
	y := make([]float64, n*k)
	f.PCA.TransformRows(y, x)
	return y
}

// medianMAD returns each column's median and median absolute deviation of row-major rows
// (the rows are reordered).
func medianMAD(rows []float64, d int) ([]float64, []float64) {
	n := len(rows) / d
	col := make([]float64, n)
	med := make([]float64, d)
	mad := make([]float64, d)
	for j := 0; j < d; j++ {
		for i := 0; i < n; i++ {
			col[i] = rows[i*d+j]
		}
		med[j] = median(col)
		for i := range col {
			col[i] = math.Abs(col[i] - med[j])
		}
		mad[j] = median(col)
	}
	return med, mad
}

// median sorts xs in place; NaN when empty.
func median(xs []float64) float64 { return groupstat.Median(xs) }

// UnitKey is a participant's (or participant-wave's) key for sampling: FNV-1a of its id and
// wave, so that a sample depends on who the participant is, not on where it stands in a table.
func UnitKey(id, wave string) uint64 {
	z := uint64(0xcbf29ce484222325)
	for _, s := range []string{id, "\x00", wave} {
		for i := 0; i < len(s); i++ {
			z = (z ^ uint64(s[i])) * 0x100000001b3
		}
	}
	return z
}

// UnitSampled reports whether the participant with this key (UnitKey) is in a sample of
// participants of the given rate, by a keyed hash (SplitMix64) of the seed and the key.
func UnitSampled(seed, key uint64, rate float64) bool { return Sampled(seed, int(key>>1), -1, rate) }

// WindowSampled reports whether window w of the participant with this key (UnitKey) is in a
// sample of windows of the given rate.
func WindowSampled(seed, key uint64, w int, rate float64) bool {
	return Sampled(seed^key, 0, w, rate)
}
