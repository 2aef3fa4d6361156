package main

import (
	"fmt"
	"path/filepath"
	"strconv"
	"strings"
	"time"

	"github.com/cohortmix/cohortmix/cohort/job"

	"github.com/schollz/progressbar/v3"
	"github.com/spf13/cobra"
	"github.com/spf13/pflag"

	"github.com/cohortmix/cohortmix/cohort"
	"github.com/cohortmix/cohortmix/cohort/group"
	"github.com/cohortmix/cohortmix/cohort/modelfile"
	"github.com/cohortmix/cohortmix/normalize"
	"github.com/cohortmix/cohortmix/profile"
)

// parseRange reads "6" or "2-8" into the increasing list of candidates.
func parseRange(flag, s string) ([]int, error) { return parseRangeFrom(flag, s, 2) }

// parseRangeFrom is parseRange with the least number allowed.
func parseRangeFrom(flag, s string, least int) ([]int, error) {
	lo, hi, isRange := strings.Cut(strings.TrimSpace(s), "-")
	a, err := strconv.Atoi(strings.TrimSpace(lo))
	b := a
	if err == nil && isRange {
		b, err = strconv.Atoi(strings.TrimSpace(hi))
	}
	if err != nil || a < least || b < a || b > 64 {
		return nil, flagErrorf("--%s %q: give a number such as 5 or a range such as %d-8 (each between %d and 64)", flag, s, least, least)
	}
	out := make([]int, 0, b-a+1)
	for k := a; k <= b; k++ {
		out = append(out, k)
	}
	return out, nil
}

// defaultGroups and defaultCriterion are the mixture's (job.Defaults); the other methods take
// 2-8 and gap-stable-firm when these are left as they are.
var defaultGroups, defaultCriterion = rangeText(job.Defaults().Groups), job.Defaults().Criterion.String()

// mainFlags are the flags of every command that runs the main job.
type mainFlags struct {
	ID, Order, Wave, Label string
	Features               []string
	Missing                string
	MinWindows             int
	NonWear, NonWearColumn string
	TimeZone               string
	WearColumn             string
	ValidDay               string
	ValidDays              int
	WeekendDay             bool
	Within                 string
	WithinFeatures         []string
	Axes                   string
	Turn                   string
	Log                    string
	StatesRule             string
	Calibration            string
	Fits                   int
	Valley                 float64
	OffsetICC, RestShare   float64
	Scale                  string
	PCA                    string
	States                 string
	Sample                 int
	Groups                 string
	Method                 string
	Criterion              string
	Bootstrap              int
	Seed                   uint64
	WindowLength           time.Duration
	GroupValley            float64
	Signature              string
	KeepTwins              bool
	DayParts               []int
	Workers                int
	Members, Model         string
	Pseudonymize           string
	Temp                   string
	MemoryValues           int64
	Force, Quiet           bool
}

func (m *mainFlags) register(cmd *cobra.Command) {
	for _, s := range settingTable {
		s.bind(cmd.Flags(), m)
	}
}

// registerRead registers the flags that say how the tables are read, with --temp and --quiet:
// all that 'check' takes.
func (m *mainFlags) registerRead(cmd *cobra.Command) {
	for _, s := range settingTable {
		if s.read {
			s.bind(cmd.Flags(), m)
		}
	}
}

// parseMissing reads --missing: drop (the window) or impute (the participant's median).
func parseMissing(s string) (cohort.Missing, error) {
	switch s {
	case "drop":
		return cohort.DropWindow, nil
	case "impute":
		return cohort.ImputeMedian, nil
	}
	return cohort.DropWindow, flagErrorf("--missing %q: use drop or impute", s)
}

// readOptions turns the reading flags into the reader's settings.
func (m *mainFlags) readOptions() (cohort.ReadOptions, error) {
	ro := cohort.ReadOptions{ID: m.ID, Order: m.Order, Wave: m.Wave, Label: m.Label, Features: m.Features, MinWindows: m.MinWindows, TempDir: m.Temp, MemoryValues: m.MemoryValues, Workers: m.Workers}
	var err error
	if ro.Missing, err = parseMissing(m.Missing); err != nil {
		return ro, err
	}
	if m.MinWindows < 1 {
		return ro, flagErrorf("--min-windows %d: use a number ≥ 1", m.MinWindows)
	}
	switch m.NonWear {
	case "none", "":
	case cohort.NonWearChoi, cohort.NonWearTroiano, cohort.NonWearAuto:
		ro.NonWear, ro.NonWearFeature = m.NonWear, m.NonWearColumn
	default:
		return ro, flagErrorf("--non-wear %q: use auto, choi, troiano or none", m.NonWear)
	}
	ro.TimeZone, ro.ValidDays, ro.WeekendDay, ro.WearColumn = m.TimeZone, m.ValidDays, m.WeekendDay, m.WearColumn
	if ro.WearColumn != "" && m.NonWear == "auto" {
		ro.NonWear = "" // the column takes the rule's place
	}
	switch m.ValidDay {
	case "none", "":
	case "auto":
		ro.ValidDay, ro.ValidDayAuto = cohort.DefaultValidDay, true
	default:
		d, err := time.ParseDuration(m.ValidDay)
		if err != nil || d <= 0 || d > 24*time.Hour {
			return ro, flagErrorf("--valid-day %q: use hours of wear such as 10h or 16h, auto or none", m.ValidDay)
		}
		ro.ValidDay = d
	}
	if m.ValidDays < 1 {
		return ro, flagErrorf("--valid-days %d: use a number ≥ 1", m.ValidDays)
	}
	return ro, nil
}

// options turns the flags into the analysis settings.
func (m *mainFlags) options(inputs []string) (job.Options, error) {
	o := job.Options{Inputs: inputs, Seed: m.Seed, Workers: m.Workers, Bootstrap: m.Bootstrap, Sample: m.Sample, Window: m.WindowLength}
	if m.WindowLength < 0 {
		return o, flagErrorf("--window-length %v: use a positive duration such as 60s or 1m", m.WindowLength)
	}
	var err error
	if o.Read, err = m.readOptions(); err != nil {
		return o, err
	}
	if err := m.normOptions(&o); err != nil {
		return o, err
	}
	if err := m.statesOptions(&o); err != nil {
		return o, err
	}
	if err := m.groupOptions(&o); err != nil {
		return o, err
	}
	if m.Sample < 100 || m.Bootstrap < 2 || m.Workers < 0 {
		return o, flagErrorf("--sample %d, --bootstrap %d, --workers %d: use at least 100 windows, 2 resamples and ≥ 0 workers", m.Sample, m.Bootstrap, m.Workers)
	}
	return o, nil
}

// normOptions reads the within step, the axes, the log scales and the cohort scaling.
func (m *mainFlags) normOptions(o *job.Options) error {
	var err error
	if o.Norm.Within, err = normalize.ParseWithin(m.Within); err != nil {
		return &flagError{err}
	}
	if o.Norm.Scale, err = normalize.ParseScale(m.Scale); err != nil {
		return &flagError{err}
	}
	o.Norm.WithinFeatures, o.Norm.OffsetICC, o.Norm.RestShare = m.WithinFeatures, m.OffsetICC, m.RestShare
	switch a := strings.TrimSpace(m.Axes); {
	case a == "auto":
	case a == "none":
		o.NoAxes = true
	default:
		o.Axes = strings.Split(a, ",")
		for i := range o.Axes {
			o.Axes[i] = strings.TrimSpace(o.Axes[i])
		}
		if len(o.Axes) != 3 || o.Axes[0] == "" || o.Axes[1] == "" || o.Axes[2] == "" {
			return flagErrorf("--axes %q: name three features in x,y,z order, such as mean_x,mean_y,mean_z, or auto, or none", m.Axes)
		}
	}
	if o.NoTurn, err = secondOf("turn", m.Turn, "all", "means"); err != nil {
		return err
	}
	if m.Axes != "auto" && o.Norm.Within != normalize.WithinAlign {
		return flagErrorf("--axes %s with --within %s: only the align step turns axis means; leave --axes out or use --within align", m.Axes, m.Within)
	}
	noLog, err := secondOf("log", m.Log, "auto", "none")
	if err != nil {
		return err
	}
	o.Norm.Log = !noLog
	return nil
}

// statesOptions reads how the movement states are fitted: the rule, the calibration, the valley,
// the fits, the offset and rest shares, the PCA and the numbers of states.
func (m *mainFlags) statesOptions(o *job.Options) error {
	var err error
	if o.StatesRule, err = profile.ParseRule(m.StatesRule); err != nil {
		return &flagError{err}
	}
	if o.StatesRule == profile.ByCalinskiHarabasz && o.Norm.Within == normalize.WithinAlign {
		return flagErrorf("--states-rule ch with --within align: the aligned states decide a range by the valley rule; use --within none, rest, centre or robust-z for ch")
	}
	if o.NoCalibration, err = secondOf("calibration", m.Calibration, "sphere", "off"); err != nil {
		return err
	}
	if !(m.Valley > 0 && m.Valley <= 1) {
		return flagErrorf("--valley %v: a share of the density's height lies in (0, 1]", m.Valley)
	}
	o.Valley = m.Valley
	if m.Fits < 1 || m.Fits > 9 {
		return flagErrorf("--fits %d: fit the states 1 to 9 times", m.Fits)
	}
	o.Fits = m.Fits
	if !(m.OffsetICC > 0 && m.OffsetICC <= 1) || !(m.RestShare > 0 && m.RestShare <= 1) {
		return flagErrorf("--offset-icc %v, --rest-share %v: both lie in (0, 1]", m.OffsetICC, m.RestShare)
	}
	switch p := strings.TrimSpace(m.PCA); {
	case p == "off":
		o.Norm.NoPCA = true
	case strings.Contains(p, "."):
		v, err := strconv.ParseFloat(p, 64)
		if err != nil || !(v > 0 && v <= 1) {
			return flagErrorf("--pca %q: a variance share lies in (0, 1]", m.PCA)
		}
		o.Norm.PCAVariance = v
	default:
		n, err := strconv.Atoi(p)
		if err != nil || n < 1 {
			return flagErrorf("--pca %q: give a share such as 0.99, a number of components, or off", m.PCA)
		}
		o.Norm.PCAComponents = n
	}
	if o.States, err = parseRange("states", m.States); err != nil {
		return err
	}
	return nil
}

// groupOptions reads how the participants are grouped, and on what signature.
func (m *mainFlags) groupOptions(o *job.Options) error {
	var err error
	if o.Method, err = group.ParseMethod(m.Method); err != nil {
		return &flagError{err}
	}
	least, groups, criterion := 2, m.Groups, m.Criterion
	if o.Method == group.Mixture {
		least = 1 // the mixture may find no groups
	} else {
		// The defaults are the mixture's: another method groups into 2 to 8 by gap-stable-firm
		// unless told otherwise.
		if groups == defaultGroups {
			groups = "2-8"
		}
		if criterion == defaultCriterion {
			criterion = "gap-stable-firm"
		}
	}
	if o.Groups, err = parseRangeFrom("groups", groups, least); err != nil {
		return err
	}
	if m.GroupValley < 0 || m.GroupValley >= 1 {
		return flagErrorf("--group-valley %v: use a share in [0, 1)", m.GroupValley)
	}
	o.GroupValley = m.GroupValley
	o.KeepTwins = m.KeepTwins
	switch m.Signature {
	case job.SignatureWhole:
	case job.SignatureDayParts:
		o.Signature, o.DayParts = m.Signature, profile.DayParts(m.DayParts)
		if err := o.DayParts.Check(); err != nil {
			return flagErrorf("--day-parts %v: %s", m.DayParts, strings.TrimPrefix(err.Error(), "profile: "))
		}
	default:
		return flagErrorf("--signature %q: use whole or day-parts", m.Signature)
	}
	if o.Criterion, err = group.ParseCriterion(criterion); err != nil {
		return &flagError{err}
	}
	if mixtureCriterion := o.Criterion == group.ByBIC || o.Criterion == group.ByICL; mixtureCriterion != (o.Method == group.Mixture) {
		return flagErrorf("--criterion %s with --method %s: bic and icl choose the mixture's number of groups, gap-stable-firm, gap-stable, gap, stability and silhouette the other methods'", criterion, o.Method)
	}
	return nil
}

// secondOf reads a flag that takes one of two words: false for the first, true for the second,
// and a usage error naming both for anything else.
func secondOf(flag, value, first, second string) (bool, error) {
	switch value {
	case first:
		return false, nil
	case second:
		return true, nil
	}
	return false, flagErrorf("--%s %q: use %s or %s", flag, value, first, second)
}

// settings lists every setting of the fit for the Settings sheet, in settingTable's order.
func (m *mainFlags) settings() []modelfile.Setting {
	var out []modelfile.Setting
	for _, s := range settingTable {
		if s.label != "" {
			out = append(out, modelfile.Setting{Name: s.label, Value: s.show(m)})
		}
	}
	return out
}

// progress returns a step printer: on a terminal, a line per step on stderr; otherwise nothing.
func progress(env *Env, quiet bool, now func() time.Time) func(string) {
	if quiet || !env.IO.ErrIsTTY {
		return nil
	}
	start := now()
	return func(step string) {
		fmt.Fprintf(env.IO.Err, "  %6.1fs  %s…\n", now().Sub(start).Seconds(), step)
	}
}

// readBar draws a bar per input file while it is parsed, with bytes, bytes per second and the
// windows read (github.com/schollz/progressbar), on a terminal only.
func readBar(env *Env, quiet bool) func(file string, done, total, windows int64) {
	if quiet || !env.IO.ErrIsTTY {
		return nil
	}
	var bar *progressbar.ProgressBar
	current := ""
	var start time.Time
	var first int64
	return func(file string, done, total, windows int64) {
		if file != current {
			if bar != nil {
				bar.Finish()
			}
			current, start, first = file, time.Now(), windows
			if total <= 0 {
				total = -1 // unknown size: a spinner
			}
			bar = progressbar.NewOptions64(total, progressbar.OptionSetWriter(env.IO.Err), progressbar.OptionShowBytes(true),
				progressbar.OptionSetDescription("  reading "+filepath.Base(file)), progressbar.OptionThrottle(100*time.Millisecond),
				progressbar.OptionClearOnFinish(), progressbar.OptionSetWidth(30))
		}
		if s := time.Since(start).Seconds(); s > 0.2 {
			bar.Describe(fmt.Sprintf("  reading %s, %s windows (%s/s)", filepath.Base(file), count(windows), count(int64(float64(windows-first)/s))))
		}
		bar.Set64(done)
		if total > 0 && done >= total {
			bar.Finish()
		}
	}
}

// count writes a number of windows briefly: 950, 12.3k, 4.56M.
func count(n int64) string {
	switch {
	case n >= 1_000_000:
		return fmt.Sprintf("%.2fM", float64(n)/1e6)
	case n >= 10_000:
		return fmt.Sprintf("%.1fk", float64(n)/1e3)
	}
	return strconv.FormatInt(n, 10)
}

// passBar draws a bar for a pass over the participants (normalizing, assigning), with
// participants done and per second, on a terminal only.
func passBar(env *Env, quiet bool) func(step string, done, total int) {
	return countBar(env, quiet, "participants")
}

// stepBar draws a bar for the steps of a fit that are counted in candidates, reference sets or
// resamples (the states and the groups), with how many are done, on a terminal only.
func stepBar(env *Env, quiet bool) func(step string, done, total int) {
	return countBar(env, quiet, "")
}

// countBar draws one bar per step (github.com/schollz/progressbar), counting in unit, with a
// rate when unit is given.
func countBar(env *Env, quiet bool, unit string) func(step string, done, total int) {
	if quiet || !env.IO.ErrIsTTY {
		return nil
	}
	var bar *progressbar.ProgressBar
	current := ""
	return func(step string, done, total int) {
		if step != current {
			if bar != nil {
				bar.Finish()
			}
			current = step
			opts := []progressbar.Option{progressbar.OptionSetWriter(env.IO.Err), progressbar.OptionSetDescription("  " + step),
				progressbar.OptionShowCount(), progressbar.OptionThrottle(100 * time.Millisecond), progressbar.OptionClearOnFinish(), progressbar.OptionSetWidth(30)}
			if unit != "" {
				opts = append(opts, progressbar.OptionShowIts(), progressbar.OptionSetItsString(unit))
			}
			bar = progressbar.NewOptions(total, opts...)
		}
		bar.Set(done)
		if done >= total {
			bar.Finish()
		}
	}
}

// applyOptions sets the fit flags from a version-2 model's options (by flag name), except those
// the user gave (changed).
func (m *mainFlags) applyOptions(opts map[string]string, changed func(name string) bool) error {
	var tmp mainFlags
	cmd := &cobra.Command{}
	tmp.register(cmd)
	tmp = *m
	for name, val := range opts {
		if runOnly(name) || changed(name) {
			continue
		}
		f := cmd.Flags().Lookup(name)
		if f == nil {
			return fmt.Errorf("the model stores option --%s, which this version does not know; refit with 'cohortmix group'", name)
		}
		if sv, ok := f.Value.(pflag.SliceValue); ok {
			var items []string
			if val != "" {
				items = strings.Split(val, ",")
			}
			if err := sv.Replace(items); err != nil {
				return fmt.Errorf("the model's option --%s %q: %w", name, val, err)
			}
			continue
		}
		if err := f.Value.Set(val); err != nil {
			return fmt.Errorf("the model's option --%s %q: %w", name, val, err)
		}
	}
	*m = tmp
	return nil
}

// windowSetting is the window length as the settings sheet shows it.
func windowSetting(d time.Duration) string {
	if d == 0 {
		return "from the order column's times, when it holds times"
	}
	return d.String()
}

// rangeText writes increasing numbers as --states and --groups take them: "6" or "2-12".
func rangeText(ks []int) string {
	if len(ks) == 0 {
		return ""
	}
	if len(ks) == 1 {
		return strconv.Itoa(ks[0])
	}
	return fmt.Sprintf("%d-%d", ks[0], ks[len(ks)-1])
}

// fromModel sets the fit flags the user did not give (changed) as a model was fitted: from its
// typed settings, or for a version-2 model from its options by flag name.
func (m *mainFlags) fromModel(prev *modelfile.Model, changed func(name string) bool) error {
	if prev.Fit == nil {
		return m.applyOptions(prev.Options, changed)
	}
	for _, s := range settingTable {
		if !s.runOnly() && !changed(s.flag) {
			s.fromModel(m, prev.Fit, prev.Read)
		}
	}
	return nil
}
