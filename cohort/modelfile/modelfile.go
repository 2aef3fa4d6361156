// Package modelfile reads, checks and writes the model file: the frozen normalization, states
// and groups of a run, with the settings it was fitted with, so that a later wave is placed in
// the same states and groups (cohort/job's Assign) or refitted as before (Refresh). It is a
// leaf: the job and the command line read and write models without the workbook.
package modelfile

import (
	"bytes"
	"crypto/sha256"
	"encoding/hex"
	"encoding/json"
	"errors"
	"fmt"
	"io"
	"math"
	"os"
	"time"

	"gonum.org/v1/gonum/mat"

	"github.com/cohortmix/cohortmix/cluster"
	"github.com/cohortmix/cohortmix/cluster/mixture"
	"github.com/cohortmix/cohortmix/cohort"
	"github.com/cohortmix/cohortmix/cohort/clock"
	"github.com/cohortmix/cohortmix/cohort/group"
	"github.com/cohortmix/cohortmix/cohort/pseudonym"
	"github.com/cohortmix/cohortmix/cohort/scratch"
	"github.com/cohortmix/cohortmix/normalize"
	"github.com/cohortmix/cohortmix/profile"
)

// Format and Version identify the model file's schema.
const (
	Format  = "cohortmix model"
	Version = 6 // 2: log scales, the align step's axes, the aligned states' postures, pseudonymization; 3: the fit's settings typed (FitSettings); 4: the devices' calibration, the mixture of the groups; 5: the features step's record (ReadSettings.FeaturesStep); 6: each participant's own states (States.PersonPrior)
)

// oldestModel is the oldest model version this tool still reads: a version-2 file keeps its
// settings by flag name (Model.Options), which refresh reads as before.
const oldestModel = 2

// Setting is one parameter of a run as the Settings sheet shows it and the model keeps it.
type Setting struct{ Name, Value string }

// ErrModel is wrapped by every error about a model file.
var ErrModel = errors.New("model file not usable")

// Model is everything needed to place new windows and participants into the same states and
// groups later: the frozen normalization, the state centroids and the group centres.
type Model struct {
	Format    string            `json:"format"`
	Version   int               `json:"version"`
	Created   time.Time         `json:"created"`
	Tool      string            `json:"tool"`
	Features  []string          `json:"features"`
	Read      ReadSettings      `json:"read"`
	Normalize Norm              `json:"normalize"`
	States    States            `json:"states"`
	Grouping  Grouping          `json:"grouping"`
	Settings  []Setting         `json:"settings"`
	Fit       *FitSettings      `json:"fit,omitempty"`     // how the model was fitted, for refresh (version 3)
	Options   map[string]string `json:"options,omitempty"` // version 2: the command-line options of the fit, by flag name
	Members   []Member          `json:"members"`
	// Pseudonymized says the members' ids are pseudonyms (Pseudonym), made with the key whose
	// fingerprint (KeyFingerprint) is KeyFingerprint.
	Pseudonymized  bool         `json:"pseudonymized"`
	KeyFingerprint string       `json:"key_fingerprint,omitempty"`
	FeatureMeds    [][3]float64 `json:"feature_median_range"` // per feature: 1st percentile, median, 99th percentile of participant medians
	// Checksum is the SHA-256 of the file as written with this field empty (version 4): a
	// value changed by hand or by a damaged copy is refused.
	Checksum string `json:"checksum,omitempty"`
}

// ReadSettings records the column roles used.
type ReadSettings struct {
	ID, Order, Wave string
	Label           string   `json:",omitempty"` // the label column of the fit, which assign does not use
	Features        []string `json:",omitempty"` // the feature name patterns given (none: every numeric column)
	Missing         string
	MinWindows      int
	// NonWear is the non-wear rule the windows were read with ("" for none), and
	// NonWearFeature the counts column it was given (none: found by its name).
	NonWear        string `json:",omitempty"`
	NonWearFeature string `json:",omitempty"`
	// TimeZone is the zone times with an offset were read in ("" for UTC); ValidDay the
	// valid-day rule ("auto", hours as "10h0m0s", or "" for none), ValidDays and WeekendDay
	// what a participant needed under it.
	TimeZone   string `json:",omitempty"`
	WearColumn string `json:",omitempty"`
	ValidDay   string `json:",omitempty"`
	ValidDays  int    `json:",omitempty"`
	WeekendDay bool   `json:",omitempty"`
	// FeaturesStep is the record of how the features of the fitted data were made, where the
	// features step made them (cohort.FileInfo.MadeBy, version 5); "" otherwise.
	FeaturesStep string `json:",omitempty"`
}

// ReadSettingsOf records the reading settings of a run.
func ReadSettingsOf(read cohort.ReadOptions) ReadSettings {
	return ReadSettings{ID: read.ID, Order: read.Order, Wave: read.Wave, Label: read.Label, Features: read.Features, Missing: read.Missing.String(), MinWindows: read.MinWindows,
		NonWear: read.NonWear, NonWearFeature: read.NonWearFeature, TimeZone: read.TimeZone, WearColumn: read.WearColumn, ValidDays: read.ValidDays, WeekendDay: read.WeekendDay, ValidDay: validDayText(read)}
}

// ReadOptions are the reading settings a model records, as the reader takes them (the inverse of
// ReadSettingsOf; a later wave may name its columns otherwise over them).
func (r ReadSettings) ReadOptions() cohort.ReadOptions {
	ro := cohort.ReadOptions{ID: r.ID, Order: r.Order, Wave: r.Wave, MinWindows: r.MinWindows, NonWear: r.NonWear, NonWearFeature: r.NonWearFeature,
		TimeZone: r.TimeZone, WearColumn: r.WearColumn, ValidDays: r.ValidDays, WeekendDay: r.WeekendDay}
	if r.Missing == cohort.ImputeMedian.String() {
		ro.Missing = cohort.ImputeMedian
	}
	switch r.ValidDay {
	case "":
	case "auto":
		ro.ValidDay, ro.ValidDayAuto = cohort.DefaultValidDay, true
	default:
		ro.ValidDay, _ = time.ParseDuration(r.ValidDay) // checked when the model was read
	}
	return ro
}

// validDayText is the valid-day rule of a reading as the model records it.
func validDayText(read cohort.ReadOptions) string {
	switch {
	case read.ValidDay <= 0:
		return ""
	case read.ValidDayAuto:
		return "auto"
	}
	return read.ValidDay.String()
}

// FitSettings is how a model was fitted, in the library's own terms (the settings of a run that
// are not about one run: no files, folders or workers), so that refresh can fit again as before.
type FitSettings struct {
	Within         string   `json:"within"`
	WithinFeatures []string `json:"within_features,omitempty"`
	OffsetICC      float64  `json:"offset_icc"`
	RestShare      float64  `json:"rest_share"`
	Axes           []string `json:"axes,omitempty"`    // the axis means named; none named: found by their names
	NoAxes         bool     `json:"no_axes,omitempty"` // the align step turned no axis means
	NoTurn         bool     `json:"no_turn,omitempty"` // the align step turned the axis means only
	Log            bool     `json:"log"`
	Scale          string   `json:"scale"`
	PCAComponents  int      `json:"pca_components,omitempty"`
	PCAVariance    float64  `json:"pca_variance,omitempty"`
	NoPCA          bool     `json:"no_pca,omitempty"`
	States         []int    `json:"states"` // the numbers of states tried
	StatesRule     string   `json:"states_rule"`
	KeepMerged     bool     `json:"keep_merged,omitempty"`    // version 3: the merged states were kept without comparing the grouping's stability
	NoCalibration  bool     `json:"no_calibration,omitempty"` // the align step left the axis means uncalibrated
	Fits           int      `json:"fits,omitempty"`           // times each number of states was fitted from different random starts (0: once)
	Valley         float64  `json:"valley"`
	Sample         int      `json:"sample"`
	Groups         []int    `json:"groups"` // the numbers of groups tried
	Method         string   `json:"method"`
	Criterion      string   `json:"criterion"`
	GroupValley    float64  `json:"group_valley,omitempty"`
	Bootstrap      int      `json:"bootstrap"`
	Seed           uint64   `json:"seed"`
	WindowSeconds  float64  `json:"window_seconds,omitempty"` // the window length given (0: from the order column's times)
	// Signature is what the grouping saw ("" or "whole": the whole recording; "day-parts": the
	// parts of the day starting at the hours of DayParts).
	Signature string `json:"signature,omitempty"`
	DayParts  []int  `json:"day_parts,omitempty"`
	// KeepTwins kept features that order the windows as an earlier one does.
	KeepTwins bool `json:"keep_twins,omitempty"`
}

// Parts is how many parts of the day the grouping saw the states in (1: the whole recording).
func (f *FitSettings) Parts() int {
	if f == nil || f.Signature != "day-parts" {
		return 1
	}
	return max(len(f.DayParts), 1)
}

// Norm is a frozen normalize.Fit.
type Norm struct {
	Logged     []bool            `json:"logged,omitempty"`    // features on a started log scale, log(x + log_shift)
	LogShift   []float64         `json:"log_shift,omitempty"` // the start c of each logged feature
	Axes       []int             `json:"axes,omitempty"`      // the columns of the axis means the align step turns
	Turned     *normalize.Turned `json:"turned,omitempty"`    // the features it turns with them
	Within     string            `json:"within"`
	Touched    []bool            `json:"touched"`
	TouchedBy  string            `json:"touched_by"`
	RestShare  float64           `json:"rest_share"`
	QuietScore []int             `json:"quiet_score"`
	QuietMid   []float64         `json:"quiet_mid,omitempty"`   // rest baseline only
	QuietScale []float64         `json:"quiet_scale,omitempty"` // rest baseline only
	Scale      string            `json:"scale"`
	Center     []float64         `json:"center"`
	Spread     []float64         `json:"spread"`
	PCAMean    []float64         `json:"pca_mean,omitempty"`
	PCA        [][]float64       `json:"pca_components,omitempty"` // features × components
	ICC        []float64         `json:"icc"`
}

// States holds the state centroids in the normalized space.
type States struct {
	K         int         `json:"k"`
	Names     []string    `json:"names"`
	Centroids [][]float64 `json:"centroids"`
	Means     [][]float64 `json:"feature_means"` // each state's mean of the original features, for matching states on refresh
	// Aligned states (within align): what places a participant's device.
	Posture [][]float64 `json:"posture,omitempty"`        // each state's mean axis means once turned, in the units read
	Offsets []bool      `json:"offset_columns,omitempty"` // the normalized columns that carry a participant's offset
	Prior   float64     `json:"rotation_prior,omitempty"` // pull of a rotation toward none, in windows' worth per window
	Rounds  int         `json:"rounds,omitempty"`         // most alternations of states and device for one participant
	// PersonPrior is the pull of a participant's own version of each state toward the cohort's
	// centre, in windows' worth (profile.States.PersonPrior; version 6); absent in earlier models,
	// which assign every window to the cohort's states.
	PersonPrior float64 `json:"person_prior,omitempty"`
	// Calibrate says each device's axis means are calibrated onto the sphere of radius Gravity
	// (normalize.SphereCalibration) before they are turned (version 4).
	Calibrate bool    `json:"calibrate,omitempty"`
	Gravity   float64 `json:"gravity,omitempty"`
}

// Mixture is the mixture method's frozen model (group.Grouping.Mixture): each group's
// weight and Dirichlet parameters over the columns of group.BoutTable, in blocks.
type Mixture struct {
	Weights []float64   `json:"weights"`
	Alpha   [][]float64 `json:"alpha"`
	Blocks  []int       `json:"blocks"`
}

// Grouping holds the group centres in the grouping space.
type Grouping struct {
	Method    string      `json:"method"`
	K         int         `json:"k"`
	Names     []string    `json:"names"`
	Centroids [][]float64 `json:"centroids"`
	Atypical  float64     `json:"atypical_distance"` // 99th percentile of fitted members' distances to their own centre
	Shares    [][]float64 `json:"mean_shares"`       // each group's mean shares over the states, for matching on refresh
	Mixture   *Mixture    `json:"mixture,omitempty"` // the mixture method's model, which places new participants (version 4)
}

// Member is a fitted participant's group, for the changes sheet of later runs.
type Member struct {
	ID       string  `json:"id"`
	Wave     string  `json:"wave,omitempty"`
	Group    string  `json:"group"`
	Distance float64 `json:"distance"`
}

// Write writes the model (Encode) to path atomically (scratch.WriteAtomic).
func Write(path string, m *Model, force bool) error {
	return scratch.WriteAtomic(path, force, func(w io.Writer) error { return Encode(w, m) })
}

// Encode writes the model as indented JSON, with its checksum.
func Encode(w io.Writer, m *Model) error {
	c := *m
	c.Checksum = ""
	if c.Version >= 4 {
		body, err := modelJSON(&c)
		if err != nil {
			return err
		}
		c.Checksum = checksum(body)
	}
	b, err := modelJSON(&c)
	if err != nil {
		return err
	}
	_, err = w.Write(b)
	return err
}

// modelJSON is the model as the file holds it: indented JSON.
func modelJSON(m *Model) ([]byte, error) {
	var buf bytes.Buffer
	enc := json.NewEncoder(&buf)
	enc.SetIndent("", " ")
	err := enc.Encode(m)
	return buf.Bytes(), err
}

// checksum is the SHA-256 of b, in hex.
func checksum(b []byte) string {
	sum := sha256.Sum256(b)
	return hex.EncodeToString(sum[:])
}

// ReadFile reads and checks a model file: its format and version, and that every array has the
// size the rest of the file implies and holds finite numbers.
func ReadFile(path string) (*Model, error) {
	b, err := os.ReadFile(path)
	if err != nil {
		return nil, fmt.Errorf("%s: cannot read the model: %w", path, err)
	}
	return Parse(path, b)
}

// Parse is ReadFile on bytes already read; name is used in messages.
func Parse(name string, b []byte) (*Model, error) {
	var head struct {
		Format  string `json:"format"`
		Version int    `json:"version"`
	}
	if err := json.Unmarshal(b, &head); err != nil {
		return nil, fmt.Errorf("%s: not a model file (%v): %w; pass the .json file that modelfile.Encode wrote", name, jsonPos(b, err), ErrModel)
	}
	if head.Format != Format {
		return nil, fmt.Errorf("%s: format is %q, not %q: %w; pass a file written by modelfile.Encode", name, head.Format, Format, ErrModel)
	}
	if head.Version < oldestModel || head.Version > Version {
		return nil, fmt.Errorf("%s: schema version %d, this tool reads versions %d to %d: %w; refit with modelfile.Encode using this version", name, head.Version, oldestModel, Version, ErrModel)
	}
	dec := json.NewDecoder(bytes.NewReader(b))
	dec.DisallowUnknownFields()
	var m Model
	if err := dec.Decode(&m); err != nil {
		return nil, fmt.Errorf("%s: damaged or hand-edited (%v): %w; write it again with modelfile.Encode", name, jsonPos(b, err), ErrModel)
	}
	if m.Version >= 4 {
		want := m.Checksum
		m.Checksum = ""
		body, err := modelJSON(&m)
		if err != nil || want == "" || checksum(body) != want {
			return nil, fmt.Errorf("%s: its checksum does not match its contents: %w; the file was changed after it was written or damaged in a copy; use the file as written, or fit the model again", name, ErrModel)
		}
		m.Checksum = want
	}
	if err := m.check(); err != nil {
		return nil, fmt.Errorf("%s: %v: %w; write it again with modelfile.Encode", name, err, ErrModel)
	}
	return &m, nil
}

func jsonPos(b []byte, err error) string {
	var se *json.SyntaxError
	var te *json.UnmarshalTypeError
	off := int64(-1)
	switch {
	case errors.As(err, &se):
		off = se.Offset
	case errors.As(err, &te):
		off = te.Offset
	}
	if off < 0 {
		return err.Error()
	}
	line := 1 + bytes.Count(b[:min(int(off), len(b))], []byte("\n"))
	return fmt.Sprintf("line %d: %v", line, err)
}

func (m *Model) check() error {
	for _, part := range []func(*Model) error{(*Model).checkRead, (*Model).checkFit, (*Model).checkNormalize, (*Model).checkStates, (*Model).checkGrouping, (*Model).checkRest} {
		if err := part(m); err != nil {
			return err
		}
	}
	return nil
}

// checkRead checks the features and the reading settings.
func (m *Model) checkRead() error {
	if len(m.Features) == 0 {
		return errors.New("no features")
	}
	if v := m.Read.ValidDay; v != "" && v != "auto" {
		if h, err := time.ParseDuration(v); err != nil || h <= 0 || h > 24*time.Hour {
			return fmt.Errorf("read.ValidDay %q is not hours of wear", v)
		}
	}
	if _, err := clock.In(m.Read.TimeZone); err != nil {
		return fmt.Errorf("read.TimeZone: %w", err)
	}
	return nil
}

// checkFit checks the settings the model was fitted with.
func (m *Model) checkFit() error {
	if f := m.Fit; f != nil && f.Signature == "day-parts" {
		if err := profile.DayParts(f.DayParts).Check(); err != nil && len(f.DayParts) > 0 {
			return fmt.Errorf("fit.day_parts: %w", err)
		}
	}
	if m.Version >= 3 && m.Fit == nil || m.Version < 3 && m.Options == nil {
		return fmt.Errorf("a version %d model without the settings it was fitted with", m.Version)
	}
	if f := m.Fit; f != nil {
		if _, err := normalize.ParseWithin(f.Within); err != nil {
			return err
		}
		if _, err := group.ParseMethod(f.Method); err != nil {
			return err
		}
		if len(f.States) == 0 || len(f.Groups) == 0 {
			return errors.New("the settings name no numbers of states or groups")
		}
	}
	return nil
}

// dims are the number of features and of normalized columns (the PCA's components, when there
// is a PCA); checkNormalize has checked the PCA's shape.
func (m *Model) dims() (d, dim int) {
	d, dim = len(m.Features), len(m.Features)
	if m.Normalize.PCA != nil {
		dim = len(m.Normalize.PCA[0])
	}
	return d, dim
}

// checkNormalize checks the frozen normalization against the features.
func (m *Model) checkNormalize() error {
	d := len(m.Features)
	n := m.Normalize
	within, err := normalize.ParseWithin(n.Within)
	if err != nil {
		return err
	}
	if _, err := normalize.ParseScale(n.Scale); err != nil {
		return err
	}
	sizes := map[string]int{"touched": len(n.Touched), "center": len(n.Center), "spread": len(n.Spread), "icc": len(n.ICC)}
	if within == normalize.WithinRest {
		sizes["quiet_mid"], sizes["quiet_scale"] = len(n.QuietMid), len(n.QuietScale)
	}
	if n.Logged != nil || n.LogShift != nil {
		sizes["logged"], sizes["log_shift"] = len(n.Logged), len(n.LogShift)
	}
	for name, l := range sizes {
		if l != d {
			return fmt.Errorf("normalize.%s has %d entries for %d features", name, l, d)
		}
	}
	for j, c := range n.LogShift {
		if n.Logged[j] && !(c > 0 && !math.IsInf(c, 0)) {
			return fmt.Errorf("normalize.log_shift[%d] is %v; a log scale starts above 0", j, c)
		}
	}
	if err := m.checkColumns(); err != nil {
		return err
	}
	for j, s := range n.Spread {
		if !(s > 0) || math.IsInf(s, 0) {
			return fmt.Errorf("normalize.spread[%d] is %v; spreads are positive", j, s)
		}
	}
	if n.PCA != nil {
		if len(n.PCA) != d || len(n.PCAMean) != d {
			return fmt.Errorf("normalize.pca_components has %d rows and pca_mean %d for %d features", len(n.PCA), len(n.PCAMean), d)
		}
		if err := finiteRows("normalize.pca_components", n.PCA, len(n.PCA[0])); err != nil {
			return err
		}
	}
	if err := finiteRows("normalize.center", [][]float64{n.Center}, d); err != nil {
		return err
	}
	if within == normalize.WithinRest {
		if err := finiteRows("normalize.quiet_mid", [][]float64{n.QuietMid}, d); err != nil {
			return err
		}
	}
	return nil
}

// checkColumns checks the features the normalization names by their columns: the axis means,
// what is turned with them, and the quiet score.
func (m *Model) checkColumns() error {
	n, d := m.Normalize, len(m.Features)
	if n.Axes != nil {
		if len(n.Axes) != 3 || n.Axes[0] == n.Axes[1] || n.Axes[0] == n.Axes[2] || n.Axes[1] == n.Axes[2] {
			return fmt.Errorf("normalize.axes is %v; it names three different features", n.Axes)
		}
		for _, a := range n.Axes {
			if a < 0 || a >= d {
				return fmt.Errorf("normalize.axes names feature %d of %d", a, d)
			}
		}
	}
	if n.Turned != nil {
		if err := n.Turned.Check(d, n.Axes); err != nil {
			return fmt.Errorf("normalize.turned: %w", err)
		}
	}
	for _, j := range n.QuietScore {
		if j < 0 || j >= d {
			return fmt.Errorf("normalize.quiet_score names feature %d of %d", j, d)
		}
	}
	return nil
}

// checkStates checks the states' centroids, means and, for the align step, what places a
// device.
func (m *Model) checkStates() error {
	d, dim := m.dims()
	n := m.Normalize
	within, _ := normalize.ParseWithin(n.Within) // checked by checkNormalize
	s := m.States
	if s.K < 1 || len(s.Centroids) != s.K || len(s.Names) != s.K {
		return fmt.Errorf("states: k = %d with %d centroids and %d names", s.K, len(s.Centroids), len(s.Names))
	}
	if err := finiteRows("states.centroids", s.Centroids, dim); err != nil {
		return err
	}
	if len(s.Means) != s.K {
		return fmt.Errorf("states: %d feature_means rows for %d states", len(s.Means), s.K)
	}
	for i, row := range s.Means {
		if len(row) != d {
			return fmt.Errorf("states.feature_means row %d has %d values for %d features", i, len(row), d)
		}
	}
	if !(s.PersonPrior >= 0) || math.IsInf(s.PersonPrior, 0) {
		return fmt.Errorf("states: person_prior is %v; it must be a finite number ≥ 0 (0 or absent: no participant's own states)", s.PersonPrior)
	}
	if within == normalize.WithinAlign {
		if len(s.Offsets) != dim || s.Rounds < 0 || !(s.Prior >= 0) || math.IsInf(s.Prior, 0) {
			return fmt.Errorf("states: the align step needs offset_columns for the %d normalized columns (%d given), rounds ≥ 0 and a rotation_prior ≥ 0", dim, len(s.Offsets))
		}
		if n.Axes != nil {
			if len(s.Posture) != s.K {
				return fmt.Errorf("states: %d posture rows for %d states", len(s.Posture), s.K)
			}
			if err := finiteRows("states.posture", s.Posture, 3); err != nil {
				return err
			}
		}
	}
	return nil
}

// checkGrouping checks the groups' names, centres, shares and mixture.
func (m *Model) checkGrouping() error {
	s := m.States
	g := m.Grouping
	if _, err := group.ParseMethod(g.Method); err != nil {
		return err
	}
	for _, names := range []struct {
		what string
		list []string
	}{{"states.names", s.Names}, {"grouping.names", g.Names}} {
		seen := map[string]bool{}
		for _, n := range names.list {
			if n == "" || seen[n] {
				return fmt.Errorf("%s holds %q twice or empty; every state and group has a name of its own", names.what, n)
			}
			seen[n] = true
		}
	}
	if g.K < 1 || len(g.Centroids) != g.K || len(g.Names) != g.K {
		return fmt.Errorf("grouping: k = %d with %d centres and %d names", g.K, len(g.Centroids), len(g.Names))
	}
	if err := finiteRows("grouping.centroids", g.Centroids, s.K*m.Fit.Parts()); err != nil {
		return err
	}
	if err := finiteRows("grouping.mean_shares", g.Shares, s.K); err != nil {
		return err
	}
	if len(g.Shares) != g.K {
		return fmt.Errorf("grouping: %d mean_shares rows for %d groups", len(g.Shares), g.K)
	}
	if !(g.Atypical >= 0) || math.IsInf(g.Atypical, 0) {
		return fmt.Errorf("grouping.atypical_distance is %v", g.Atypical)
	}
	if err := g.checkMixture(s.K, m.Fit.Parts()); err != nil {
		return err
	}
	return nil
}

// checkRest checks what the model says of gravity, pseudonyms and the features' ranges.
func (m *Model) checkRest() error {
	s := m.States
	if s.Calibrate && !(s.Gravity > 0 && !math.IsInf(s.Gravity, 0)) {
		return fmt.Errorf("states.gravity is %v; calibrated states need the length of gravity, above 0", s.Gravity)
	}
	if m.Pseudonymized != (m.KeyFingerprint != "") {
		return fmt.Errorf("pseudonymized is %v with key_fingerprint %q; a pseudonymized model has a fingerprint and a plain one none", m.Pseudonymized, m.KeyFingerprint)
	}
	if len(m.FeatureMeds) != len(m.Features) {
		return fmt.Errorf("feature_median_range has %d entries for %d features", len(m.FeatureMeds), len(m.Features))
	}
	return nil
}

// checkMixture checks the mixture method's model against k groups over s states: a weight per
// group summing to 1, and positive finite Dirichlet parameters over the columns of
// group.BoutTable (s, or 3s with the bouts; with the states seen in p parts of the day, p·s or
// p·s + 2s).
func (g Grouping) checkMixture(s, p int) error {
	mx := g.Mixture
	if g.Method == "mixture" && mx == nil {
		return errors.New("grouping: the mixture method's model is missing")
	}
	if mx == nil {
		return nil
	}
	cols := 0
	for _, b := range mx.Blocks {
		if b < 1 {
			return fmt.Errorf("grouping.mixture.blocks %v: each block holds at least one column", mx.Blocks)
		}
		cols += b
	}
	if cols != p*s && cols != (p+2)*s || len(mx.Blocks) != p && len(mx.Blocks) != p+s {
		return fmt.Errorf("grouping.mixture.blocks %v cover %d columns, not %d or %d for %d states in %d parts of the day", mx.Blocks, cols, p*s, (p+2)*s, s, p)
	}
	if len(mx.Weights) != g.K || len(mx.Alpha) != g.K {
		return fmt.Errorf("grouping.mixture has %d weights and %d alpha rows for %d groups", len(mx.Weights), len(mx.Alpha), g.K)
	}
	var sum float64
	for c, w := range mx.Weights {
		if !(w > 0 && w <= 1) {
			return fmt.Errorf("grouping.mixture.weights[%d] is %v; weights lie in (0, 1]", c, w)
		}
		sum += w
	}
	if math.Abs(sum-1) > 1e-6 {
		return fmt.Errorf("grouping.mixture.weights sum to %v, not 1", sum)
	}
	if err := finiteRows("grouping.mixture.alpha", mx.Alpha, cols); err != nil {
		return err
	}
	for c, row := range mx.Alpha {
		for j, a := range row {
			if !(a > 0) {
				return fmt.Errorf("grouping.mixture.alpha[%d][%d] is %v; Dirichlet parameters are positive", c, j, a)
			}
		}
	}
	return nil
}

// GroupMixture rebuilds the mixture method's frozen model; nil for the other methods.
func (m *Model) GroupMixture() *mixture.DMM {
	mx := m.Grouping.Mixture
	if mx == nil {
		return nil
	}
	return &mixture.DMM{K: len(mx.Weights), Weights: mx.Weights, Alpha: mx.Alpha, Blocks: mx.Blocks}
}

// maxModelValue bounds the values of a model's centres, centre, components and postures: they
// are in the features' units (at most 1e12, the reader's bound) or standardized, and a value far
// beyond that overflows the squared distances that place a participant.
const maxModelValue = 1e12

func finiteRows(name string, rows [][]float64, width int) error {
	for i, r := range rows {
		if len(r) != width {
			return fmt.Errorf("%s row %d has %d values, expected %d", name, i, len(r), width)
		}
		for j, v := range r {
			if math.IsNaN(v) || math.IsInf(v, 0) {
				return fmt.Errorf("%s[%d][%d] is not a finite number", name, i, j)
			}
			if math.Abs(v) > maxModelValue {
				return fmt.Errorf("%s[%d][%d] is %g, larger in magnitude than any fit gives (%g)", name, i, j, v, maxModelValue)
			}
		}
	}
	return nil
}

// NormFit rebuilds the frozen normalization.
func (m *Model) NormFit() *normalize.Fit {
	n := m.Normalize
	w, _ := normalize.ParseWithin(n.Within)
	sc, _ := normalize.ParseScale(n.Scale)
	f := &normalize.Fit{Features: m.Features, Logged: n.Logged, LogShift: n.LogShift, Axes: n.Axes, Turned: n.Turned, Within: w, Touched: n.Touched, TouchedBy: n.TouchedBy, RestShare: n.RestShare,
		QuietScore: n.QuietScore, QuietMid: n.QuietMid, QuietScale: n.QuietScale, ScaleKind: sc, Center: n.Center, Spread: n.Spread, ICC: n.ICC}
	if n.PCA != nil {
		k := len(n.PCA[0])
		comp := mat.NewDense(len(n.PCA), k, nil)
		for i, r := range n.PCA {
			comp.SetRow(i, r)
		}
		f.PCA = &cluster.PCA{Mean: n.PCAMean, Components: comp}
	}
	return f
}

// StateFit rebuilds the frozen states.
func (m *Model) StateFit() *profile.States {
	c := mat.NewDense(m.States.K, len(m.States.Centroids[0]), nil)
	for i, r := range m.States.Centroids {
		c.SetRow(i, r)
	}
	st := m.States
	return &profile.States{K: st.K, Centroids: c, Rule: "from the model file", Posture: st.Posture, Offsets: st.Offsets, Prior: st.Prior, Rounds: st.Rounds, PersonPrior: st.PersonPrior, Calibrate: st.Calibrate, Gravity: st.Gravity}
}

// CheckKey tells whether a run may use this key (nil: none) with this model: a pseudonymized
// model needs the key it was written with, and a plain model takes no key.
func (m *Model) CheckKey(modelPath, keyPath string, key []byte) error {
	switch {
	case m.Pseudonymized && key == nil:
		return fmt.Errorf("%s: the model holds pseudonyms, not study ids: %w; give modelfile.Model.CheckKey the key it was written with, or returning participants could not be found and study ids would reach the outputs", modelPath, pseudonym.ErrKey)
	case !m.Pseudonymized && key != nil:
		return fmt.Errorf("%s: the model holds study ids, not pseudonyms: %w; give no key, or refit pseudonymized with job.Pseudonymize and %s", modelPath, pseudonym.ErrKey, keyPath)
	case key != nil && pseudonym.Fingerprint(key) != m.KeyFingerprint:
		return fmt.Errorf("%s: was pseudonymized with another key than %s: %w; pass the key the model was written with", modelPath, keyPath, pseudonym.ErrKey)
	}
	return nil
}
