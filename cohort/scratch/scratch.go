// Package scratch names the temporary files and folders cohortmix makes, so that those a killed
// run left behind can be told from those of a run still going, and removed by the next run.
//
// A name made here carries the host and the process id of its maker: prefix~host~pid~random
// suffix. Sweep removes, in one folder, the names of a given prefix and suffix whose maker ran
// on this host and is no longer running; names from other hosts (a shared folder) and from live
// processes are left alone. Names without the mark are never touched.
//
// WriteAtomic is the one way an output is put in place: written beside its target under such a
// name, then renamed.
package scratch

import (
	"errors"
	"os"
	"path/filepath"
	"strconv"
	"strings"
)

// Pattern is a pattern for os.CreateTemp and os.MkdirTemp that marks the name as this process's.
func Pattern(prefix, suffix string) string {
	return prefix + "~" + host() + "~" + strconv.Itoa(os.Getpid()) + "~*" + suffix
}

func host() string {
	h, err := os.Hostname()
	if err != nil || h == "" {
		return "unknown"
	}
	return strings.NewReplacer("~", "-", "/", "-", string(filepath.Separator), "-").Replace(h)
}

// Owner reads the host and process id from a name made with Pattern, with a prefix that starts
// with the given one, and the given suffix; ok is false for any other name.
func Owner(name, prefix, suffix string) (hostName string, pid int, ok bool) {
	if !strings.HasPrefix(name, prefix) || !strings.HasSuffix(name, suffix) {
		return "", 0, false
	}
	parts := strings.Split(strings.TrimSuffix(name, suffix), "~")
	if len(parts) < 4 || !strings.HasPrefix(strings.Join(parts[:len(parts)-3], "~"), prefix) {
		return "", 0, false
	}
	parts = parts[len(parts)-3:]
	pid, err := strconv.Atoi(parts[1])
	if err != nil || pid <= 0 {
		return "", 0, false
	}
	return parts[0], pid, true
}

// Stale reports whether a name made with Pattern belongs to a process of this host that is no
// longer running.
func Stale(name, prefix, suffix string) bool {
	h, pid, ok := Owner(name, prefix, suffix)
	return ok && h == host() && !alive(pid)
}

// alive reports whether a process runs with this id (one we may not look at runs too); each
// system's way is in alive_*.go.
func alive(pid int) bool {
	return pid == os.Getpid() || running(pid)
}

// Sweep removes from dir the stale files and folders whose prefix starts with the given one and
// whose suffix is the given one (Stale)
// and returns what it removed, with the bytes each held. A folder that cannot be read is
// swept of nothing.
func Sweep(dir, prefix, suffix string) ([]Removed, error) {
	entries, err := os.ReadDir(dir)
	if err != nil {
		return nil, nil
	}
	var out []Removed
	var errs []error
	for _, e := range entries {
		if !Stale(e.Name(), prefix, suffix) {
			continue
		}
		p := filepath.Join(dir, e.Name())
		size := du(p)
		if err := os.RemoveAll(p); err != nil {
			errs = append(errs, err)
			continue
		}
		out = append(out, Removed{Path: p, Bytes: size})
	}
	return out, errors.Join(errs...)
}

// Removed is a file or folder Sweep removed.
type Removed struct {
	Path  string
	Bytes int64
}

// du is the bytes of the files under p.
func du(p string) int64 {
	var n int64
	filepath.WalkDir(p, func(_ string, d os.DirEntry, err error) error {
		if err == nil && !d.IsDir() {
			if info, err := d.Info(); err == nil {
				n += info.Size()
			}
		}
		return nil
	})
	return n
}
