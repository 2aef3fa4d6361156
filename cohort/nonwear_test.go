package cohort

import (
	"context"
	"fmt"
	"math"
	"math/rand/v2"
	"slices"
	"strings"
	"testing"
	"time"

	"github.com/cohortmix/cohortmix/cohort/note"
)

// minutes builds window start times, one every step, and counts from runs of (value, windows).
func minutes(step time.Duration, runs ...[2]float64) ([]int64, []float64) {
	var times []int64
	var counts []float64
	t0 := time.Date(2026, 3, 2, 0, 0, 0, 0, time.UTC)
	for _, r := range runs {
		for i := 0; i < int(r[1]); i++ {
			times = append(times, t0.Add(time.Duration(len(times))*step).UnixNano())
			counts = append(counts, r[0])
		}
	}
	return times, counts
}

// marked counts the windows a rule marked.
func marked(m []bool) int {
	n := 0
	for _, x := range m {
		if x {
			n++
		}
	}
	return n
}

// The rule of Troiano et al. 2008 (as commonly applied; values from memory): 60 minutes or more
// of zero counts, with interruptions of up to 2 minutes of 1–100 counts a minute. Each case's
// expected periods follow from that definition by hand.
func TestTroianoNonWear(t *testing.T) {
	t.Parallel()
	for _, c := range []struct {
		name string
		step time.Duration
		runs [][2]float64
		want int // windows marked
	}{
		{"70 minutes of zeros", time.Minute, [][2]float64{{500, 10}, {0, 70}, {500, 10}}, 70},
		{"59 minutes of zeros: too short", time.Minute, [][2]float64{{500, 10}, {0, 59}, {500, 10}}, 0},
		{"exactly 60 minutes", time.Minute, [][2]float64{{0, 60}}, 60},
		{"30 + 2 minutes of 50 + 30: one period", time.Minute, [][2]float64{{0, 30}, {50, 2}, {0, 30}}, 62},
		{"30 + 3 minutes of 50 + 30: the interruption is too long", time.Minute, [][2]float64{{0, 30}, {50, 3}, {0, 30}}, 0},
		{"30 + 1 minute of 150 + 30: too many counts", time.Minute, [][2]float64{{0, 30}, {150, 1}, {0, 30}}, 0},
		{"an interruption at the end is not part of it", time.Minute, [][2]float64{{0, 65}, {50, 2}, {800, 5}}, 65},
		// 15-s windows: counts a window × 4 are counts a minute; 25 a window is 100 a minute.
		{"15-s windows, 60 minutes", 15 * time.Second, [][2]float64{{0, 240}}, 240},
		{"15-s windows, an interruption of 2 minutes at 100 a minute", 15 * time.Second, [][2]float64{{0, 120}, {25, 8}, {0, 120}}, 248},
		{"15-s windows, 104 a minute", 15 * time.Second, [][2]float64{{0, 120}, {26, 8}, {0, 120}}, 0},
	} {
		times, counts := minutes(c.step, c.runs...)
		if got := marked(troianoNonWear(times, counts, c.step)); got != c.want {
			t.Errorf("%s: %d windows marked, want %d", c.name, got, c.want)
		}
	}
	// A gap in time ends a period: 40 minutes, an hour missing, 40 minutes.
	times, counts := minutes(time.Minute, [2]float64{0, 80})
	for i := 40; i < 80; i++ {
		times[i] += int64(time.Hour)
	}
	for _, m := range troianoNonWear(times, counts, time.Minute) {
		if m {
			t.Fatal("a period ran across a gap in the recording")
		}
	}
}

// Read with the rule, a participant's non-wear windows are left out and counted, and the table
// says so; without times the rule is refused.
func TestReadLeavesOutNonWear(t *testing.T) {
	t.Parallel()
	dir := t.TempDir()
	var b strings.Builder
	b.WriteString("participant,window,counts,vm\n")
	t0 := time.Date(2026, 3, 2, 8, 0, 0, 0, time.UTC)
	for _, id := range []string{"A", "B"} {
		for i := 0; i < 300; i++ {
			c := 300 + i%7
			if id == "A" && i >= 100 && i < 190 { // 90 minutes off the wrist
				c = 0
			}
			fmt.Fprintf(&b, "%s,%s,%d,%d.5\n", id, t0.Add(time.Duration(i)*time.Minute).Format(time.RFC3339), c, i%5)
		}
	}
	p := write(t, dir, "c.csv", []byte(b.String()))
	tab, err := Read(context.Background(), []string{p}, ReadOptions{NonWear: NonWearTroiano})
	if err != nil {
		t.Fatal(err)
	}
	defer tab.Close()
	if tab.Units[0].NonWear != 90 || tab.Units[0].Windows() != 210 || tab.Units[1].NonWear != 0 || tab.Quality.WindowsNonWear != 90 ||
		!slices.ContainsFunc(tab.Quality.Notes, func(n note.Note) bool {
			return n.Kind == NoteNonWear && n.Ints[0] == 90 && n.Names[0] == NonWearTroiano
		}) {
		t.Errorf("A: %d non-wear, %d windows; B: %d; notes %v", tab.Units[0].NonWear, tab.Units[0].Windows(), tab.Units[1].NonWear, tab.Quality.Notes)
	}
	// auto: Choi's algorithm where there are counts and times (the 90 minutes are just enough),
	// nothing where there are no counts.
	auto, err := Read(context.Background(), []string{p}, ReadOptions{NonWear: NonWearAuto})
	if err != nil {
		t.Fatal(err)
	}
	if auto.Quality.NonWearRule != NonWearChoi || auto.Units[0].NonWear != 90 {
		t.Errorf("auto: rule %q, %d windows", auto.Quality.NonWearRule, auto.Units[0].NonWear)
	}
	auto.Close()
	plain := write(t, dir, "plain.csv", []byte(strings.ReplaceAll(b.String(), "counts,vm", "vm_sd,vm")))
	if none, err := Read(context.Background(), []string{plain}, ReadOptions{NonWear: NonWearAuto}); err != nil || none.Quality.NonWearRule != "" || none.Quality.WindowsNonWear != 0 {
		t.Errorf("auto without counts: %v", err)
	} else {
		none.Close()
	}
	q := write(t, dir, "ints.csv", []byte("participant,window,counts\nA,1,0\nA,2,0\n"))
	if _, err := Read(context.Background(), []string{q}, ReadOptions{NonWear: NonWearTroiano, MinWindows: 1}); err == nil || !strings.Contains(err.Error(), "needs times in the order column") {
		t.Errorf("integer order: %v", err)
	}
}

// The algorithm of Choi et al. 2011 (values from memory): 90 minutes or more of zero counts,
// with interruptions of up to 2 minutes of any counts that have 30 minutes of zeros before and
// after them. Expected periods worked by hand from that definition.
func TestChoiNonWear(t *testing.T) {
	t.Parallel()
	for _, c := range []struct {
		name string
		runs [][2]float64
		want int
	}{
		{"95 minutes of zeros", [][2]float64{{800, 5}, {0, 95}, {800, 5}}, 95},
		{"89 minutes: too short", [][2]float64{{800, 5}, {0, 89}, {800, 5}}, 0},
		{"40 + 2 minutes of 500 + 50: one period", [][2]float64{{0, 40}, {500, 2}, {0, 50}}, 92},
		{"20 + 2 + 80: too few zeros before the interruption", [][2]float64{{0, 20}, {500, 2}, {0, 80}}, 0},
		{"40 + 2 + 25 then movement: too few zeros after it", [][2]float64{{0, 70}, {500, 2}, {0, 25}, {900, 5}}, 0},
		{"40 + 3 + 60: the interruption is too long", [][2]float64{{0, 40}, {500, 3}, {0, 60}}, 0},
		{"two interruptions, each with 30 quiet minutes around it", [][2]float64{{0, 35}, {300, 1}, {0, 35}, {300, 1}, {0, 35}}, 107},
	} {
		times, counts := minutes(time.Minute, c.runs...)
		if got := marked(choiNonWear(times, counts, time.Minute)); got != c.want {
			t.Errorf("%s: %d windows marked, want %d", c.name, got, c.want)
		}
	}
}

// A planted scenario (invented here): 30 participants × 5 days of one-minute counts, days of
// activity, nights of rest broken by a small movement every 5 to 25 minutes, and for a third of
// them one period off the wrist of 2 to 24 hours (zeros, with one minute of handling inside).
// Choi's algorithm should find the planted non-wear (sensitivity) and leave the worn minutes,
// nights included, alone (specificity): both at least 0.95, the target of issue 30.
func TestChoiOnPlantedWear(t *testing.T) {
	t.Parallel()
	rng := rand.New(rand.NewPCG(30, 2))
	var tp, fn, tn, fp int
	var ttp, tfn, ttn, tfp int // Troiano's rule on the same minutes, for comparison
	for p := 0; p < 30; p++ {
		n := 5 * 1440
		counts := make([]float64, n)
		off := make([]bool, n)
		for m := 0; m < n; m++ {
			hour := (m / 60) % 24
			if hour >= 7 && hour < 23 {
				counts[m] = math.Round(math.Exp(5 + 1.2*rng.NormFloat64())) // about 150 counts, widely spread
				if rng.Float64() < 0.05 {
					counts[m] = 0 // a still minute while awake
				}
			}
		}
		for m := 0; m < n; { // nights: a small movement every 5 to 25 minutes
			m += 5 + rng.IntN(21)
			if m < n && ((m/60)%24 >= 23 || (m/60)%24 < 7) {
				counts[m] = float64(5 + rng.IntN(60))
			}
		}
		if p%3 == 0 {
			start, length := rng.IntN(n-1440), 120+rng.IntN(22*60)
			for m := start; m < start+length; m++ {
				counts[m], off[m] = 0, true
			}
			counts[start+length/2] = 40 // handled once while off
		}
		times, _ := minutes(time.Minute, [2]float64{0, float64(n)})
		for m, mark := range troianoNonWear(times, counts, time.Minute) {
			switch {
			case off[m] && mark:
				ttp++
			case off[m]:
				tfn++
			case mark:
				tfp++
			default:
				ttn++
			}
		}
		for m, mark := range choiNonWear(times, counts, time.Minute) {
			switch {
			case off[m] && mark:
				tp++
			case off[m]:
				fn++
			case mark:
				fp++
			default:
				tn++
			}
		}
	}
	sens, spec := float64(tp)/float64(tp+fn), float64(tn)/float64(tn+fp)
	t.Logf("planted non-wear, Choi: sensitivity %.4f (%d of %d minutes), specificity %.4f (%d of %d)", sens, tp, tp+fn, spec, tn, tn+fp)
	t.Logf("planted non-wear, Troiano: sensitivity %.4f, specificity %.4f (its interruptions of up to 100 counts take in nights)", float64(ttp)/float64(ttp+tfn), float64(ttn)/float64(ttn+tfp))
	if sens < 0.95 || spec < 0.95 {
		t.Errorf("sensitivity %.3f, specificity %.3f; want both ≥ 0.95", sens, spec)
	}
}
