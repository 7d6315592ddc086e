package main

import (
	"fmt"
	"os"
	"path/filepath"
)

// prepareOutDir makes dir, refusing one that holds files unless force is
// set (then the files gaptrace would write are replaced; others stay).
func prepareOutDir(dir string, force bool) error {
	if dir == "" {
		return badInputf("no output folder: give -o DIR")
	}
	ents, err := os.ReadDir(dir)
	switch {
	case os.IsNotExist(err):
		return os.MkdirAll(dir, 0o755)
	case err != nil:
		return badInputf("output folder %s: %v", dir, err)
	case len(ents) > 0 && !force:
		return badInputf("output folder %s is not empty (%d entries); give --force to replace its results", dir, len(ents))
	}
	return nil
}

// ensureDir makes dir for a stage command, which replaces only its own files.
func ensureDir(dir string) error {
	if dir == "" {
		return badInputf("no output folder: give -o DIR")
	}
	if err := os.MkdirAll(dir, 0o755); err != nil {
		return fmt.Errorf("output folder: %w", err)
	}
	return nil
}

// removeStale deletes the named result files of an earlier run in dir, so
// that a failure now cannot leave an old summary beside new tracks.
func removeStale(dir string, names ...string) {
	for _, n := range names {
		os.Remove(filepath.Join(dir, n))
	}
}
