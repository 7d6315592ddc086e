package atomicfile

import (
	"errors"
	"fmt"
	"os"
	"os/exec"
	"path/filepath"
	"strings"
	"testing"
)

// deadPID returns the id of a process that has exited.
func deadPID(t *testing.T) int {
	t.Helper()
	c := exec.Command("true")
	if err := c.Run(); err != nil {
		t.Skipf("cannot start a process: %v", err)
	}
	return c.Process.Pid
}

func TestLockDir(t *testing.T) {
	host, _ := os.Hostname()
	cases := []struct {
		name      string
		held      string // lock file content before; "" for none
		wantErr   bool
		wantStale bool
	}{
		{"free", "", false, false},
		{"held by a live process here", fmt.Sprintf("%d %s 2026-12-03T10:00:00Z\n", os.Getppid(), host), true, false},
		{"held on another host", "1 other-host 2026-12-03T10:00:00Z\n", true, false},
		{"left by a dead process here", fmt.Sprintf("%d %s 2026-12-03T10:00:00Z\n", deadPID(t), host), false, true},
		{"unreadable content", "garbage\n", true, false},
	}
	for _, c := range cases {
		t.Run(c.name, func(t *testing.T) {
			dir := t.TempDir()
			if c.held != "" {
				if err := os.WriteFile(filepath.Join(dir, LockName), []byte(c.held), 0o644); err != nil {
					t.Fatal(err)
				}
			}
			l, stale, err := LockDir(dir)
			var le *LockedError
			if c.wantErr {
				if !errors.As(err, &le) || !strings.Contains(err.Error(), LockName) {
					t.Fatalf("LockDir = %v, want a LockedError", err)
				}
				return
			}
			if err != nil {
				t.Fatal(err)
			}
			if (stale != "") != c.wantStale {
				t.Errorf("stale %q, want stale %v", stale, c.wantStale)
			}
			// A second lock while held is refused, naming this process.
			if _, _, err := LockDir(dir); !errors.As(err, &le) || le.PID != os.Getpid() {
				t.Errorf("second LockDir = %v, want held by %d", err, os.Getpid())
			}
			l.Unlock()
			if _, err := os.Stat(filepath.Join(dir, LockName)); !errors.Is(err, os.ErrNotExist) {
				t.Errorf("lock file left after Unlock: %v", err)
			}
			ents, _ := os.ReadDir(dir)
			if len(ents) != 0 {
				t.Errorf("folder holds %d entries after Unlock", len(ents))
			}
		})
	}
}
