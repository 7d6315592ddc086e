package main

import "syscall"

// childProcAttr kills a row's run when the batch that started it dies, even
// by SIGKILL, so that no run goes on writing into a folder that the next
// batch will clear.
func childProcAttr() *syscall.SysProcAttr {
	return &syscall.SysProcAttr{Pdeathsig: syscall.SIGKILL}
}
