//go:build !matprofile

package report_test

import (
	"os"
	"testing"
)

// TestMain runs the tests; without the matprofile tag Mats are not counted.
func TestMain(m *testing.M) { os.Exit(m.Run()) }
