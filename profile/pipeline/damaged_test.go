package pipeline

import (
	"context"
	"errors"
	"math/rand/v2"
	"os"
	"path/filepath"
	"strings"
	"testing"

	"gaptrace/calib/experiment"
	"gaptrace/track/synth"
)

// TestDamagedRecording checks issue 13's salvage: an MJPEG recording cut
// at 40 % of its bytes, and one with 200 kB of random bytes written over
// its middle (a camera or disk that failed mid-recording), are each
// analysed up to the damage, with a warning that names the frames lost;
// one cut before the frames the walls are found on is refused.
func TestDamagedRecording(t *testing.T) {
	dir := t.TempDir()
	sc, err := synth.Builtin("homogeneous", 3)
	if err != nil {
		t.Fatal(err)
	}
	sc.Frames = 150
	tr, err := sc.Write(dir, synth.Output{Format: synth.FormatMJPEG})
	if err != nil {
		t.Fatal(err)
	}
	exp, err := experiment.Load(filepath.Join(dir, synth.ExperimentFile))
	if err != nil {
		t.Fatal(err)
	}
	whole, err := os.ReadFile(tr.Summary.Input.Path)
	if err != nil {
		t.Fatal(err)
	}
	n := len(whole)
	garbled := append([]byte(nil), whole...)
	rng := rand.New(rand.NewPCG(13, 1))
	for i := n / 2; i < min(n, n/2+200_000); i++ {
		garbled[i] = byte(rng.IntN(256))
	}
	for _, c := range []struct {
		name     string
		data     []byte
		from, to int // the frames analysed must end in [from, to]
	}{
		// About 40 % of the frames, less the container's header.
		{"cut at 40 %", whole[:n*40/100], 50, 64},
		// The damage starts at half the bytes: about frame 75.
		{"garbage in the middle", garbled, 65, 76},
	} {
		path := filepath.Join(dir, "damaged.avi")
		if err := os.WriteFile(path, c.data, 0o644); err != nil {
			t.Fatal(err)
		}
		a, err := Run(context.Background(), Config{Experiment: exp, ExperimentDir: dir, Input: path, Seed: 1})
		if err != nil {
			t.Errorf("%s: %v", c.name, err)
			continue
		}
		a.Tracked.Close()
		got := a.Summary.Input.Frames
		var warned string
		for _, w := range a.Summary.Warnings {
			if strings.Contains(w, "is damaged from frame") && strings.Contains(w, "are lost") {
				warned = w
			}
		}
		t.Logf("%s: %d of %d frames analysed; %s", c.name, got, sc.Frames, warned)
		if got < c.from || got > c.to {
			t.Errorf("%s: %d frames analysed, want %d to %d", c.name, got, c.from, c.to)
		}
		if warned == "" {
			t.Errorf("%s: no warning of the frames lost among %q", c.name, a.Summary.Warnings)
		}
		if len(a.Summary.ShearPhases) == 0 {
			t.Errorf("%s: no shear phase analysed", c.name)
		}
	}
	// Cut within the first MedianFrames frames: too little remains.
	path := filepath.Join(dir, "short.avi")
	if err := os.WriteFile(path, whole[:n*10/100], 0o644); err != nil {
		t.Fatal(err)
	}
	_, err = Run(context.Background(), Config{Experiment: exp, ExperimentDir: dir, Input: path})
	var ie *InputError
	if !errors.As(err, &ie) {
		t.Errorf("a recording cut at 10 %%: %v, want an input error", err)
	}
}
