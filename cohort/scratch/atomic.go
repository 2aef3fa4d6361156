package scratch

import (
	"errors"
	"fmt"
	"io"
	"os"
	"path/filepath"
)

// PartialSuffix ends the name of an output being written, before it is renamed into place.
const PartialSuffix = ".partial"

// ErrExists is returned when the output exists and overwriting was not asked for.
var ErrExists = errors.New("output file exists")

// CheckTarget refuses an existing output unless force is set; commands call it before any work.
func CheckTarget(path string, force bool) error {
	if st, err := os.Stat(path); err == nil {
		if st.IsDir() {
			return fmt.Errorf("%s: is a directory: %w; name a file", path, ErrExists)
		}
		if !force {
			return fmt.Errorf("%s: %w; set scratch.WriteAtomic force to replace it, or choose another name", path, ErrExists)
		}
	}
	return nil
}

// WriteAtomic writes through write into a temporary file beside path and renames it into place,
// so a crash or an interrupt never leaves half a file; the temporary file is removed on failure.
func WriteAtomic(path string, force bool, write func(io.Writer) error) error {
	if err := CheckTarget(path, force); err != nil {
		return err
	}
	tmp, err := WriteTemp(path, write)
	if err != nil {
		return fmt.Errorf("%s: %w", path, err)
	}
	if err := os.Rename(tmp, path); err != nil {
		os.Remove(tmp)
		return fmt.Errorf("%s: %w", path, err)
	}
	return nil
}

// WriteTemp writes through write into a new temporary file beside path (named with Pattern and
// PartialSuffix, so that a later run can sweep it up), synced and closed with the usual mode,
// and returns its name; on failure the file is removed. Renaming it into place is the caller's.
func WriteTemp(path string, write func(io.Writer) error) (name string, err error) {
	tmp, err := os.CreateTemp(filepath.Dir(path), Pattern("."+filepath.Base(path), PartialSuffix))
	if err != nil {
		return "", fmt.Errorf("cannot create a temporary file beside it: %w", err)
	}
	defer func() {
		if err != nil {
			tmp.Close()
			os.Remove(tmp.Name())
		}
	}()
	if err = tmp.Chmod(0o644); err != nil { // CreateTemp makes 0600; outputs get the usual mode
		return "", err
	}
	if err = write(tmp); err != nil {
		return "", err
	}
	if err = tmp.Sync(); err != nil {
		return "", err
	}
	if err = tmp.Close(); err != nil {
		return "", err
	}
	return tmp.Name(), nil
}
