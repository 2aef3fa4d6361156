package cohort

import (
	"context"
	"errors"
	"os"
	"path/filepath"
	"slices"
	"strings"
	"testing"
)

// Read in shards, the participants fall apart by id and together make up the whole read: the
// same units with the same ordinals and windows, the same exclusions, and counts that add up.
func TestShardsMakeUpTheWholeRead(t *testing.T) {
	t.Parallel()
	dir := t.TempDir()
	var a, b strings.Builder
	a.WriteString("participant,window,f1,f2,flat\n")
	b.WriteString("participant,window,f1,f2,flat\n")
	for i := 0; i < 40; i++ {
		for p := 0; p < 9; p++ {
			if p == 8 && i >= 5 { // P8 has too few windows
				continue
			}
			f2 := itoa((i*p)%7) + ".5"
			if p == 3 && i == 2 {
				f2 = "NA" // one window dropped
			}
			// "flat" is constant in the participants of some shards only.
			row := "P" + itoa(p) + "," + itoa(i) + "," + itoa(i%5+p) + "," + f2 + "," + itoa(min(p, 1)) + "\n"
			if i%2 == 0 {
				a.WriteString(row)
			} else {
				b.WriteString(row)
			}
		}
	}
	paths := []string{write(t, dir, "a.csv", []byte(a.String())), write(t, dir, "b.csv", []byte(b.String()))}
	whole, err := Read(context.Background(), paths, ReadOptions{})
	if err != nil {
		t.Fatal(err)
	}
	for _, count := range []int{1, 2, 3, 7} {
		var units []*Unit
		var excluded []Exclusion
		windows, dropped := 0, 0
		var parts []*Constancy
		for s := 0; s < count; s++ {
			tab, err := Read(context.Background(), paths, ReadOptions{Shard: Shard{s, count}})
			if err != nil {
				t.Fatal(err)
			}
			if tab.Quality.WindowsIn != whole.Quality.WindowsIn || tab.Quality.UnitsIn != whole.Quality.UnitsIn {
				t.Errorf("%d shards, shard %d: %d windows and %d units in, whole %d and %d", count, s, tab.Quality.WindowsIn, tab.Quality.UnitsIn, whole.Quality.WindowsIn, whole.Quality.UnitsIn)
			}
			for _, u := range tab.Units {
				if ShardOf(u.ID, count) != s {
					t.Errorf("%d shards: %s read in shard %d, belongs to %d", count, u.ID, s, ShardOf(u.ID, count))
				}
			}
			if err := tab.SelectFeatures(whole.Features); err != nil {
				t.Fatal(err)
			}
			for i, u := range tab.Units {
				x, w := block(t, tab, i), block(t, whole, slices.IndexFunc(whole.Units, func(v *Unit) bool { return v.ID == u.ID }))
				if !slices.Equal(x, w) {
					t.Errorf("%d shards: %s's windows differ from the whole read's", count, u.ID)
				}
			}
			units = append(units, tab.Units...)
			excluded = append(excluded, tab.Quality.Excluded...)
			windows += tab.Quality.WindowsIn - tab.Quality.WindowsExcluded - tab.Quality.WindowsDropped
			dropped += tab.Quality.WindowsDropped
			parts = append(parts, tab.Constancy)
		}
		slices.SortFunc(units, func(a, b *Unit) int { return a.Ordinal - b.Ordinal })
		for i, u := range units {
			if w := whole.Units[i]; u.ID != w.ID || u.Ordinal != w.Ordinal || u.Windows() != w.Windows() {
				t.Errorf("%d shards: unit %d is %s (ordinal %d, %d windows), whole read %s (%d, %d)", count, i, u.ID, u.Ordinal, u.Windows(), w.ID, w.Ordinal, w.Windows())
			}
		}
		if len(units) != len(whole.Units) || len(excluded) != 1 || excluded[0].ID != "P8" || excluded[0].Ordinal != 8 || dropped != 1 {
			t.Errorf("%d shards: %d units (whole %d), excluded %v, %d dropped", count, len(units), len(whole.Units), excluded, dropped)
		}
		all := []string{"f1", "f2", "flat"}
		if kept, dropped, err := KeptFeatures(all, MergeConstancy(parts), paths[0]); err != nil || !slices.Equal(kept, whole.Features) || len(dropped) != len(whole.Quality.DroppedFeatures) {
			t.Errorf("%d shards: kept %v, dropped %v (%v); the whole read keeps %v", count, kept, dropped, err, whole.Features)
		}
	}
	if _, err := Read(context.Background(), paths, ReadOptions{Shard: Shard{3, 3}}); err == nil {
		t.Error("shard 3 of 3 was read")
	}
}

// A windows file gives back the table it was written from: the same units, ordinals, labels,
// windows and order keys, read from the file in place; other files are refused.
func TestWindowsFileGivesBackTheTable(t *testing.T) {
	t.Parallel()
	dir := t.TempDir()
	var b strings.Builder
	b.WriteString("participant,window,f1,f2,act\n")
	for i := 0; i < 60; i++ {
		for p := 0; p < 5; p++ {
			b.WriteString("P" + itoa(p) + "," + itoa(60-i) + "," + itoa(i%7+p) + ".125,-" + itoa(i%3) + ".5,a" + itoa(i%2) + "\n")
		}
	}
	path := write(t, dir, "c.csv", []byte(b.String()))
	opts := ReadOptions{Label: "act", Shard: Shard{1, 2}}
	tab, err := Read(context.Background(), []string{path}, opts)
	if err != nil {
		t.Fatal(err)
	}
	var buf strings.Builder
	if err := tab.WriteWindows(&buf, opts.Shard, "run-1"); err != nil {
		t.Fatal(err)
	}
	file := write(t, dir, "w.windows", []byte(buf.String()))
	back, shard, run, err := ReadWindows(file)
	if err != nil {
		t.Fatal(err)
	}
	if shard != opts.Shard || run != "run-1" || len(back.Units) != len(tab.Units) || !slices.Equal(back.Features, tab.Features) || !back.Spilled() {
		t.Fatalf("shard %v, %d units, features %v, read from the file %v", shard, len(back.Units), back.Features, back.Spilled())
	}
	for u, un := range tab.Units {
		bu := back.Units[u]
		if bu.ID != un.ID || bu.Ordinal != un.Ordinal || !slices.Equal(bu.Labels, un.Labels) ||
			!slices.Equal(block(t, back, u), block(t, tab, u)) || !slices.Equal(order(t, back, u), order(t, tab, u)) {
			t.Errorf("unit %s differs after the windows file", un.ID)
		}
	}
	if err := back.Close(); err != nil {
		t.Fatal(err)
	}
	if _, err := os.Stat(file); err != nil {
		t.Errorf("closing the table removed its windows file: %v", err)
	}
	if _, _, _, err := ReadWindows(path); !errors.Is(err, ErrWindows) {
		t.Errorf("a CSV file read as a windows file: %v", err)
	}
	// Issue 28: 14 of 20 single-bit flips in a windows file changed the result silently. Every
	// flip is now refused: in the header, the windows or the checksum itself.
	good := []byte(buf.String())
	for i := 0; i < len(good); i += 1 + len(good)/97 {
		for _, bit := range []byte{0x01, 0x80} {
			bad := slices.Clone(good)
			bad[i] ^= bit
			if _, _, _, err := ReadWindows(write(t, dir, "flip.windows", bad)); !errors.Is(err, ErrWindows) {
				t.Fatalf("bit %#x of byte %d of %d flipped: %v", bit, i, len(good), err)
			}
		}
	}
	if _, _, _, err := ReadWindows(write(t, dir, "long.windows", append(slices.Clone(good), 0))); !errors.Is(err, ErrWindows) {
		t.Errorf("a byte after the end: %v", err)
	}
}

// FuzzReadWindows: no file makes the windows reader panic or ask for more memory than the file
// could fill; it reads a table or says why not.
func FuzzReadWindows(f *testing.F) {
	dir := f.TempDir()
	path := write(f, dir, "c.csv", []byte(rowsOf(30, ",")))
	tab, err := Read(context.Background(), []string{path}, ReadOptions{})
	if err != nil {
		f.Fatal(err)
	}
	var buf strings.Builder
	if err := tab.WriteWindows(&buf, Shard{}, "run"); err != nil {
		f.Fatal(err)
	}
	f.Add([]byte(buf.String()))
	f.Add([]byte("participant,window\n"))
	f.Fuzz(func(t *testing.T, b []byte) {
		p := filepath.Join(t.TempDir(), "w")
		if err := os.WriteFile(p, b, 0o644); err != nil {
			t.Fatal(err)
		}
		back, _, _, err := ReadWindows(p)
		if err != nil && !errors.Is(err, ErrWindows) {
			t.Errorf("an error that is not ErrWindows: %v", err)
		}
		back.Close()
	})
}
