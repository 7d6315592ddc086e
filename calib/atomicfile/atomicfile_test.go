package atomicfile

import (
	"errors"
	"io"
	"os"
	"path/filepath"
	"strings"
	"testing"
)

// TestWrite checks that a write leaves only the final file, readable by
// all, and that a failed write leaves nothing under the final name and no
// temporary file.
func TestWrite(t *testing.T) {
	dir := t.TempDir()
	path := filepath.Join(dir, "summary.json")
	if err := WriteBytes(path, []byte("{}\n")); err != nil {
		t.Fatal(err)
	}
	if fi, err := os.Stat(path); err != nil || fi.Mode().Perm() != fileMode {
		t.Fatalf("stat %v, mode %v, want %v", err, fi.Mode().Perm(), os.FileMode(fileMode))
	}
	failing := filepath.Join(dir, "tracks.csv")
	err := Write(failing, func(w io.Writer) error {
		w.Write([]byte("half a row,"))
		return errors.New("disk full")
	})
	if err == nil || !strings.Contains(err.Error(), "disk full") || !strings.Contains(err.Error(), "tracks.csv") {
		t.Errorf("Write error = %v, want one naming tracks.csv and the cause", err)
	}
	ents, _ := os.ReadDir(dir)
	if len(ents) != 1 {
		t.Errorf("after a failed write the folder holds %d entries, want only summary.json", len(ents))
	}
}

// TestRemoveLeftovers checks that only this package's temporary files are
// removed.
func TestRemoveLeftovers(t *testing.T) {
	dir := t.TempDir()
	for _, n := range []string{".tracks.csv.partial-123", ".summary.json.partial-9", "tracks.csv", ".hidden", "partial-1"} {
		if err := os.WriteFile(filepath.Join(dir, n), nil, 0o644); err != nil {
			t.Fatal(err)
		}
	}
	n, err := RemoveLeftovers(dir)
	if err != nil || n != 2 {
		t.Fatalf("RemoveLeftovers = %d, %v; want 2, nil", n, err)
	}
	ents, _ := os.ReadDir(dir)
	var left []string
	for _, e := range ents {
		left = append(left, e.Name())
	}
	if strings.Join(left, " ") != ".hidden partial-1 tracks.csv" {
		t.Errorf("left %v", left)
	}
}
