//go:build linux || darwin || freebsd || netbsd || openbsd || dragonfly

package campaign

import (
	"errors"
	"fmt"
	"os"
	"syscall"
)

// Lock takes the row's lock without waiting, so that two batches started
// on the same OUTROOT (by mistake, or shards that overlap) never analyse a
// row twice at once. The lock is held while the returned file stays open,
// in this process or in a child that inherited it (os/exec's ExtraFiles),
// and ends with the last of them, however it ends: a killed batch leaves
// no stale lock. It returns ErrBusy when another process holds the lock.
// It is an advisory flock(2) lock, which network file systems such as
// NFSv4 carry between machines.
func (l Layout) Lock(name string) (*os.File, error) {
	f, err := os.OpenFile(l.LockPath(name), os.O_RDWR|os.O_CREATE, 0o644)
	if err != nil {
		return nil, fmt.Errorf("lock of %s: %w", name, err)
	}
	if err := syscall.Flock(int(f.Fd()), syscall.LOCK_EX|syscall.LOCK_NB); err != nil {
		f.Close()
		if errors.Is(err, syscall.EWOULDBLOCK) {
			return nil, ErrBusy
		}
		return nil, fmt.Errorf("lock of %s: %w", name, err)
	}
	return f, nil
}
