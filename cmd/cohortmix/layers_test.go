package main

import (
	"os/exec"
	"strings"
	"testing"
)

// layers places every package of the module in a layer; a package imports only packages of
// lower layers, so that imports point down: readers and leaves, the algorithms, the job, the
// words, the command line (DEVELOPERS.md). A new package must be placed here.
var layers = map[string]int{
	"cohort/clock": 0, "cohort/decimal": 0, "cohort/pqframe": 0, "cohort/scratch": 0, "cohort/pseudonym": 0, "cohort/note": 0,
	"cluster/groupstat": 0, "cluster/par": 0,
	"cluster": 1, "cluster/mixture": 2,
	"cohort": 3, "cohort/raw": 3, "cohort/synth": 3,
	"normalize":        4,
	"profile":          5,
	"cohort/group":     6,
	"cohort/modelfile": 7,
	"cohort/job":       8,
	"reports":          9,
	"cmd/cohortmix":    10,
}

// TestImportsPointDown reads the module's import graph with go list and checks every import
// between its packages against layers.
func TestImportsPointDown(t *testing.T) {
	t.Parallel()
	if testing.Short() {
		t.Skip("runs go list")
	}
	const module = "github.com/cohortmix/cohortmix/"
	out, err := exec.Command("go", "list", "-f", `{{.ImportPath}} {{join .Imports " "}}`, module+"...").Output()
	if err != nil {
		t.Skipf("go list: %v", err)
	}
	for _, line := range strings.Split(strings.TrimSpace(string(out)), "\n") {
		fields := strings.Fields(line)
		from := strings.TrimPrefix(fields[0], module)
		lf, ok := layers[from]
		if !ok {
			t.Errorf("package %s has no layer: place it in layers", from)
			continue
		}
		for _, imp := range fields[1:] {
			to, ours := strings.CutPrefix(imp, module)
			if !ours {
				continue
			}
			if lt, ok := layers[to]; ok && lt >= lf {
				t.Errorf("%s (layer %d) imports %s (layer %d): imports must point down", from, lf, to, lt)
			}
		}
	}
}
