//go:build !matprofile

package flowprior

// leakedMats cannot count Mats without the matprofile tag.
func leakedMats() int { return 0 }
