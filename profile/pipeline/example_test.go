package pipeline_test

import (
	"context"
	"fmt"
	"os"
	"path/filepath"

	"gaptrace/calib/experiment"
	"gaptrace/profile/pipeline"
	"gaptrace/track/synth"
)

// Analysing a recording from Go: a rendered slip experiment, from the
// video to the verdict.
func ExampleRun() {
	dir, _ := os.MkdirTemp("", "gaptrace-example")
	defer os.RemoveAll(dir)
	sc, _ := synth.Builtin("slip", 1)
	if _, err := sc.Write(dir, synth.Output{Format: synth.FormatMJPEG}); err != nil {
		fmt.Println(err)
		return
	}
	exp, err := experiment.Load(filepath.Join(dir, synth.ExperimentFile))
	if err != nil {
		fmt.Println(err)
		return
	}
	cfg := pipeline.Config{Experiment: exp, ExperimentDir: dir, Input: filepath.Join(dir, "video.avi")}
	a, err := pipeline.Run(context.Background(), cfg)
	if err != nil {
		fmt.Println(err)
		return
	}
	sp := a.Summary.ShearPhases[0]
	fmt.Printf("shear phase %.1f-%.1f s: %s, %d band(s)\n", sp.StartS, sp.EndS, sp.Verdict, len(sp.Bands))
	// Output:
	// shear phase 0.5-2.0 s: wall_slip, 1 band(s)
}
