package job

import (
	"context"
	"fmt"
	"math"
	"math/rand/v2"
	"os"
	"path/filepath"
	"slices"
	"strings"
	"testing"
	"time"

	"github.com/cohortmix/cohortmix/cohort"
	"github.com/cohortmix/cohortmix/cohort/group"
	"github.com/cohortmix/cohortmix/cohort/note"
	"github.com/cohortmix/cohortmix/cohort/synth"
	"github.com/cohortmix/cohortmix/normalize"
)

// syntheticCohort writes a synthetic cohort to a temporary CSV and returns its path.
func syntheticCohort(t *testing.T, so synth.Options) string {
	t.Helper()
	path := filepath.Join(t.TempDir(), "c.csv")
	if _, err := synth.WriteFile(path, so); err != nil {
		t.Fatal(err)
	}
	return path
}

// The fit kept among several is the medoid of their groupings by the adjusted Rand index: the
// one that agrees best with the others, ties to the first. Values worked by hand: two identical
// partitions of six agree with ARI 1; {0,0,0,1,1,1} against {0,0,1,1,2,2} has ARI (2 − 6·3/15) / ((6 + 3)/2 − 6·3/15) = 8/33 (Hubert & Arabie 1985).
func TestMedoidOfGroupings(t *testing.T) {
	t.Parallel()
	a := []int{0, 0, 0, 1, 1, 1}
	aRenamed := []int{1, 1, 1, 0, 0, 0}
	b := []int{0, 0, 1, 1, 2, 2}
	for _, c := range []struct {
		name   string
		labels [][]int
		best   int
		agree  []float64
	}{
		{"the odd one out is first", [][]int{b, a, aRenamed}, 1, []float64{8.0 / 33, 1}},
		{"the odd one out is last", [][]int{a, aRenamed, b}, 0, []float64{1, 8.0 / 33}},
		{"all alike: the first", [][]int{a, aRenamed, a}, 0, []float64{1, 1}},
		{"two fits: the first", [][]int{a, b}, 0, []float64{8.0 / 33}},
	} {
		pair := pairwise(c.labels) // as keepMedoid takes them
		best := medoidOf(pair)
		agree := othersOf(pair, best)
		if best != c.best || len(agree) != len(c.agree) {
			t.Errorf("%s: fit %d kept, agreement %v; want fit %d, %v", c.name, best, agree, c.best, c.agree)
			continue
		}
		for i := range agree {
			if math.Abs(agree[i]-c.agree[i]) > 1e-12 { // exact fractions, up to rounding
				t.Errorf("%s: agreement %v, want %v", c.name, agree, c.agree)
			}
		}
	}
}

// Many small units, most of them alike (two thirds of 300 units of 30 windows never move: one
// count feature of zeros, the rest a few scattered counts), as when a recording is cut into
// hours: the run gives a grouping, with every grouping method and with the sensitivity table,
// which once stopped on ties ("Hierarchical: distance entry is NaN"). Invented data.
func TestManySmallAlikeUnitsGiveAResult(t *testing.T) {
	t.Parallel()
	path := filepath.Join(t.TempDir(), "ties.csv")
	var b strings.Builder
	b.WriteString("participant,window,count\n")
	rng := rand.New(rand.NewPCG(3, 1))
	for u := 0; u < 300; u++ {
		for w := 0; w < 30; w++ {
			c := 0
			if u%3 == 0 && rng.Float64() < 0.3 {
				c = []int{0, 5, 20, 150, 800}[rng.IntN(5)]
			}
			fmt.Fprintf(&b, "U%d,%d,%d\n", u, w, c)
		}
	}
	if err := os.WriteFile(path, []byte(b.String()), 0o644); err != nil {
		t.Fatal(err)
	}
	for _, m := range []group.Method{group.Mixture, group.WardHellinger} {
		o := Defaults(path)
		o.Method, o.Bootstrap = m, 5
		if m != group.Mixture {
			o.Groups, o.Criterion = o.Groups[1:], group.ByGapSteady
		}
		res, err := Analyze(context.Background(), o)
		if err != nil {
			t.Fatalf("%v: %v", m, err)
		}
		if len(res.Units) != 300 || res.Grouping.K < 1 {
			t.Errorf("%v: %d units in %d groups", m, len(res.Units), res.Grouping.K)
		}
	}
}

// Issue 30: bouts were runs of consecutive rows whatever the time between them. gapsOf marks
// the window after a step of more than 1.5 times the participant's usual one, in times and in
// window numbers; the file's row order has no steps.
func TestGapsOf(t *testing.T) {
	t.Parallel()
	dir := t.TempDir()
	var ints, times strings.Builder
	ints.WriteString("participant,window,f1\n")
	times.WriteString("participant,window,f1\n")
	start := time.Date(2026, 3, 2, 8, 0, 0, 0, time.UTC)
	for w := 0; w < 60; w++ {
		if w >= 20 && w < 40 { // twenty windows missing: one interruption
			continue
		}
		fmt.Fprintf(&ints, "A,%d,%d\n", w, w%3)
		fmt.Fprintf(&times, "A,%s,%d\n", start.Add(time.Duration(w)*time.Minute).Format(time.RFC3339), w%3)
	}
	for name, text := range map[string]string{"integers": ints.String(), "times": times.String()} {
		p := filepath.Join(dir, name+".csv")
		os.WriteFile(p, []byte(text), 0o644)
		tab, err := cohort.Read(context.Background(), []string{p}, cohort.ReadOptions{})
		if err != nil {
			t.Fatal(err)
		}
		gaps, _, err := gapsOf(tab, 0)
		tab.Close()
		marked := []int{}
		for i, g := range gaps {
			if g {
				marked = append(marked, i)
			}
		}
		if err != nil || len(marked) != 1 || marked[0] != 20 {
			t.Errorf("%s: gaps after windows %v (%v), want the 21st window read (index 20)", name, marked, err)
		}
	}
	p := filepath.Join(dir, "rows.csv")
	os.WriteFile(p, []byte(ints.String()), 0o644)
	tab, err := cohort.Read(context.Background(), []string{p}, cohort.ReadOptions{Order: "-"})
	if err != nil {
		t.Fatal(err)
	}
	defer tab.Close()
	if gaps, _, err := gapsOf(tab, 0); gaps != nil || err != nil {
		t.Errorf("file order: %v, %v", gaps, err)
	}
}

// Issue 30: zero-heavy features were left linear with no word; the note names what was logged
// and why each other feature was not.
func TestLogNoteSaysWhatWasLogged(t *testing.T) {
	t.Parallel()
	fit := &normalize.Fit{Logged: []bool{true, false, false, false}, Axes: []int{3}}
	norm := normalize.Options{Lowest: []float64{0.01, -2, 0, -1}}
	got := logNote([]string{"vm_sd", "mean_z", "count", "mean_x"}, fit, norm)
	if got.Kind != NoteLogScales || !slices.Equal(got.Ints, []int{1, 1, 1}) || !slices.Equal(got.Names, []string{"vm_sd", "mean_z", "count"}) {
		t.Errorf("got %+v: want vm_sd logged, mean_z negative and count zero-heavy, the axis mean_x in none", got)
	}
}

// Each device's sphere calibration is reported: how many devices were calibrated (the note) and
// how far each one's axis means were moved (the Participants sheet's column). A planted cohort
// (invented data): 40 devices with per-axis offsets of up to 0.12 g; the first 30 hold six
// postures around the sphere and must be calibrated to within 0.01 g of their planted offsets
// (window noise 0.02 g, 50 windows a posture: an error of about 0.003 g in a least-squares fit,
// van Hees et al. 2014), the
// last 10 hold two postures, which reach past 0.3 g on one side of each axis only, and must be
// left as read.
func TestCalibrationIsReported(t *testing.T) {
	t.Parallel()
	path := filepath.Join(t.TempDir(), "cal.csv")
	var b strings.Builder
	b.WriteString("participant,window,mean_x,mean_y,mean_z,vm_sd\n")
	rng := rand.New(rand.NewPCG(5, 1))
	postures := [][3]float64{{1, 0, 0}, {-1, 0, 0}, {0, 1, 0}, {0, -1, 0}, {0, 0, 1}, {0, 0, -1}}
	planted := make([]float64, 40)
	for u := 0; u < 40; u++ {
		var off [3]float64
		for i := range off {
			off[i] = 0.12 * (2*rng.Float64() - 1) / math.Sqrt(3)
		}
		planted[u] = math.Sqrt(off[0]*off[0] + off[1]*off[1] + off[2]*off[2])
		held := postures
		if u >= 30 {
			held = [][3]float64{{0.8, 0.6, 0}, {0, 0.6, 0.8}}
		}
		for w := 0; w < 300; w++ {
			p := held[w%len(held)]
			fmt.Fprintf(&b, "U%02d,%d", u, w)
			for i := range p {
				fmt.Fprintf(&b, ",%.5f", p[i]+off[i]+0.02*rng.NormFloat64())
			}
			fmt.Fprintf(&b, ",%.5f\n", 0.05+0.3*float64(w%len(held))/float64(len(held))+0.01*rng.Float64())
		}
	}
	if err := os.WriteFile(path, []byte(b.String()), 0o644); err != nil {
		t.Fatal(err)
	}
	o := Defaults(path)
	o.States, o.Bootstrap, o.NoSensitivity = []int{3}, 2, true
	res, err := Analyze(context.Background(), o)
	if err != nil {
		t.Fatal(err)
	}
	var got *note.Note
	for i, n := range res.Notes {
		if n.Kind == NoteCalibration {
			got = &res.Notes[i]
		}
	}
	if got == nil || !slices.Equal(got.Ints, []int{30, 40}) {
		t.Fatalf("calibration note %+v, want 30 of 40 devices calibrated", got)
	}
	for _, u := range res.Units {
		var i int
		fmt.Sscanf(u.ID, "U%d", &i)
		switch {
		case i >= 30 && !math.IsNaN(u.Calibration):
			t.Errorf("%s: calibration offset %.3f g, want none (two postures cannot be calibrated)", u.ID, u.Calibration)
		case i < 30 && !(math.Abs(u.Calibration-planted[i]) < 0.01):
			t.Errorf("%s: calibration offset %.3f g, planted %.3f g", u.ID, u.Calibration, planted[i])
		}
	}
}

// The run warns that its groups depend on the number of states when the fit kept agrees with
// the ensemble's other fits by a mean adjusted Rand index below StatesAgree, and only when more
// than one number of states was fitted. Partitions of six (adjusted Rand index, Hubert & Arabie
// 1985, worked by hand and checked with scikit-learn's adjusted_rand_score): a = {0,0,0,1,1,1}
// against b = {0,0,1,1,2,2} 8/33 ≈ 0.242, a against c = {0,1,0,1,0,1} −1/9, b against c −4/11.
func TestStatesDisagreeWarning(t *testing.T) {
	t.Parallel()
	a := []int{0, 0, 0, 1, 1, 1}
	b := []int{0, 0, 1, 1, 2, 2}
	c := []int{0, 1, 0, 1, 0, 1}
	for _, tc := range []struct {
		name   string
		states []int
		labels [][]int
		warn   bool
	}{
		{"all alike", []int{3, 4}, [][]int{a, a, a, a}, false},
		{"the kept fit agrees with most", []int{3, 4}, [][]int{a, a, a, b}, false}, // kept a: (1 + 1 + 8/33) / 3 = 0.747
		{"no two alike", []int{3, 4}, [][]int{a, b, c, b}, true},                   // kept b: (8/33 + 1 − 4/11) / 3 = 0.293
		{"one number of states", []int{4}, [][]int{a, b, c}, false},
	} {
		var members []ensembleMember
		for i, l := range tc.labels {
			members = append(members, ensembleMember{s: tc.states[i%len(tc.states)], fit: i / len(tc.states), labels: l})
		}
		o := Options{States: tc.states, Fits: len(tc.labels) / len(tc.states)}
		_, _, warnings := keepMedoid(&FitPiece{}, members, pairwise(tc.labels), o, 6)
		got := slices.ContainsFunc(warnings, func(n note.Note) bool { return n.Kind == WarnStatesDisagree })
		if got != tc.warn {
			t.Errorf("%s: warned %v, want %v (%+v)", tc.name, got, tc.warn, warnings)
		}
	}
}
