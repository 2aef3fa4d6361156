package main

import (
	"math"
	"slices"
	"strconv"
	"strings"
	"time"

	"github.com/spf13/pflag"

	"github.com/cohortmix/cohortmix/cohort"
	"github.com/cohortmix/cohortmix/cohort/group"
	"github.com/cohortmix/cohortmix/cohort/job"
	"github.com/cohortmix/cohortmix/cohort/modelfile"
	"github.com/cohortmix/cohortmix/normalize"
)

// setting is one entry of the table of settings (settingTable): a flag with its default and
// help, how the Settings sheet shows its value, whether it only steers how the tables are read
// (which 'check' takes too) or belongs to one run only (which refresh does not carry over), how
// refresh sets it from a model's recorded fit, and the library options it sets, by which the
// library's messages are put in the flag's words.
type setting struct {
	flag  string
	label string // its row on the Settings sheet; "" for a setting of one run only
	read  bool   // a reading setting
	// bind registers the flag on a set, its value held in m.
	bind func(f *pflag.FlagSet, m *mainFlags)
	// show is the value as the Settings sheet shows it (nil: none, a setting of one run).
	show func(m *mainFlags) string
	// fromModel sets the flag as a model was fitted; nil for a setting of one run only.
	fromModel func(m *mainFlags, f *modelfile.FitSettings, r modelfile.ReadSettings)
	// options are the library options it sets, by their Go names (cohort.ReadOptions.Wave).
	options []string
}

// runOnly tells whether a flag belongs to one run, not to the fit.
func (s setting) runOnly() bool { return s.fromModel == nil }

// The constructors below make an entry for a flag of each type; show is the value as typed.

func stringSetting(flag, label, def, help string, v func(*mainFlags) *string) setting {
	return setting{flag: flag, label: label, bind: func(f *pflag.FlagSet, m *mainFlags) { f.StringVar(v(m), flag, def, help) },
		show: func(m *mainFlags) string { return *v(m) }}
}

func stringsSetting(flag, label, help string, v func(*mainFlags) *[]string) setting {
	return setting{flag: flag, label: label, bind: func(f *pflag.FlagSet, m *mainFlags) { f.StringSliceVar(v(m), flag, nil, help) },
		show: func(m *mainFlags) string { return strings.Join(*v(m), ",") }}
}

func intSetting(flag, label string, def int, help string, v func(*mainFlags) *int) setting {
	return setting{flag: flag, label: label, bind: func(f *pflag.FlagSet, m *mainFlags) { f.IntVar(v(m), flag, def, help) },
		show: func(m *mainFlags) string { return strconv.Itoa(*v(m)) }}
}

func intsSetting(flag, label string, def []int, help string, v func(*mainFlags) *[]int) setting {
	return setting{flag: flag, label: label, bind: func(f *pflag.FlagSet, m *mainFlags) { f.IntSliceVar(v(m), flag, def, help) },
		show: func(m *mainFlags) string {
			parts := make([]string, len(*v(m)))
			for i, x := range *v(m) {
				parts[i] = strconv.Itoa(x)
			}
			return strings.Join(parts, ",")
		}}
}

func floatSetting(flag, label string, def float64, help string, v func(*mainFlags) *float64) setting {
	return setting{flag: flag, label: label, bind: func(f *pflag.FlagSet, m *mainFlags) { f.Float64Var(v(m), flag, def, help) },
		show: func(m *mainFlags) string { return strconv.FormatFloat(*v(m), 'g', -1, 64) }}
}

func boolSetting(flag, label, help string, v func(*mainFlags) *bool) setting {
	return setting{flag: flag, label: label, bind: func(f *pflag.FlagSet, m *mainFlags) { f.BoolVar(v(m), flag, false, help) },
		show: func(m *mainFlags) string { return strconv.FormatBool(*v(m)) }}
}

// reading marks an entry as a reading setting.
func (s setting) reading() setting { s.read = true; return s }

// sets names the library options an entry sets.
func (s setting) sets(options ...string) setting { s.options = options; return s }

// restoredBy gives an entry the way refresh sets it from a model.
func (s setting) restoredBy(from func(m *mainFlags, f *modelfile.FitSettings, r modelfile.ReadSettings)) setting {
	s.fromModel = from
	return s
}

// shownAs replaces how the Settings sheet shows an entry's value.
func (s setting) shownAs(show func(m *mainFlags) string) setting { s.show = show; return s }

// settingTable is every setting of the commands that run the main job, in the order of the
// Settings sheet. The defaults are those of job.Defaults, so that a run with no flags is the
// library's default run (TestCommandLinesBecomeOptions). A new setting is an entry here, its field
// in mainFlags, its reading into job.Options in (*mainFlags).options, and, when the fit depends
// on it, its field in modelfile.FitSettings (job.Options.FitSettings).
var settingTable = func() []setting {
	d := job.Defaults()
	type fit = modelfile.FitSettings
	type read = modelfile.ReadSettings
	return []setting{
		stringSetting("id", "id column", d.Read.ID, "column holding the participant id", func(m *mainFlags) *string { return &m.ID }).reading().
			restoredBy(func(m *mainFlags, _ *fit, r read) { m.ID = r.ID }),
		stringSetting("order", "order column", d.Read.Order, "column holding the window order (integers or ISO-8601 times); - keeps file order", func(m *mainFlags) *string { return &m.Order }).reading().
			restoredBy(func(m *mainFlags, _ *fit, r read) { m.Order = r.Order }),
		stringSetting("wave", "wave column", "", "optional column holding the visit or wave; each wave of a participant is grouped on its own", func(m *mainFlags) *string { return &m.Wave }).reading().
			restoredBy(func(m *mainFlags, _ *fit, r read) { m.Wave = r.Wave }).sets("cohort.ReadOptions.Wave"),
		stringSetting("label", "label column", "", "optional column of known activity labels, used only for the validation table", func(m *mainFlags) *string { return &m.Label }).reading().
			restoredBy(func(m *mainFlags, _ *fit, r read) { m.Label = r.Label }),
		stringsSetting("features", "feature patterns", "feature name patterns, e.g. 'mean_*,vm_*' (default: every other numeric column)", func(m *mainFlags) *[]string { return &m.Features }).reading().
			restoredBy(func(m *mainFlags, _ *fit, r read) { m.Features = slices.Clone(r.Features) }).sets("cohort.ReadOptions.Features"),
		stringSetting("missing", "missing cells", "drop", "missing feature cells: drop (the window) or impute (the participant's median)", func(m *mainFlags) *string { return &m.Missing }).reading().
			restoredBy(func(m *mainFlags, _ *fit, r read) {
				m.Missing = "drop"
				if r.Missing == cohort.ImputeMedian.String() {
					m.Missing = "impute"
				}
			}),
		intSetting("min-windows", "minimum windows", d.Read.MinWindows, "exclude participants with fewer usable windows", func(m *mainFlags) *int { return &m.MinWindows }).reading().
			restoredBy(func(m *mainFlags, _ *fit, r read) { m.MinWindows = r.MinWindows }).sets("cohort.ReadOptions.MinWindows"),
		stringSetting("non-wear", "non-wear rule", d.Read.NonWear, "leave out windows the device was not worn, from activity counts with times: choi (90 minutes or more of zero counts, Choi et al. 2011), troiano (60 minutes or more, Troiano et al. 2008), none, or auto (choi where there are counts and times)", func(m *mainFlags) *string { return &m.NonWear }).reading().
			restoredBy(func(m *mainFlags, _ *fit, r read) {
				m.NonWear = "none" // a model from before the rule read every window
				if r.NonWear != "" {
					m.NonWear = r.NonWear
				}
			}),
		stringSetting("non-wear-column", "non-wear counts column", "", "the activity-counts column of the non-wear rule (default: the feature named counts, count, cpm or axis1)", func(m *mainFlags) *string { return &m.NonWearColumn }).reading().
			restoredBy(func(m *mainFlags, _ *fit, r read) { m.NonWearColumn = r.NonWearFeature }).sets("cohort.ReadOptions.NonWearFeature"),
		stringSetting("time-zone", "time zone", "", "the study's time zone (an IANA name such as Europe/Berlin) in which times given with a UTC offset are read for days, hours and weekends (default UTC; times without an offset are read as written)", func(m *mainFlags) *string { return &m.TimeZone }).reading().
			restoredBy(func(m *mainFlags, _ *fit, r read) { m.TimeZone = r.TimeZone }).sets("cohort.ReadOptions.TimeZone"),
		stringSetting("wear-column", "wear column", "", "a column marking each window worn (1) or not (0), as the device's own wear detection gives it, in place of the non-wear rule", func(m *mainFlags) *string { return &m.WearColumn }).reading().
			restoredBy(func(m *mainFlags, _ *fit, r read) { m.WearColumn = r.WearColumn }).sets("cohort.ReadOptions.WearColumn"),
		stringSetting("valid-day", "valid day", "auto", "the wear that makes a day valid, as 10h (16h for a 24-hour protocol), or none; auto: 10h where the non-wear rule runs", func(m *mainFlags) *string { return &m.ValidDay }).reading().
			restoredBy(func(m *mainFlags, _ *fit, r read) {
				m.ValidDay = "none" // a model from before the rule kept every day
				if r.ValidDay != "" {
					m.ValidDay = r.ValidDay
				}
			}),
		intSetting("valid-days", "valid days needed", d.Read.ValidDays, "valid days a participant needs (with the valid-day rule); others are excluded and listed", func(m *mainFlags) *int { return &m.ValidDays }).reading().
			restoredBy(func(m *mainFlags, _ *fit, r read) { m.ValidDays = max(r.ValidDays, 1) }).sets("cohort.ReadOptions.ValidDays"),
		boolSetting("weekend-day", "a valid weekend day needed", "with the valid-day rule, a participant also needs a valid Saturday or Sunday", func(m *mainFlags) *bool { return &m.WeekendDay }).reading().
			restoredBy(func(m *mainFlags, _ *fit, r read) { m.WeekendDay = r.WeekendDay }).sets("cohort.ReadOptions.WeekendDay"),
		stringSetting("within", "within-participant step", d.Norm.Within.String(), "within-participant step: "+normalize.WithinHelp(), func(m *mainFlags) *string { return &m.Within }).
			restoredBy(func(m *mainFlags, f *fit, _ read) { m.Within = f.Within }).sets("normalize.Options.Within"),
		stringsSetting("within-features", "within-step features", "features the within step touches: patterns, or * for all (default: every feature with align, otherwise those found to carry offsets)", func(m *mainFlags) *[]string { return &m.WithinFeatures }).
			restoredBy(func(m *mainFlags, f *fit, _ read) { m.WithinFeatures = slices.Clone(f.WithinFeatures) }).sets("normalize.Options.WithinFeatures"),
		stringSetting("axes", "axis means (align)", "auto", "the axis-mean features the align step turns, in x,y,z order; auto finds them by name; none turns nothing", func(m *mainFlags) *string { return &m.Axes }).
			restoredBy(func(m *mainFlags, f *fit, _ read) {
				switch {
				case f.NoAxes:
					m.Axes = "none"
				case len(f.Axes) > 0:
					m.Axes = strings.Join(f.Axes, ",")
				default:
					m.Axes = "auto"
				}
			}).sets("job.Options.Axes"),
		stringSetting("turn", "turned with the axis means", "all", "what the align step turns with the axis means: all also turns the axis s.d.s, correlations and angles it finds; means turns the axis means only", func(m *mainFlags) *string { return &m.Turn }).
			restoredBy(func(m *mainFlags, f *fit, _ read) { m.Turn = map[bool]string{false: "all", true: "means"}[f.NoTurn] }),
		stringSetting("log", "log scale", "auto", "auto takes every feature that is never below 0 on a log scale; none keeps every feature as read", func(m *mainFlags) *string { return &m.Log }).
			restoredBy(func(m *mainFlags, f *fit, _ read) { m.Log = map[bool]string{false: "none", true: "auto"}[f.Log] }),
		stringSetting("states-rule", "rule for a range of states", d.StatesRule.String(), "how a range of states is decided: valley (fit the most, merge states that form one mode) or ch (largest Calinski–Harabasz index)", func(m *mainFlags) *string { return &m.StatesRule }).
			restoredBy(func(m *mainFlags, f *fit, _ read) { m.StatesRule = f.StatesRule }),
		stringSetting("calibration", "calibration of the axis means", "sphere", "with the align step: sphere calibrates each device's axis means onto the sphere of gravity before turning them (van Hees et al. 2014); off leaves them as read", func(m *mainFlags) *string { return &m.Calibration }).
			restoredBy(func(m *mainFlags, f *fit, _ read) {
				m.Calibration = map[bool]string{false: "sphere", true: "off"}[f.NoCalibration]
			}),
		intSetting("fits", "fits of the states", d.Fits, "with the align step: fit each number of states this many times from different random starts, and keep the fit whose grouping of the sampled participants agrees best with all the others'", func(m *mainFlags) *int { return &m.Fits }).
			restoredBy(func(m *mainFlags, f *fit, _ read) { m.Fits = max(1, f.Fits) }),
		floatSetting("valley", "valley ratio", d.Valley, "with --states-rule valley: two states merge when the density of their windows between them keeps at least this share of its height at them", func(m *mainFlags) *float64 { return &m.Valley }).
			restoredBy(func(m *mainFlags, f *fit, _ read) { m.Valley = f.Valley }),
		floatSetting("offset-icc", "offset ICC threshold", d.Norm.OffsetICC, "features with at least this ICC are taken to carry device offsets", func(m *mainFlags) *float64 { return &m.OffsetICC }).
			restoredBy(func(m *mainFlags, f *fit, _ read) { m.OffsetICC = f.OffsetICC }),
		floatSetting("rest-share", "rest share", d.Norm.RestShare, "share of a participant's quietest windows that defines its rest baseline", func(m *mainFlags) *float64 { return &m.RestShare }).
			restoredBy(func(m *mainFlags, f *fit, _ read) { m.RestShare = f.RestShare }),
		stringSetting("scale", "cohort scaling", d.Norm.Scale.String(), "cohort-wide scaling: z or robust-z", func(m *mainFlags) *string { return &m.Scale }).
			restoredBy(func(m *mainFlags, f *fit, _ read) { m.Scale = f.Scale }),
		stringSetting("pca", "PCA", pcaText(d.Norm.PCAVariance), "PCA: a variance share in (0,1], a number of components, or off", func(m *mainFlags) *string { return &m.PCA }).
			restoredBy(func(m *mainFlags, f *fit, _ read) {
				switch {
				case f.NoPCA:
					m.PCA = "off"
				case f.PCAComponents > 0:
					m.PCA = strconv.Itoa(f.PCAComponents)
				default:
					m.PCA = pcaText(f.PCAVariance)
				}
			}),
		stringSetting("states", "states", rangeText(d.States), "number of movement states, or a range: with the align step each is fitted and the fit kept whose grouping agrees best with the others'; otherwise the rule chooses", func(m *mainFlags) *string { return &m.States }).
			restoredBy(func(m *mainFlags, f *fit, _ read) { m.States = rangeText(f.States) }).sets("profile.Options.States", "profile.AlignOptions.States"),
		intSetting("sample", "window sample", d.Sample, "windows sampled to fit the states", func(m *mainFlags) *int { return &m.Sample }).
			restoredBy(func(m *mainFlags, f *fit, _ read) { m.Sample = f.Sample }).sets("job.Options.Sample"),
		stringSetting("groups", "groups", rangeText(d.Groups), "number of participant groups, or a range to choose from (1, no distinct groups, is a possible answer of the mixture method)", func(m *mainFlags) *string { return &m.Groups }).
			restoredBy(func(m *mainFlags, f *fit, _ read) { m.Groups = rangeText(f.Groups) }).sets("group.Options.Groups", "job.Options.Groups"),
		stringSetting("method", "grouping method", d.Method.String(), "grouping: "+group.MethodHelp(), func(m *mainFlags) *string { return &m.Method }).
			restoredBy(func(m *mainFlags, f *fit, _ read) { m.Method = f.Method }).sets("group.Options.Method"),
		stringSetting("criterion", "criterion for groups", d.Criterion.String(), "rule for the number of groups: icl or bic for the mixture method (the integrated completed likelihood, or the Bayesian information criterion); for the others gap-stable-firm (gap-stable's number, or when that grouping is tentative, its stability below 0.8, the largest smaller number whose grouping is not), gap-stable (the gap statistic's number, then one fewer while that groups more stably by more than 0.1), gap, stability or silhouette", func(m *mainFlags) *string { return &m.Criterion }).
			restoredBy(func(m *mainFlags, f *fit, _ read) { m.Criterion = f.Criterion }),
		floatSetting("group-valley", "group valley cap", 0, "lower the number of groups while two of them form one mode (density between them at least this share of its height; 0: off)", func(m *mainFlags) *float64 { return &m.GroupValley }).
			restoredBy(func(m *mainFlags, f *fit, _ read) { m.GroupValley = f.GroupValley }),
		boolSetting("keep-twins", "features that are twins of another", "keep features that order every window as an earlier feature does (a log of the counts beside the counts); by default they are left out, as the same information twice", func(m *mainFlags) *bool { return &m.KeepTwins }).
			restoredBy(func(m *mainFlags, f *fit, _ read) { m.KeepTwins = f.KeepTwins }).sets("job.Options.KeepTwins").
			shownAs(func(m *mainFlags) string { return map[bool]string{true: "kept", false: "left out"}[m.KeepTwins] }),
		stringSetting("signature", "signature", job.SignatureWhole, "what the groups are found on: whole (each participant's time in each state over the whole recording) or day-parts (in each part of the day; needs times)", func(m *mainFlags) *string { return &m.Signature }).
			restoredBy(func(m *mainFlags, f *fit, _ read) {
				m.Signature = job.SignatureWhole
				if f.Signature != "" {
					m.Signature = f.Signature
				}
			}),
		intsSetting("day-parts", "parts of the day begin at", defaultDayParts, "the hours at which the parts of the day begin: night, morning, afternoon, evening (the first may be before midnight, as 22,6,12,18)", func(m *mainFlags) *[]int { return &m.DayParts }).
			restoredBy(func(m *mainFlags, f *fit, _ read) {
				m.DayParts = slices.Clone(defaultDayParts)
				if len(f.DayParts) > 0 {
					m.DayParts = slices.Clone(f.DayParts)
				}
			}),
		intSetting("bootstrap", "bootstrap / gap references", d.Bootstrap, "resamples for stability and reference sets for the gap statistic", func(m *mainFlags) *int { return &m.Bootstrap }).
			restoredBy(func(m *mainFlags, f *fit, _ read) { m.Bootstrap = f.Bootstrap }),
		{flag: "seed", label: "seed", options: []string{"job.Options.Seed"}, bind: func(f *pflag.FlagSet, m *mainFlags) {
			f.Uint64Var(&m.Seed, "seed", d.Seed, "seed for every random step")
		},
			show:      func(m *mainFlags) string { return strconv.FormatUint(m.Seed, 10) },
			fromModel: func(m *mainFlags, f *fit, _ read) { m.Seed = f.Seed }},
		{flag: "window-length", label: "window length", options: []string{"job.Options.Window"},
			bind: func(f *pflag.FlagSet, m *mainFlags) {
				f.DurationVar(&m.WindowLength, "window-length", 0, "the length of one window, e.g. 60s, for bout lengths in minutes (default: from the order column's times, when it holds times)")
			},
			show: func(m *mainFlags) string { return windowSetting(m.WindowLength) },
			fromModel: func(m *mainFlags, f *fit, _ read) {
				m.WindowLength = time.Duration(math.Round(f.WindowSeconds * float64(time.Second)))
			}},
		// The settings of one run: not on the Settings sheet, not carried over by refresh.
		{flag: "workers", bind: func(f *pflag.FlagSet, m *mainFlags) {
			f.IntVar(&m.Workers, "workers", 0, "worker goroutines (0: all cores); never changes the result")
		}},
		{flag: "members", bind: func(f *pflag.FlagSet, m *mainFlags) {
			f.StringVar(&m.Members, "members", "", "also write a CSV here: participant, wave, group, probability of the group, silhouette, flag")
		}},
		{flag: "model", bind: func(f *pflag.FlagSet, m *mainFlags) {
			f.StringVar(&m.Model, "model", "", "also write the model file (JSON) here, for later waves")
		}},
		{flag: "pseudonymize", bind: func(f *pflag.FlagSet, m *mainFlags) {
			f.StringVar(&m.Pseudonymize, "pseudonymize", "", "replace participant ids in every output by a keyed hash, with the key in this file")
		}},
		{flag: "force", bind: func(f *pflag.FlagSet, m *mainFlags) {
			f.BoolVar(&m.Force, "force", false, "replace existing output files")
		}},
		{flag: "temp", read: true, options: []string{"cohort.ReadOptions.TempDir"}, bind: func(f *pflag.FlagSet, m *mainFlags) {
			f.StringVar(&m.Temp, "temp", "", "folder for temporary files of large inputs (default: the folder of --out, or the system's)")
		}},
		{flag: "memory-values", read: true, bind: func(f *pflag.FlagSet, m *mainFlags) {
			f.Int64Var(&m.MemoryValues, "memory-values", 0, "values the windows may hold in memory before they go to a temporary file (0: 8 Mi, 64 MiB); never changes the result")
			f.MarkHidden("memory-values") // for tests of the temporary file on small inputs
		}},
		{flag: "quiet", read: true, bind: func(f *pflag.FlagSet, m *mainFlags) {
			f.BoolVar(&m.Quiet, "quiet", false, "print only the final summary")
		}},
	}
}()

// defaultDayParts are the hours the parts of the day begin at: night, morning, afternoon, evening.
var defaultDayParts = []int{0, 6, 12, 18}

// pcaText writes a variance share as --pca takes it: with a point, so that it is not read as a
// number of components.
func pcaText(v float64) string {
	s := strconv.FormatFloat(v, 'f', -1, 64)
	if !strings.Contains(s, ".") {
		s += ".0"
	}
	return s
}

// runOnly tells whether a flag belongs to one run, not to the fit (refresh does not carry it
// over); "out" is every command's own.
func runOnly(flag string) bool {
	if flag == "out" {
		return true
	}
	for _, s := range settingTable {
		if s.flag == flag {
			return s.runOnly()
		}
	}
	return false
}
