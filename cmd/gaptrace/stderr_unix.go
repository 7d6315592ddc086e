//go:build unix

package main

import (
	"os"
	"runtime/debug"
	"syscall"
)

// claimStderr keeps the process's standard error for gaptrace alone: the C
// libraries under OpenCV write their own warnings to file descriptor 2
// past OpenCV's log level (libjpeg's "Corrupt JPEG data: premature end of
// data segment" for a damaged Motion JPEG frame, which gaptrace reports in
// its own words). It moves the original standard error to a new
// descriptor, which os.Stderr and the Go runtime's crash reports
// (debug.SetCrashOutput) then use, and points descriptor 2 at /dev/null.
// On any failure standard error stays as it was.
func claimStderr() {
	fd, err := syscall.Dup(2)
	if err != nil {
		return
	}
	null, err := os.OpenFile(os.DevNull, os.O_WRONLY, 0)
	if err != nil {
		syscall.Close(fd)
		return
	}
	defer null.Close()
	own := os.NewFile(uintptr(fd), "/dev/stderr")
	if err := debug.SetCrashOutput(own, debug.CrashOptions{}); err != nil {
		own.Close()
		return
	}
	if err := syscall.Dup2(int(null.Fd()), 2); err != nil {
		debug.SetCrashOutput(nil, debug.CrashOptions{})
		own.Close()
		return
	}
	os.Stderr = own
}
