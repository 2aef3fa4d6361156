//go:build unix

package reports

import (
	"io"
	"os"
	"os/exec"
	"path/filepath"
	"strconv"
	"strings"
	"syscall"
	"testing"
)

// writeSet plans, writes and commits three outputs in dir, each holding text.
func writeSet(t *testing.T, dir, text string) *Outputs {
	t.Helper()
	targets := []Target{{"--out", filepath.Join(dir, "r.xlsx")}, {"--members", filepath.Join(dir, "m.csv")}, {"--model", filepath.Join(dir, "model.json")}}
	o, err := NewOutputs(targets, nil, "", true)
	if err != nil {
		t.Fatal(err)
	}
	for _, tg := range targets {
		if err := o.Write(tg.Flag, func(w io.Writer) error { _, err := io.WriteString(w, text); return err }); err != nil {
			t.Fatal(err)
		}
	}
	if err := o.Commit(); err != nil {
		t.Fatal(err)
	}
	return o
}

// TestKilledCommitHelper is the run that TestKilledCommitIsCompleted kills between renames.
func TestKilledCommitHelper(t *testing.T) {
	dir := os.Getenv("COHORTMIX_KILL_DIR")
	if dir == "" {
		t.Skip("run by TestKilledCommitIsCompleted")
	}
	commitHook = func(done int) {
		if done == 1 {
			syscall.Kill(os.Getpid(), syscall.SIGKILL)
		}
	}
	writeSet(t, dir, "new")
}

// Issue 28: SIGKILL between the final renames left a new workbook beside the old members and
// model, with no mark. Now the journal marks the set, and the next run in the folder completes
// it; then the temporary files of killed runs are gone.
func TestKilledCommitIsCompleted(t *testing.T) {
	if testing.Short() {
		t.Skip("starts the test binary again")
	}
	dir := t.TempDir()
	writeSet(t, dir, "old")
	cmd := exec.Command(os.Args[0], "-test.run", "^TestKilledCommitHelper$")
	cmd.Env = append(os.Environ(), "COHORTMIX_KILL_DIR="+dir)
	err := cmd.Run()
	if ee, ok := err.(*exec.ExitError); !ok || ee.Sys().(syscall.WaitStatus).Signal() != syscall.SIGKILL {
		t.Fatalf("the helper was not killed: %v", err)
	}
	read := func(name string) string { b, _ := os.ReadFile(filepath.Join(dir, name)); return string(b) }
	if read("r.xlsx") != "new" || read("m.csv") != "old" {
		t.Fatalf("the kill did not fall between the renames: %q, %q", read("r.xlsx"), read("m.csv"))
	}
	// What a run killed earlier, while writing, leaves: a temporary output and the windows file.
	host, _ := os.Hostname()
	mark := "~" + host + "~" + strconv.Itoa(cmd.Process.Pid) + "~7"
	os.WriteFile(filepath.Join(dir, ".r.xlsx"+mark+".partial"), []byte("half"), 0o644)
	os.WriteFile(filepath.Join(dir, ".cohortmix-windows"+mark+".tmp"), make([]byte, 77), 0o600)
	journals, _ := filepath.Glob(filepath.Join(dir, ".cohortmix-commit~*"))
	if len(journals) != 1 {
		t.Fatalf("journals %v: the mixed set is not marked", journals)
	}
	o, err := NewOutputs([]Target{{"--out", filepath.Join(dir, "other.xlsx")}}, nil, "", false)
	if err != nil {
		t.Fatal(err)
	}
	var completed []string
	var removed int64
	for _, l := range o.Leftovers {
		if l.Completed {
			completed = append(completed, filepath.Base(l.Path))
		} else {
			removed += l.Bytes
		}
	}
	if removed != 4+77 {
		t.Errorf("removed %d bytes of leftovers, want 81: %+v", removed, o.Leftovers)
	}
	if strings.Join(completed, " ") != "m.csv model.json" || read("m.csv") != "new" || read("model.json") != "new" {
		t.Errorf("completed %v; members %q, model %q", completed, read("m.csv"), read("model.json"))
	}
	if left, _ := filepath.Glob(filepath.Join(dir, ".*")); len(left) != 0 {
		t.Errorf("left behind: %v", left)
	}
}
