package profile

import (
	"math"
	"slices"
	"strings"
	"time"
)

// Rhythm holds the nonparametric rest–activity rhythm measures of one participant (Van Someren
// et al. 1999, Chronobiol Int 16:505; IS and IV after Witting et al. 1990), from an activity
// feature on hourly means by clock hour (UTC for times given with an offset):
//   - IS, interdaily stability: N·Σ_h (x̄_h − x̄)² / (p·Σ_i (x_i − x̄)²), x_i the N hourly means,
//     x̄_h the mean of the p hours of the day present, x̄ the mean of all; 0 to 1, higher for a
//     rhythm that repeats from day to day;
//   - IV, intradaily variability: N·Σ (x_i − x_{i−1})² / (D·Σ_i (x_i − x̄)²), over the D pairs of
//     consecutive hours both present; near 0 for a smooth rhythm, about 2 for noise;
//   - L5 and M10: the mean activity of the least active 5 and the most active 10 consecutive
//     hours of the average day (hourly, wrapping past midnight), with the hour each starts;
//   - RA, relative amplitude: (M10 − L5) / (M10 + L5).
//
// All are NaN with fewer than 48 hourly means or an hour of the day never present.
type Rhythm struct {
	IS, IV, L5, M10, RA float64
	L5Onset, M10Onset   int // hour of the day, 0–23
	Hours               int // hourly means it was computed on
}

// NoRhythm is the measures when they cannot be computed.
var NoRhythm = Rhythm{IS: math.NaN(), IV: math.NaN(), L5: math.NaN(), M10: math.NaN(), RA: math.NaN(), L5Onset: -1, M10Onset: -1}

// RhythmOf computes the measures from windows' start times (Unix ns, increasing) and their
// activity (NaN windows are skipped).
func RhythmOf(times []int64, activity []float64) Rhythm {
	bins, first, last := hourlyMeans(times, activity)
	out := NoRhythm
	if len(bins) < 48 {
		return out
	}
	var all, sumSq float64
	var byHour [24]float64
	var inHour [24]int
	var x []float64
	for h := first; h <= last; h++ {
		if b := bins[h]; b != nil {
			v := b.sum / float64(b.n)
			x = append(x, v)
			all += v
			hd := int(((h % 24) + 24) % 24)
			byHour[hd] += v
			inHour[hd]++
		}
	}
	n := float64(len(x))
	mean := all / n
	for _, v := range x {
		sumSq += (v - mean) * (v - mean)
	}
	var profile [24]float64
	for h := range profile {
		if inHour[h] == 0 {
			return out
		}
		profile[h] = byHour[h] / float64(inHour[h])
	}
	if sumSq == 0 {
		return out
	}
	var between float64
	for _, m := range profile {
		between += (m - mean) * (m - mean)
	}
	var diffs float64
	pairs := 0
	for h := first + 1; h <= last; h++ {
		a, b := bins[h-1], bins[h]
		if a != nil && b != nil {
			d := b.sum/float64(b.n) - a.sum/float64(a.n)
			diffs += d * d
			pairs++
		}
	}
	out.Hours = len(x)
	out.IS = n * between / (24 * sumSq)
	if pairs > 0 {
		out.IV = n * diffs / (float64(pairs) * sumSq)
	}
	out.L5, out.L5Onset, out.M10, out.M10Onset = lowAndHigh(profile)
	if out.M10+out.L5 != 0 {
		out.RA = (out.M10 - out.L5) / (out.M10 + out.L5)
	}
	return out
}

// hourBin is an hour's sum of activity over its windows.
type hourBin struct {
	sum float64
	n   int
}

// hourlyMeans bins the windows' activity by hour since 1970 (NaN windows skipped), with the
// first and last hours that have any.
func hourlyMeans(times []int64, activity []float64) (map[int64]*hourBin, int64, int64) {
	hour := int64(time.Hour)
	bins := map[int64]*hourBin{}
	var first, last int64
	for i, t := range times {
		if math.IsNaN(activity[i]) {
			continue
		}
		h := floorDiv(t, hour)
		b := bins[h]
		if b == nil {
			b = &hourBin{}
			bins[h] = b
			if len(bins) == 1 || h < first {
				first = h
			}
			if len(bins) == 1 || h > last {
				last = h
			}
		}
		b.sum += activity[i]
		b.n++
	}
	return bins, first, last
}

// lowAndHigh are the least active 5 hours and the most active 10 of the day's profile (mean
// activity, each from its first hour, wrapping at midnight) and the hours they start.
func lowAndHigh(profile [24]float64) (l5 float64, l5On int, m10 float64, m10On int) {
	window := func(s, length int) float64 {
		var v float64
		for k := 0; k < length; k++ {
			v += profile[(s+k)%24]
		}
		return v / float64(length)
	}
	l5, m10 = math.Inf(1), math.Inf(-1)
	l5On, m10On = -1, -1
	for s := 0; s < 24; s++ {
		if v := window(s, 5); v < l5 {
			l5, l5On = v, s
		}
		if v := window(s, 10); v > m10 {
			m10, m10On = v, s
		}
	}
	return l5, l5On, m10, m10On
}

// ActivityFeature picks the feature the rhythm is read on, by its name: activity counts
// (counts, count, cpm, axis1), else ENMO, else the mean amplitude deviation (mad), else the
// first measure of how much the signal varies (sd, std); -1 when none is there. Logged or
// rolling versions are passed over.
func ActivityFeature(features []string) int {
	for _, group := range [][]string{{"counts", "count", "cpm", "axis1"}, {"enmo"}, {"mad"}, {"sd", "std"}} {
		for j, name := range features {
			words := FeatureWords(name)
			if slices.Contains(words, "log") || slices.Contains(words, "rolling") || slices.Contains(words, "mean10") {
				continue
			}
			for _, w := range group {
				if slices.Contains(words, w) {
					return j
				}
			}
		}
	}
	return -1
}

// FeatureWords splits a feature's name into its lower-case words at _, -, . and spaces
// ("VM_sd.1" → vm, sd, 1), for the rules that tell a feature's meaning from its name.
func FeatureWords(name string) []string {
	return strings.FieldsFunc(strings.ToLower(name), func(r rune) bool { return r == '_' || r == '-' || r == '.' || r == ' ' })
}

// floorDiv is a/b rounded down (times before 1970 are negative).
func floorDiv(a, b int64) int64 {
	q := a / b
	if a%b != 0 && (a < 0) != (b < 0) {
		q--
	}
	return q
}
