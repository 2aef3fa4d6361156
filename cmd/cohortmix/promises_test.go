package main

import (
	"archive/zip"
	"bytes"
	"io"
	"os"
	"os/exec"
	"path/filepath"
	"regexp"
	"runtime"
	"strings"
	"syscall"
	"testing"
	"time"

	"github.com/cohortmix/cohortmix/cohort/synth"
)

// runGroup runs the group command in-process and returns its members CSV and model file.
func runGroup(t *testing.T, dir, input string, extra ...string) (members, model []byte) {
	t.Helper()
	out, mem, mod := filepath.Join(dir, "r.xlsx"), filepath.Join(dir, "m.csv"), filepath.Join(dir, "model.json")
	mustRun(t, append([]string{"group", input, "--out", out, "--members", mem, "--model", mod, "--force"}, extra...)...)
	members, _ = os.ReadFile(mem)
	model, _ = os.ReadFile(mod)
	// The model records when it was made, and its checksum covers that; everything else must
	// be identical.
	model = regexp.MustCompile(`"created": "[^"]*"`).ReplaceAll(model, nil)
	model = regexp.MustCompile(`"checksum": "[^"]*"`).ReplaceAll(model, nil)
	return members, model
}

func TestSameResultsWhateverTheCoresAndRuns(t *testing.T) {
	dir := t.TempDir()
	input := filepath.Join(dir, "c.csv")
	if _, err := synth.WriteFile(input, synth.Options{Participants: 60, Windows: 500, Seed: 12}); err != nil {
		t.Fatal(err)
	}
	before, _ := os.ReadFile(input)
	defer runtime.GOMAXPROCS(runtime.GOMAXPROCS(0))
	var firstMembers, firstModel []byte
	for i, procs := range []int{1, 2, 1, 2} {
		runtime.GOMAXPROCS(procs)
		members, model := runGroup(t, dir, input)
		if i == 0 {
			firstMembers, firstModel = members, model
			continue
		}
		if !bytes.Equal(members, firstMembers) {
			t.Fatalf("run %d (GOMAXPROCS=%d): members differ from the first run", i, procs)
		}
		if !bytes.Equal(model, firstModel) {
			t.Fatalf("run %d (GOMAXPROCS=%d): model file differs from the first run", i, procs)
		}
	}
	if after, _ := os.ReadFile(input); !bytes.Equal(before, after) {
		t.Error("the input file was changed")
	}
}

func TestPseudonymizeLeavesNoStudyID(t *testing.T) {
	dir := t.TempDir()
	input := filepath.Join(dir, "c.csv")
	synth.WriteFile(input, synth.Options{Participants: 40, Windows: 300, Seed: 13, IDPrefix: "STUDY-"})
	key := filepath.Join(dir, "key")
	os.WriteFile(key, []byte("0123456789abcdef-analyst-key"), 0o600)
	members, model := runGroup(t, dir, input, "--pseudonymize", key, "--groups", "3", "--states", "5")
	book := readZipText(t, filepath.Join(dir, "r.xlsx"))
	for name, b := range map[string][]byte{"members": members, "model": model, "workbook": book} {
		if bytes.Contains(b, []byte("STUDY-")) {
			t.Errorf("the %s still holds a study id", name)
		}
		if !regexp.MustCompile(`ps-[0-9a-f]{16}`).Match(b) {
			t.Errorf("the %s holds no pseudonym", name)
		}
	}
	again, _ := runGroup(t, t.TempDir(), input, "--pseudonymize", key, "--groups", "3", "--states", "5")
	if !bytes.Equal(again, members) {
		t.Error("the same key gave other pseudonyms")
	}
}

func readZipText(t *testing.T, path string) []byte {
	zr, err := zip.OpenReader(path)
	if err != nil {
		t.Fatal(err)
	}
	defer zr.Close()
	var all bytes.Buffer
	for _, f := range zr.File {
		rc, _ := f.Open()
		io.Copy(&all, rc)
		rc.Close()
	}
	return all.Bytes()
}

func TestInterruptLeavesNoPartialOutput(t *testing.T) {
	if testing.Short() {
		t.Skip("builds the binary")
	}
	dir := t.TempDir()
	bin := filepath.Join(dir, "cohortmix")
	if out, err := exec.Command("go", "build", "-o", bin, ".").CombinedOutput(); err != nil {
		t.Fatalf("build: %v\n%s", err, out)
	}
	input := filepath.Join(dir, "big.csv")
	if _, err := synth.WriteFile(input, synth.Options{Participants: 300, Windows: 4000, Features: 24, Seed: 2}); err != nil {
		t.Fatal(err)
	}
	outDir := filepath.Join(dir, "out")
	os.Mkdir(outDir, 0o755)
	existing := filepath.Join(outDir, "results.xlsx")
	os.WriteFile(existing, []byte("an earlier run's workbook"), 0o644)
	for _, sig := range []syscall.Signal{syscall.SIGINT, syscall.SIGTERM} {
		cmd := exec.Command(bin, "group", input, "--out", existing, "--model", filepath.Join(outDir, "model.json"), "--force")
		var stderr bytes.Buffer
		cmd.Stderr = &stderr
		if err := cmd.Start(); err != nil {
			t.Fatal(err)
		}
		time.Sleep(1500 * time.Millisecond)
		cmd.Process.Signal(sig)
		start := time.Now()
		err := cmd.Wait()
		took := time.Since(start)
		code := cmd.ProcessState.ExitCode()
		if code != 130 || took > 5*time.Second {
			t.Errorf("%v: exit %d after %v (%v), want 130 within 5 s; stderr %s", sig, code, took, err, stderr.String())
		}
		if !strings.Contains(stderr.String(), "interrupted; no output was written") {
			t.Errorf("%v: stderr %q", sig, stderr.String())
		}
		if b, _ := os.ReadFile(existing); string(b) != "an earlier run's workbook" {
			t.Errorf("%v: the existing output was changed", sig)
		}
		entries, _ := os.ReadDir(outDir)
		if len(entries) != 1 {
			var names []string
			for _, e := range entries {
				names = append(names, e.Name())
			}
			t.Errorf("%v: files left in the output folder: %v", sig, names)
		}
	}
}
