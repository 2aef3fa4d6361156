package job

import (
	"bytes"
	"context"
	"encoding/gob"
	"errors"
	"os"
	"path/filepath"
	"slices"
	"strings"
	"testing"

	"fmt"

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
	t.Parallel()
	dir := t.TempDir()
	path := filepath.Join(dir, "c.csv")
	if _, err := synth.WriteFile(path, synth.Options{Participants: 12, Windows: 60, Seed: 4}); err != nil {
		t.Fatal(err)
	}
	c := censusOf(t, path, Defaults(path), cohort.Shard{Index: 1, Count: 2})
	var buf bytes.Buffer
	if err := WritePiece(&buf, KindCensus, PieceID{Run: "run-1", Shard: "2/2"}, c); err != nil {
		t.Fatal(err)
	}
	good := buf.Bytes()
	write := func(name string, b []byte) string {
		p := filepath.Join(dir, name)
		os.WriteFile(p, b, 0o644)
		return p
	}
	back := new(Census)
	id, err := ReadPiece(write("good", good), KindCensus, back)
	if err != nil || len(back.Units) != len(c.Units) || back.Shard != c.Shard || back.Quality.WindowsIn != c.Quality.WindowsIn || id.Run != "run-1" || id.Shard != "2/2" || len(id.Sum) != 64 {
		t.Fatalf("read back: %v, %d units of shard %v, id %+v", err, len(back.Units), back.Shard, id)
	}
	newer := bytes.Replace(good, []byte(fmt.Sprintf(`"version":%d`, PieceVersion)), []byte(`"version":9`), 1)
	flipped := bytes.Clone(good)
	flipped[len(flipped)-20] ^= 0x04
	for _, c := range []struct {
		name string
		b    []byte
		kind string
		want string
	}{
		{"other kind", good, KindPlan, "a census piece where a plan piece is needed"},
		{"other version", newer, KindCensus, fmt.Sprintf("a piece of version 9, and this cohortmix reads version %d", PieceVersion)},
		{"not a piece", []byte("participant,window\nP1,1\n"), KindCensus, "not a piece of a split run"},
		{"cut short", good[:len(good)/2], KindCensus, "the census piece is damaged (its content does not match its checksum)"},
		{"a bit flipped (issue 28: 5 of 25 flips in an assignment piece went through)", flipped, KindCensus, "the census piece is damaged (its content does not match its checksum)"},
	} {
		_, err := ReadPiece(write(c.name, c.b), c.kind, new(Census))
		if !errors.Is(err, ErrPiece) || !strings.Contains(err.Error(), c.want) {
			t.Errorf("%s: %v, want %q", c.name, err, c.want)
		}
	}
}

// The plan takes one census of every shard, all of the same input and settings.
func TestPlanNeedsEveryShardOnce(t *testing.T) {
	t.Parallel()
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

// FuzzReadPiece: no file makes the piece reader of any kind panic; it reads a piece or says why not.
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
	WritePiece(&buf, KindCensus, PieceID{Run: "r"}, c)
	f.Add(buf.Bytes())
	f.Add([]byte(`{"format":"cohortmix piece","kind":"census","version":1}` + "\n"))
	f.Add([]byte("\n"))
	f.Fuzz(func(t *testing.T, b []byte) {
		p := filepath.Join(t.TempDir(), "piece")
		if err := os.WriteFile(p, b, 0o644); err != nil {
			t.Fatal(err)
		}
		for kind, v := range map[string]any{KindCensus: new(Census), KindPlan: new(Plan), KindSample: new(SamplePiece), KindFit: new(FitPiece), KindAssign: new(AssignPiece)} {
			if _, err := ReadPiece(p, kind, v); err != nil && !errors.Is(err, ErrPiece) {
				t.Errorf("%s: an error that is not ErrPiece: %v", kind, err)
			}
		}
	})
}

// A piece names the run and the piece it was made from; MadeFrom refuses the pieces of another
// run and those made from another plan or fit of the same run.
func TestMadeFrom(t *testing.T) {
	t.Parallel()
	parent := PieceID{Run: "r1", Sum: "fit-a"}
	for _, c := range []struct {
		name string
		id   PieceID
		want string
	}{
		{"same", PieceID{Run: "r1", From: "fit-a"}, ""},
		{"another run", PieceID{Run: "r2", From: "fit-a"}, "this assignment piece is of another run than fit.piece"},
		{"another fit", PieceID{Run: "r1", From: "fit-b"}, "was made from another piece than fit.piece"},
	} {
		err := MadeFrom("fit.piece", parent, KindAssign, []string{"a.piece"}, []PieceID{c.id})
		if c.want == "" && err != nil || c.want != "" && (!errors.Is(err, ErrPiece) || !strings.Contains(err.Error(), c.want)) {
			t.Errorf("%s: %v", c.name, err)
		}
	}
	o := Defaults("c.csv")
	files := []cohort.FileInfo{{Path: "c.csv", SHA256: "ab", Bytes: 10}}
	other := o
	other.Seed++
	shard := o
	shard.Read.Shard, shard.Workers = cohort.Shard{Index: 1, Count: 3}, 7
	changed := slices.Clone(files)
	changed[0].SHA256 = "cd"
	if RunOf(o, files) != RunOf(shard, files) || RunOf(o, files) == RunOf(other, files) || RunOf(o, files) == RunOf(o, changed) {
		t.Error("the run's identity should not depend on the shard and the workers, and should on the seed and the files")
	}
}

// FuzzFinishAssignPiece: an assignment piece whose body was changed and sealed again with a
// matching checksum (made by other means than this tool) is refused or finished, never a panic
// (issue 28: a flipped bit reached the grouping and panicked in a matrix routine).
func FuzzFinishAssignPiece(f *testing.F) {
	ctx := context.Background()
	dir := f.TempDir()
	path := filepath.Join(dir, "c.csv")
	if _, err := synth.WriteFile(path, synth.Options{Participants: 10, Windows: 80, Seed: 3}); err != nil {
		f.Fatal(err)
	}
	// The vector magnitude's mean named as activity counts, so that the piece also counts each
	// state's windows by that feature's value (profile.DescriberPiece.Hist).
	b, err := os.ReadFile(path)
	if err != nil {
		f.Fatal(err)
	}
	if err := os.WriteFile(path, bytes.Replace(b, []byte(",vm_mean,"), []byte(",count,"), 1), 0o644); err != nil {
		f.Fatal(err)
	}
	o := Defaults(path)
	o.States, o.Groups, o.Bootstrap, o.Fits = []int{3}, []int{1, 2}, 0, 1
	tab, err := cohort.Read(ctx, []string{path}, o.Read)
	if err != nil {
		f.Fatal(err)
	}
	defer tab.Close()
	c, err := CensusOf(tab, o)
	if err != nil {
		f.Fatal(err)
	}
	plan, err := MergeCensus([]*Census{c})
	if err != nil {
		f.Fatal(err)
	}
	sp, err := SampleOf(tab, plan, cohort.Shard{})
	if err != nil {
		f.Fatal(err)
	}
	fp, err := FitSample(ctx, plan, []*SamplePiece{sp})
	if err != nil {
		f.Fatal(err)
	}
	ap, err := AssignOf(ctx, tab, cohort.Shard{}, fp.Fit, fp.States, 1, nil)
	if err != nil {
		f.Fatal(err)
	}
	if _, err := Finish(ctx, fp, []*AssignPiece{ap}); err != nil {
		f.Fatal(err)
	}
	if ap.Desc.Hist == nil {
		f.Fatal("the seed piece counts no state's windows by value")
	}
	var fitBody bytes.Buffer
	if err := gob.NewEncoder(&fitBody).Encode(fp); err != nil {
		f.Fatal(err)
	}
	var body bytes.Buffer
	if err := gob.NewEncoder(&body).Encode(ap); err != nil {
		f.Fatal(err)
	}
	f.Add(body.Bytes())
	f.Fuzz(func(t *testing.T, b []byte) {
		ap := new(AssignPiece)
		if gob.NewDecoder(bytes.NewReader(b)).Decode(ap) != nil {
			return
		}
		fit := new(FitPiece) // Finish may change the fit it is given
		if err := gob.NewDecoder(bytes.NewReader(fitBody.Bytes())).Decode(fit); err != nil {
			t.Fatal(err)
		}
		defer func() {
			if r := recover(); r != nil {
				t.Fatalf("panic: %v", r)
			}
		}()
		Finish(ctx, fit, []*AssignPiece{ap})
	})
}
