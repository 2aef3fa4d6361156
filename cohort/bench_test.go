package cohort_test

import (
	"context"
	"os"
	"path/filepath"
	"testing"

	"github.com/cohortmix/cohortmix/cohort"
	"github.com/cohortmix/cohortmix/cohort/synth"
)

// BenchmarkRead reads a synthetic cohort of 40 participants × 10,080 windows × 24 features
// (about 74 MB of CSV, written once by cohort/synth) and reports the parse throughput in MB/s.
// The scale run in testdata/bench_scale.sh measures the same path on whole files of 0.18 and
// 1.9 GB, with peak memory.
func BenchmarkRead(b *testing.B) {
	for _, ext := range []string{".csv", ".parquet"} {
		b.Run(ext[1:], func(b *testing.B) {
			path := filepath.Join(b.TempDir(), "cohort"+ext)
			if _, err := synth.WriteFile(path, synth.Options{Participants: 40, Windows: 10080, Features: 24, Seed: 5}); err != nil {
				b.Fatal(err)
			}
			st, err := os.Stat(path)
			if err != nil {
				b.Fatal(err)
			}
			b.SetBytes(st.Size())
			b.ResetTimer()
			for i := 0; i < b.N; i++ {
				t, err := cohort.Read(context.Background(), []string{path}, cohort.ReadOptions{TempDir: b.TempDir()})
				if err != nil {
					b.Fatal(err)
				}
				t.Close()
			}
		})
	}
}
