package synth_test

import (
	"bytes"
	"context"
	"path/filepath"
	"testing"

	"github.com/cohortmix/cohortmix/cohort"
	"github.com/cohortmix/cohortmix/cohort/synth"
)

// The same options give the same cohort, as CSV or as Parquet, and the same seed the same bytes.
func TestSynthIsReproducibleInBothFormats(t *testing.T) {
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
		if truthCSV[u] != truthPQ[u] || tc.Units[u].Labels[5] != tp.Units[u].Labels[5] {
			t.Fatalf("unit %d: truth or labels differ", u)
		}
	}
}
