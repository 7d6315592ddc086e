//go:build matprofile

package matleak

import (
	"strings"
	"testing"

	"gocv.io/x/gocv"
)

// TestCheckFindsLeak shows that Check has teeth: an open Mat is reported,
// and closing it clears the report.
func TestCheckFindsLeak(t *testing.T) {
	m := gocv.NewMat()
	err := Check()
	m.Close()
	if err == nil || !strings.Contains(err.Error(), "1 OpenCV Mats leaked") {
		t.Errorf("Check with one open Mat = %v", err)
	}
	if err := Check(); err != nil {
		t.Errorf("Check after Close = %v", err)
	}
}
