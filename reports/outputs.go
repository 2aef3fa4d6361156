package reports

import (
	"errors"
	"fmt"
	"io"
	"os"
	"path/filepath"
)

// ErrOutput is wrapped by every error about where an output would go.
var ErrOutput = errors.New("output path not usable")

// Target is one file a run will write: the flag that names it (for the messages) and its path.
type Target struct {
	Flag, Path string
}

// Outputs are the files one run writes. PlanOutputs checks them all before any work is done;
// Write writes each to a temporary file beside its target, and Commit renames them all into
// place at the end. A run that fails or is interrupted calls Abort, which removes the temporary
// files: no output appears, and no earlier output changes.
type Outputs struct {
	force   bool
	targets []Target
	temps   map[string]string // target path → its written temporary file
}

// PlanOutputs checks every target before a run reads anything: its folder exists and can be
// written to; it is not one of the inputs (whatever force says); it is not a folder, not the
// run's temporary folder and not another output; and it does not exist unless force is set.
// Each problem is one line naming the flag and the path. Targets with an empty path are skipped.
func PlanOutputs(targets []Target, inputs []string, tempDir string, force bool) (*Outputs, error) {
	return PlanOutputsKeeping(targets, inputs, nil, tempDir, force)
}

// PlanOutputsKeeping is PlanOutputs with files the run reads that are not inputs of the table,
// each named by the flag that gives it (the pseudonymization key, say): no output may replace
// one of them either, whatever force says.
func PlanOutputsKeeping(targets []Target, inputs []string, keep []Target, tempDir string, force bool) (*Outputs, error) {
	o := &Outputs{force: force, temps: map[string]string{}}
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
		if probe, err := os.CreateTemp(dir, ".cohortmix-probe-*"); err != nil {
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
				return nil, fmt.Errorf("%s %s: is one of the inputs: %w; an output never replaces an input, whatever reports.PlanOutputs force says; name another file", t.Flag, t.Path, ErrOutput)
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

// checkTarget refuses a target that is a folder, or that exists when force is not set.
func checkTarget(t Target, force bool) error {
	st, err := os.Stat(t.Path)
	switch {
	case err != nil:
		return nil
	case st.IsDir():
		return fmt.Errorf("%s %s: is a folder: %w; name a file", t.Flag, t.Path, ErrExists)
	case !force:
		return fmt.Errorf("%s %s: %w; set reports.PlanOutputs force to replace it, or choose another name", t.Flag, t.Path, ErrExists)
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
	tmp, err := os.CreateTemp(filepath.Dir(t.Path), "."+filepath.Base(t.Path)+".*.partial")
	if err != nil {
		o.Abort()
		return fmt.Errorf("%s %s: cannot create a temporary file beside it: %w", t.Flag, t.Path, err)
	}
	o.temps[t.Path] = tmp.Name()
	defer func() {
		if cerr := tmp.Close(); err == nil && cerr != nil {
			err = fmt.Errorf("%s %s: %w", t.Flag, t.Path, cerr)
		}
		if err != nil {
			o.Abort() // one output failed: none of the run's outputs will be committed
		}
	}()
	if err = tmp.Chmod(0o644); err != nil { // CreateTemp makes 0600; outputs get the usual mode
		return fmt.Errorf("%s %s: %w", t.Flag, t.Path, err)
	}
	if err = write(tmp); err != nil {
		return fmt.Errorf("%s %s: %w", t.Flag, t.Path, err)
	}
	if err = tmp.Sync(); err != nil {
		return fmt.Errorf("%s %s: %w", t.Flag, t.Path, err)
	}
	return nil
}

// Commit renames every written output into place, after checking once more that none appeared
// meanwhile (unless force is set); on a failure it removes what is left.
func (o *Outputs) Commit() error {
	for _, t := range o.targets {
		if _, ok := o.temps[t.Path]; !ok {
			o.Abort()
			return fmt.Errorf("reports: %s %s was planned but not written", t.Flag, t.Path)
		}
		if err := checkTarget(t, o.force); err != nil {
			o.Abort()
			return err
		}
	}
	for _, t := range o.targets {
		if err := os.Rename(o.temps[t.Path], t.Path); err != nil {
			o.Abort()
			return fmt.Errorf("%s %s: %w", t.Flag, t.Path, err)
		}
		delete(o.temps, t.Path)
	}
	return nil
}

// Abort removes every temporary file written and not committed; it is safe to call after
// Commit, and more than once.
func (o *Outputs) Abort() {
	if o == nil {
		return
	}
	for p, tmp := range o.temps {
		os.Remove(tmp)
		delete(o.temps, p)
	}
}
