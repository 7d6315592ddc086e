// Package atomicfile writes result files so that a failed or interrupted
// run never leaves a partial file under its final name: the data go to a
// temporary file in the same folder, which is renamed over the final name
// only when completely written and closed.
//
// Temporary files are named "." + final name + PartialMark + random; a
// later run can recognise and remove them (RemoveLeftovers).
package atomicfile

import (
	"fmt"
	"io"
	"os"
	"path/filepath"
	"strings"
)

// PartialMark is the part of a temporary file's name that marks it as an
// unfinished result of this package.
const PartialMark = ".partial-"

// fileMode is the permission of result files: readable by everyone, as
// results are meant to be shared (os.CreateTemp alone would give 0600).
const fileMode = 0o644

// WriteBytes writes data to path atomically.
func WriteBytes(path string, data []byte) error {
	return Write(path, func(w io.Writer) error {
		_, err := w.Write(data)
		return err
	})
}

// Write calls write with a temporary file beside path and renames the file
// to path when write and the file's close succeed; otherwise the temporary
// file is removed and path is left as it was.
func Write(path string, write func(io.Writer) error) error {
	dir, base := filepath.Split(path)
	if dir == "" {
		dir = "."
	}
	f, err := os.CreateTemp(dir, "."+base+PartialMark+"*")
	if err != nil {
		return fmt.Errorf("writing %s: %w", path, err)
	}
	tmp := f.Name()
	fail := func(err error) error {
		f.Close()
		os.Remove(tmp)
		return fmt.Errorf("writing %s: %w", path, err)
	}
	if err := write(f); err != nil {
		return fail(err)
	}
	if err := f.Chmod(fileMode); err != nil {
		return fail(err)
	}
	if err := f.Close(); err != nil {
		os.Remove(tmp)
		return fmt.Errorf("writing %s: %w", path, err)
	}
	if err := os.Rename(tmp, path); err != nil {
		os.Remove(tmp)
		return fmt.Errorf("writing %s: %w", path, err)
	}
	return nil
}

// IsPartial reports whether name (a base name) is a temporary file of this
// package.
func IsPartial(name string) bool {
	return strings.HasPrefix(name, ".") && strings.Contains(name, PartialMark)
}

// RemoveLeftovers removes the temporary files of this package that an
// interrupted or killed run left in dir, and returns how many it removed.
func RemoveLeftovers(dir string) (int, error) {
	ents, err := os.ReadDir(dir)
	if err != nil {
		return 0, err
	}
	n := 0
	for _, e := range ents {
		if e.Type().IsRegular() && IsPartial(e.Name()) {
			if err := os.Remove(filepath.Join(dir, e.Name())); err != nil {
				return n, err
			}
			n++
		}
	}
	return n, nil
}
