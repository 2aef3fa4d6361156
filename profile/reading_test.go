package profile

import (
	"math"
	"slices"
	"testing"
	"time"
)

// windowsAt is n windows of one feature at value v.
func windowsAt(n int, v float64) []float64 {
	out := make([]float64, n)
	for i := range out {
		out[i] = v
	}
	return out
}

// A state of a feature of a known scale is read by where its windows fall against the
// published cut-points (activity counts a minute: sedentary below 100, light to 2019, moderate
// to 5998, Troiano et al. 2008; ENMO in mg: moderate from 100.6, vigorous from 428.8,
// Hildebrand et al. 2014; both from memory, as profile/reading.go says), not by its mean. The
// expected values are worked by hand; the median is read within a bin of a twentieth of a decade
// (12 %), hence the tolerance on it.
func TestStatesReadByWhereTheirWindowsFall(t *testing.T) {
	t.Parallel()
	cases := []struct {
		name    string
		feature string
		window  time.Duration
		values  []float64
		level   Level
		median  float64 // 0 when the median window is at 0
		share   float64 // of the windows in the median's band
	}{
		// 70 minutes at rest and 30 at 1000 counts: mean 300 (light), median 0 (sedentary).
		{"rest with some light movement", "count", time.Minute, append(windowsAt(70, 0), windowsAt(30, 1000)...), LevelStill, 0, 0.7},
		{"moderate throughout", "count", time.Minute, windowsAt(50, 3000), LevelModerate, 3000, 1},
		// 60 counts a 30-s window are 120 a minute: light.
		{"counts per half minute", "counts", 30 * time.Second, windowsAt(40, 60), LevelLight, 120, 1},
		// ENMO in g (every state's mean below 3 g) is read in mg: 0.2 g is 200 mg, moderate.
		{"ENMO in g", "enmo", time.Minute, append(windowsAt(60, 0.2), windowsAt(40, 0.5)...), LevelModerate, 200, 0.6},
		{"vigorous ENMO in mg", "ENMO_mg", time.Minute, append(windowsAt(30, 50), windowsAt(70, 600)...), LevelVigorous, 600, 0.7},
	}
	for _, c := range cases {
		ds := NewDescriberOf([]string{c.feature}, 1)
		if err := ds.Add(c.values, make([]int, len(c.values))); err != nil {
			t.Fatal(err)
		}
		rd := ReadStates(ds.Descriptions(), []string{c.feature}, nil, c.window)[0]
		if !rd.AnchorMedian || rd.Level != c.level {
			t.Errorf("%s: level %v (by the median: %v), want %v", c.name, rd.Level, rd.AnchorMedian, c.level)
		}
		if c.median == 0 && rd.AnchorValue != 0 || c.median > 0 && math.Abs(rd.AnchorValue/c.median-1) > 0.13 {
			t.Errorf("%s: median %v, want %v", c.name, rd.AnchorValue, c.median)
		}
		if math.Abs(rd.AnchorShare-c.share) > 1e-9 {
			t.Errorf("%s: share in the band %v, want %v", c.name, rd.AnchorShare, c.share)
		}
	}
	// Without the windows counted by value (Describe knows no feature names), the mean reads.
	desc, err := Describe([][]float64{append(windowsAt(70, 0), windowsAt(30, 1000)...)}, [][]int{make([]int, 100)}, 1, 1)
	if err != nil {
		t.Fatal(err)
	}
	if rd := ReadStates(desc, []string{"count"}, nil, time.Minute)[0]; rd.AnchorMedian || rd.AnchorValue != 300 || rd.Level != LevelLight {
		t.Errorf("by the mean: %+v, want light at 300", rd)
	}
}

// The windows counted by value merge exactly and come back from a piece; a piece whose counts
// do not fit its states, or are not whole numbers, is refused; a merge with a Describer that did
// not count leaves the states to be read by their means rather than stop.
func TestDescriberCountsMergeAndComeBack(t *testing.T) {
	t.Parallel()
	features := []string{"count", "count_log"}
	whole := NewDescriberOf(features, 2)
	a, b := NewDescriberOf(features, 2), NewDescriberOf(features, 2)
	for i := 0; i < 200; i++ {
		x := []float64{float64(i * i % 997), math.Log1p(float64(i))}
		l := []int{i % 2}
		if err := whole.Add(x, l); err != nil {
			t.Fatal(err)
		}
		part := a
		if i >= 120 {
			part = b
		}
		if err := part.Add(x, l); err != nil {
			t.Fatal(err)
		}
	}
	pb, err := b.Piece().Describer()
	if err != nil {
		t.Fatal(err)
	}
	pb.Merge(a)
	got, want := pb.Descriptions(), whole.Descriptions()
	for s := range want {
		if want[s].Hist == nil || !slices.Equal(got[s].Hist, want[s].Hist) {
			t.Errorf("state %d: counts by value differ after merging through a piece", s)
		}
	}
	for name, p := range map[string]DescriberPiece{
		"short":    func() DescriberPiece { p := whole.Piece(); p.Hist = p.Hist[1:]; return p }(),
		"fraction": func() DescriberPiece { p := whole.Piece(); p.Hist[3] = 0.5; return p }(),
		"anchor":   func() DescriberPiece { p := whole.Piece(); p.Anchor = 2; return p }(),
	} {
		if _, err := p.Describer(); err == nil {
			t.Errorf("%s: a bad piece was read back", name)
		}
	}
	if b := whole.Blank(); b.anchor != whole.anchor || len(b.hist) != len(whole.hist) || slices.ContainsFunc(b.hist, func(c float64) bool { return c != 0 }) {
		t.Error("a blank Describer does not count as the one it came from, or is not empty")
	}
	plain := NewDescriber(2, 2)
	if err := plain.Add([]float64{5, 1}, []int{0}); err != nil {
		t.Fatal(err)
	}
	whole.Merge(plain)
	if d := whole.Descriptions(); d[0].Hist != nil {
		t.Error("a merge with a Describer that did not count kept counts that miss its windows")
	}
}
