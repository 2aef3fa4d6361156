package reports

import (
	"fmt"
	"math"
	"sort"
	"strings"

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
	words := strings.FieldsFunc(strings.ToLower(name), func(r rune) bool { return r == '_' || r == '-' || r == '.' || r == ' ' })
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
	Code      string  // the state's name, S1…
	Intensity string  // "stillness", "light movement", "moderate movement" or "vigorous movement"; "" without intensity features
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

// DescribeStates puts every state into words.
func DescribeStates(desc []profile.Description, features, codes []string, labels *profile.LabelTable) []StateWords {
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
	return out
}

// Short is the state's plain name for sentences: "light movement (S2)", or its code alone when
// nothing can be said in words.
func (w StateWords) Short() string {
	word := w.Intensity
	if w.Label != "" && w.LabelPct >= 0.5 {
		word = w.Label
	}
	if word == "" {
		return w.Code
	}
	return word + " (" + w.Code + ")"
}

// Sentence describes the state in a line: its share of windows, its intensity, what else sets
// it apart, and its most common known label.
func (w StateWords) Sentence() string {
	var parts []string
	head := fmt.Sprintf("%s of all windows", Percent(w.Share))
	if w.Intensity != "" {
		head = capital(w.Intensity) + ", " + head
	}
	parts = append(parts, head)
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

// ShortNames are the plain names of all states; where two would read the same, the code keeps
// them apart (it is always there).
func ShortNames(ws []StateWords) []string {
	out := make([]string, len(ws))
	for i, w := range ws {
		out[i] = w.Short()
	}
	return out
}

// IntensityOrder lists the states from the stillest to the most vigorous.
func IntensityOrder(ws []StateWords) []int {
	idx := make([]int, len(ws))
	for i := range idx {
		idx[i] = i
	}
	sort.SliceStable(idx, func(a, b int) bool { return ws[idx[a]].Score < ws[idx[b]].Score })
	return idx
}

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
		lo, hi = min(lo, vals[s]), max(hi, vals[s])
	}
	if !(hi > lo) {
		return nil, false
	}
	for s := range vals {
		vals[s] = (vals[s] - lo) / (hi - lo)
	}
	return vals, true
}
