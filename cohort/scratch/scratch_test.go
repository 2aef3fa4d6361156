package scratch

import (
	"os"
	"os/exec"
	"path/filepath"
	"strconv"
	"testing"
)

func TestOwner(t *testing.T) {
	t.Parallel()
	for _, c := range []struct {
		name, prefix, suffix string
		host                 string
		pid                  int
		ok                   bool
	}{
		{".cohortmix-windows~lab1~4242~123456.tmp", ".cohortmix-windows", ".tmp", "lab1", 4242, true},
		{".out.xlsx~lab1~17~99.partial", ".", ".partial", "lab1", 17, true},
		{".a~b.xlsx~lab1~17~99.partial", ".", ".partial", "lab1", 17, true}, // a ~ in the output's name
		{".out.xlsx.123.partial", ".", ".partial", "", 0, false},            // a name without the mark
		{".out.xlsx~lab1~x~99.partial", ".", ".partial", "", 0, false},
		{"results.xlsx", ".", ".partial", "", 0, false},
	} {
		h, pid, ok := Owner(c.name, c.prefix, c.suffix)
		if h != c.host || pid != c.pid || ok != c.ok {
			t.Errorf("Owner(%q) = %q, %d, %v", c.name, h, pid, ok)
		}
	}
}

// Sweep removes what a finished process left, and keeps what a live one (this one) holds and
// names it did not make.
func TestSweep(t *testing.T) {
	t.Parallel()
	dir := t.TempDir()
	cmd := exec.Command("true")
	if err := cmd.Run(); err != nil {
		t.Skip("no process to outlive:", err)
	}
	dead := cmd.Process.Pid
	left := filepath.Join(dir, ".cohortmix-windows~"+host()+"~"+strconv.Itoa(dead)+"~1.tmp")
	os.WriteFile(left, make([]byte, 1000), 0o600)
	mine, err := os.CreateTemp(dir, Pattern(".cohortmix-windows", ".tmp"))
	if err != nil {
		t.Fatal(err)
	}
	mine.Close()
	other := filepath.Join(dir, ".cohortmix-windows~elsewhere~"+strconv.Itoa(dead)+"~2.tmp")
	plain := filepath.Join(dir, ".cohortmix-windows-3.tmp")
	for _, p := range []string{other, plain} {
		os.WriteFile(p, nil, 0o600)
	}
	removed, err := Sweep(dir, ".cohortmix-windows", ".tmp")
	if err != nil || len(removed) != 1 || removed[0].Path != left || removed[0].Bytes != 1000 {
		t.Fatalf("removed %v, %v", removed, err)
	}
	for _, p := range []string{mine.Name(), other, plain} {
		if _, err := os.Stat(p); err != nil {
			t.Errorf("%s was removed", p)
		}
	}
}
