package pipeline

import (
	"context"
	"path/filepath"
	"strconv"
	"testing"

	"gaptrace/calib/experiment"
	"gaptrace/track/synth"
)

// TestShakeLowFrameRate renders the shaking camera of shake-quiescent (0.5
// px of jitter per frame and axis, a sway of 2 px over 1.5 s) filming a
// step strain of 0.5 over 0.5 s and then a quiescent sample for 3 s, at 25
// and 33 frames/s, and runs the whole chain with the shake correction on:
// the sample must stay quiescent after the stop (the renderer's truth), as
// it does with --no-jitter on a camera that does not shake.
func TestShakeLowFrameRate(t *testing.T) {
	for _, fps := range []float64{25, 33} {
		t.Run(strconv.FormatFloat(fps, 'g', -1, 64)+"fps", func(t *testing.T) {
			sc, err := synth.Builtin("shake-quiescent", 5)
			if err != nil {
				t.Fatal(err)
			}
			sc.FPS = fps
			sc.Frames = int(4 * fps)
			sc.Motion = []experiment.Segment{{StartS: 0.5, EndS: 1, Strain: ptrF(0.5)}}
			dir := t.TempDir()
			if _, err := sc.Write(dir, synth.Output{Format: synth.FormatMJPEG}); err != nil {
				t.Fatal(err)
			}
			exp, err := experiment.Load(filepath.Join(dir, synth.ExperimentFile))
			if err != nil {
				t.Fatal(err)
			}
			a, err := Run(context.Background(), Config{Experiment: exp, ExperimentDir: dir, Input: filepath.Join(dir, "video.avi"), Seed: 1})
			if err != nil {
				t.Fatal(err)
			}
			as := a.Summary.AfterStop
			if as == nil || as.Verdict != "quiescent" {
				t.Errorf("%g frames/s: after the stop %+v, want quiescent; warnings %q", fps, as, a.Summary.Warnings)
			} else {
				t.Logf("%g frames/s: quiescent, max displacement %v um, noise floor %v um", fps, as.MaxDisplacementUM, as.NoiseFloorUM)
			}
		})
	}
}

func ptrF(v float64) *float64 { return &v }
