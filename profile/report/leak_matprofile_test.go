//go:build matprofile

package report_test

import (
	"fmt"
	"os"
	"testing"

	"gocv.io/x/gocv"
)

// TestMain fails the run when a test left an OpenCV Mat open.
func TestMain(m *testing.M) {
	code := m.Run()
	if n := gocv.MatProfile.Count(); n != 0 {
		fmt.Fprintf(os.Stderr, "report: %d gocv.Mat not closed\n", n)
		code = 1
	}
	os.Exit(code)
}
