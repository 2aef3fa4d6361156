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

// Feature kinds, told from the feature's name by common naming practice in accelerometry: how
// much the signal varies (intensity), how fast it repeats (cadence), and where gravity points
// (posture). A name that fits none is of no kind and is not put into words.
const (
	kindOther = iota
	kindIntensity
	kindCadence
	kindPosture
)

// featureKind tells a feature's kind from the words in its name.
func featureKind(name string) int {
	words := profile.FeatureWords(name)
	has := func(set ...string) bool {
		for _, w := range words {
			for _, s := range set {
				if w == s {
					return true
				}
			}
		}
		return false
	}
	switch {
	case has("freq", "frequency", "cadence", "cross", "zerocross", "steps", "step"):
		return kindCadence
	case has("tilt", "angle", "incl", "inclination", "pitch", "roll", "cor", "corr") ||
		len(words) == 2 && (words[0] == "mean" || words[0] == "avg") && has("x", "y", "z"):
		return kindPosture
	case has("sd", "std", "mad", "range", "peak", "power", "jerk", "enmo", "counts", "count", "iqr", "energy", "var", "p90", "amplitude"):
		return kindIntensity
	}
	return kindOther
}

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

// Intensity words by the intensity score: each intensity feature's state means placed on a
// scale from the stillest state (0) to the most vigorous (1), on a log scale where every mean is
// above 0 (amplitudes grow by factors), then averaged over those features. The words are
// relative to the states of this cohort. The cut points were set on this project's synthetic
// cohorts (the demo's: lying, sitting and standing fall under stillness, walking under moderate
// and brisk walking under vigorous movement); they are a reading aid, not a measured standard.
var intensityCuts = []struct {
	below float64
	word  string
}{{0.4, "stillness"}, {0.65, "light movement"}, {0.9, "moderate movement"}, {math.Inf(1), "vigorous movement"}}

// Published cut-points for features of a known scale (each value from memory, to be checked
// against its paper before a study relies on it):
//   - activity counts per minute of the vertical axis (Troiano et al. 2008, Med Sci Sports Exerc
//     40:181): sedentary below 100, light 100–2019, moderate 2020–5998, vigorous 5999 and above;
//   - ENMO in mg at the non-dominant wrist (Hildebrand et al. 2014, Med Sci Sports Exerc
//     46:1816): moderate 100.6 and above, vigorous 428.8 and above; below that the word stays
//     relative, capped at light movement.
var (
	troiano    = []float64{100, 2020, 5999}
	hildebrand = []float64{100.6, 428.8}
)

// anchorOf finds a feature of a known scale: ENMO (its name holds the word enmo) or activity
// counts (count, counts or cpm; not of steps, not logged or smoothed); it returns the feature's
// index and kind, or -1.
func anchorOf(features []string) (int, string) {
	for j, name := range features {
		words := profile.FeatureWords(name)
		has := func(w string) bool { return slices.Contains(words, w) }
		switch {
		case has("log") || has("sd") || has("std") || has("rolling") || has("roll") || has("step") || has("steps"):
			continue
		case has("enmo"):
			return j, "enmo"
		case has("counts") || has("count") || has("cpm"):
			return j, "counts"
		}
	}
	return -1, ""
}

// anchor sets the intensity of the states from a feature of a known scale (anchorOf), where
// there is one: ENMO in g is taken to mg when every state's mean is below 3 (no still or walking
// state reaches 3 g), and counts per window are taken to counts per minute with the window
// length, without which they are left relative.
func anchor(out []StateWords, desc []profile.Description, features []string, window time.Duration) {
	j, kind := anchorOf(features)
	if j < 0 {
		return
	}
	scale := 1.0
	switch kind {
	case "enmo":
		top := 0.0
		for _, d := range desc {
			if d.Share > 0 {
				top = max(top, d.Mean[j])
			}
		}
		if top < 3 {
			scale = 1000
		}
	case "counts":
		if window <= 0 {
			return
		}
		scale = float64(time.Minute) / float64(window)
	}
	for s, d := range desc {
		v := d.Mean[j] * scale
		if d.Share == 0 || math.IsNaN(v) {
			continue
		}
		w := &out[s]
		switch kind {
		case "counts":
			w.Intensity = []string{"sedentary", "light activity", "moderate activity", "vigorous activity"}[sort.SearchFloat64s(troiano, v+1e-9)]
			w.Anchor = fmt.Sprintf("%s at %.0f counts a minute, by the cut-points of Troiano et al. 2008", features[j], v)
		case "enmo":
			switch {
			case v >= hildebrand[1]:
				w.Intensity = "vigorous activity"
			case v >= hildebrand[0]:
				w.Intensity = "moderate activity"
			case w.Intensity == "moderate movement" || w.Intensity == "vigorous movement":
				w.Intensity = "light movement"
			}
			w.Anchor = fmt.Sprintf("%s at %.0f mg, by the wrist cut-points of Hildebrand et al. 2014", features[j], v)
		}
	}
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

// DescribeStates puts every state into words; window is the length of a window (0 when not
// known), for features counted per window.
func DescribeStates(desc []profile.Description, features, codes []string, labels *profile.LabelTable, window time.Duration) []StateWords {
	out := make([]StateWords, len(desc))
	score, n := make([]float64, len(desc)), 0.0
	for j, name := range features {
		if featureKind(name) != kindIntensity {
			continue
		}
		if pos, ok := scalePositions(desc, j); ok {
			n++
			for s := range desc {
				score[s] += pos[s]
			}
		}
	}
	for s, d := range desc {
		w := StateWords{Code: codes[s], Share: d.Share}
		var cad, nCad float64
		for _, dr := range d.Drivers {
			if featureKind(features[dr.Feature]) == kindCadence {
				cad += dr.Effect
				nCad++
			}
		}
		if n > 0 && d.Share > 0 {
			w.Score = score[s] / n
			for _, c := range intensityCuts {
				if w.Score < c.below {
					w.Intensity = c.word
					break
				}
			}
		}
		if nCad > 0 && math.Abs(cad/nCad) > 0.5 {
			w.Cadence = int(math.Copysign(1, cad))
		}
		if len(d.Drivers) > 0 {
			w.Posture = featureKind(features[d.Drivers[0].Feature]) == kindPosture
		}
		for _, dr := range d.Drivers[:min(3, len(d.Drivers))] {
			word := "higher"
			if dr.Effect < 0 {
				word = "lower"
			}
			w.Drivers = append(w.Drivers, word+" "+features[dr.Feature])
		}
		if labels != nil && s < len(labels.Counts) {
			total, best := 0, -1
			for l, c := range labels.Counts[s] {
				total += c
				if best < 0 || c > labels.Counts[s][best] {
					best = l
				}
			}
			if total > 0 && best >= 0 {
				w.Label, w.LabelPct = labels.Labels[best], float64(labels.Counts[s][best])/float64(total)
			}
		}
		out[s] = w
	}
	anchor(out, desc, features, window)
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

// rareState is the share of windows below which a state does not set an end of the intensity
// scale (it is placed at the end it passes): one state of 0.06 % of the windows once stretched
// the scale so that seven of twelve states read as stillness.
const rareState = 0.01

// scalePositions places each state's mean of feature j between the lowest (0) and the highest
// (1) of the states that hold windows, on a log scale when every mean is above 0; ok is false
// when the states do not differ on it.
func scalePositions(desc []profile.Description, j int) ([]float64, bool) {
	vals := make([]float64, len(desc))
	logged := true
	for s, d := range desc {
		vals[s] = d.Mean[j]
		if d.Share > 0 && !(d.Mean[j] > 0) {
			logged = false
		}
	}
	lo, hi := math.Inf(1), math.Inf(-1)
	for s, d := range desc {
		if d.Share == 0 || math.IsNaN(vals[s]) {
			continue
		}
		if logged {
			vals[s] = math.Log(vals[s])
		}
		if d.Share >= rareState { // a rare state does not set the ends of the scale
			lo, hi = min(lo, vals[s]), max(hi, vals[s])
		}
	}
	if !(hi > lo) {
		return nil, false
	}
	for s := range vals {
		vals[s] = min(1, max(0, (vals[s]-lo)/(hi-lo)))
	}
	return vals, true
}
