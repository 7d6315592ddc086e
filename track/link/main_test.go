package link

import (
	"fmt"
	"os"
	"testing"
)

func TestMain(m *testing.M) {
	code := m.Run()
	if code == 0 {
		if n := leakedMats(); n != 0 {
			fmt.Fprintf(os.Stderr, "link: %d gocv Mats were not closed\n", n)
			code = 1
		}
	}
	os.Exit(code)
}
