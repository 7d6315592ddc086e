package synth

import (
	"io"
	"math"
	"math/rand/v2"

	"gocv.io/x/gocv"

	"gaptrace/track/frames"
	"gaptrace/track/tracks"
)

// Source returns the scenario's frames as a frames.Source, rendered on
// demand without writing a file: frames 0, step, 2 step, ... (step < 1
// means 1).
func (s *Scenario) Source(step int) frames.Source {
	return &source{s: s, step: max(1, step)}
}

type source struct {
	s          *Scenario
	next, step int
}

func (r *source) Info() frames.Info {
	bd := r.s.BitDepth
	if bd == 0 {
		bd = 8
	}
	return frames.Info{Path: r.s.Name, Frames: r.s.Frames, FPS: r.s.FPS, WidthPx: r.s.WidthPx, HeightPx: r.s.HeightPx, BitDepth: bd}
}

func (r *source) Next(dst *gocv.Mat) (int, error) {
	if r.next >= r.s.Frames {
		return 0, io.EOF
	}
	i := r.next
	r.next += r.step
	return i, r.s.Render(i, dst)
}

func (r *source) Close() error { return nil }

// Observe returns the tracks of s as a tracker would see them, without
// rendering: the true gap positions with Gaussian noise of noisePx (per
// coordinate, converted to um), broken into new tracks at random with
// probability breakPerFrame per frame and wherever a tracer wraps around
// the field. It is the input of tests of the profile stage alone.
func (s *Scenario) Observe(noisePx, breakPerFrame float64, seed uint64) []tracks.Point {
	rng := rand.New(rand.NewPCG(seed, 77))
	sd := noisePx * s.UMPerPx
	type state struct {
		id, frame int
		xUM       float64
	}
	last := map[int]*state{}
	next := 0
	wrapUM := float64(s.WidthPx) * s.UMPerPx / 2
	var out []tracks.Point
	for f := range s.Frames {
		for _, t := range s.Positions(f) {
			st := last[t.ID]
			if st == nil || st.frame != f-1 || math.Abs(t.XUM-st.xUM) > wrapUM || rng.Float64() < breakPerFrame {
				st = &state{id: next}
				next++
				last[t.ID] = st
			}
			st.xUM, st.frame = t.XUM, f
			out = append(out, tracks.Point{Track: st.id, Frame: f, TS: float64(f) / s.FPS,
				XPx: t.XPx, YPx: t.YPx, XUM: t.XUM + sd*rng.NormFloat64(), YUM: t.YUM + sd*rng.NormFloat64(),
				Brightness: t.Photons, SizePx: t.SigmaPx})
		}
	}
	return out
}
