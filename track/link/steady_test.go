package link

import (
	"context"
	"math"
	"testing"

	"gaptrace/track/flowprior"
)

// TestSteadyCamera checks the cheap estimate of the common-mode motion
// (flowprior.QuickCommonMode, as steadyCamera reads it) on the first pass of
// Link, on the dark scenario with its rendered camera jitter, with a small
// one and with none: it must not miss jitter (no less than the rendered
// jitter's RMS by more than maxUnderPx), a camera shaking by more than
// JitterMinRMSPx must never be told steady, and a steady camera must be told
// steady when the per-frame medians are precise enough (many tracers).
func TestSteadyCamera(t *testing.T) {
	// maxUnderPx: the per-frame medians over a few hundred points of
	// 0.15 px noise err by about 0.01 px (1.25 sigma/sqrt(n), from memory),
	// and the margin QuickJitterFraction leaves below JitterMinRMSPx is
	// 0.025 px.
	const maxUnderPx = 0.02
	for _, tc := range []struct {
		name     string
		jitterPx float64 // rendered jitter, px; negative keeps the scenario's (0.3)
		tracers  int     // 0 keeps the scenario's
		steady   int     // 1: must be told steady, -1: must not, 0: either
	}{
		{"jitter-0.3px", -1, 0, -1},
		{"jitter-0.08px", 0.08, 1500, -1},
		{"steady-1500", 0, 1500, 1},
		{"steady-400", 0, 0, 0},
	} {
		t.Run(tc.name, func(t *testing.T) {
			s := shearN(t, "dark", 0.5, 60, 0.02, 400, tc.tracers)
			if tc.jitterPx >= 0 {
				s.JitterPx = tc.jitterPx
			}
			sm := detect(t, s, 40)
			opt := sm.options()
			pts := make([][]flowprior.Point, len(sm.frames))
			for f, ds := range sm.frames {
				for _, d := range ds {
					pts[f] = append(pts[f], flowprior.Point{XPx: d.XPx, YPx: d.YPx})
				}
			}
			prior, err := flowprior.SeriesFromDetections(pts, sm.cal, flowprior.HistOptions{MaxStepPx: opt.MaxStepPx}, priorWindow(sm.frames))
			if err != nil {
				t.Fatal(err)
			}
			opt.Prior = prior
			first, _, err := linkAll(context.Background(), sm.frames, sm.cal, opt)
			if err != nil {
				t.Fatal(err)
			}
			n := len(sm.frames)
			qx, qy := rmsShift(jitterOnly(flowprior.QuickCommonMode(first, opt.Prior, n), JitterWindowFrames))
			truth := make([]flowprior.Shift, n)
			for f := range truth {
				truth[f].DXPx, truth[f].DYPx = s.JitterAt(f)
			}
			tx, ty := rmsShift(jitterOnly(truth, JitterWindowFrames))
			steady := steadyCamera(first, opt, n)
			t.Logf("jitter %.2f px, %d tracers: quick RMS %.4f, %.4f px; rendered %.4f, %.4f px; steady %v",
				s.JitterPx, s.Tracers, qx, qy, tx, ty, steady)
			if qx < tx-maxUnderPx || qy < ty-maxUnderPx {
				t.Errorf("quick common-mode RMS %.4f, %.4f px, below the rendered %.4f, %.4f px by more than %.2f px",
					qx, qy, tx, ty, maxUnderPx)
			}
			if steady && math.Max(tx, ty) > JitterMinRMSPx {
				t.Errorf("told steady with a rendered jitter of %.4f, %.4f px RMS, above JitterMinRMSPx", tx, ty)
			}
			if (tc.steady == 1 && !steady) || (tc.steady == -1 && steady) {
				t.Errorf("steadyCamera = %v, want %v", steady, tc.steady == 1)
			}
		})
	}
}
