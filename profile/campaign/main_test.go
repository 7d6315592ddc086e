package campaign

import (
	"testing"

	"gaptrace/track/matleak"
)

func TestMain(m *testing.M) { matleak.Main(m) }
