//go:build !unix && !windows

package scratch

// running cannot tell on this system whether another process runs, so every process is taken to
// run: its temporary files are left alone rather than removed from under it.
func running(int) bool { return true }
