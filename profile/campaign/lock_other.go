//go:build !(linux || darwin || freebsd || netbsd || openbsd || dragonfly)

package campaign

import (
	"fmt"
	"os"
)

// Lock opens the row's lock file. On this system there is no advisory
// lock: two batches on the same OUTROOT at once are not kept apart.
func (l Layout) Lock(name string) (*os.File, error) {
	f, err := os.OpenFile(l.LockPath(name), os.O_RDWR|os.O_CREATE, 0o644)
	if err != nil {
		return nil, fmt.Errorf("lock of %s: %w", name, err)
	}
	return f, nil
}
