// Package synth invents accelerometer cohorts with planted structure, for the demo, for tests and
// for benchmarks. Everything it writes is synthetic: no real person's data is in it.
//
// The scenario: an invented occupational study in which adults wear a wrist device over working
// days, summarized in one-minute windows. Each window comes from one of five movement states
// (lying, sitting, standing, walking, brisk activity); each participant belongs to one of a few
// planted groups that differ in how their time divides among the states and in how long their
// bouts last. Each device sits on the wrist at its own angle (an offset on the axis means) and
// participants vary around their group's mixture, so grouping them is not trivial.
package synth

import (
	"bufio"
	"compress/gzip"
	"fmt"
	"io"
	"math"
	"math/rand/v2"
	"os"
	"strconv"
	"strings"
	"time"

	"github.com/parquet-go/parquet-go"
)

// Options sets up a cohort. Zero values take the documented defaults.
type Options struct {
	Participants int     // 0 means 150
	Windows      int     // windows per participant; 0 means 1,000
	Features     int     // 12 or 24; 0 means 12
	Groups       int     // planted groups, 2…4; 0 means 3
	Seed         uint64  // fixes everything
	Offset       float64 // s.d. of the per-device offset on the axis means, in g; 0 means 0.35 (negative: none)
	Spread       float64 // Dirichlet concentration of participants around their group; 0 means 60 (smaller: more spread)
	Times        bool    // write ISO-8601 times in the window column instead of integers
	Labels       bool    // add an activity column with the true state of each window
	Waves        bool    // add a wave column ("1")
	GroupSet     []int   // which planted group profiles (0…3) appear; empty means the first Groups
	IDPrefix     string  // participant ids are IDPrefix + number; "" means "P"
	FirstID      int     // number of the first participant
	// Scenario, when not 0, draws the cohort from that member of the scenario family
	// (DrawScenario) instead of the demo's scenario: its states, groups and nuisance are the
	// member's own, and Groups, Offset, Spread and GroupSet are not used. Features then
	// defaults to 24.
	Scenario uint64
	// Family, with Scenario, draws that member of another family (DrawFamily); "" is the wrist
	// family of DrawScenario.
	Family Family
	// Design, when set, is the scenario to draw the cohort from (a member of the family
	// changed by hand, say); it takes the place of Scenario.
	Design *Scenario
}

// design is the scenario the options draw from, or nil for the demo's.
func (o Options) design() *Scenario {
	if o.Design != nil {
		return o.Design
	}
	if o.Scenario != 0 {
		sc, err := DrawFamily(o.Family, o.Scenario)
		if err != nil {
			return nil
		}
		return &sc
	}
	return nil
}

// featureNames are the columns a cohort holds: the count-data design's, or those of the number
// of features asked for.
func (o Options) featureNames() []string {
	if sc := o.design(); sc != nil && sc.Count != nil {
		return sc.Count.Features
	}
	return FeatureNames(o.Features)
}

// times tells whether the window column holds times: asked for, or a count-data design's days.
func (o Options) times() bool {
	if sc := o.design(); sc != nil && sc.Count != nil {
		return true
	}
	return o.Times
}

func (o Options) withDefaults() Options {
	if o.Participants == 0 {
		o.Participants = 150
	}
	if o.Windows == 0 {
		o.Windows = 1000
	}
	if o.Features == 0 {
		o.Features = 12
		if o.Scenario != 0 || o.Design != nil {
			o.Features = 24
		}
	}
	if o.Groups == 0 {
		o.Groups = 3
	}
	if o.Offset == 0 {
		o.Offset = 0.35
	} else if o.Offset < 0 {
		o.Offset = 0
	}
	if o.Spread == 0 {
		o.Spread = 60
	}
	if o.IDPrefix == "" {
		o.IDPrefix = "P"
	}
	return o
}

// StateNames are the planted movement states.
var StateNames = []string{"lying", "sitting", "standing", "walking", "brisk"}

// groupMix is each planted group's mean share of time in the five states, and groupBout the
// mean bout length (windows) per state.
var groupMix = [][]float64{
	{0.30, 0.48, 0.12, 0.08, 0.02}, // mostly seated
	{0.28, 0.14, 0.36, 0.19, 0.03}, // on their feet
	{0.30, 0.22, 0.14, 0.20, 0.14}, // mixed with brisk activity
	{0.55, 0.20, 0.10, 0.10, 0.05}, // long rest
}

var groupBout = [][]float64{
	{40, 25, 6, 4, 3},
	{40, 8, 12, 8, 3},
	{40, 12, 6, 10, 8},
	{60, 15, 5, 4, 3},
}

// Base features: axis means (g), axis s.d. (g), vector-magnitude mean, s.d. and peak (g),
// dominant frequency (Hz), low- and high-band power.
var baseNames = []string{"mean_x", "mean_y", "mean_z", "sd_x", "sd_y", "sd_z", "vm_mean", "vm_sd", "vm_peak", "dom_freq", "power_low", "power_high"}

var extraNames = []string{"vm_p10", "vm_p50", "vm_p90", "vm_mad", "cor_xy", "cor_xz", "cor_yz", "jerk_mean", "zero_cross", "spec_entropy", "tilt_deg", "vm_range"}

// stateProto is each state's mean of the base features, and stateNoise their within-state s.d.
var stateProto = [][]float64{
	{0.05, -0.10, -0.95, 0.010, 0.010, 0.010, 1.00, 0.010, 1.03, 0.2, 0.02, 0.01}, // lying
	{-0.55, 0.10, -0.70, 0.040, 0.040, 0.040, 1.00, 0.040, 1.12, 0.6, 0.10, 0.03}, // sitting
	{-0.90, 0.25, -0.20, 0.080, 0.070, 0.060, 1.01, 0.080, 1.25, 1.0, 0.25, 0.08}, // standing
	{-0.80, 0.35, -0.10, 0.300, 0.250, 0.220, 1.08, 0.300, 1.90, 1.9, 0.90, 0.45}, // walking
	{-0.70, 0.30, -0.05, 0.650, 0.550, 0.500, 1.25, 0.650, 3.10, 2.8, 1.60, 1.30}, // brisk
}

var stateNoise = []float64{0.08, 0.08, 0.08, 0.02, 0.02, 0.02, 0.01, 0.02, 0.08, 0.15, 0.05, 0.04}

// FeatureNames lists the feature columns for a number of features (12 or 24).
func FeatureNames(features int) []string {
	if features > 12 {
		return append(append([]string(nil), baseNames...), extraNames...)
	}
	return baseNames
}

// Truth is a participant's planted group.
type Truth struct {
	ID     string
	Group  int
	Shares []float64 // realized share of its windows in each planted state
}

// stateNames are the labels of the planted states of a cohort.
func (o Options) stateNames() []string {
	sc := o.design()
	if sc == nil {
		return StateNames
	}
	names := make([]string, len(sc.States))
	for i, s := range sc.States {
		names[i] = s.Name
	}
	if sc.Count != nil {
		names = append(names, sc.Count.Sleep.Name)
	}
	return names
}

// Write writes a cohort as CSV to w (gzip when gz) and returns the planted groups.
func Write(w io.Writer, opts Options, gz bool) ([]Truth, error) {
	opts = opts.withDefaults()
	if err := opts.check(); err != nil {
		return nil, err
	}
	var out io.Writer = w
	var zw *gzip.Writer
	if gz {
		zw = gzip.NewWriter(w)
		out = zw
	}
	bw := bufio.NewWriterSize(out, 1<<20)
	names := opts.featureNames()
	times := opts.times()
	bw.WriteString("participant")
	if opts.Waves {
		bw.WriteString(",wave")
	}
	bw.WriteString(",window")
	for _, n := range names {
		bw.WriteString("," + n)
	}
	if opts.Labels {
		bw.WriteString(",activity")
	}
	bw.WriteString("\n")
	start := time.Date(2026, 3, 2, 0, 0, 0, 0, time.UTC)
	buf := make([]byte, 0, 512)
	stateNames := opts.stateNames()
	truth, err := generate(opts, func(id string, wi int, feat []float64, state int) error {
		buf = buf[:0]
		buf = append(buf, id...)
		if opts.Waves {
			buf = append(buf, ",1"...)
		}
		buf = append(buf, ',')
		if times {
			buf = start.Add(time.Duration(wi)*time.Minute).AppendFormat(buf, "2006-01-02T15:04:05")
		} else {
			buf = strconv.AppendInt(buf, int64(wi), 10)
		}
		for _, v := range feat {
			buf = append(buf, ',')
			buf = strconv.AppendFloat(buf, v, 'f', 4, 64)
		}
		if opts.Labels {
			buf = append(buf, ',')
			buf = append(buf, stateNames[state]...)
		}
		buf = append(buf, '\n')
		_, err := bw.Write(buf)
		return err
	})
	if err != nil {
		return nil, err
	}
	if err := bw.Flush(); err != nil {
		return nil, err
	}
	if zw != nil {
		if err := zw.Close(); err != nil {
			return nil, err
		}
	}
	return truth, nil
}

// WriteParquet writes the same cohort as a flat Parquet file (github.com/parquet-go/parquet-go):
// text participant (and activity), INT64 window, DOUBLE features rounded as in the CSV.
func WriteParquet(w io.Writer, opts Options) ([]Truth, error) {
	opts = opts.withDefaults()
	if err := opts.check(); err != nil {
		return nil, err
	}
	names := opts.featureNames()
	group := parquet.Group{"participant": parquet.String(), "window": parquet.Int(64)}
	if opts.Waves {
		group["wave"] = parquet.String()
	}
	if opts.Labels {
		group["activity"] = parquet.String()
	}
	for _, n := range names {
		group[n] = parquet.Leaf(parquet.DoubleType)
	}
	schema := parquet.NewSchema("cohort", group)
	col := map[string]int{}
	for i, path := range schema.Columns() {
		col[path[0]] = i
	}
	pw := parquet.NewWriter(w, schema)
	stateNames := opts.stateNames()
	batch := make([]parquet.Row, 0, 4096)
	flush := func() error {
		if _, err := pw.WriteRows(batch); err != nil {
			return err
		}
		batch = batch[:0]
		return nil
	}
	truth, err := generate(opts, func(id string, wi int, feat []float64, state int) error {
		row := make(parquet.Row, len(col))
		row[col["participant"]] = parquet.ValueOf(id).Level(0, 0, col["participant"])
		row[col["window"]] = parquet.ValueOf(int64(wi)).Level(0, 0, col["window"])
		if opts.Waves {
			row[col["wave"]] = parquet.ValueOf("1").Level(0, 0, col["wave"])
		}
		if opts.Labels {
			row[col["activity"]] = parquet.ValueOf(stateNames[state]).Level(0, 0, col["activity"])
		}
		for j, n := range names {
			v := math.Round(feat[j]*1e4) / 1e4
			row[col[n]] = parquet.ValueOf(v).Level(0, 0, col[n])
		}
		batch = append(batch, row)
		if len(batch) == cap(batch) {
			return flush()
		}
		return nil
	})
	if err != nil {
		return nil, err
	}
	if err := flush(); err != nil {
		return nil, err
	}
	return truth, pw.Close()
}

func (opts Options) check() error {
	if opts.Scenario != 0 && opts.Design == nil {
		if _, err := DrawFamily(opts.Family, opts.Scenario); err != nil {
			return err
		}
	}
	if opts.Features != 12 && opts.Features != 24 {
		return fmt.Errorf("synth: %d features: choose 12 or 24", opts.Features)
	}
	if opts.design() == nil && (opts.Groups < 2 || opts.Groups > len(groupMix)) {
		return fmt.Errorf("synth: %d groups: choose 2 to %d", opts.Groups, len(groupMix))
	}
	for _, g := range opts.GroupSet {
		if g < 0 || g >= len(groupMix) {
			return fmt.Errorf("synth: planted group %d: choose 0 to %d", g, len(groupMix)-1)
		}
	}
	if opts.Participants < 1 || opts.Windows < 1 {
		return fmt.Errorf("synth: %d participants × %d windows: both must be ≥ 1", opts.Participants, opts.Windows)
	}
	return nil
}

// generate invents the cohort participant by participant, handing each window to emit.
func generate(opts Options, emit func(id string, window int, feat []float64, state int) error) ([]Truth, error) {
	if sc := opts.design(); sc != nil {
		return sc.generate(opts, emit)
	}
	truth := make([]Truth, opts.Participants)
	feat := make([]float64, len(FeatureNames(opts.Features)))
	for p := 0; p < opts.Participants; p++ {
		rng := rand.New(rand.NewPCG(opts.Seed, uint64(opts.FirstID+p)))
		g := (opts.FirstID + p) % opts.Groups
		if len(opts.GroupSet) > 0 {
			g = opts.GroupSet[(opts.FirstID+p)%len(opts.GroupSet)]
		}
		id := opts.IDPrefix + strconv.Itoa(opts.FirstID+p+1)
		truth[p] = Truth{ID: id, Group: g, Shares: make([]float64, len(StateNames))}
		mix := dirichlet(rng, groupMix[g], opts.Spread)
		offset := []float64{rng.NormFloat64() * opts.Offset, rng.NormFloat64() * opts.Offset, rng.NormFloat64() * opts.Offset}
		gain := 1 + rng.NormFloat64()*0.02 // small calibration error on magnitudes
		state, left := 0, 0
		for wi := 0; wi < opts.Windows; wi++ {
			if left == 0 {
				state = pick(rng, mix, state)
				left = 1 + int(rng.ExpFloat64()*(groupBout[g][state]-1)+0.5)
			}
			left--
			window(rng, state, offset, gain, feat)
			truth[p].Shares[state] += 1 / float64(opts.Windows)
			if err := emit(id, wi, feat, state); err != nil {
				return nil, err
			}
		}
	}
	return truth, nil
}

// WriteFile writes a cohort to path (gzip when it ends in .gz) and the truth beside it.
func WriteFile(path string, opts Options) ([]Truth, error) {
	f, err := os.Create(path)
	if err != nil {
		return nil, err
	}
	var truth []Truth
	if strings.HasSuffix(path, ".parquet") {
		truth, err = WriteParquet(f, opts)
	} else {
		truth, err = Write(f, opts, strings.HasSuffix(path, ".gz"))
	}
	if cerr := f.Close(); err == nil {
		err = cerr
	}
	return truth, err
}

// window fills feat with one window of the state, seen through the device's offset and gain.
func window(rng *rand.Rand, state int, offset []float64, gain float64, feat []float64) {
	p := stateProto[state]
	for j := 0; j < 12; j++ {
		v := p[j] + rng.NormFloat64()*stateNoise[j]
		switch {
		case j < 3:
			v += offset[j]
		case j >= 3 && j < 9:
			v = math.Max(0.001, v) * gain
		default:
			v = math.Max(0, v)
		}
		feat[j] = v
	}
	if len(feat) > 12 {
		vm, sd := feat[6], feat[7]
		feat[12] = vm - 1.2*sd + rng.NormFloat64()*0.01
		feat[13] = vm + rng.NormFloat64()*0.01
		feat[14] = vm + 1.2*sd + rng.NormFloat64()*0.01
		feat[15] = 0.67*sd + rng.NormFloat64()*0.005
		feat[16] = math.Tanh(feat[0]*feat[1]*2) + rng.NormFloat64()*0.05
		feat[17] = math.Tanh(feat[0]*feat[2]*2) + rng.NormFloat64()*0.05
		feat[18] = math.Tanh(feat[1]*feat[2]*2) + rng.NormFloat64()*0.05
		feat[19] = math.Max(0, sd*3+rng.NormFloat64()*0.03)
		feat[20] = math.Max(0, feat[9]*60+rng.NormFloat64()*5)
		feat[21] = math.Max(0, 1.5-feat[11]*0.5+rng.NormFloat64()*0.1)
		feat[22] = math.Atan2(feat[2], math.Hypot(feat[0], feat[1]))*180/math.Pi + rng.NormFloat64()*2
		feat[23] = math.Max(0, feat[8]-feat[12]+rng.NormFloat64()*0.02)
	}
}

// pick draws the next state from the mixture, never repeating the current one (bouts end there).
func pick(rng *rand.Rand, mix []float64, cur int) int {
	for {
		r := rng.Float64()
		var acc float64
		s := len(mix) - 1
		for i, m := range mix {
			acc += m
			if r < acc {
				s = i
				break
			}
		}
		if s != cur || len(mix) == 1 {
			return s
		}
	}
}

// dirichlet draws a mixture around mean with concentration c (Gamma(c·mᵢ) draws, normalized).
func dirichlet(rng *rand.Rand, mean []float64, c float64) []float64 {
	out := make([]float64, len(mean))
	var s float64
	for i, m := range mean {
		out[i] = gammaDraw(rng, c*m)
		s += out[i]
	}
	for i := range out {
		out[i] /= s
	}
	return out
}

// gammaDraw is Marsaglia & Tsang's (2000) method, with the boost for shape < 1.
func gammaDraw(rng *rand.Rand, shape float64) float64 {
	if shape < 1 {
		return gammaDraw(rng, shape+1) * math.Pow(rng.Float64(), 1/shape)
	}
	d := shape - 1.0/3
	c := 1 / math.Sqrt(9*d)
	for {
		x := rng.NormFloat64()
		v := 1 + c*x
		if v <= 0 {
			continue
		}
		v = v * v * v
		u := rng.Float64()
		if math.Log(u) < 0.5*x*x+d-d*v+d*math.Log(v) {
			return d * v
		}
	}
}
