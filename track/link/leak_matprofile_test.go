//go:build matprofile

package link

import "gocv.io/x/gocv"

// leakedMats returns the number of Mats still open.
func leakedMats() int { return gocv.MatProfile.Count() }
