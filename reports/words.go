package reports

import (
	"fmt"
	"math"
	"slices"
	"sort"
	"strings"
	"time"

	"github.com/cohortmix/cohortmix/profile"
)

// StateWords puts a movement state into plain words: an intensity word from the features that
// measure how much the signal varies (relative to all the cohort's windows), whether it stands
// apart by posture or cadence, and with known labels the most common one.
type StateWords struct {
	Code string // the state's name, S1…
	// Name is the state's plain name, distinct within the run: its most common known label, or
	// its intensity word, numbered from the stillest where two states would read alike
	// ("stillness 1", "stillness 2"); "" when nothing can be said in words.
	Name string
	// Intensity is "stillness", "light movement", "moderate movement" or "vigorous movement",
	// relative to the run's states; or, where a feature of a known scale is there (Anchor),
	// "sedentary", "light activity", "moderate activity" or "vigorous activity" by its
	// published cut-points. "" without intensity features.
	Intensity string
	Anchor    string  // the cut-points Intensity comes from, "" when it is relative
	Score     float64 // where its intensity features lie between the stillest state (0) and the most vigorous (1)
	Posture   bool    // it stands apart most by where gravity points (axis means, tilt, correlations)
	Cadence   int     // +1 a quicker rhythm than average, −1 a slower one, 0 neither
	Label     string  // the most common known label of its windows ("" without labels)
	LabelPct  float64 // that label's share of the state's labelled windows
	Share     float64 // share of all windows
	Drivers   []string
}

// relativeWords are the relative levels in words; activityWords the levels read by published
// cut-points (profile.StateReading.Anchored).
var (
	relativeWords = map[profile.Level]string{profile.LevelStill: "stillness", profile.LevelLight: "light movement", profile.LevelModerate: "moderate movement", profile.LevelVigorous: "vigorous movement"}
	activityWords = map[profile.Level]string{profile.LevelStill: "sedentary", profile.LevelLight: "light activity", profile.LevelModerate: "moderate activity", profile.LevelVigorous: "vigorous activity"}
)

// anchorWords says where a state lies by the cut-points of its feature of a known scale: at its
// windows' median and the share of them in that band, or at its mean where its windows were not
// counted by value.
func anchorWords(rd profile.StateReading, feature string) string {
	unit, source := "counts a minute", "the cut-points of Troiano et al. 2008"
	band := activityWords[rd.Level]
	if rd.Anchor == profile.AnchorENMO {
		unit, source = "mg", "the wrist cut-points of Hildebrand et al. 2014"
		if !rd.Anchored {
			band = "below the moderate cut-point"
		}
	}
	if rd.Anchor == profile.AnchorCounts && math.Round(rd.AnchorValue) == 1 {
		unit = "count a minute"
	}
	if !rd.AnchorMedian {
		return fmt.Sprintf("%s at %.0f %s, by %s", feature, rd.AnchorValue, unit, source)
	}
	return fmt.Sprintf("%s at a median of %.0f %s, %s of its windows %s, by %s", feature, rd.AnchorValue, unit, Percent(rd.AnchorShare), band, source)
}

// nameStates gives every state its plain name (StateWords.Name), numbering from the stillest
// the states that would read alike.
func nameStates(out []StateWords) {
	byWord := map[string][]int{}
	for s := range out {
		w := &out[s]
		w.Name = w.Intensity
		if w.Label != "" && w.LabelPct >= 0.5 {
			w.Name = w.Label
		}
		if w.Name != "" {
			byWord[w.Name] = append(byWord[w.Name], s)
		}
	}
	for word, states := range byWord {
		if len(states) < 2 {
			continue
		}
		sort.SliceStable(states, func(a, b int) bool { return out[states[a]].Score < out[states[b]].Score })
		for i, s := range states {
			out[s].Name = fmt.Sprintf("%s %d", word, i+1)
		}
	}
}

// DescribeStates puts every state into words, from what profile.ReadStates reads of its
// description; window is the length of a window (0 when not known), for features counted per
// window.
func DescribeStates(desc []profile.Description, features, codes []string, labels *profile.LabelTable, window time.Duration) []StateWords {
	readings := profile.ReadStates(desc, features, labels, window)
	out := make([]StateWords, len(readings))
	for s, rd := range readings {
		w := StateWords{Code: codes[s], Share: rd.Share, Score: rd.Score, Posture: rd.Posture, Cadence: rd.Cadence, LabelPct: rd.LabelPct}
		w.Intensity = relativeWords[rd.Level]
		if rd.Anchored {
			w.Intensity = activityWords[rd.Level]
		}
		if rd.Anchor != profile.AnchorNone {
			w.Anchor = anchorWords(rd, features[rd.AnchorFeature])
		}
		for _, dr := range rd.Drivers {
			word := "higher"
			if dr.Effect < 0 {
				word = "lower"
			}
			w.Drivers = append(w.Drivers, word+" "+features[dr.Feature])
		}
		if rd.Label >= 0 {
			w.Label = labels.Labels[rd.Label]
		}
		out[s] = w
	}
	nameStates(out)
	return out
}

// Short is the state's plain name for sentences: "light movement (S2)", or its code alone when
// nothing can be said in words.
func (w StateWords) Short() string {
	if w.Name == "" {
		return w.Code
	}
	return w.Name + " (" + w.Code + ")"
}

// Sentence describes the state in a line: its share of windows, its intensity, what else sets
// it apart, and its most common known label.
func (w StateWords) Sentence() string {
	var parts []string
	head := fmt.Sprintf("%s of all windows", Percent(w.Share))
	if w.Name != "" {
		head = capital(w.Name) + ": " + head
	}
	if w.Intensity != "" && !strings.HasPrefix(w.Name, w.Intensity) {
		head += ", " + w.Intensity
	}
	parts = append(parts, head)
	if w.Anchor != "" {
		parts = append(parts, w.Anchor)
	}
	switch {
	case w.Posture:
		parts = append(parts, "set apart most by posture (where gravity points on the device)")
	case w.Cadence > 0:
		parts = append(parts, "with a quicker rhythm than average")
	case w.Cadence < 0:
		parts = append(parts, "with a slower rhythm than average")
	}
	if w.Label != "" {
		parts = append(parts, fmt.Sprintf("mostly labelled %s (%s of its labelled windows)", w.Label, Percent(w.LabelPct)))
	}
	if len(w.Drivers) > 0 {
		parts = append(parts, "features: "+strings.Join(w.Drivers, ", ")+" than average")
	} else {
		parts = append(parts, "no feature sets it apart from the average")
	}
	return strings.Join(parts, "; ")
}

// Percent is a share as a whole percentage, or "<1%" for a small share above 0.
func Percent(x float64) string {
	if x > 0 && x < 0.005 {
		return "<1%"
	}
	return fmt.Sprintf("%.0f%%", 100*x)
}

// stateLabels are the states' codes with their plain names, "S2 stillness 1", for the charts'
// legends; a code alone where the state has no name in words.
func stateLabels(r *Result) []string {
	ws := StateWordsOf(r)
	out := slices.Clone(r.StateNames)
	for s := range out {
		if s < len(ws) && ws[s].Name != "" {
			out[s] += " " + ws[s].Name
		}
	}
	return out
}

// ShortNames are the plain names of all states, each with its code.
func ShortNames(ws []StateWords) []string {
	out := make([]string, len(ws))
	for i, w := range ws {
		out[i] = w.Short()
	}
	return out
}
