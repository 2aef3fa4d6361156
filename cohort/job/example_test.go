package job_test

import (
	"context"
	"fmt"
	"os"
	"path/filepath"

	"github.com/cohortmix/cohortmix/cohort/job"
	"github.com/cohortmix/cohortmix/cohort/synth"
)

// The whole job from another program: a synthetic cohort of 60 invented participants with 3
// planted groups, read, fitted, grouped and described with the default settings.
func ExampleAnalyze() {
	dir, _ := os.MkdirTemp("", "cohortmix-example")
	defer os.RemoveAll(dir)
	path := filepath.Join(dir, "cohort.csv")
	if _, err := synth.WriteFile(path, synth.Options{Participants: 60, Windows: 1000, Seed: 1}); err != nil {
		fmt.Println(err)
		return
	}
	res, err := job.Analyze(context.Background(), job.Defaults(path))
	if err != nil {
		fmt.Println(err)
		return
	}
	fmt.Printf("%d participants in %d groups over %d movement states\n", len(res.Units), res.Grouping.K, res.States.K)
	// Output: 60 participants in 3 groups over 5 movement states
}
