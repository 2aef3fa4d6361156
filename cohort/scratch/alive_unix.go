//go:build unix

package scratch

import (
	"errors"
	"syscall"
)

// running reports whether a process runs with this id: signal 0 checks without signalling, and
// a process we may not signal runs too (kill(2), POSIX).
func running(pid int) bool {
	err := syscall.Kill(pid, 0)
	return err == nil || errors.Is(err, syscall.EPERM)
}
