package synth_test

import (
	"bytes"
	"context"
	"math"
	"path/filepath"
	"slices"
	"strconv"
	"strings"
	"testing"

	"github.com/cohortmix/cohortmix/cohort"
	"github.com/cohortmix/cohortmix/cohort/synth"
)

// The same options give the same cohort, as CSV or as Parquet, and the same seed the same bytes.
func TestSynthIsReproducibleInBothFormats(t *testing.T) {
	t.Parallel()
	dir := t.TempDir()
	opts := synth.Options{Participants: 12, Windows: 80, Features: 24, Seed: 3, Labels: true}
	var a, b bytes.Buffer
	if _, err := synth.Write(&a, opts, false); err != nil {
		t.Fatal(err)
	}
	synth.Write(&b, opts, false)
	if !bytes.Equal(a.Bytes(), b.Bytes()) {
		t.Fatal("the same seed gave other bytes")
	}
	csvPath, pqPath := filepath.Join(dir, "c.csv"), filepath.Join(dir, "c.parquet")
	truthCSV, _ := synth.WriteFile(csvPath, opts)
	truthPQ, err := synth.WriteFile(pqPath, opts)
	if err != nil {
		t.Fatal(err)
	}
	ro := cohort.ReadOptions{Label: "activity", MinWindows: 1}
	tc, err := cohort.Read(context.Background(), []string{csvPath}, ro)
	if err != nil {
		t.Fatal(err)
	}
	defer tc.Close()
	tp, err := cohort.Read(context.Background(), []string{pqPath}, ro)
	if err != nil {
		t.Fatal(err)
	}
	defer tp.Close()
	if err := tp.SelectFeatures(tc.Features); err != nil { // Parquet columns come sorted by name
		t.Fatal(err)
	}
	if len(tc.Units) != 12 || len(tp.Units) != 12 || len(tc.Features) != len(tp.Features) {
		t.Fatalf("CSV %d units %d features, Parquet %d units %d features", len(tc.Units), len(tc.Features), len(tp.Units), len(tp.Features))
	}
	for u := range tc.Units {
		x, _ := tc.Block(u, nil)
		y, _ := tp.Block(u, nil)
		for i := range x {
			if x[i] != y[i] {
				t.Fatalf("unit %d value %d: CSV %v, Parquet %v", u, i, x[i], y[i])
			}
		}
		if truthCSV[u].ID != truthPQ[u].ID || truthCSV[u].Group != truthPQ[u].Group || tc.Units[u].Labels[5] != tp.Units[u].Labels[5] {
			t.Fatalf("unit %d: truth or labels differ", u)
		}
	}
}

// Members of the scenario family are reproducible, within the documented ranges, and their
// windows are physically consistent: the tilt is the angle of the axis means' vector above the
// device's x–y plane, whatever the device's rotation.
func TestScenarioFamily(t *testing.T) {
	t.Parallel()
	for seed := uint64(1); seed <= 40; seed++ {
		sc := synth.DrawScenario(seed)
		if len(sc.States) < 4 || len(sc.States) > 8 || len(sc.Groups) < 2 || len(sc.Groups) > 5 {
			t.Fatalf("scenario %d: %d states, %d groups; want 4–8 and 2–5", seed, len(sc.States), len(sc.Groups))
		}
		var size float64
		for _, g := range sc.Groups {
			if g.Share < 0.08 {
				t.Errorf("scenario %d: a group of share %.3f, below 8 %%", seed, g.Share)
			}
			size += g.Share
		}
		if math.Abs(size-1) > 1e-9 {
			t.Errorf("scenario %d: group shares sum to %v", seed, size)
		}
	}
	opts := synth.Options{Scenario: 7, Seed: 7, Participants: 6, Windows: 300, Labels: true}
	var a, b bytes.Buffer
	truth, err := synth.Write(&a, opts, false)
	if err != nil {
		t.Fatal(err)
	}
	synth.Write(&b, opts, false)
	if !bytes.Equal(a.Bytes(), b.Bytes()) {
		t.Fatal("the same scenario and seed gave other bytes")
	}
	for _, tr := range truth {
		var s float64
		for _, v := range tr.Shares {
			s += v
		}
		if math.Abs(s-1) > 1e-9 {
			t.Errorf("%s: true shares sum to %v", tr.ID, s)
		}
	}
	lines := strings.Split(strings.TrimSpace(a.String()), "\n")
	header := strings.Split(lines[0], ",")
	col := map[string]int{}
	for i, h := range header {
		col[h] = i
	}
	if len(header) != 2+24+1 {
		t.Fatalf("header has %d columns, want participant, window, 24 features and the label", len(header))
	}
	for _, line := range lines[1:] {
		f := strings.Split(line, ",")
		num := func(name string) float64 {
			v, err := strconv.ParseFloat(f[col[name]], 64)
			if err != nil || math.IsNaN(v) || math.IsInf(v, 0) {
				t.Fatalf("%s: %q is not a finite number", name, f[col[name]])
			}
			return v
		}
		x, y, z := num("mean_x"), num("mean_y"), num("mean_z")
		tilt := math.Atan2(z, math.Hypot(x, y)) * 180 / math.Pi
		// The written tilt adds noise of s.d. 1° and the means are rounded to 4 decimals: 6°.
		if d := math.Abs(tilt - num("tilt_deg")); d > 6 {
			t.Fatalf("tilt %.1f° against %.1f° from the axis means (%v)", num("tilt_deg"), tilt, line)
		}
		for _, name := range []string{"sd_x", "vm_sd", "power_low", "power_high", "jerk_mean", "zero_cross"} {
			if num(name) < 0 {
				t.Fatalf("%s is negative: %v", name, line)
			}
		}
	}
}

// Every family draws its members: the planted groups as the family says (one for null, 2–3 for
// bouts with one mixture, one of 5–10 % for small), and no draw hangs (a count-data member once
// drew its groups for ever, its three waking states unable to hold them as far apart as the
// rule asked).
func TestEveryFamilyDrawsItsMembers(t *testing.T) {
	t.Parallel()
	for _, f := range synth.Families {
		for seed := uint64(1); seed <= 150; seed++ {
			sc, err := synth.DrawFamily(f, seed)
			if err != nil {
				t.Fatal(err)
			}
			k := len(sc.Groups)
			switch f {
			case synth.Null:
				if k != 1 {
					t.Fatalf("%s %d: %d groups", f, seed, k)
				}
			case synth.Bouty:
				if k < 2 || k > 3 || !slices.Equal(sc.Groups[0].Mixture, sc.Groups[k-1].Mixture) {
					t.Fatalf("%s %d: %d groups, or mixtures that differ", f, seed, k)
				}
			case synth.Small:
				if s := sc.Groups[k-1].Share; s < 0.05 || s > 0.1 {
					t.Fatalf("%s %d: the small group holds %.3f", f, seed, s)
				}
			default:
				if k < 2 || k > 5 {
					t.Fatalf("%s %d: %d groups", f, seed, k)
				}
			}
		}
	}
}
