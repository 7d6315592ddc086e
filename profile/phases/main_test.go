package phases_test

import (
	"testing"

	"gaptrace/track/matleak"
)

// TestMain fails the package when a test leaves an OpenCV Mat open.
func TestMain(m *testing.M) { matleak.Main(m) }
