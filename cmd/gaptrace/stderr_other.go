//go:build !unix

package main

// claimStderr leaves standard error as it is where file descriptors cannot
// be moved.
func claimStderr() {}
