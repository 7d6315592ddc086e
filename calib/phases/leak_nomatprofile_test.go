//go:build !matprofile

package phases_test

import (
	"os"
	"testing"
)

// TestMain runs the tests; the Mat leak check needs the matprofile tag.
func TestMain(m *testing.M) { os.Exit(m.Run()) }
