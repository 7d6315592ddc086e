//go:build !linux

package main

import "syscall"

// childProcAttr: outside Linux a run outlives a killed batch; the row's
// lock, which the run holds, keeps the next batch away from its folder
// until it ends.
func childProcAttr() *syscall.SysProcAttr { return nil }
