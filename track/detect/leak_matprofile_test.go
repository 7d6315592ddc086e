//go:build matprofile

package detect

import (
	"fmt"
	"strings"

	"gocv.io/x/gocv"
)

// matLeaks reports the OpenCV Mats still open, with where they were made.
func matLeaks() error {
	if n := gocv.MatProfile.Count(); n != 0 {
		var b strings.Builder
		gocv.MatProfile.WriteTo(&b, 1)
		return fmt.Errorf("%d Mats leaked:\n%s", n, b.String())
	}
	return nil
}
