package profile

import (
	"math"
	"slices"
	"sort"
	"time"
)

// FeatureKind is what a feature measures, told from its name by common naming practice in
// accelerometry: how much the signal varies (intensity), how fast it repeats (cadence), and
// where gravity points (posture). A name that fits none is of KindOther.
type FeatureKind int

const (
	KindOther FeatureKind = iota
	KindIntensity
	KindCadence
	KindPosture
)

// KindOf tells a feature's kind from the words in its name (FeatureWords).
func KindOf(name string) FeatureKind {
	words := FeatureWords(name)
	has := func(set ...string) bool {
		for _, w := range words {
			if slices.Contains(set, w) {
				return true
			}
		}
		return false
	}
	switch {
	case has("freq", "frequency", "cadence", "cross", "zerocross", "steps", "step"):
		return KindCadence
	case has("tilt", "angle", "incl", "inclination", "pitch", "roll", "cor", "corr") ||
		len(words) == 2 && (words[0] == "mean" || words[0] == "avg") && has("x", "y", "z"):
		return KindPosture
	case has("sd", "std", "mad", "range", "peak", "power", "jerk", "enmo", "counts", "count", "iqr", "energy", "var", "p90", "amplitude"):
		return KindIntensity
	}
	return KindOther
}

// Level is a state's intensity, from still to vigorous: relative to the run's states by the
// intensity score, or by the published cut-points of a feature of a known scale.
type Level int

const (
	LevelNone Level = iota // no intensity feature, or a state without windows
	LevelStill
	LevelLight
	LevelModerate
	LevelVigorous
)

// Anchor is a feature of a known scale whose published cut-points set the states' levels.
type Anchor int

const (
	AnchorNone   Anchor = iota
	AnchorCounts        // activity counts a minute, by the cut-points of Troiano et al. 2008
	AnchorENMO          // ENMO in mg at the wrist, by the cut-points of Hildebrand et al. 2014
)

// StateReading is what a state's description says of it, for the words a reader gets.
type StateReading struct {
	Share float64 // of all windows
	// Score is where its intensity features lie between the stillest state (0) and the most
	// vigorous (1); Level is the relative level it reads as (intensityCuts).
	Score float64
	Level Level
	// Anchor is the feature of a known scale (AnchorFeature) whose cut-points the state was read
	// by, at AnchorValue (counts a minute, or mg): the median of its windows where they were
	// counted by value (Description.Hist; AnchorMedian set), otherwise its mean. AnchorShare is
	// the share of its windows in the same band of the cut-points as that value (NaN without
	// Hist). Anchored marks a Level set by the cut-points; below ENMO's moderate cut the level
	// stays relative, capped at light.
	Anchor        Anchor
	AnchorFeature int
	AnchorValue   float64
	AnchorMedian  bool
	AnchorShare   float64
	Anchored      bool
	Posture       bool // it stands apart most by where gravity points (axis means, tilt, correlations)
	Cadence       int  // +1 a quicker rhythm than average, −1 a slower one, 0 neither
	// Label is the index of the most common known label of its windows (-1 without labels), and
	// LabelPct that label's share of its labelled windows.
	Label    int
	LabelPct float64
	Drivers  []Driver // the first three of Description.Drivers
}

// intensityCuts are the upper ends of the relative levels by the intensity score: each intensity
// feature's state means placed on a scale from the stillest state (0) to the most vigorous (1),
// on a log scale where every mean is above 0 (amplitudes grow by factors), then averaged over
// those features. The cut points were set on this project's synthetic cohorts (the demo's:
// lying, sitting and standing fall under still, walking under moderate and brisk walking under
// vigorous); they are a reading aid, not a measured standard.
var intensityCuts = []struct {
	below float64
	level Level
}{{0.4, LevelStill}, {0.65, LevelLight}, {0.9, LevelModerate}, {math.Inf(1), LevelVigorous}}

// Published cut-points for features of a known scale (each value from memory, to be checked
// against its paper before a study relies on it):
//   - activity counts per minute of the vertical axis (Troiano et al. 2008, Med Sci Sports Exerc
//     40:181): sedentary below 100, light 100–2019, moderate 2020–5998, vigorous 5999 and above;
//   - ENMO in mg at the non-dominant wrist (Hildebrand et al. 2014, Med Sci Sports Exerc
//     46:1816): moderate 100.6 and above, vigorous 428.8 and above; below that the level stays
//     relative, capped at light.
var (
	troiano    = []float64{100, 2020, 5999}
	hildebrand = []float64{100.6, 428.8}
)

// ReadStates reads every state's description (desc) for words: its intensity score and level,
// the level by a feature of a known scale where there is one, posture, cadence, most common
// label and drivers. window is the length of a window (0 when not known), for counts per window.
func ReadStates(desc []Description, features []string, labels *LabelTable, window time.Duration) []StateReading {
	out := make([]StateReading, len(desc))
	score, n := make([]float64, len(desc)), 0.0
	for j, name := range features {
		if KindOf(name) != KindIntensity {
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
		w := StateReading{Share: d.Share, Label: -1, AnchorFeature: -1}
		if n > 0 && d.Share > 0 {
			w.Score = score[s] / n
			for _, c := range intensityCuts {
				if w.Score < c.below {
					w.Level = c.level
					break
				}
			}
		}
		w.Cadence, w.Posture = cadenceAndPosture(d, features)
		w.Drivers = d.Drivers[:min(3, len(d.Drivers))]
		if labels != nil && s < len(labels.Counts) {
			w.Label, w.LabelPct = commonLabel(labels.Counts[s])
		}
		out[s] = w
	}
	anchorLevels(out, desc, features, window)
	return out
}

// cadenceAndPosture reads whether a state's cadence features lie above or below average (their
// mean effect beyond half a standard deviation) and whether it stands apart most by posture.
func cadenceAndPosture(d Description, features []string) (int, bool) {
	var cad, nCad float64
	for _, dr := range d.Drivers {
		if KindOf(features[dr.Feature]) == KindCadence {
			cad += dr.Effect
			nCad++
		}
	}
	cadence := 0
	if nCad > 0 && math.Abs(cad/nCad) > 0.5 {
		cadence = int(math.Copysign(1, cad))
	}
	posture := len(d.Drivers) > 0 && KindOf(features[d.Drivers[0].Feature]) == KindPosture
	return cadence, posture
}

// commonLabel is the most common label of a state's windows and its share (-1 without any).
func commonLabel(counts []int) (int, float64) {
	total, best := 0, -1
	for l, c := range counts {
		total += c
		if best < 0 || c > counts[best] {
			best = l
		}
	}
	if total == 0 || best < 0 {
		return -1, 0
	}
	return best, float64(counts[best]) / float64(total)
}

// anchorOf finds a feature of a known scale: ENMO (its name holds the word enmo) or activity
// counts (count, counts or cpm; not of steps, not logged or smoothed); -1 when there is none.
func anchorOf(features []string) (int, Anchor) {
	for j, name := range features {
		words := FeatureWords(name)
		has := func(w string) bool { return slices.Contains(words, w) }
		switch {
		case has("log") || has("sd") || has("std") || has("rolling") || has("roll") || has("step") || has("steps"):
			continue
		case has("enmo"):
			return j, AnchorENMO
		case has("counts") || has("count") || has("cpm"):
			return j, AnchorCounts
		}
	}
	return -1, AnchorNone
}

// anchorLevels sets the states' levels from a feature of a known scale (anchorOf), where there
// is one: ENMO in g is taken to mg when every state's mean is below 3 (no still or walking state
// reaches 3 g), and counts per window are taken to counts per minute with the window length,
// without which they are left relative.
func anchorLevels(out []StateReading, desc []Description, features []string, window time.Duration) {
	j, kind := anchorOf(features)
	if j < 0 {
		return
	}
	scale, cuts := 1.0, troiano
	switch kind {
	case AnchorENMO:
		cuts = hildebrand
		top := 0.0
		for _, d := range desc {
			if d.Share > 0 {
				top = max(top, d.Mean[j])
			}
		}
		if top < 3 {
			scale = 1000
		}
	case AnchorCounts:
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
		w.AnchorShare = math.NaN()
		if d.Hist != nil {
			// Read by where its windows fall: a state that holds rest and some light movement
			// has a mean above the sedentary cut while most of its minutes lie below it.
			v = histMedian(d.Hist) * scale
			w.AnchorMedian, w.AnchorShare = true, bandShare(d.Hist, scale, cuts, v)
		}
		w.Anchor, w.AnchorFeature, w.AnchorValue = kind, j, v
		switch kind {
		case AnchorCounts:
			w.Level, w.Anchored = LevelStill+Level(bandOf(troiano, v)), true
		case AnchorENMO:
			switch {
			case v >= hildebrand[1]:
				w.Level, w.Anchored = LevelVigorous, true
			case v >= hildebrand[0]:
				w.Level, w.Anchored = LevelModerate, true
			case w.Level == LevelModerate || w.Level == LevelVigorous:
				w.Level = LevelLight
			}
		}
	}
}

// histMedian is the median of the values counted in hist (Description.Hist): 0 when half the
// windows are at or below 0, otherwise read within its bin on the log scale.
func histMedian(hist []float64) float64 {
	var total float64
	for _, c := range hist {
		total += c
	}
	half, cum := total/2, 0.0
	for b, c := range hist {
		if cum+c >= half && c > 0 {
			if b == 0 {
				return 0
			}
			lo, hi := anchorBinRange(b)
			return lo * math.Pow(hi/lo, (half-cum)/c)
		}
		cum += c
	}
	return 0
}

// bandOf is the band of the cut-points cuts that v lies in: 0 below the first, i at or above
// the i-th.
func bandOf(cuts []float64, v float64) int { return sort.SearchFloat64s(cuts, v+1e-9) }

// bandShare is the share of the windows counted in hist whose values, times scale, lie in the
// same band of the cut-points cuts as v; a bin counts in the band of its middle (on the log
// scale), so the share is good to a bin's width (a twentieth of a decade).
func bandShare(hist []float64, scale float64, cuts []float64, v float64) float64 {
	band := bandOf(cuts, v)
	var in, total float64
	for b, c := range hist {
		total += c
		mid := 0.0
		if b > 0 {
			lo, hi := anchorBinRange(b)
			mid = math.Sqrt(lo*hi) * scale
		}
		if bandOf(cuts, mid) == band {
			in += c
		}
	}
	if total == 0 {
		return math.NaN()
	}
	return in / total
}

// rareState is the share of windows below which a state does not set an end of the intensity
// scale (it is placed at the end it passes): one state of 0.06 % of the windows once stretched
// the scale so that seven of twelve states read as still.
const rareState = 0.01

// scalePositions places each state's mean of feature j between the lowest (0) and the highest
// (1) of the states that hold windows, on a log scale when every mean is above 0; ok is false
// when the states do not differ on it.
func scalePositions(desc []Description, j int) ([]float64, bool) {
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
