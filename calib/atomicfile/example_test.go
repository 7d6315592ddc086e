package atomicfile_test

import (
	"errors"
	"fmt"
	"io"
	"os"
	"path/filepath"

	"gaptrace/calib/atomicfile"
)

// A result file appears under its name only when it is complete: a write
// that fails part-way leaves the earlier file as it was.
func ExampleWrite() {
	dir, _ := os.MkdirTemp("", "atomicfile")
	defer os.RemoveAll(dir)
	path := filepath.Join(dir, "table.csv")
	_ = atomicfile.WriteBytes(path, []byte("y_um,v_um_per_s\n0,0\n"))
	err := atomicfile.Write(path, func(w io.Writer) error {
		io.WriteString(w, "y_um,v_um_per_s\n")
		return errors.New("the analysis stopped")
	})
	b, _ := os.ReadFile(path)
	left, _ := filepath.Glob(filepath.Join(dir, "*"))
	fmt.Println(err != nil, len(left))
	fmt.Print(string(b))
	// Output:
	// true 1
	// y_um,v_um_per_s
	// 0,0
}
