package cohort

import (
	"fmt"
	"math"
	"slices"
	"strings"
	"time"
)

// NonWearTroiano names the non-wear rule of Troiano et al. (2008, Med Sci Sports Exerc 40:181)
// for activity counts: at least 60 consecutive minutes of zero counts, allowing interruptions of
// up to 2 consecutive minutes of 1 to 100 counts a minute. (The rule as commonly applied; its
// values are from memory, to be checked against the paper.)
const NonWearTroiano = "troiano"

// NonWearAuto applies NonWearChoi where a table has activity counts and times, and no rule
// otherwise (Quality.NonWearRule says which).
const NonWearAuto = "auto"

// NonWearChoi names the non-wear algorithm of Choi et al. (2011, Med Sci Sports Exerc 43:357)
// for activity counts: at least 90 consecutive minutes of zero counts, allowing an interruption
// of up to 2 minutes of nonzero counts when the 30 minutes before it and the 30 minutes after it
// are zeros. (Values from memory, to be checked against the paper.)
const NonWearChoi = "choi"

// AutoWearColumn is the wear column that NonWearAuto takes without being told: the column the
// features step writes (package raw).
const AutoWearColumn = "worn"

// NonWearColumn is the rule of a wear column (ReadOptions.WearColumn): a window is off when the
// column holds 0.
const NonWearColumn = "column"

// Choi's algorithm in numbers: the shortest non-wear period, the longest interruption and the
// zeros it needs on each side.
const (
	choiPeriod       = 90 * time.Minute
	choiInterruption = 2 * time.Minute
	choiQuiet        = 30 * time.Minute
)

// Troiano's rule in numbers: the shortest non-wear period, the longest interruption inside it
// and the most counts a minute an interruption may hold.
const (
	troianoPeriod       = 60 * time.Minute
	troianoInterruption = 2 * time.Minute
	troianoMaxCounts    = 100
)

// countsFeature finds the column of activity counts among the features: the one named by
// want, or else the first whose name holds the word counts, count, cpm or axis1 (not a log or a
// rolling summary of them).
func countsFeature(features []string, want string) (int, error) {
	if want != "" {
		if j := slices.Index(features, want); j >= 0 {
			return j, nil
		}
		return -1, fmt.Errorf("the non-wear rule's counts column %q is not among the features (%s); name one with cohort.ReadOptions.NonWearFeature", want, strings.Join(features, ", "))
	}
	for j, name := range features {
		words := strings.FieldsFunc(strings.ToLower(name), func(r rune) bool { return r == '_' || r == '-' || r == '.' || r == ' ' }) // as profile.FeatureWords, which this package sits below
		has := func(w string) bool { return slices.Contains(words, w) }
		if (has("counts") || has("count") || has("cpm") || has("axis1")) && !has("log") && !has("sd") && !has("mean") && !has("rolling") {
			return j, nil
		}
	}
	return -1, fmt.Errorf("the non-wear rule %s needs a column of activity counts and none of the features is named like one (%s); name it with cohort.ReadOptions.NonWearFeature", NonWearTroiano, strings.Join(features, ", "))
}

// troianoNonWear marks the windows of one participant that fall in a non-wear period by the
// rule of Troiano et al. 2008. times are the windows' start times (Unix ns, increasing) and
// counts their activity counts; a window lasts step (the participant's usual time between
// windows), its counts are scaled to a minute for the 100-count limit, and a time gap of more
// than two steps ends a period. A period is a run of windows of zero counts, with interruptions
// of at most 2 minutes of 1–100 counts a minute between zeros, lasting 60 minutes or more.
func troianoNonWear(times []int64, counts []float64, step time.Duration) []bool {
	n := len(times)
	out := make([]bool, n)
	if n == 0 || step <= 0 {
		return out
	}
	perMinute := float64(time.Minute) / float64(step)
	i := 0
	for i < n {
		if counts[i] != 0 {
			i++
			continue
		}
		// A period starts at a zero; it runs while windows are zeros, or short interruptions
		// followed by a zero, with no gap in time.
		start, last := i, i // last: the last zero of the period
		j := i + 1
		for j < n && time.Duration(times[j]-times[j-1]) <= 2*step {
			if counts[j] == 0 {
				last = j
				j++
				continue
			}
			k := j // an interruption: nonzero windows from j
			for k < n && counts[k] != 0 && counts[k]*perMinute <= troianoMaxCounts && time.Duration(times[k]-times[k-1]) <= 2*step {
				k++
			}
			if k >= n || counts[k] != 0 || time.Duration(times[k]-times[k-1]) > 2*step || time.Duration(times[k]-times[j]) > troianoInterruption {
				break // too long, too high, or not followed by a zero: the period ends at last
			}
			j = k
		}
		if time.Duration(times[last]-times[start])+step >= troianoPeriod {
			for w := start; w <= last; w++ {
				out[w] = true
			}
		}
		i = last + 1
	}
	return out
}

// choiNonWear marks the windows of one participant that fall in a non-wear period by the
// algorithm of Choi et al. 2011 (see troianoNonWear for times, counts and step): a run of zero
// counts with no gap in time, allowing interruptions of at most 2 minutes of any counts that have
// 30 minutes of zeros before and after them, lasting 90 minutes or more.
func choiNonWear(times []int64, counts []float64, step time.Duration) []bool {
	n := len(times)
	out := make([]bool, n)
	if n == 0 || step <= 0 {
		return out
	}
	joined := func(a, b int) bool { return time.Duration(times[b]-times[b-1]) <= 2*step }
	// zerosFrom reports whether the windows from i on are zeros, without a gap, for d.
	zerosFrom := func(i int, d time.Duration) bool {
		for j := i; j < n; j++ {
			if counts[j] != 0 || (j > i && !joined(j-1, j)) {
				return false
			}
			if time.Duration(times[j]-times[i])+step >= d {
				return true
			}
		}
		return false
	}
	i := 0
	for i < n {
		if counts[i] != 0 {
			i++
			continue
		}
		start, last, quietFrom := i, i, i // quietFrom: where the current stretch of zeros began
		j := i + 1
		for j < n && joined(j-1, j) {
			if counts[j] == 0 {
				last = j
				j++
				continue
			}
			k := j
			for k < n && counts[k] != 0 && joined(k-1, k) {
				k++
			}
			if k >= n || !joined(k-1, k) || time.Duration(times[k]-times[j]) > choiInterruption ||
				time.Duration(times[j]-times[quietFrom]) < choiQuiet || !zerosFrom(k, choiQuiet) {
				break
			}
			j, quietFrom = k, k
		}
		if time.Duration(times[last]-times[start])+step >= choiPeriod {
			for w := start; w <= last; w++ {
				out[w] = true
			}
		}
		i = last + 1
	}
	return out
}

// NonWearOf marks the windows of one participant that fall in a non-wear period by the named
// rule (NonWearChoi or NonWearTroiano): times are the windows' start times (Unix ns, increasing)
// and counts their activity counts. It is what the reader applies (ReadOptions.NonWear), for a
// program that holds its windows elsewhere.
func NonWearOf(rule string, times []int64, counts []float64) ([]bool, error) {
	if rule != NonWearChoi && rule != NonWearTroiano {
		return nil, fmt.Errorf("cohort: non-wear rule %q: %w; use %s or %s", rule, ErrBadOption, NonWearChoi, NonWearTroiano)
	}
	if len(times) != len(counts) {
		return nil, fmt.Errorf("cohort: %d times and %d counts: %w", len(times), len(counts), ErrBadOption)
	}
	return nonWearOf(rule, times, counts), nil
}

// nonWearOf applies the named rule.
func nonWearOf(rule string, times []int64, counts []float64) []bool {
	if rule == NonWearColumn {
		out := make([]bool, len(counts))
		for i, c := range counts {
			out[i] = c == 0
		}
		return out
	}
	step := medianStep(times)
	if rule == NonWearChoi {
		return choiNonWear(times, counts, step)
	}
	return troianoNonWear(times, counts, step)
}

// medianStep is the median time between consecutive windows (0 with fewer than two).
func medianStep(times []int64) time.Duration {
	if len(times) < 2 {
		return 0
	}
	steps := make([]float64, len(times)-1)
	for i := range steps {
		steps[i] = float64(times[i+1] - times[i])
	}
	return time.Duration(math.Round(Median(steps)))
}
