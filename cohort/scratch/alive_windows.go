//go:build windows

package scratch

import (
	"errors"

	"golang.org/x/sys/windows"
)

// stillActive is the exit code GetExitCodeProcess reports for a process that has not ended
// (STILL_ACTIVE in the Win32 API).
const stillActive = 259

// running reports whether a process runs with this id: one that can be opened and has no exit
// code yet, or one we may not open (OpenProcess and GetExitCodeProcess, Win32 API).
func running(pid int) bool {
	if pid <= 0 || pid > 1<<31-1 {
		return false
	}
	h, err := windows.OpenProcess(windows.PROCESS_QUERY_LIMITED_INFORMATION, false, uint32(pid))
	if err != nil {
		return errors.Is(err, windows.ERROR_ACCESS_DENIED)
	}
	defer windows.CloseHandle(h)
	var code uint32
	if err := windows.GetExitCodeProcess(h, &code); err != nil {
		return true // opened but not readable: leave its files alone
	}
	return code == stillActive
}
