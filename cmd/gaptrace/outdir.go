package main

import (
	"errors"
	"fmt"
	"io"
	"os"
	"path/filepath"

	"gaptrace/calib/atomicfile"
)

// outDir is an output folder held by this run (atomicfile.LockDir), so
// that two runs cannot mix their results in it.
type outDir struct {
	dir  string
	lock *atomicfile.DirLock
}

// release gives the folder up.
func (o *outDir) release() {
	if o != nil {
		o.lock.Unlock()
	}
}

// holdOutDir makes dir if needed and takes its lock; a lock left by a run
// that died is taken over with a warning on stderr. Temporary files that an
// interrupted run of gaptrace left are removed. With fresh, the folder must
// hold nothing else unless force is set (run and demo); without it, the
// stage commands replace only their own files.
func holdOutDir(dir string, fresh, force bool, stderr io.Writer) (*outDir, error) {
	if dir == "" {
		return nil, badInputf("no output folder: give -o DIR")
	}
	if err := os.MkdirAll(dir, 0o755); err != nil {
		return nil, badInputf("output folder %s: %v", dir, errors.Unwrap(err))
	}
	l, stale, err := atomicfile.LockDir(dir)
	var le *atomicfile.LockedError
	switch {
	case errors.As(err, &le):
		return nil, badInput(err)
	case err != nil:
		return nil, err
	}
	if stale != "" {
		fmt.Fprintf(stderr, "gaptrace: warning: output folder %s: %s\n", dir, stale)
	}
	o := &outDir{dir: dir, lock: l}
	if fresh && !force {
		ents, err := os.ReadDir(dir)
		if err != nil {
			o.release()
			return nil, badInputf("output folder %s: %v", dir, errors.Unwrap(err))
		}
		if n := len(ents) - 1; n > 0 { // the lock is one
			o.release()
			return nil, badInputf("output folder %s is not empty (%d entries); give --force to replace its results", dir, n)
		}
	}
	if _, err := atomicfile.RemoveLeftovers(dir); err != nil {
		o.release()
		return nil, fmt.Errorf("output folder %s: %w", dir, err)
	}
	return o, nil
}

// removeStale deletes the named result files of an earlier run in dir, so
// that a failure now cannot leave an old summary beside new tracks.
func removeStale(dir string, names ...string) {
	for _, n := range names {
		os.Remove(filepath.Join(dir, n))
	}
}
