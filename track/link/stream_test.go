package link

import (
	"context"
	"math"
	"reflect"
	"slices"
	"testing"

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
