package atomicfile

import (
	"bytes"
	"errors"
	"fmt"
	"io/fs"
	"os"
	"path/filepath"
	"strconv"
	"strings"
	"syscall"
	"time"
)

// LockName is the file that marks a folder as in use by one gaptrace run.
const LockName = ".gaptrace.lock"

// DirLock holds a folder for one process: the lock file in it records the
// process id, the host and the time it was taken.
type DirLock struct {
	path    string
	content []byte
}

// LockedError says that another live process holds the folder.
type LockedError struct {
	Dir   string
	PID   int
	Host  string
	Since string // RFC 3339, as recorded
}

func (e *LockedError) Error() string {
	if e.PID <= 0 {
		return fmt.Sprintf("output folder %s holds a lock file that cannot be read (remove %s if no run is using the folder)",
			e.Dir, filepath.Join(e.Dir, LockName))
	}
	return fmt.Sprintf("output folder %s is in use by gaptrace process %d on host %s since %s (remove %s if that run is gone)",
		e.Dir, e.PID, e.Host, e.Since, filepath.Join(e.Dir, LockName))
}

// LockDir takes the lock of dir, which must exist. When a lock is held by
// a process on this host that is no longer running (one killed, say), it is
// taken over and stale describes the lock left behind; a lock held by a
// live process, or by a process on another host, is a *LockedError.
func LockDir(dir string) (l *DirLock, stale string, err error) {
	host, _ := os.Hostname()
	l = &DirLock{path: filepath.Join(dir, LockName),
		content: fmt.Appendf(nil, "%d %s %s\n", os.Getpid(), host, time.Now().UTC().Format(time.RFC3339))}
	for range lockAttempts {
		err := l.create()
		if err == nil {
			return l, stale, nil
		}
		if !errors.Is(err, fs.ErrExist) {
			return nil, "", fmt.Errorf("locking output folder %s: %w", dir, err)
		}
		old, err := os.ReadFile(l.path)
		if errors.Is(err, fs.ErrNotExist) {
			continue // released meanwhile
		} else if err != nil {
			return nil, "", fmt.Errorf("locking output folder %s: %w", dir, err)
		}
		held := parseLock(dir, old)
		if held.Host != host || running(held.PID) {
			return nil, "", held
		}
		// Move the stale lock aside; if what was moved is not what was
		// judged stale (another process took it over first), put it back.
		aside := l.path + ".stale-" + strconv.Itoa(os.Getpid())
		if err := os.Rename(l.path, aside); err != nil {
			continue
		}
		moved, _ := os.ReadFile(aside)
		if !bytes.Equal(moved, old) {
			os.Link(aside, l.path)
			os.Remove(aside)
			continue
		}
		os.Remove(aside)
		stale = fmt.Sprintf("took over the lock of process %d on host %s (since %s), which is no longer running", held.PID, held.Host, held.Since)
	}
	return nil, "", fmt.Errorf("locking output folder %s: the lock changed hands %d times; try again", dir, lockAttempts)
}

// lockAttempts bounds the rounds of taking a lock that others keep taking
// and releasing.
const lockAttempts = 5

func (l *DirLock) create() error {
	f, err := os.OpenFile(l.path, os.O_WRONLY|os.O_CREATE|os.O_EXCL, fileMode)
	if err != nil {
		return err
	}
	_, err = f.Write(l.content)
	if cerr := f.Close(); err == nil {
		err = cerr
	}
	if err != nil {
		os.Remove(l.path)
	}
	return err
}

// Unlock releases the lock, if it is still this process's.
func (l *DirLock) Unlock() {
	if l == nil {
		return
	}
	if b, err := os.ReadFile(l.path); err == nil && bytes.Equal(b, l.content) {
		os.Remove(l.path)
	}
}

// parseLock reads a lock file's "pid host time" line.
func parseLock(dir string, b []byte) *LockedError {
	e := &LockedError{Dir: dir, Host: "?", Since: "?"}
	f := strings.Fields(string(b))
	if len(f) > 0 {
		e.PID, _ = strconv.Atoi(f[0])
	}
	if len(f) > 1 {
		e.Host = f[1]
	}
	if len(f) > 2 {
		e.Since = f[2]
	}
	return e
}

// running reports whether process pid exists on this host. A process that
// exists but cannot be signalled (another user's) counts as running.
func running(pid int) bool {
	if pid <= 0 {
		return false
	}
	err := syscall.Kill(pid, 0)
	return err == nil || errors.Is(err, syscall.EPERM)
}
