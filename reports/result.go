// Package reports writes an analysis for people: the workbook for clinicians, the plain members
// CSV for statistics programs, and the model file that later waves are placed with. It formats
// results and computes nothing beyond that.
//
// # Conventions
//
// Outputs are written atomically: to a temporary file beside the target, then renamed, so an
// interrupted run never leaves half a file. Any cell text that a spreadsheet could take for a
// formula is stored as text.
package reports

import (
	"time"

	"github.com/cohortmix/cohortmix/cohort"
	"github.com/cohortmix/cohortmix/normalize"
	"github.com/cohortmix/cohortmix/profile"
)

// Setting is one parameter as shown on the settings sheet.
type Setting struct{ Name, Value string }

// UnitRow is one grouped participant (or participant wave).
type UnitRow struct {
	ID, Wave   string
	Windows    int
	NonWear    int         // windows left out as non-wear (cohort.ReadOptions.NonWear)
	Wear       cohort.Wear // wear time by day under the valid-day rule (zero without it)
	Rhythm     profile.Rhythm
	Group      int
	Silhouette float64
	Distance   float64
	// Posterior is the probability of its group under the mixture (the mixture method); NaN
	// for the other methods.
	Posterior float64
	Flag      string
	Share     []float64
	Bout      []float64
	Stay      float64 // share of bootstrap resamples in which it stayed with its group; NaN when not computed
	Turn      float64 // degrees its device was turned by the align step; NaN without one
	// Atypical marks a unit that assign found farther from every group than the model's members:
	// it belongs to no group (Group is only its nearest).
	Atypical bool
}

// GroupTimeOfDay is when in the day and week one group's members spent their windows: the share
// of each state among the group's windows in each hour of the wall clock, and on weekdays and at
// weekends (a share row is nil where the group has no window).
type GroupTimeOfDay struct {
	ByHour           [24][]float64
	Hours            [24]int // windows in each hour
	Weekday, Weekend []float64
	WeekdayWindows   int
	WeekendWindows   int
}

// Result is everything an analysis produced, as the reports show it.
type Result struct {
	Tool, Version string
	Created       time.Time
	Command       string
	Synthetic     bool // the input is invented demo data
	Settings      []Setting
	Files         []cohort.FileInfo
	Features      []string
	OrderKind     string
	Quality       cohort.Quality
	// TimeZone is the zone times with an offset were read in ("" for UTC, or times without
	// one); TimeOfDay each group's time of day, nil without times; Signature and DayParts what
	// the grouping saw (job.Options.Signature).
	TimeZone   string
	TimeOfDay  []GroupTimeOfDay
	Signature  string
	DayParts   profile.DayParts
	Norm       *normalize.Fit
	States     *profile.States
	StateNames []string
	StateLines []string     // one-line description per state
	StateWords []StateWords // each state in plain words
	// WindowLength is the length of one window (0: not known), and WindowSource where it came
	// from ("the order column's times" or "--window-length").
	WindowLength time.Duration
	WindowSource string
	StateDesc    []profile.Description
	Labels       *profile.LabelTable
	Grouping     *cohort.Grouping
	GroupNames   []string
	GroupLines   []string // one-line description per group
	Units        []UnitRow
	Separations  []cohort.Separation
	NotTested    []cohort.Note
	Warnings     []string
	// Reproducibility is how alike the fits of the states from different random starts group
	// the sampled participants (median adjusted Rand index); NaN when not measured.
	Reproducibility float64
	AtypicalCut     float64      // 99th percentile of members' distances to their group centre
	FeatureRange    [][3]float64 // per feature: 1st percentile, median and 99th percentile of participant medians
	Changes         *Changes     // set by assign and refresh
	Sensitivity     []Sensitivity
	// SensitivityNote says in a line that the groups depend on the number of movement states,
	// when the fits the states were chosen among say so; "" otherwise.
	SensitivityNote string
	Notes           []string // what the run decided on its own that a reader should know (not warnings)
	// OptionName names an option (given by its Go name, such as job.Options.Window) as the
	// reader sets it, for example by a command-line flag; nil leaves the Go name.
	OptionName func(string) string
	// SeparationBasis says which units the separating-variable tests use when that is not
	// simply every grouped participant (waves: one per person; atypical ones left out).
	SeparationBasis string
}

// Sensitivity is one row of the sensitivity table: the adjusted Rand index between the groups
// made and the groups under one alternative choice, with the same number of groups.
type Sensitivity struct {
	Choice, Alternative string
	Reference           bool // the settings used, refitted on the sampled windows: what the other sampled rows compare with
	Participants        int
	OnSample            bool // refitted on the sampled participants' sampled windows
	ARI                 float64
	Skipped             string // why the row could not be computed (ARI is NaN then); empty when it was
}

// Cautions are shown wherever results reach a person's care.
var Cautions = []string{
	"These groups describe movement patterns statistically. They are not diagnoses or clinical categories.",
	"Decisions about a participant belong to qualified clinicians, under the study protocol and local rules.",
	"This workbook holds participant-level data: handle it under the study's data-protection rules.",
	"The separating-variable p- and q-values are descriptive: the groups were found on the same data, so they do not confirm a difference.",
}

// optionName names an option as the reader sets it (OptionName).
func (r *Result) optionName(goName string) string {
	if r.OptionName == nil {
		return goName
	}
	return r.OptionName(goName)
}
