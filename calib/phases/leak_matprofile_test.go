//go:build matprofile

package phases_test

import (
	"fmt"
	"os"
	"testing"

	"gocv.io/x/gocv"
)

// TestMain fails the package when a test leaves an OpenCV Mat open.
func TestMain(m *testing.M) {
	code := m.Run()
	if n := gocv.MatProfile.Count(); n != 0 {
		fmt.Fprintf(os.Stderr, "phases: %d gocv.Mat left open after the tests\n", n)
		code = 1
	}
	os.Exit(code)
}
