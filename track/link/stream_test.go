package link

import (
	"context"
	"errors"
	"math"
	"reflect"
	"slices"
	"testing"

	"gaptrace/track/flowprior"
	"gaptrace/track/synth"
	"gaptrace/track/tracks"
)

// TestLinkStreamSameAsLink checks that LinkStream, through a spool of the
// detections, gives the points and statistics of LinkContext on the same
// detections: a steady camera measured cheaply, a shaking one (the full
// common-mode fit), a variable frame rate and cuts at the program's
// changes of flow.
func TestLinkStreamSameAsLink(t *testing.T) {
	for _, c := range []struct {
		name    string
		measure bool
		cuts    bool
	}{{"homogeneous", true, false}, {"dark", true, true}, {"vfr", true, false}, {"step-plane", false, false}} {
		s, err := synth.Builtin(c.name, 5)
		if err != nil {
			t.Fatal(err)
		}
		b := detect(t, s, 51)
		v := 0.0
		var changes []float64
		for _, st := range s.Program() {
			v = math.Max(v, math.Abs(st.WallSpeedUMPerS))
			changes = append(changes, st.StartS, st.EndS)
		}
		opt := Options{FPS: s.FPS, MaxStepPx: MaxStepFor(v, s.FPS, s.UMPerPx), GapFrames: DefaultGapFrames,
			MeasureCommonMode: c.measure, FrameTimesS: s.FrameTimes()}
		if c.cuts {
			opt.FlowChangesS = changes
		}
		want, wantSt, err := Link(b.frames, b.cal, opt)
		if err != nil {
			t.Fatal(err)
		}
		fs, err := NewFrameSpool(t.TempDir())
		if err != nil {
			t.Fatal(err)
		}
		for f, ds := range b.frames {
			if err := fs.Add(f, ds); err != nil {
				t.Fatal(err)
			}
		}
		var passes []*spoolPass
		p, st, err := LinkStream(context.Background(), fs, b.cal, opt, func() (Pass, error) {
			sp, err := newSpoolPass(t.TempDir())
			passes = append(passes, sp)
			return sp, err
		})
		fs.Close()
		if err != nil {
			t.Fatalf("%s: %v", c.name, err)
		}
		got, err := tracks.Collect(p)
		if err != nil {
			t.Fatal(err)
		}
		fp := p.(*spoolPass)
		p.Close()
		for _, sp := range passes {
			sp.Close()
		}
		if !slices.Equal(got, want) {
			t.Errorf("%s: LinkStream gave %d points, differing from Link's %d", c.name, len(got), len(want))
		}
		if !reflect.DeepEqual(st, wantSt) {
			t.Errorf("%s: LinkStream's stats %+v, Link's %+v", c.name, st, wantSt)
		}
		if fp.steps != wantSt.Links || fp.last != len(b.frames)-1 {
			t.Errorf("%s: the final pass saw %d steps up to frame %d; Link made %d links in %d frames", c.name, fp.steps, fp.last, wantSt.Links, len(b.frames))
		}
		t.Logf("%s: %d points, %d tracks, %d passes, common mode %v", c.name, len(got), st.Tracks, len(passes), st.CommonMode != nil)
	}
}

// spoolPass is a Pass onto a tracks.Spool, as the pipeline's.
type spoolPass struct {
	*tracks.Spool
	steps, last int
}

func newSpoolPass(dir string) (*spoolPass, error) {
	s, err := tracks.NewSpool(dir)
	return &spoolPass{Spool: s}, err
}
func (p *spoolPass) Step(a, b *tracks.Point)        { p.steps++ }
func (p *spoolPass) EndFrame(f int)                 { p.last = f }
func (p *spoolPass) Track(pts []tracks.Point) error { return p.Add(pts) }

// TestLinkStreamCommonModeChunks checks the common-mode motion that
// LinkStream fits in chunks (commonChunkFrames) on a recording of 1 500
// frames with the jitter of synth's "dark" scenario (0.3 px per axis and
// frame) against the rendered jitter, as TestLinkCommonMode checks the
// whole fit, and within the same bound.
func TestLinkStreamCommonModeChunks(t *testing.T) {
	s := shear(t, "dark", 0.5, commonChunkFrames+commonChunkFrames/2, 0.02, 401)
	sm := detect(t, s, 41)
	fs, err := NewFrameSpool(t.TempDir())
	if err != nil {
		t.Fatal(err)
	}
	defer fs.Close()
	for f, ds := range sm.frames {
		if err := fs.Add(f, ds); err != nil {
			t.Fatal(err)
		}
	}
	opt := sm.options()
	opt.MeasureCommonMode = true
	p, st, err := LinkStream(context.Background(), fs, sm.cal, opt, func() (Pass, error) { return newSpoolPass(t.TempDir()) })
	if err != nil {
		t.Fatal(err)
	}
	p.Close()
	n := len(st.CommonMode)
	if n != len(sm.frames) {
		t.Fatalf("common mode has %d frames, want %d", n, len(sm.frames))
	}
	truth := make([]flowprior.Shift, n)
	for f := range truth {
		truth[f].DXPx, truth[f].DYPx = sm.s.JitterAt(f)
	}
	truth = jitterOnly(truth, JitterWindowFrames)
	ex, ey := make([]float64, n), make([]float64, n)
	for f, sh := range st.CommonMode {
		ex[f], ey[f] = sh.DXPx-truth[f].DXPx, sh.DYPx-truth[f].DYPx
	}
	var se float64
	for _, e := range [][]float64{ex, ey} {
		for _, r := range residualsOfLine(e) {
			se += r * r
		}
	}
	rms := math.Sqrt(se / float64(2*n))
	// maxRMS: TestLinkCommonMode's bound for the whole fit.
	const maxRMS = 0.04
	t.Logf("chunked common mode: RMS error %.3f px per axis against jitter of %.2f px over %d frames", rms, sm.s.JitterPx, n)
	if rms > maxRMS {
		t.Errorf("chunked common mode RMS error %.3f px, more than %.2f px", rms, maxRMS)
	}
}

// failingPass is a spoolPass whose Track fails from its n-th call on.
type failingPass struct {
	*spoolPass
	n, calls int
}

var errTrackFull = errors.New("test: the track store is full")

func (p *failingPass) Track(pts []tracks.Point) error {
	p.calls++
	if p.calls > p.n {
		return errTrackFull
	}
	return p.spoolPass.Track(pts)
}

// TestLinkStreamPassError checks that an error of Pass.Track, which the
// pass receives on a goroutine of its own (passWriter), stops LinkStream
// and is returned, whether it comes with the first track, in the middle
// or with the tracks that end after the last frame.
func TestLinkStreamPassError(t *testing.T) {
	s, err := synth.Builtin("homogeneous", 5)
	if err != nil {
		t.Fatal(err)
	}
	b := detect(t, s, 21)
	fs, err := NewFrameSpool(t.TempDir())
	if err != nil {
		t.Fatal(err)
	}
	defer fs.Close()
	for f, ds := range b.frames {
		if err := fs.Add(f, ds); err != nil {
			t.Fatal(err)
		}
	}
	opt := Options{FPS: s.FPS, MaxStepPx: MaxStepFor(s.Program()[0].WallSpeedUMPerS, s.FPS, s.UMPerPx), GapFrames: DefaultGapFrames}
	_, all, err := Link(b.frames, b.cal, opt)
	if err != nil {
		t.Fatal(err)
	}
	for _, n := range []int{0, all.Tracks / 2, all.Tracks + all.Unlinked - 1} {
		p, _, err := LinkStream(context.Background(), fs, b.cal, opt, func() (Pass, error) {
			sp, err := newSpoolPass(t.TempDir())
			return &failingPass{spoolPass: sp, n: n}, err
		})
		if p != nil {
			p.Close()
		}
		if !errors.Is(err, errTrackFull) {
			t.Errorf("Track failing from call %d of %d: LinkStream returned %v, want %v", n+1, all.Tracks+all.Unlinked, err, errTrackFull)
		}
	}
}
