// Package matleak lets a package's tests assert that no OpenCV Mat is left
// open. gocv counts open Mats only when built with the matprofile tag (as
// make test does); without it Check always succeeds.
package matleak

import (
	"fmt"
	"os"
	"testing"
)

// Main runs the tests of m, then fails the run if any Mat is still open.
// Call it from a package's TestMain: func TestMain(m *testing.M) { matleak.Main(m) }.
func Main(m *testing.M) {
	code := m.Run()
	if code == 0 {
		if err := Check(); err != nil {
			fmt.Fprintln(os.Stderr, err)
			code = 1
		}
	}
	os.Exit(code)
}
