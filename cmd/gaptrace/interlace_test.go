package main

import (
	"os"
	"path/filepath"
	"strings"
	"testing"

	"gaptrace/profile/summary"
	"gaptrace/track/synth"
)

// TestInterlaced runs synth's interlaced camera (fields a quarter frame
// interval before and after the frame's time, the wall 2 px further
// between them during the step) on a step strain and a quiescent sample.
// Whole frames: the summary warns of the combs, and the after-stop verdict
// is quiescent (issue 18 saw a failure plane here). With camera.fields:
// top-first (synth's even rows are its first field) each field is a
// frame: no comb warning, and the verdicts, rate and slips are the
// truth's (compareSummaries, the end-to-end tolerances).
func TestInterlaced(t *testing.T) {
	exp, video, truth := renderScenario(t, "interlaced-quiescent", 1, func(s *synth.Scenario) { s.Frames = 240 })
	b, err := os.ReadFile(exp)
	if err != nil {
		t.Fatal(err)
	}
	fieldsExp := filepath.Join(filepath.Dir(exp), "fields.yaml")
	withFields := strings.Replace(string(b), "camera:\n", "camera:\n  fields: top-first\n", 1)
	if withFields == string(b) {
		t.Fatalf("no camera section in\n%s", b)
	}
	if err := os.WriteFile(fieldsExp, []byte(withFields), 0o644); err != nil {
		t.Fatal(err)
	}
	for _, c := range []struct {
		name, exp string
		fields    bool
	}{{"whole frames", exp, false}, {"fields", fieldsExp, true}} {
		t.Run(c.name, func(t *testing.T) {
			out := filepath.Join(t.TempDir(), "out")
			if code, _, errs := runGaptraceOut("run", "-e", c.exp, "-o", out, video); code != 0 {
				t.Fatalf("exit %d: %s", code, errs)
			}
			s, err := summary.Read(filepath.Join(out, summaryName))
			if err != nil {
				t.Fatal(err)
			}
			warned := false
			for _, w := range s.Warnings {
				warned = warned || strings.Contains(w, "looks interlaced")
			}
			if warned == c.fields {
				t.Errorf("comb warning %v, want %v: %q", warned, !c.fields, s.Warnings)
			}
			if s.AfterStop == nil || s.AfterStop.Verdict != "quiescent" {
				t.Fatalf("after stop %+v, want quiescent", s.AfterStop)
			}
			t.Logf("after stop: max %.3g um, floor %.3g um; warnings %q", s.AfterStop.MaxDisplacementUM, s.AfterStop.NoiseFloorUM, s.Warnings)
			if c.fields {
				if got, want := s.Input.FPS, 2*truth.Input.FPS; got != want {
					t.Errorf("analysed at %g images/s, want the field rate %g", got, want)
				}
				compareSummaries(t, s, truth)
			}
		})
	}
}
