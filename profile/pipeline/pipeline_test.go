package pipeline

import (
	"context"
	"errors"
	"math"
	"os"
	"os/exec"
	"path/filepath"
	"testing"

	"gaptrace/calib/experiment"
	"gaptrace/calib/rheolog"
	"gaptrace/track/synth"
)

// rendered writes a built-in scenario as MJPEG and returns the pipeline's
// configuration for it.
func rendered(t *testing.T, name string) Config {
	t.Helper()
	sc, err := synth.Builtin(name, 3)
	if err != nil {
		t.Fatal(err)
	}
	cfg, _ := render(t, sc, synth.Output{Format: synth.FormatMJPEG})
	return cfg
}

// render writes sc in a temporary folder as out asks and returns the
// pipeline's configuration for the recording (its experiment file, folder
// and video) and the renderer's truth.
func render(t *testing.T, sc *synth.Scenario, out synth.Output) (Config, *synth.Truth) {
	t.Helper()
	dir := t.TempDir()
	truth, err := sc.Write(dir, out)
	if err != nil {
		t.Fatal(err)
	}
	exp, err := experiment.Load(filepath.Join(dir, synth.ExperimentFile))
	if err != nil {
		t.Fatal(err)
	}
	return Config{Experiment: exp, ExperimentDir: dir, Input: truth.Summary.Input.Path}, truth
}

// TestCancel checks that a cancelled context stops each stage with the
// context's error, wherever it is cancelled, and that nothing leaks (the
// package's TestMain counts open Mats).
func TestCancel(t *testing.T) {
	cfg := rendered(t, "homogeneous")
	cases := []struct {
		name  string
		stage string
		done  int
	}{
		{"before the start", "", 0},
		{"during calibration", StageCalibrate, 0},
		{"a third into detection", StageDetect, 100},
		{"during linking", StageLink, 0},
		{"during the profiles", StageProfile, 0},
	}
	for _, c := range cases {
		t.Run(c.name, func(t *testing.T) {
			ctx, cancel := context.WithCancel(context.Background())
			defer cancel()
			if c.stage == "" {
				cancel()
			}
			cfg := cfg
			var after int
			cfg.Progress = func(p Progress) {
				if ctx.Err() != nil {
					after++
				}
				if p.Stage == c.stage && p.Done >= c.done {
					cancel()
				}
			}
			_, err := Run(ctx, cfg)
			if !errors.Is(err, context.Canceled) {
				t.Fatalf("Run after cancelling %s = %v, want context.Canceled", c.name, err)
			}
			// Detection runs ahead in workers: a few frames may still be
			// reported, never the rest of the recording.
			if after > maxFramesAfterCancel {
				t.Errorf("%d progress reports after the cancellation, want at most %d", after, maxFramesAfterCancel)
			}
		})
	}
}

// maxFramesAfterCancel bounds the frames still detected after a
// cancellation: those already handed to the detection workers.
const maxFramesAfterCancel = 16

// TestInputErrors checks that what the user gave wrong comes back as an
// InputError, and the rest does not.
func TestInputErrors(t *testing.T) {
	cfg := rendered(t, "homogeneous")
	missing := cfg
	missing.Input = filepath.Join(t.TempDir(), "no-such-video.avi")
	noExp := cfg
	noExp.Experiment = nil
	for name, c := range map[string]Config{"missing input": missing, "no experiment": noExp} {
		_, err := Run(context.Background(), c)
		var ie *InputError
		if !errors.As(err, &ie) {
			t.Errorf("%s: error %v is not an InputError", name, err)
		}
	}
}

// TestStartUpOnsetThroughCodecs renders synth's start-up whose bands form
// 0.6 s after the start (time constant 0.25 s) through two codecs and
// checks, end to end from the video, that the onset lies between the true
// start of formation and that plus four time constants (the aim),
// widened by twice the reported uncertainty, and that bands came first.
func TestStartUpOnsetThroughCodecs(t *testing.T) {
	const onsetTaus, coverK = 4, 2
	for _, out := range []synth.Output{{Format: synth.FormatMJPEG}, {Format: synth.FormatH264, CRF: 28}} {
		t.Run(string(out.Format), func(t *testing.T) {
			if out.Format == synth.FormatH264 {
				if _, err := exec.LookPath("ffmpeg"); err != nil {
					t.Skip("ffmpeg is not on PATH (cmd/scripts/deps.sh --test installs it)")
				}
			}
			sc, err := synth.Builtin("startup-bands", 4)
			if err != nil {
				t.Fatal(err)
			}
			cfg, _ := render(t, sc, out)
			cfg.EveryS, cfg.Seed = 0.2, 4
			a, err := Run(context.Background(), cfg)
			if err != nil {
				t.Fatal(err)
			}
			sp := a.Summary.ShearPhases[0]
			on, tau := sc.Transient.BandsOnsetS, sc.Transient.BandsTauS
			o, e := float64(sp.InhomogeneityOnsetS), float64(sp.InhomogeneityOnsetErrS)
			t.Logf("%s: onset %.3f ± %.3f s after the start, %d windows; truth from %.2f s, tau %.2f s", out.Format, o, e, len(sp.InTime), on, tau)
			if !sp.InhomogeneityOnsetS.Known() || o+coverK*e < on || o-coverK*e > on+onsetTaus*tau {
				t.Errorf("onset %.3f ± %.3f s, outside %.2f to %.2f s", o, e, on, on+onsetTaus*tau)
			}
			if sp.InhomogeneityFirst == nil || *sp.InhomogeneityFirst != "bands" {
				t.Errorf("first departure %v, want bands", sp.InhomogeneityFirst)
			}
		})
	}
}

// TestLogClockFromTheVideo renders synth's start-up with its rheometer log
// 1.25 s off the video's clock (the scenario's ClockOffsetS) and gives the
// log without --log-offset: the offset must be found from the wall motion
// to within a quarter frame, the phases put on the video's clock, the
// sample found quiescent after the stop (a stop a frame late reads as the
// wall's travel in a frame), and the stress maximum placed within one log
// sample of the renderer's.
func TestLogClockFromTheVideo(t *testing.T) {
	const quarterFrame = 0.25
	dir := t.TempDir()
	sc, err := synth.Builtin("startup-bands", 5)
	if err != nil {
		t.Fatal(err)
	}
	truth, err := sc.Write(dir, synth.Output{Format: synth.FormatMJPEG})
	if err != nil {
		t.Fatal(err)
	}
	exp, err := experiment.Load(filepath.Join(dir, synth.ExperimentFile))
	if err != nil {
		t.Fatal(err)
	}
	f, err := os.Open(filepath.Join(dir, "rheometer_log.csv"))
	if err != nil {
		t.Fatal(err)
	}
	defer f.Close()
	lg, err := rheolog.Read(f, rheolog.Spec{})
	if err != nil {
		t.Fatal(err)
	}
	a, err := Run(context.Background(), Config{Experiment: exp, ExperimentDir: dir, Input: truth.Summary.Input.Path, Log: lg, Seed: 5})
	if err != nil {
		t.Fatal(err)
	}
	want := -sc.Log.ClockOffsetS
	got := a.Tracked.LogShiftS
	t.Logf("log clock shift %.4f s found, %.4f s rendered; warnings %q", got, want, a.Summary.Warnings)
	if math.Abs(got-want) > quarterFrame/sc.FPS {
		t.Errorf("log clock shift %.4f s, want %.4f s within a quarter frame", got, want)
	}
	if as := a.Summary.AfterStop; as == nil || as.Verdict != "quiescent" {
		t.Errorf("after the stop: %+v, want quiescent", as)
	}
	sp := a.Summary.ShearPhases[0]
	peak := sp.StartS + float64(sp.StressPeakS)
	step := truth.Steps[0]
	logSample := 1 / sc.Log.RateHz
	t.Logf("stress maximum at %.4f s, rendered at %.4f s (log sample %.3f s)", peak, float64(step.StressPeakS), logSample)
	if !sp.StressPeakS.Known() || math.Abs(peak-float64(step.StressPeakS)) > logSample {
		t.Errorf("stress maximum at %.4f s, rendered at %.4f s: more than one log sample (%.3f s) apart", peak, float64(step.StressPeakS), logSample)
	}
}
