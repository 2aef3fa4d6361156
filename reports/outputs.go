package reports

import (
	"encoding/json"
	"errors"
	"fmt"
	"io"
	"os"
	"path/filepath"
	"sync"

	"github.com/cohortmix/cohortmix/cohort/scratch"
)

// ErrOutput is wrapped by every error about where an output would go.
var ErrOutput = errors.New("output path not usable")

// Target is one file a run will write: the flag that names it (for the messages) and its path.
type Target struct {
	Flag, Path string
}

// Outputs are the files one run writes. NewOutputs checks them all before any work is done;
// Write writes each to a temporary file beside its target, and Commit renames them all into
// place at the end. A run that fails or is interrupted calls Abort, which removes the temporary
// files: no output appears, and no earlier output changes. Write may be called for several
// outputs at once.
type Outputs struct {
	force   bool
	targets []Target
	mu      sync.Mutex        // guards temps and aborted
	temps   map[string]string // target path → its written temporary file
	aborted bool
	// Leftovers is what NewOutputs found of earlier runs that were killed, in the folders of
	// the targets and the temporary folder, and what it did with each.
	Leftovers []Leftover
}

// Leftover is a file of a killed run that a later run put right.
type Leftover struct {
	Path  string
	Bytes int64
	// Completed is set for an output whose run was killed while putting its outputs in place:
	// the output was written whole, and is now in place beside the others of its set.
	// Otherwise the file was a temporary one and was removed.
	Completed bool
}

// The marks of the files an output plan makes (scratch.Pattern): the temporary outputs, the
// commit journal and the probes; and the reader's temporary windows files, which a killed run
// leaves too.
const (
	journalPrefix = ".cohortmix-commit"
	journalSuffix = ".json"
	probePrefix   = ".cohortmix-probe"
	windowsPrefix = ".cohortmix-windows"
	windowsSuffix = ".tmp"
)

// journal is the commit journal: written whole before the first rename and removed after the
// last, so that a run killed between the renames is found by the next (recoverLeftovers).
type journal struct {
	Format string
	Moves  []move
}

type move struct{ Temp, Path string }

const journalFormat = "cohortmix commit 1"

// recoverLeftovers completes the commits that killed runs left in dir (their journals) and
// removes their temporary files.
func recoverLeftovers(dir string) ([]Leftover, error) {
	var out []Leftover
	entries, _ := os.ReadDir(dir)
	for _, e := range entries {
		if !scratch.Stale(e.Name(), journalPrefix, journalSuffix) {
			continue
		}
		p := filepath.Join(dir, e.Name())
		b, err := os.ReadFile(p)
		var j journal
		if err == nil && json.Unmarshal(b, &j) == nil && j.Format == journalFormat {
			for _, m := range j.Moves {
				st, err := os.Stat(m.Temp)
				if err != nil {
					continue // put in place before the kill
				}
				if err := os.Rename(m.Temp, m.Path); err != nil {
					return out, fmt.Errorf("%s: a run killed while putting its outputs in place left it; cohortmix cannot put it in place (%v): %w; move %s to %s by hand, or remove both and run again", m.Path, err, ErrOutput, m.Temp, m.Path)
				}
				out = append(out, Leftover{Path: m.Path, Bytes: st.Size(), Completed: true})
			}
		} // a journal cut short was written before any rename: its outputs are swept below
		if err := os.Remove(p); err != nil {
			return out, err
		}
	}
	for _, sweep := range [][2]string{{".", scratch.PartialSuffix}, {windowsPrefix, windowsSuffix}, {probePrefix, ""}} {
		removed, err := scratch.Sweep(dir, sweep[0], sweep[1])
		for _, r := range removed {
			out = append(out, Leftover{Path: r.Path, Bytes: r.Bytes})
		}
		if err != nil {
			return out, err
		}
	}
	return out, nil
}

// NewOutputs checks every target before a run reads anything: its folder exists and can be
// written to; it is not one of the inputs (whatever force says); it is not a folder, not the
// run's temporary folder and not another output; and it does not exist unless force is set.
// Each problem is one line naming the flag and the path. Targets with an empty path are skipped.
func NewOutputs(targets []Target, inputs []string, tempDir string, force bool) (*Outputs, error) {
	return NewOutputsKeeping(targets, inputs, nil, tempDir, force)
}

// NewOutputsKeeping is NewOutputs with files the run reads that are not inputs of the table,
// each named by the flag that gives it (the pseudonymization key, say): no output may replace
// one of them either, whatever force says.
//
// Before that, in each target's folder and the temporary folder, it completes the commit of a
// run that was killed while putting its outputs in place, and removes the temporary files that
// killed runs of this host left (Outputs.Leftovers).
func NewOutputsKeeping(targets []Target, inputs []string, keep []Target, tempDir string, force bool) (*Outputs, error) {
	o := &Outputs{force: force, temps: map[string]string{}}
	swept := map[string]bool{}
	for _, dir := range append([]string{tempDir}, targetDirs(targets)...) {
		if dir == "" || swept[filepath.Clean(dir)] {
			continue
		}
		swept[filepath.Clean(dir)] = true
		found, err := recoverLeftovers(dir)
		o.Leftovers = append(o.Leftovers, found...)
		if err != nil {
			return nil, err
		}
	}
	for i, t := range targets {
		if t.Path == "" {
			continue
		}
		dir := filepath.Dir(t.Path)
		st, err := os.Stat(dir)
		switch {
		case err != nil:
			return nil, fmt.Errorf("%s %s: the folder %s does not exist: %w; create it first or name a file in another folder", t.Flag, t.Path, dir, ErrOutput)
		case !st.IsDir():
			return nil, fmt.Errorf("%s %s: %s is not a folder: %w; name a file in a folder", t.Flag, t.Path, dir, ErrOutput)
		}
		if probe, err := os.CreateTemp(dir, scratch.Pattern(probePrefix, "")); err != nil {
			return nil, fmt.Errorf("%s %s: the folder %s cannot be written to (%v): %w; name a file in a folder you can write", t.Flag, t.Path, dir, err, ErrOutput)
		} else {
			probe.Close()
			os.Remove(probe.Name())
		}
		if tempDir != "" && sameFile(t.Path, tempDir) {
			return nil, fmt.Errorf("%s %s: is the folder for temporary files (cohort.ReadOptions.TempDir): %w; name a file", t.Flag, t.Path, ErrOutput)
		}
		for _, k := range keep {
			if k.Path != "" && (filepath.Clean(k.Path) == filepath.Clean(t.Path) || sameFile(t.Path, k.Path)) {
				return nil, fmt.Errorf("%s %s: is the file given with %s, which this run reads: %w; an output never replaces it, whatever --force says; name another file", t.Flag, t.Path, k.Flag, ErrOutput)
			}
		}
		for _, in := range inputs {
			if in != "-" && sameFile(t.Path, in) {
				return nil, fmt.Errorf("%s %s: is one of the inputs: %w; an output never replaces an input, whatever reports.NewOutputs force says; name another file", t.Flag, t.Path, ErrOutput)
			}
		}
		for _, u := range targets[:i] {
			if u.Path != "" && (filepath.Clean(u.Path) == filepath.Clean(t.Path) || sameFile(u.Path, t.Path)) {
				return nil, fmt.Errorf("%s %s: %s names the same file: %w; give each output its own name", t.Flag, t.Path, u.Flag, ErrOutput)
			}
		}
		if err := checkTarget(t, force); err != nil {
			return nil, err
		}
		o.targets = append(o.targets, t)
	}
	return o, nil
}

func targetDirs(targets []Target) []string {
	var dirs []string
	for _, t := range targets {
		if t.Path != "" {
			dirs = append(dirs, filepath.Dir(t.Path))
		}
	}
	return dirs
}

// checkTarget refuses a target that is a folder, or that exists when force is not set.
func checkTarget(t Target, force bool) error {
	st, err := os.Stat(t.Path)
	switch {
	case err != nil:
		return nil
	case st.IsDir():
		return fmt.Errorf("%s %s: is a folder: %w; name a file", t.Flag, t.Path, scratch.ErrExists)
	case !force:
		return fmt.Errorf("%s %s: %w; set reports.NewOutputs force to replace it, or choose another name", t.Flag, t.Path, scratch.ErrExists)
	}
	return nil
}

// sameFile reports whether two paths name one existing file or folder.
func sameFile(a, b string) bool {
	sa, err := os.Stat(a)
	if err != nil {
		return false
	}
	sb, err := os.Stat(b)
	return err == nil && os.SameFile(sa, sb)
}

// Has reports whether the plan writes the target of this flag.
func (o *Outputs) Has(flag string) bool {
	for _, t := range o.targets {
		if t.Flag == flag {
			return true
		}
	}
	return false
}

// Write writes the output of this flag through write into a temporary file beside its target;
// Commit puts it in place. When writing fails, every temporary file of the run is removed.
func (o *Outputs) Write(flag string, write func(io.Writer) error) (err error) {
	var t *Target
	for i := range o.targets {
		if o.targets[i].Flag == flag {
			t = &o.targets[i]
		}
	}
	if t == nil {
		return fmt.Errorf("reports: no output was planned for %s", flag)
	}
	tmp, err := scratch.WriteTemp(t.Path, write)
	if err != nil {
		o.Abort() // one output failed: none of the run's outputs will be committed
		return fmt.Errorf("%s %s: %w", t.Flag, t.Path, err)
	}
	o.mu.Lock()
	defer o.mu.Unlock()
	if o.aborted { // another output failed meanwhile
		os.Remove(tmp)
		return fmt.Errorf("%s %s: the run's other outputs failed", t.Flag, t.Path)
	}
	o.temps[t.Path] = tmp
	return nil
}

// Commit renames every written output into place, after checking once more that none appeared
// meanwhile (unless force is set); on a failure it removes what is left. With more than one
// output, a journal naming every rename is written first, beside the first output, and removed
// after the last: a run killed between the renames leaves it, and the next run that plans
// outputs in that folder completes the set (NewOutputs).
func (o *Outputs) Commit() error {
	j := journal{Format: journalFormat}
	for _, t := range o.targets {
		if _, ok := o.temps[t.Path]; !ok {
			o.Abort()
			return fmt.Errorf("reports: %s %s was planned but not written", t.Flag, t.Path)
		}
		if err := checkTarget(t, o.force); err != nil {
			o.Abort()
			return err
		}
		tmp, err1 := filepath.Abs(o.temps[t.Path])
		path, err2 := filepath.Abs(t.Path)
		if err := errors.Join(err1, err2); err != nil {
			o.Abort()
			return err
		}
		j.Moves = append(j.Moves, move{Temp: tmp, Path: path})
	}
	var journalPath string
	if len(o.targets) > 1 {
		var err error
		if journalPath, err = writeJournal(filepath.Dir(o.targets[0].Path), j); err != nil {
			o.Abort()
			return fmt.Errorf("%s %s: cannot write the commit journal beside it: %w", o.targets[0].Flag, o.targets[0].Path, err)
		}
	}
	for i, t := range o.targets {
		if err := os.Rename(o.temps[t.Path], t.Path); err != nil {
			o.Abort()
			os.Remove(journalPath)
			return fmt.Errorf("%s %s: %w", t.Flag, t.Path, err)
		}
		delete(o.temps, t.Path)
		if commitHook != nil {
			commitHook(i + 1)
		}
	}
	if journalPath != "" {
		return os.Remove(journalPath)
	}
	return nil
}

// commitHook, when set, runs between the renames of a commit; tests kill the run there.
var commitHook func(done int)

// writeJournal writes the journal whole (synced) in dir and returns its path.
func writeJournal(dir string, j journal) (string, error) {
	b, err := json.Marshal(j)
	if err != nil {
		return "", err
	}
	f, err := os.CreateTemp(dir, scratch.Pattern(journalPrefix, journalSuffix))
	if err != nil {
		return "", err
	}
	if _, err := f.Write(b); err != nil {
		f.Close()
		os.Remove(f.Name())
		return "", err
	}
	if err := f.Sync(); err != nil {
		f.Close()
		os.Remove(f.Name())
		return "", err
	}
	return f.Name(), f.Close()
}

// Abort removes every temporary file written and not committed; it is safe to call after
// Commit, and more than once.
func (o *Outputs) Abort() {
	if o == nil {
		return
	}
	o.mu.Lock()
	defer o.mu.Unlock()
	o.aborted = true
	for p, tmp := range o.temps {
		os.Remove(tmp)
		delete(o.temps, p)
	}
}
