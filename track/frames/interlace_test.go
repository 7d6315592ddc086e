package frames_test

import (
	"errors"
	"io"
	"math"
	"testing"

	"gocv.io/x/gocv"

	"gaptrace/track/frames"
	"gaptrace/track/synth"
)

// fieldShiftPx is the travel of the moving wall between the two fields of
// synth's interlaced camera, px: wall speed times half a frame interval
// (synth's fields lie a quarter interval before and after the frame's
// time), over the scale. The tracers beside the wall move nearly as far.
func fieldShiftPx(s *synth.Scenario, wallUMPerS float64) float64 {
	return wallUMPerS / (2 * s.FPS) / s.UMPerPx
}

// TestCombShift measures the shift between the fields on frames of synth's
// step strain (strain 0.5 in 0.25 s over the 800 um gap: the moving wall at
// 1600 um/s, 2 px between the fields at 200 frames/s and 2 um/px) filmed by
// an interlaced and by a progressive camera: during the step the
// interlaced frames show the wall's travel between the fields to half a
// pixel (the band beside the moving wall moves nearly as fast); the
// progressive frames, and the interlaced ones at rest, no shift at all.
func TestCombShift(t *testing.T) {
	for _, interlaced := range []bool{false, true} {
		s, err := synth.Builtin("interlaced-quiescent", 1)
		if err != nil {
			t.Fatal(err)
		}
		s.Interlaced = interlaced
		wallUMPerS := 0.5 * s.GapUM() / 0.25
		r, err := synth.NewRenderer(s)
		if err != nil {
			t.Fatal(err)
		}
		m := gocv.NewMat()
		for _, f := range []int{20, 60, 70, 80, 90, 150, 300} {
			if err := r.Render(f, &m); err != nil {
				t.Fatal(err)
			}
			got, err := frames.CombShiftPx(m)
			if err != nil {
				t.Fatal(err)
			}
			tS := float64(f) / s.FPS
			moving := tS > 0.25 && tS < 0.5
			want := fieldShiftPx(s, wallUMPerS)
			t.Logf("interlaced %v, frame %d (%.3f s): shift %.2f px (wall's travel between fields %.2f px)", interlaced, f, tS, got, want)
			switch {
			case interlaced && moving && math.Abs(got-want) > 0.5:
				t.Errorf("interlaced, frame %d during the step: shift %.2f px, want %.2f ± 0.5", f, got, want)
			case (!interlaced || !moving) && got != 0:
				t.Errorf("interlaced %v, frame %d at %.3f s: shift %.2f px, want 0", interlaced, f, tS, got)
			}
		}
		m.Close()
	}
}

// TestFieldsSplit splits synth's interlaced frames into fields: each frame
// gives two, at twice the rate, the first with the even rows as they were
// and the odd rows their neighbours' mean, the second the other way round;
// neither shows a comb.
func TestFieldsSplit(t *testing.T) {
	dir := t.TempDir()
	s, err := synth.Builtin("interlaced-quiescent", 2)
	if err != nil {
		t.Fatal(err)
	}
	s.Frames = 100
	if _, err := s.Write(dir, synth.Output{Format: synth.FormatPNG}); err != nil {
		t.Fatal(err)
	}
	open := func(order string) (frames.Source, *frames.FieldSource) {
		src, err := frames.Open(dir+"/"+synth.FramesDir, s.FPS, frames.All)
		if err != nil {
			t.Fatal(err)
		}
		w, f, err := frames.Watch(src, order)
		if err != nil {
			t.Fatal(err)
		}
		return w, f
	}
	whole, wf := open("")
	defer whole.Close()
	split, sf := open(frames.TopFirst)
	defer split.Close()
	if got, want := split.Info().FPS, 2*s.FPS; got != want {
		t.Errorf("fields at %g frames/s, want %g", got, want)
	}
	if got, want := split.Info().Frames, 2*s.Frames; got != want {
		t.Errorf("%d fields, want %d", got, want)
	}
	frame, a, b := gocv.NewMat(), gocv.NewMat(), gocv.NewMat()
	defer frame.Close()
	defer a.Close()
	defer b.Close()
	for {
		i, err := whole.Next(&frame)
		if errors.Is(err, io.EOF) {
			break
		}
		if err != nil {
			t.Fatal(err)
		}
		ia, errA := split.Next(&a)
		ib, errB := split.Next(&b)
		if errA != nil || errB != nil || ia != 2*i || ib != 2*i+1 {
			t.Fatalf("frame %d: fields %d (%v) and %d (%v)", i, ia, errA, ib, errB)
		}
		w, h := frame.Cols(), frame.Rows()
		fb, _ := frame.DataPtrUint8()
		ab, _ := a.DataPtrUint8()
		bb, _ := b.DataPtrUint8()
		for y := 1; y < h-1; y++ {
			first, second := ab, bb
			if y%2 == 1 {
				first, second = bb, ab
			}
			for x := range w {
				mean := uint8((int(fb[(y-1)*w+x]) + int(fb[(y+1)*w+x]) + 1) / 2)
				if first[y*w+x] != fb[y*w+x] || second[y*w+x] != mean {
					t.Fatalf("frame %d, pixel (%d, %d): fields %d and %d, frame %d, mean of its rows above and below %d",
						i, x, y, ab[y*w+x], bb[y*w+x], fb[y*w+x], mean)
				}
			}
		}
		for _, m := range []gocv.Mat{a, b} {
			if sh, err := frames.CombShiftPx(m); err != nil || sh != 0 {
				t.Errorf("frame %d: a field has a comb of %.2f px (%v)", i, sh, err)
			}
		}
	}
	if c := wf.Combs(); !c.Interlaced() || c.Warning() == "" {
		t.Errorf("the interlaced frames are not found interlaced: %+v", c)
	}
	if c := sf.Combs(); c.Warning() != "" {
		t.Errorf("split into fields, still warned: %q", c.Warning())
	}
	t.Logf("whole frames: %+v; %s", wf.Combs(), wf.Combs().Warning())
}

// BenchmarkCombShift measures one frame's comb measurement (640x480 px,
// 8 bit), which runs on one frame in sixteen as the frames are read.
func BenchmarkCombShift(b *testing.B) {
	s, err := synth.Builtin("interlaced-quiescent", 1)
	if err != nil {
		b.Fatal(err)
	}
	r, err := synth.NewRenderer(s)
	if err != nil {
		b.Fatal(err)
	}
	m := gocv.NewMat()
	defer m.Close()
	if err := r.Render(70, &m); err != nil {
		b.Fatal(err)
	}
	b.ResetTimer()
	for b.Loop() {
		if _, err := frames.CombShiftPx(m); err != nil {
			b.Fatal(err)
		}
	}
}
