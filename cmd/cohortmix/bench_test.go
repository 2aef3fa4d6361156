package main

import (
	"context"
	"path/filepath"
	"testing"

	"github.com/cohortmix/cohortmix/cohort"
	"github.com/cohortmix/cohortmix/cohort/synth"
)

// BenchmarkGroup runs the main job end to end on a synthetic cohort of 200 participants × 5,000
// windows × 24 features (about 1 million rows), with the read alone beside it for the share of
// time spent parsing.
func BenchmarkGroup(b *testing.B) {
	dir := b.TempDir()
	path := filepath.Join(dir, "cohort.csv")
	if _, err := synth.WriteFile(path, synth.Options{Participants: 200, Windows: 5000, Features: 24, Seed: 1}); err != nil {
		b.Fatal(err)
	}
	b.Run("read,n=200,w=5000,d=24", func(b *testing.B) {
		b.ReportAllocs()
		for b.Loop() {
			t, err := cohort.Read(context.Background(), []string{path}, cohort.ReadOptions{})
			if err != nil {
				b.Fatal(err)
			}
			t.Close()
		}
	})
	b.Run("group,n=200,w=5000,d=24", func(b *testing.B) {
		b.ReportAllocs()
		env, _, _ := testEnv()
		for b.Loop() {
			o := &groupOptions{IO: env.IO, Now: fixedNow, Inputs: []string{path}, Out: filepath.Join(dir, "r.xlsx")}
			o.Flags = defaultFlags()
			o.Flags.Force = true
			if err := groupRun(context.Background(), o); err != nil {
				b.Fatal(err)
			}
		}
	})
}
