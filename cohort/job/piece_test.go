package job

import (
	"bytes"
	"context"
	"errors"
	"os"
	"path/filepath"
	"strings"
	"testing"

	"github.com/cohortmix/cohortmix/cohort"
	"github.com/cohortmix/cohortmix/cohort/synth"
)

// censusOf takes the census of one shard of a small synthetic cohort.
func censusOf(t *testing.T, path string, o Options, shard cohort.Shard) *Census {
	t.Helper()
	o.Read.Shard = shard
	tab, err := cohort.Read(context.Background(), []string{path}, o.Read)
	if err != nil {
		t.Fatal(err)
	}
	defer tab.Close()
	c, err := CensusOf(tab, o)
	if err != nil {
		t.Fatal(err)
	}
	return c
}

// A piece is read back as it was written, and every other file is refused with a message
// that says what it is.
func TestPiecesRefuseWhatTheyAreNot(t *testing.T) {
	dir := t.TempDir()
	path := filepath.Join(dir, "c.csv")
	if _, err := synth.WriteFile(path, synth.Options{Participants: 12, Windows: 60, Seed: 4}); err != nil {
		t.Fatal(err)
	}
	c := censusOf(t, path, Defaults(path), cohort.Shard{Index: 1, Count: 2})
	var buf bytes.Buffer
	if err := WritePiece(&buf, KindCensus, c); err != nil {
		t.Fatal(err)
	}
	good := buf.Bytes()
	write := func(name string, b []byte) string {
		p := filepath.Join(dir, name)
		os.WriteFile(p, b, 0o644)
		return p
	}
	back := new(Census)
	if err := ReadPiece(write("good", good), KindCensus, back); err != nil || len(back.Units) != len(c.Units) || back.Shard != c.Shard || back.Quality.WindowsIn != c.Quality.WindowsIn {
		t.Fatalf("read back: %v, %d units of shard %v", err, len(back.Units), back.Shard)
	}
	newer := bytes.Replace(good, []byte(`"version":2`), []byte(`"version":9`), 1)
	for _, c := range []struct {
		name string
		b    []byte
		kind string
		want string
	}{
		{"other kind", good, KindPlan, "a census piece where a plan piece is needed"},
		{"other version", newer, KindCensus, "a piece of version 9, and this cohortmix reads version 2"},
		{"not a piece", []byte("participant,window\nP1,1\n"), KindCensus, "not a piece of a split run"},
		{"cut short", good[:len(good)/2], KindCensus, "the census piece is damaged"},
	} {
		err := ReadPiece(write(c.name, c.b), c.kind, new(Census))
		if !errors.Is(err, ErrPiece) || !strings.Contains(err.Error(), c.want) {
			t.Errorf("%s: %v, want %q", c.name, err, c.want)
		}
	}
}

// The plan takes one census of every shard, all of the same input and settings.
func TestPlanNeedsEveryShardOnce(t *testing.T) {
	dir := t.TempDir()
	path := filepath.Join(dir, "c.csv")
	if _, err := synth.WriteFile(path, synth.Options{Participants: 12, Windows: 60, Seed: 4}); err != nil {
		t.Fatal(err)
	}
	o := Defaults(path)
	a, b := censusOf(t, path, o, cohort.Shard{Index: 0, Count: 2}), censusOf(t, path, o, cohort.Shard{Index: 1, Count: 2})
	other := o
	other.Seed = 9
	c := censusOf(t, path, other, cohort.Shard{Index: 1, Count: 2})
	if p, err := MergeCensus([]*Census{b, a}); err != nil || len(p.Units) != 12 || p.Shards != 2 {
		t.Fatalf("two shards: %v", err)
	}
	for name, parts := range map[string][]*Census{"one missing": {a}, "twice": {a, a}, "other settings": {a, c}} {
		if _, err := MergeCensus(parts); !errors.Is(err, ErrPiece) {
			t.Errorf("%s: %v, want a refusal", name, err)
		}
	}
}

// FuzzReadPiece: no file makes the piece reader panic; it reads a piece or says why not.
func FuzzReadPiece(f *testing.F) {
	dir := f.TempDir()
	path := filepath.Join(dir, "c.csv")
	if _, err := synth.WriteFile(path, synth.Options{Participants: 6, Windows: 30, Seed: 4}); err != nil {
		f.Fatal(err)
	}
	tab, err := cohort.Read(context.Background(), []string{path}, cohort.ReadOptions{})
	if err != nil {
		f.Fatal(err)
	}
	c, err := CensusOf(tab, Defaults(path))
	if err != nil {
		f.Fatal(err)
	}
	var buf bytes.Buffer
	WritePiece(&buf, KindCensus, c)
	f.Add(buf.Bytes())
	f.Add([]byte(`{"format":"cohortmix piece","kind":"census","version":1}` + "\n"))
	f.Add([]byte("\n"))
	f.Fuzz(func(t *testing.T, b []byte) {
		p := filepath.Join(t.TempDir(), "piece")
		if err := os.WriteFile(p, b, 0o644); err != nil {
			t.Fatal(err)
		}
		if err := ReadPiece(p, KindCensus, new(Census)); err != nil && !errors.Is(err, ErrPiece) {
			t.Errorf("an error that is not ErrPiece: %v", err)
		}
	})
}
