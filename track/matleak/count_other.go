//go:build !matprofile

package matleak

// Enabled reports whether Mats are counted (the matprofile build tag).
const Enabled = false

// Check cannot count Mats without the matprofile build tag: it returns nil.
func Check() error { return nil }
