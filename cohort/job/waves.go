package job

import (
	"context"
	"fmt"
	"math"
	"slices"
	"strings"

	"time"

	"github.com/cohortmix/cohortmix/cluster"
	"github.com/cohortmix/cohortmix/cluster/groupstat"
	"github.com/cohortmix/cohortmix/cohort"
	"github.com/cohortmix/cohortmix/cohort/group"
	"github.com/cohortmix/cohortmix/cohort/modelfile"
	"github.com/cohortmix/cohortmix/cohort/note"
	"github.com/cohortmix/cohortmix/cohort/pseudonym"
)

// The record of a later wave against the model it was placed or refitted with: who is where,
// who moved, and what became of each group and state (the Changes sheet), as library calls so
// that any program can place a wave as the command line does.

// FeatureMedians regroups the units' feature medians by feature.
func FeatureMedians(f *Fitted) [][]float64 {
	out := make([][]float64, len(f.Table.Features))
	for _, m := range f.Medians {
		for j, v := range m {
			out[j] = append(out[j], v)
		}
	}
	return out
}

// PreviousGroups maps the model's members to their groups by id and wave, and by id alone for a
// returning participant seen in a new wave.
func PreviousGroups(m *modelfile.Model) (byKey, byID map[string]string) {
	byKey, byID = map[string]string{}, map[string]string{}
	for _, mem := range m.Members {
		byKey[mem.ID+"\x00"+mem.Wave] = mem.Group
		byID[mem.ID] = mem.Group
	}
	return byKey, byID
}

// LookupPrevious is a participant-wave's group in the model: by id and wave, else by id.
func LookupPrevious(byKey, byID map[string]string, id, wave string) string {
	if g, ok := byKey[id+"\x00"+wave]; ok {
		return g
	}
	return byID[id]
}

// AssignChanges records who is where, against the model's members.
func AssignChanges(m *modelfile.Model, res *Result, model string) *Changes {
	byKey, byID := PreviousGroups(m)
	method, _ := group.ParseMethod(m.Grouping.Method)
	c := &Changes{Mode: "assign", Model: model, ModelCreated: m.Created}
	var a, b []int
	index := map[string]int{}
	for i, n := range m.Grouping.Names {
		index[n] = i
	}
	for _, u := range res.Units {
		now := res.GroupNames[u.Group]
		row := ChangeRow{ID: u.ID, Wave: u.Wave, Now: now, DistNow: u.Distance, DistPrevious: math.NaN(), Probability: u.Posterior, Atypical: u.Atypical}
		row.Previous = LookupPrevious(byKey, byID, u.ID, u.Wave)
		row.Moved = moved(row.Previous, now)
		if u.Atypical {
			row.Now, row.Moved = "none (nearest "+now+")", "in no group (atypical)"
		}
		if p, ok := index[row.Previous]; ok {
			row.DistPrevious = group.SpaceDistance(method, group.Embed(method, u.Share), m.Grouping.Centroids[p])
			c.Returning++
			if !u.Atypical {
				a, b = append(a, p), append(b, u.Group)
			}
		}
		c.Rows = append(c.Rows, row)
	}
	c.ARI = returningAgreement(a, b)
	before, after := groupSizes(m, res)
	for i, n := range m.Grouping.Names {
		c.Groups = append(c.Groups, GroupChange{Name: n, Status: "centre frozen (assign does not refit)", Before: before[n], After: after[i], Drift: 0})
	}
	return c
}

// moved says whether a participant changed group ("new participant" when it had none).
func moved(previous, now string) string {
	switch previous {
	case "":
		return "new participant"
	case now:
		return "no"
	}
	return "yes"
}

// returningAgreement is the ARI of returning participants' old and new groups (NaN for fewer than 2).
func returningAgreement(old, now []int) float64 {
	if len(old) < 2 {
		return math.NaN()
	}
	ari, _ := cluster.AdjustedRand(old, now)
	return ari
}

// groupSizes counts the model's members by group name and the new run's units by group.
func groupSizes(m *modelfile.Model, res *Result) (map[string]int, map[int]int) {
	before := map[string]int{}
	for _, mem := range m.Members {
		before[mem.Group]++
	}
	after := map[int]int{}
	for _, u := range res.Units {
		if !u.Atypical {
			after[u.Group]++
		}
	}
	return before, after
}

// MeanShares is each new group's mean signature.
func MeanShares(f *Fitted) [][]float64 {
	shares := make([][]float64, len(f.Sigs))
	for i, s := range f.Sigs {
		shares[i] = s.Share
	}
	means, _ := groupstat.GroupMeans(shares, f.Grouping.Labels, f.Grouping.K)
	return means
}

// RefreshChanges records the fate of each group and state and who moved.
func RefreshChanges(prev *modelfile.Model, res *Result, m *group.Matching, next group.Next, model string) *Changes {
	method, _ := group.ParseMethod(prev.Grouping.Method)
	c := &Changes{Mode: "refresh", Model: model, ModelCreated: prev.Created, ARI: math.NaN()}
	var a, b []int
	for i, u := range res.Units {
		row := ChangeRow{ID: u.ID, Wave: u.Wave, Now: res.GroupNames[u.Group], DistNow: u.Distance, DistPrevious: math.NaN(), Probability: u.Posterior}
		if p := next.PrevGroup[i]; p >= 0 {
			row.Previous = prev.Grouping.Names[p]
			row.DistPrevious = group.SpaceDistance(method, m.Place(u.Share), m.PrevCentres[p])
			c.Returning++
			a, b = append(a, p), append(b, u.Group)
		}
		row.Moved = moved(row.Previous, row.Now)
		c.Rows = append(c.Rows, row)
	}
	c.ARI = returningAgreement(a, b)
	before, after := groupSizes(prev, res)
	var news, gone, merged []string
	for i, name := range res.GroupNames {
		gc := GroupChange{Name: name, Status: m.NewStatus[i], After: after[i], Drift: m.GroupDrift[i]}
		if p := m.GroupPrev[i]; p >= 0 {
			gc.Before = before[prev.Grouping.Names[p]]
		} else {
			news = append(news, name)
			gc.Drift = math.NaN()
		}
		c.Groups = append(c.Groups, gc)
	}
	for p, name := range prev.Grouping.Names {
		st := m.PrevStatus[p]
		if strings.HasPrefix(st, "continues") {
			continue
		}
		if st == "gone" {
			gone = append(gone, name)
		} else {
			merged = append(merged, name+" "+st)
		}
		c.Groups = append(c.Groups, GroupChange{Name: name, Status: st, Before: before[name], Drift: math.NaN()})
	}
	for j, name := range m.StateNames {
		st := "continues"
		if m.StatePrev[j] < 0 {
			st = "new state"
		}
		c.States = append(c.States, GroupChange{Name: name, Status: st, Drift: m.StateDrift[j]})
	}
	c.Notes = append(c.Notes, note.Note{Kind: NoteGroupChanges, Ints: []int{len(res.GroupNames) - len(news), len(news), len(gone), len(merged)}, Names: slices.Concat(news, gone, merged)})
	return c
}

// AssignOptions steer Assign.
type AssignOptions struct {
	Model   string   // the model file's name, for the record of who moved
	Extra   []string // columns of the table the model does not know, which were ignored
	Key     []byte   // the pseudonymization key of a pseudonymized model (nil: none)
	Window  time.Duration
	Workers int
	// Progress, when set, is told of the pass over the participants.
	Progress func(step string, done, total int)
}

// Assign places a later wave into a model's states and groups without refitting: the table t
// (read with the model's reading settings) is normalized with the frozen fit, each window given
// its nearest state, each participant its most probable group under the frozen mixture (or its
// nearest centre for the other methods) and marked atypical when farther from every group than
// the model's members; the result carries the model's settings, warnings where the features
// lie outside the model's range or were made otherwise, and who moved since the model.
func Assign(ctx context.Context, t *cohort.Table, m *modelfile.Model, o AssignOptions) (*Result, error) {
	f, err := AssignWindows(ctx, t, m.NormFit(), m.StateFit(), o.Workers, o.Progress)
	if err != nil {
		return nil, err
	}
	shares, counts, bouts := SignatureColumns(f.Sigs)
	var parts [][]float64
	if m.Fit != nil {
		if parts, err = f.PartColumns(m.Fit.Signature, m.Fit.DayParts); err != nil {
			return nil, err
		}
		if parts != nil {
			shares = PartShares(parts)
			f.Signature, f.DayParts = SignatureDayParts, m.Fit.DayParts
		}
	}
	if mx := m.GroupMixture(); mx != nil {
		f.Grouping, err = group.PlaceMixture(mx, m.Grouping.Centroids, shares, counts, bouts, parts)
	} else {
		method, _ := group.ParseMethod(m.Grouping.Method)
		f.Grouping, err = group.Place(method, m.Grouping.Centroids, shares, o.Workers)
	}
	if err != nil {
		return nil, err
	}
	f.Window, f.WindowSource = WindowLength(t, o.Window)
	f.Atypical = make([]bool, len(f.Sigs))
	for i, d := range f.Grouping.Distance {
		f.Atypical[i] = d > m.Grouping.Atypical
	}
	f.ModelFeaturesStep = m.Read.FeaturesStep
	res, err := NewResult(f, m.States.Names, m.Grouping.Names)
	if err != nil {
		return nil, err
	}
	res.Settings = slices.Clone(m.Settings)
	res.States.Candidates = nil
	for _, name := range o.Extra {
		res.Quality.IgnoredColumns = append(res.Quality.IgnoredColumns, cohort.LeftOut{Name: name, Reason: note.Note{Kind: LeftOutNotInModel}})
	}
	for i, n := range res.Quality.IgnoredColumns {
		if m.Read.Label != "" && n.Name == m.Read.Label {
			res.Quality.IgnoredColumns[i].Reason = note.Note{Kind: LeftOutLabels}
		}
	}
	if o.Key != nil {
		Pseudonymize(res, o.Key)
	}
	res.Warnings = append(res.Warnings, group.CheckRanges(t.Features, m.FeatureMeds, FeatureMedians(f))...)
	res.Changes = AssignChanges(m, res, o.Model)
	return res, nil
}

// Refresh fits the updated cohort anew with the options o (the previous model's settings, with
// any given over them) and matches the new states and groups to the previous model's by the
// Hungarian method (group.Match), so that a state or group keeps its name while it is still the
// same; the result carries who moved, which groups are new, merged or gone, and how far each
// moved. key is the pseudonymization key of a pseudonymized model (nil: none); model is its
// file's name, for the record.
func Refresh(ctx context.Context, prev *modelfile.Model, o Options, key []byte, model string) (*Result, error) {
	f, err := FitAll(ctx, o)
	if err != nil {
		return nil, err
	}
	defer f.Table.Close()
	if strings.Join(prev.Features, "\x00") != strings.Join(f.Table.Features, "\x00") {
		return nil, fmt.Errorf("%s: the features (%s) differ from the previous model's (%s): %w; refresh needs the same features, or start anew with job.Analyze",
			o.Inputs[0], strings.Join(f.Table.Features, ", "), strings.Join(prev.Features, ", "), cohort.ErrMismatch)
	}
	next := nextOf(f, prev, key)
	method, _ := group.ParseMethod(prev.Grouping.Method)
	match, err := group.Match(group.Previous{StateNames: prev.States.Names, StateMeans: prev.States.Means, Scale: prev.Normalize.Spread,
		GroupNames: prev.Grouping.Names, GroupShares: prev.Grouping.Shares, Cut: prev.Grouping.Atypical, Method: method}, next)
	if err != nil {
		return nil, err
	}
	res, err := NewResult(f, match.StateNames, match.GroupNames)
	if err != nil {
		return nil, err
	}
	if key != nil {
		Pseudonymize(res, key)
	}
	res.Changes = RefreshChanges(prev, res, match, next, model)
	return res, nil
}

// nextOf is the refit as group.Match compares it with the previous model: the new groups, their
// mean shares, the states' feature means and each unit's previous group (-1: none).
func nextOf(f *Fitted, prev *modelfile.Model, key []byte) group.Next {
	byKey, byID := PreviousGroups(prev)
	prevIndex := map[string]int{}
	for i, n := range prev.Grouping.Names {
		prevIndex[n] = i
	}
	next := group.Next{Labels: f.Grouping.Labels, GroupShares: MeanShares(f)}
	for _, dsc := range f.Desc {
		next.StateMeans = append(next.StateMeans, dsc.Mean)
	}
	for _, u := range f.Table.Units {
		id := u.ID
		if key != nil {
			id = pseudonym.Of(key, id) // the previous model holds pseudonyms
		}
		p, ok := prevIndex[LookupPrevious(byKey, byID, id, u.Wave)]
		if !ok {
			p = -1
		}
		next.PrevGroup = append(next.PrevGroup, p)
	}
	return next
}
