package experiment

import (
	"bytes"
	"os"
	"path/filepath"
	"strings"
	"testing"
)

// The fuzz target of the experiment file's reader. Its seed corpus is the
// repository's example files (added below) and the inputs checked in under
// testdata/fuzz/FuzzParse (Go's layout), which every `go test` replays;
// `go test -fuzz FuzzParse ./calib/experiment` searches further.

// FuzzParse checks that no experiment file makes Parse panic, and that a
// file it accepts is valid and survives a write and a second read.
func FuzzParse(f *testing.F) {
	names, _ := filepath.Glob(filepath.Join("..", "..", "testdata", "experiments", "*.yaml"))
	for _, n := range names {
		if b, err := os.ReadFile(n); err == nil {
			f.Add(b)
		}
	}
	f.Add([]byte(base))
	f.Fuzz(func(t *testing.T, b []byte) {
		e, err := Parse(bytes.NewReader(b))
		if err != nil {
			if strings.Contains(err.Error(), "\n") {
				t.Errorf("error of several lines: %q", err)
			}
			return
		}
		if err := e.Validate(); err != nil {
			t.Fatalf("Parse accepted a file Validate refuses: %v", err)
		}
		var buf bytes.Buffer
		if err := e.Write(&buf); err != nil {
			t.Fatalf("writing an accepted file: %v", err)
		}
		if _, err := Parse(&buf); err != nil {
			t.Fatalf("an accepted file, written, is refused: %v\n%s", err, buf.Bytes())
		}
	})
}
