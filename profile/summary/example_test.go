package summary_test

import (
	"fmt"
	"os"
	"path/filepath"

	"gaptrace/profile/summary"
)

// Write a summary with one shear phase whose slip length is unknown, and
// read it back: the unknown value stays unknown (null in the file).
func Example() {
	dir, _ := os.MkdirTemp("", "summary")
	defer os.RemoveAll(dir)
	s := summary.New()
	s.ShearPhases = append(s.ShearPhases, summary.ShearPhase{StartS: 0.5, EndS: 2,
		BulkRatePerS: 1.49, SlipLengthStationaryUM: summary.Null, Verdict: "homogeneous"})
	path := filepath.Join(dir, "summary.json")
	if err := s.Write(path); err != nil {
		fmt.Println(err)
		return
	}
	back, err := summary.Read(path)
	if err != nil {
		fmt.Println(err)
		return
	}
	sp := back.ShearPhases[0]
	fmt.Println(back.Tool.Name, sp.Verdict, float64(sp.BulkRatePerS), sp.SlipLengthStationaryUM.Known())
	// Output:
	// gaptrace homogeneous 1.49 false
}
