//go:build matprofile

package matleak

import (
	"fmt"
	"strings"

	"gocv.io/x/gocv"
)

// Enabled reports whether Mats are counted (the matprofile build tag).
const Enabled = true

// Check reports the Mats still open, with the stacks that made them.
func Check() error {
	if n := gocv.MatProfile.Count(); n != 0 {
		var b strings.Builder
		gocv.MatProfile.WriteTo(&b, 1)
		return fmt.Errorf("%d OpenCV Mats leaked:\n%s", n, b.String())
	}
	return nil
}
