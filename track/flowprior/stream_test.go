package flowprior

import (
	"math"
	"math/rand/v2"
	"slices"
	"testing"

	"gaptrace/calib"
	"gaptrace/track/tracks"
)

// streamSteps calls fn with every one-frame step of pts (grouped by
// track, frame order within) in the order a Linker reports them: frame by
// frame.
func streamSteps(pts []tracks.Point, fn func(a, b *tracks.Point)) {
	type pair struct{ a, b int }
	var ps []pair
	for i := 1; i < len(pts); i++ {
		if pts[i].Track == pts[i-1].Track && pts[i].Track != tracks.Unlinked && pts[i].Frame == pts[i-1].Frame+1 {
			ps = append(ps, pair{i - 1, i})
		}
	}
	slices.SortStableFunc(ps, func(x, y pair) int { return pts[x.b].Frame - pts[y.b].Frame })
	for _, p := range ps {
		fn(&pts[p.a], &pts[p.b])
	}
}

// TestStreamSameAsBatch checks that SeriesBuilder and QuickCommon, given
// the steps frame by frame, give what SeriesFromTracks and
// QuickCommonMode give on the whole tracks.
func TestStreamSameAsBatch(t *testing.T) {
	cal := &calib.Calibration{UMPerPx: 2, GapUM: 800, StationaryWallPx: calib.Line{{0, 450}, {639, 450}},
		MovingWallPx: calib.Line{{0, 50}, {639, 50}}, FlowSign: 1}
	const frames = 230
	rng := rand.New(rand.NewPCG(9, 10))
	var pts []tracks.Point
	for id := range 500 {
		yUM := 800 * rng.Float64()
		first := rng.IntN(frames - 5)
		last := min(frames-1, first+5+rng.IntN(80))
		x := 600 * rng.Float64()
		for f := first; f <= last; f++ {
			if rng.IntN(20) == 0 {
				continue // a missed frame: no step across it
			}
			jit := 0.3 * math.Sin(float64(f))
			pts = append(pts, tracks.Point{Track: id, Frame: f, TS: float64(f) / 100, XPx: x + jit, YPx: 450 - yUM/2,
				XUM: (x + jit) * cal.UMPerPx, YUM: yUM + 0.2*rng.NormFloat64()})
			x += 6 * yUM / 800
		}
	}
	for _, opt := range []TrackOptions{{}, {NominalIntervalS: 0.01}} {
		want, err := SeriesFromTracks(pts, cal, opt, frames, 20)
		if err != nil {
			t.Fatal(err)
		}
		b, err := NewSeriesBuilder(cal, opt, frames, 20)
		if err != nil {
			t.Fatal(err)
		}
		streamSteps(pts, b.Step)
		got, err := b.Series()
		if err != nil {
			t.Fatal(err)
		}
		if !sameSeries(got, want) {
			t.Errorf("%+v: SeriesBuilder differs from SeriesFromTracks", opt)
		}
	}
	field := &Profile{YUM: []float64{0, 800}, DXPx: []float64{0, 6}, DYPx: []float64{0, 0}, N: []int{100, 100}}
	want := QuickCommonMode(pts, field, frames)
	q := NewQuickCommon(field, frames)
	streamSteps(pts, q.Step)
	if got := q.Shifts(); !slices.Equal(got, want) {
		t.Errorf("QuickCommon differs from QuickCommonMode")
	}
	if NewQuickCommon(field, 1).Shifts() != nil || NewQuickCommon(nil, frames) != nil {
		t.Error("QuickCommon of one frame or no field is not nil, as QuickCommonMode's")
	}
	if _, err := NewSeriesBuilder(cal, TrackOptions{}, frames, 0); err == nil {
		t.Error("a window of 0 frames was accepted")
	}
}

// sameSeries reports whether a and b hold the same windows and values,
// NaN equal to NaN.
func sameSeries(a, b *Series) bool {
	if !slices.Equal(a.Start, b.Start) || len(a.Profiles) != len(b.Profiles) {
		return false
	}
	eq := func(x, y []float64) bool {
		return slices.EqualFunc(x, y, func(u, v float64) bool { return u == v || (math.IsNaN(u) && math.IsNaN(v)) })
	}
	for i, p := range a.Profiles {
		q := b.Profiles[i]
		if (p == nil) != (q == nil) {
			return false
		}
		if p != nil && !(eq(p.YUM, q.YUM) && eq(p.DXPx, q.DXPx) && eq(p.DYPx, q.DYPx) && eq(p.SpreadPx, q.SpreadPx) && slices.Equal(p.N, q.N)) {
			return false
		}
	}
	return true
}
