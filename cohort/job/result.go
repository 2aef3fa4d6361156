package job

import (
	"math"
	"sort"
	"time"

	"github.com/cohortmix/cohortmix/cluster/groupstat"
	"github.com/cohortmix/cohortmix/cohort"
	"github.com/cohortmix/cohortmix/cohort/group"
	"github.com/cohortmix/cohortmix/cohort/modelfile"
	"github.com/cohortmix/cohortmix/cohort/note"
	"github.com/cohortmix/cohortmix/normalize"
	"github.com/cohortmix/cohortmix/profile"
)

// UnitMark marks a unit that fits its group weakly, by its silhouette.
type UnitMark int

const (
	MarkNone            UnitMark = iota // a silhouette of WeakSilhouette or more, or none
	MarkWeakFit                         // a silhouette from 0 to WeakSilhouette
	MarkCloserElsewhere                 // a negative silhouette: closer to another group
)

// WeakSilhouette is the silhouette below which a unit's fit to its group is marked weak (after
// Kaufman & Rousseeuw 1990, who read an average silhouette of 0.25 or less as no substantial
// structure; the value is from memory).
const WeakSilhouette = 0.25

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
	Mark      UnitMark // a weak fit to its group, by the silhouette
	Share     []float64
	Bout      []float64
	Stay      float64 // share of bootstrap resamples in which it stayed with its group; NaN when not computed
	Turn      float64 // degrees its device was turned by the align step; NaN without one
	// Calibration is the length of the offset the sphere calibration took from its axis means,
	// in g (the cohort's length of gravity); NaN where the device was left as read or
	// calibration was off.
	Calibration float64
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
	Settings      []modelfile.Setting
	Files         []cohort.FileInfo
	Features      []string
	OrderKind     string
	Quality       cohort.Quality
	// TimeZone is the zone times with an offset were read in ("" for UTC, or times without
	// one); TimeOfDay each group's time of day, nil without times; Signature and DayParts what
	// the grouping saw (job.Options.Signature).
	TimeZone  string
	TimeOfDay []GroupTimeOfDay
	Signature string
	DayParts  profile.DayParts
	// DayPartCounts are, with the day-part signature and more than one group, the windows of
	// each group and of the whole cohort (last row) in each state within each part of the day:
	// len(DayParts)·k counts per row, part by part; nil otherwise.
	DayPartCounts [][]float64
	Norm          *normalize.Fit
	States        *profile.States
	StateNames    []string
	// WindowLength is the length of one window (0: not known), and WindowSource where it came
	// from.
	WindowLength time.Duration
	WindowSource WindowSource
	StateDesc    []profile.Description
	Labels       *profile.LabelTable
	Grouping     *group.Grouping
	GroupNames   []string
	Units        []UnitRow
	Separations  []group.Separation
	NotTested    []cohort.LeftOut
	Warnings     []note.Note
	// Reproducibility is how alike the fits of the states from different random starts group
	// the sampled participants (median adjusted Rand index); NaN when not measured.
	Reproducibility float64
	AtypicalCut     float64      // 99th percentile of members' distances to their group centre
	FeatureRange    [][3]float64 // per feature: 1st percentile, median and 99th percentile of participant medians
	Changes         *Changes     // set by assign and refresh
	Sensitivity     []Sensitivity
	// SensitivityNote says in a line that the groups depend on the number of movement states,
	// when the fits the states were chosen among say so (NoteStatesDepend); no note (an empty
	// Kind) otherwise.
	SensitivityNote note.Note
	Notes           []note.Note // what the run decided on its own that a reader should know (not warnings)
	// OptionName puts the options a note's words name by their Go names (such as
	// group.Options.Method) as the reader sets them, for example as command-line flags: it is
	// given the words and returns them so named; nil leaves the Go names.
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

// ChangeRow is one participant (or wave) of the new run.
type ChangeRow struct {
	ID, Wave      string
	Previous, Now string  // group names; Previous is empty for a participant new to the cohort
	Moved         string  // "no", "yes" or "new participant"
	DistNow       float64 // to the centre of its group now
	DistPrevious  float64 // to the centre of its previous group (NaN when none)
	Atypical      bool    // farther from every group than almost all fitted members (assign)
	// Probability is that of its group now under the mixture (the mixture method; NaN
	// otherwise): what placed it there.
	Probability float64
}

// MovedRows are the rows of participants who changed group, in the order of their ids.
func (c *Changes) MovedRows() []ChangeRow {
	var out []ChangeRow
	for _, row := range c.Rows {
		if row.Moved == "yes" {
			out = append(out, row)
		}
	}
	sort.SliceStable(out, func(a, b int) bool {
		return cohort.NaturalLess(out[a].ID+"\x00"+out[a].Wave, out[b].ID+"\x00"+out[b].Wave)
	})
	return out
}

// ReturningPeople counts the people among the returning rows (a person's waves count once).
func (c *Changes) ReturningPeople() int {
	people := map[string]bool{}
	for _, row := range c.Rows {
		if row.Previous != "" {
			people[row.ID] = true
		}
	}
	return len(people)
}

// GroupChange is one group's fate.
type GroupChange struct {
	Name          string
	Status        string
	Before, After int
	Drift         float64 // distance its centre moved (NaN when not matched)
}

// Changes is the record of who moved between a model and a new run.
type Changes struct {
	Mode  string // "assign" or "refresh"
	Model string // the model file it started from
	// ModelCreated is when that model was fitted.
	ModelCreated time.Time
	Rows         []ChangeRow
	Groups       []GroupChange
	States       []GroupChange // state names with their drift (refresh)
	Returning    int
	ARI          float64 // agreement of old and new groups among returning participants (NaN if < 2)
	Notes        []note.Note
}

// Counts are the numbers of participants as every sheet states them. With a wave column each
// wave of a participant is a unit of its own (a participant-wave), and people are counted apart;
// atypical units (placed by assign farther from every group than the model's members) belong to
// no group and are counted apart from the grouped ones.
type Counts struct {
	Waves                     bool // units are participant-waves
	UnitsIn, Grouped          int  // units in the input; units in a group
	Atypical, Excluded        int
	PeopleIn, PeopleGrouped   int // distinct participants, in the input and in a group
	PeopleAtypical, PeopleOut int // distinct participants with an atypical or an excluded unit
}

// Counts counts the result's participants, participant-waves and people.
func (r *Result) Counts() Counts {
	c := Counts{UnitsIn: r.Quality.UnitsIn, Excluded: len(r.Quality.Excluded)}
	in, grouped, atyp, out := map[string]bool{}, map[string]bool{}, map[string]bool{}, map[string]bool{}
	for _, u := range r.Units {
		c.Waves = c.Waves || u.Wave != ""
		in[u.ID] = true
		if u.Atypical {
			c.Atypical++
			atyp[u.ID] = true
		} else {
			c.Grouped++
			grouped[u.ID] = true
		}
	}
	for _, e := range r.Quality.Excluded {
		c.Waves = c.Waves || e.Wave != ""
		in[e.ID] = true
		out[e.ID] = true
	}
	c.PeopleIn, c.PeopleGrouped, c.PeopleAtypical, c.PeopleOut = len(in), len(grouped), len(atyp), len(out)
	return c
}

// GroupMeans returns each group's mean shares, size and mean silhouette, over the units in a
// group (atypical units are in none).
func (r *Result) GroupMeans() ([][]float64, []int, []float64) {
	shares, sils := make([][]float64, len(r.Units)), make([][]float64, len(r.Units))
	labels := make([]int, len(r.Units))
	for i, u := range r.Units {
		shares[i], sils[i], labels[i] = u.Share, []float64{u.Silhouette}, u.Group
		if u.Atypical {
			labels[i] = -1
		}
	}
	means, sizes := groupstat.GroupMeans(shares, labels, len(r.GroupNames))
	silMeans, _ := groupstat.GroupMeans(sils, labels, len(r.GroupNames))
	out := make([]float64, len(silMeans))
	for g, m := range silMeans {
		out[g] = m[0]
	}
	return means, sizes, out
}

// The kinds of the reasons job leaves a feature, column or variable out (cohort.LeftOut).
const (
	// LeftOutTwin: a feature that orders every window as the feature Names[0] does (a monotone
	// transform of it), left out (Options.KeepTwins keeps it).
	LeftOutTwin note.Kind = "job.left-out.twin"
	// LeftOutNotInModel: a column of new data that is not among the model's features.
	LeftOutNotInModel note.Kind = "job.left-out.not-in-model"
	// LeftOutLabels: the activity labels the model's cohort was described with, which placing
	// new data does not read.
	LeftOutLabels note.Kind = "job.left-out.labels"
	// NotTestedOneGroup: no variable is tested, as the participants form one group.
	NotTestedOneGroup note.Kind = "job.not-tested.one-group"
)

// The kinds of the run's notes (Result.Notes) and warnings (Result.Warnings), with the order of
// their numbers and names.
const (
	// NoteAxes: how the align step's axis means were found, Ints[0] (AxesNone, AxesNamed,
	// AxesNotFound or AxesFound), with their names in Names[0:3] (named or found) and, for those
	// found or not, the coefficient of variation of the steadiest triple's vector length in
	// Floats[0] (NaN: no triple named alike). What turns with them follows: Ints[1] is 1 when
	// the axis s.d.s and correlations do, whose names are Names[3:9]; then each angle of the axis
	// means, a name in Names and three Ints (axis 0–2, 1 for an angle from the axis rather than
	// an elevation, 1 for degrees rather than radians).
	NoteAxes note.Kind = "job.axes"
	// NoteLogScales: Ints[0] features were taken on a log scale, Ints[1] left linear as they take
	// negative values and Ints[2] as a quarter or more of their values are 0; their names in that
	// order in Names.
	NoteLogScales note.Kind = "job.log-scales"
	// NoteCalibration: the axis means of Ints[0] of the Ints[1] devices were calibrated onto the
	// sphere of gravity; the others were left as read (cluster.SphereFit says when).
	NoteCalibration note.Kind = "job.calibration"
	// NoteStatesEnsemble: the states were fitted Ints[0] times (Ints[5:] the numbers of states,
	// Ints[1] random starts each); the fit kept (Ints[2] states, start Ints[3]) is the medoid of
	// the groupings of the Ints[4] sampled participants (median adjusted Rand index Floats[0],
	// lowest Floats[1]).
	NoteStatesEnsemble note.Kind = "job.states-ensemble"
	// WarnNotReproducible: the fits from other random starts group the sampled participants
	// differently (median adjusted Rand index Floats[0], below Floats[1]); Options.Seed.
	WarnNotReproducible note.Kind = "job.not-reproducible"
	// WarnStatesDisagree: fitted at Ints[0] to Ints[1] states, the fits group the sampled
	// participants differently: the fit kept agrees with the others by a mean adjusted Rand index
	// of Floats[0], below Floats[1] (StatesAgree); profile.AlignOptions.States.
	WarnStatesDisagree note.Kind = "job.states-disagree"
	// NoteGaps: Ints[0] interruptions of the recording (a step to the next window over Floats[0]
	// times the participant's usual one) in Ints[1] participants end the bout they fall in.
	NoteGaps note.Kind = "job.gaps"
	// WarnMadeByUnreadable: the record of how the features of Names[0] were made ("": the
	// model's data) cannot be read.
	WarnMadeByUnreadable note.Kind = "job.made-by.unreadable"
	// WarnMadeByMissing: the file Names[0] has no record of the features step whose features the
	// model was fitted on.
	WarnMadeByMissing note.Kind = "job.made-by.missing"
	// WarnMadeByDiffers: the features of the file Names[0] were made otherwise than those of
	// Names[1] ("": the model's data), in the ways Names[2] says.
	WarnMadeByDiffers note.Kind = "job.made-by.differs"
	// NoteGroupChanges (Changes.Notes): Ints[0] groups kept their names; then the names of the
	// Ints[1] new groups, the Ints[2] gone and the Ints[3] merged (each with its status) in Names.
	NoteGroupChanges note.Kind = "job.group-changes"
	// NoteStatesDepend (Result.SensitivityNote): with the numbers of states Ints[1:], which the
	// data support about as well as the Ints[0] kept, the sampled participants fall into other
	// groups (adjusted Rand indices Floats, in the same order).
	NoteStatesDepend note.Kind = "job.states-depend"
)

// NoteGroupsCapped (in Quality.Notes): with Ints[0] participants, up to Ints[1] groups were
// tried, of the up to Ints[2] asked for.
const NoteGroupsCapped note.Kind = "job.groups-capped"

// GroupBouts is each group's mean bout length in each state over its members who entered the
// state (NaN where none did); atypical units are in no group.
func (r *Result) GroupBouts() [][]float64 {
	bouts, labels := make([][]float64, len(r.Units)), make([]int, len(r.Units))
	for i, u := range r.Units {
		bouts[i], labels[i] = u.Bout, u.Group
		if u.Atypical {
			labels[i] = -1
		}
	}
	return groupstat.GroupMeansOfPositive(bouts, labels, len(r.GroupNames))
}

// CohortMeans is the mean share of each state and the mean bout length in each (over the units
// that entered it) of all grouped units; atypical units are in no group.
func (r *Result) CohortMeans() (share, bout []float64) {
	shares, bouts, labels := make([][]float64, len(r.Units)), make([][]float64, len(r.Units)), make([]int, len(r.Units))
	for i, u := range r.Units {
		shares[i], bouts[i] = u.Share, u.Bout
		if u.Atypical {
			labels[i] = -1
		}
	}
	means, _ := groupstat.GroupMeans(shares, labels, 1)
	return means[0], groupstat.GroupMeansOfPositive(bouts, labels, 1)[0]
}

// StateSpread is how one state's share spreads over the grouped units: its median and 10th and
// 90th percentiles, and the median bout length of the units that entered it (NaN where none
// did).
type StateSpread struct {
	Median, P10, P90, Bout float64
}

// Spread is each state's spread over the units of the first group (with one group, every
// grouped unit).
func (r *Result) Spread() []StateSpread {
	k := len(r.StateNames)
	if len(r.Units) > 0 {
		k = len(r.Units[0].Share)
	}
	out := make([]StateSpread, k)
	for j := range out {
		var col, bcol []float64
		for _, u := range r.Units {
			if u.Group == 0 && !u.Atypical {
				col = append(col, u.Share[j])
				if u.Bout[j] > 0 {
					bcol = append(bcol, u.Bout[j])
				}
			}
		}
		out[j] = StateSpread{Median: groupstat.Quantile(col, 0.5), P10: groupstat.Quantile(col, 0.1), P90: groupstat.Quantile(col, 0.9), Bout: math.NaN()}
		if len(bcol) > 0 {
			out[j].Bout = groupstat.Quantile(bcol, 0.5)
		}
	}
	return out
}
