package main

import (
	"bytes"
	"context"
	"io"
	"strings"
	"testing"
)

// TestPanicIsOneLine checks that an internal panic reaches the user as one
// line naming where it happened, with exit status 1.
func TestPanicIsOneLine(t *testing.T) {
	commands["panic-for-test"] = command{summary: "test", run: func(context.Context, []string, io.Writer) error {
		var s []int
		_ = s[3]
		return nil
	}}
	defer delete(commands, "panic-for-test")
	var errw bytes.Buffer
	code := mainArgs([]string{"panic-for-test"}, &errw)
	out := errw.String()
	if code != 1 || strings.Count(out, "\n") != 1 || !strings.HasPrefix(out, "gaptrace: internal error: ") ||
		!strings.Contains(out, "panic_test.go:") {
		t.Errorf("exit %d, stderr %q; want 1 and one line naming panic_test.go", code, out)
	}
}
