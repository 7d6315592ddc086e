package flowprior

import (
	"math"
	"math/rand/v2"
	"runtime"
	"testing"

	"gocv.io/x/gocv"

	"gaptrace/calib"
	"gaptrace/calib/experiment"
	"gaptrace/track/synth"
	"gaptrace/track/tracks"
)

// Test scenarios come from package synth (made-up samples). locNoisePx is
// the localization noise added to true positions (a conservative figure for
// 5 px tracers at an SNR of about 25: about three times the least-squares
// precision of Thompson, Larson and Webb, 2002, an approximation, not a
// bound).
const locNoisePx = 0.15

// shear returns the named built-in scenario with the moving wall travelling
// wallPx per frame throughout.
func shear(t testing.TB, name string, wallPx float64, frames int, seed int64) *synth.Scenario {
	t.Helper()
	s, err := synth.Builtin(name, seed)
	if err != nil {
		t.Fatal(err)
	}
	s.Frames = frames
	v := wallPx * s.UMPerPx * s.FPS
	s.Motion = []experiment.Segment{{StartS: 0, EndS: float64(frames+1) / s.FPS, WallSpeedUMPerS: &v}}
	if err := s.Validate(); err != nil {
		t.Fatal(err)
	}
	return s
}

// points returns noisy detections of every frame.
func points(s *synth.Scenario, seed uint64) [][]Point {
	rng := rand.New(rand.NewPCG(seed, 3))
	out := make([][]Point, s.Frames)
	for f := range out {
		for _, p := range s.Positions(f) {
			out[f] = append(out[f], Point{p.XPx + locNoisePx*rng.NormFloat64(), p.YPx + locNoisePx*rng.NormFloat64()})
		}
	}
	return out
}

// truthAlong returns the true displacement per frame along the flow, px, at
// height yUM.
func truthAlong(s *synth.Scenario, wallPx, yUM float64) float64 {
	return wallPx * s.VelocityFraction(yUM)
}

// TestFromDetections checks the histogram prior against the scenario's
// profile (package synth) at a wall displacement of 20 px per frame, four
// fifths of the mean tracer spacing, for a linear profile and one with slip.
func TestFromDetections(t *testing.T) {
	const wallPx = 20.0
	// tol: a tenth of a pixel, under half the histogram's resolution and
	// about 1/40 of the linker's default search radius; the profile's change
	// across a bin (5% of 20 px) averages out for a linear profile.
	const tol = 0.1
	for _, name := range []string{"homogeneous", "slip"} {
		s := shear(t, name, wallPx, 50, 7)
		cal := s.Calibration()
		p, err := FromDetections(points(s, 1), cal, HistOptions{MaxStepPx: 1.5 * wallPx})
		if err != nil {
			t.Fatal(err)
		}
		// Truth per bin: the mean true displacement of the tracers whose
		// height falls in it (near the walls they fill only part of it).
		sum, cnt := make([]float64, len(p.YUM)), make([]float64, len(p.YUM))
		for _, tr := range s.Positions(0) {
			if b := binOf(tr.YUM, cal.GapUM, len(p.YUM)); b >= 0 {
				sum[b] += truthAlong(s, wallPx, tr.YUM)
				cnt[b]++
			}
		}
		worst := 0.0
		for i, y := range p.YUM {
			if p.N[i] == 0 {
				t.Errorf("%s: bin %d at %.0f um unknown", name, i, y)
				continue
			}
			worst = math.Max(worst, math.Abs(p.AlongPx(cal, i)-sum[i]/cnt[i]))
		}
		t.Logf("%s: worst bin off by %.3f px of %.0f px per frame", name, worst, wallPx)
		if worst > tol {
			t.Errorf("%s: histogram prior off by %.3f px, more than %.2f px", name, worst, tol)
		}
	}
}

// TestStripEstimator renders frames of package synth's homogeneous scenario
// and of its jittery "dark" scenario and checks the strips' profile against
// the truth at each strip's centre, and the common mode against the jitter.
func TestStripEstimator(t *testing.T) {
	const wallPx = 6.0
	// The strips are a prior for the linker's search regions, whose radius
	// is some 5 px here (SearchFraction of the nearest-neighbour distance).
	// A strip sees the few tracers inside it, at heights spread over its
	// 16 rows (4% of the gap, so 4% of the wall displacement), always the
	// same ones from pair to pair: tol is a tenth of the wall displacement
	// for the worst strip, rmsTol half of that over all strips.
	const tol, rmsTol = 0.1 * wallPx, 0.05 * wallPx
	for _, name := range []string{"homogeneous", "dark"} {
		s := shear(t, name, wallPx, 12, 9)
		cal := s.Calibration()
		e, err := NewStripEstimator(cal, s.WidthPx, s.HeightPx, StripOptions{})
		if err != nil {
			t.Fatal(err)
		}
		a, b := gocv.NewMat(), gocv.NewMat()
		if err := s.Render(0, &a); err != nil {
			t.Fatal(err)
		}
		for f := 1; f < s.Frames; f++ {
			if err := s.Render(f, &b); err != nil {
				t.Fatal(err)
			}
			if err := e.Add(a, b); err != nil {
				t.Fatal(err)
			}
			a, b = b, a
		}
		a.Close()
		b.Close()
		p, cm, err := e.Result()
		e.Close()
		if err != nil {
			t.Fatal(err)
		}
		worst, known, se2 := 0.0, 0, 0.0
		for i, y := range p.YUM {
			if p.N[i] == 0 {
				continue
			}
			known++
			d := math.Abs(p.AlongPx(cal, i) - truthAlong(s, wallPx, y))
			worst = math.Max(worst, d)
			se2 += d * d
		}
		prms := math.Sqrt(se2 / float64(known))
		// A steady drift cannot be told from flow, so the error is taken
		// after removing the least-squares line from the difference.
		ex, ey := make([]float64, len(cm)), make([]float64, len(cm))
		for f, sh := range cm {
			jx, jy := s.JitterAt(f)
			ex[f], ey[f] = sh.DXPx-jx, sh.DYPx-jy
		}
		detrend(ex)
		detrend(ey)
		var se float64
		for f := range ex {
			se += ex[f]*ex[f] + ey[f]*ey[f]
		}
		rms := math.Sqrt(se / float64(2*len(cm)))
		t.Logf("%s: %d of %d strips known, worst off by %.3f px, RMS %.3f px of %.0f px per frame; common mode RMS error %.3f px (jitter %.2f px)",
			name, known, len(p.YUM), worst, prms, wallPx, rms, s.JitterPx)
		if prms > rmsTol {
			t.Errorf("%s: strip profile RMS error %.3f px, more than %.3f px", name, prms, rmsTol)
		}
		if known < len(p.YUM)*9/10 {
			t.Errorf("%s: only %d of %d strips correlated", name, known, len(p.YUM))
		}
		if worst > tol {
			t.Errorf("%s: strip profile off by %.3f px, more than %.3f px", name, worst, tol)
		}
		// maxRMS: each pair's shift is the median over ~45 strips whose
		// errors are some 0.15 px, so about 0.03 px (1.25 sigma/sqrt(n), from
		// memory); the offsets are its running sum, a random walk that
		// reaches some 0.07 px over the 11 pairs. A third of the jitter.
		const maxRMS = 0.1
		if rms > maxRMS {
			t.Errorf("%s: common mode RMS error %.3f px, more than %.2f px", name, rms, maxRMS)
		}
	}
}

// TestFromTracksAndSeries builds tracks moving at a known profile that
// changes at frame 20 and checks that the windows of SeriesFromTracks follow
// it.
func TestFromTracksAndSeries(t *testing.T) {
	cal := &calib.Calibration{UMPerPx: 2, GapUM: 800, StationaryWallPx: calib.Line{{0, 450}, {639, 450}},
		MovingWallPx: calib.Line{{0, 50}, {639, 50}}, FlowSign: 1}
	rng := rand.New(rand.NewPCG(5, 6))
	speed := func(f int, yUM float64) float64 { // px per frame along the flow
		if f < 20 {
			return 0
		}
		return 8 * yUM / 800
	}
	var pts []tracks.Point
	for id := 0; id < 300; id++ {
		yUM := 800 * rng.Float64()
		x := 0.0
		for f := 0; f < 40; f++ {
			pts = append(pts, tracks.Point{Track: id, Frame: f, XUM: x + 0.2*rng.NormFloat64(), YUM: yUM + 0.2*rng.NormFloat64()})
			x += speed(f, yUM) * cal.UMPerPx
		}
	}
	s, err := SeriesFromTracks(pts, cal, TrackOptions{}, 40, 20)
	if err != nil {
		t.Fatal(err)
	}
	// tol: the median of ~300 steps of noise 0.14 px per bin, and half the
	// change of the profile across a bin (0.2 px).
	const tol = 0.25
	for _, c := range []struct {
		frame int
		yUM   float64
	}{{5, 100}, {5, 700}, {25, 100}, {25, 420}, {35, 700}} {
		dx, dy, ok := s.Step(c.frame, c.yUM)
		want := speed(c.frame, c.yUM)
		if !ok || math.Abs(dx-want) > tol || math.Abs(dy) > tol {
			t.Errorf("frame %d, %.0f um: step (%.3f, %.3f) px ok=%v, want (%.3f, 0)", c.frame, c.yUM, dx, dy, ok, want)
		}
	}
	// The same points in any order give the same series.
	shuffled := append([]tracks.Point(nil), pts...)
	rng.Shuffle(len(shuffled), func(i, j int) { shuffled[i], shuffled[j] = shuffled[j], shuffled[i] })
	s2, err := SeriesFromTracks(shuffled, cal, TrackOptions{}, 40, 20)
	if err != nil {
		t.Fatal(err)
	}
	for _, f := range []int{5, 25} {
		for _, y := range []float64{100, 500} {
			a, _, _ := s.Step(f, y)
			b, _, _ := s2.Step(f, y)
			if a != b {
				t.Errorf("frame %d, %.0f um: %g px ordered, %g px shuffled", f, y, a, b)
			}
		}
	}
	if _, err := SeriesFromTracks(nil, cal, TrackOptions{}, 40, 20); err == nil {
		t.Error("no tracks: no error")
	}
}

// TestProfileStep checks interpolation and the skipping of unknown bins.
func TestProfileStep(t *testing.T) {
	p := &Profile{YUM: []float64{10, 20, 30, 40}, DXPx: []float64{1, 2, 99, 4}, DYPx: []float64{0, 0, 99, 1},
		N: []int{5, 5, 0, 5}}
	cases := []struct{ y, dx, dy float64 }{
		{0, 1, 0}, {10, 1, 0}, {15, 1.5, 0}, {30, 3, 0.5}, {40, 4, 1}, {50, 4, 1},
	}
	for _, c := range cases {
		dx, dy, ok := p.Step(0, c.y)
		// tol: exact arithmetic on small numbers.
		const tol = 1e-12
		if !ok || math.Abs(dx-c.dx) > tol || math.Abs(dy-c.dy) > tol {
			t.Errorf("Step(%g) = (%g, %g, %v), want (%g, %g)", c.y, dx, dy, ok, c.dx, c.dy)
		}
	}
	if _, _, ok := (&Profile{YUM: []float64{1}, DXPx: []float64{1}, DYPx: []float64{1}, N: []int{0}}).Step(0, 1); ok {
		t.Error("profile without known bins answered")
	}
}

// TestErrors checks that bad arguments are refused.
func TestErrors(t *testing.T) {
	cal := &calib.Calibration{UMPerPx: 2, GapUM: 800, StationaryWallPx: calib.Line{{0, 450}, {639, 450}},
		MovingWallPx: calib.Line{{0, 50}, {639, 50}}, FlowSign: 1}
	if _, err := FromDetections(nil, cal, HistOptions{}); err == nil {
		t.Error("FromDetections without MaxStepPx: no error")
	}
	if _, err := FromDetections([][]Point{{{1, 100}}, {{2, 100}}}, cal, HistOptions{MaxStepPx: 5}); err == nil {
		t.Error("FromDetections on two points: no error")
	}
	if _, err := FromDetections(nil, cal, HistOptions{MaxStepPx: 5, BinUM: -1}); err == nil {
		t.Error("negative bin: no error")
	}
	if _, err := NewStripEstimator(cal, 4, 4, StripOptions{}); err == nil {
		t.Error("tiny frame: no error")
	}
	e, err := NewStripEstimator(cal, 640, 480, StripOptions{})
	if err != nil {
		t.Fatal(err)
	}
	defer e.Close()
	m := gocv.NewMatWithSize(10, 10, gocv.MatTypeCV8U)
	defer m.Close()
	if err := e.Add(m, m); err == nil {
		t.Error("wrong frame size: no error")
	}
	if _, _, err := e.Result(); err == nil {
		t.Error("Result without pairs: no error")
	}
	if _, err := CommonModeFromTracks(nil, cal, 0); err == nil {
		t.Error("zero frames: no error")
	}
}

// TestQuickCommonModeParallel checks that QuickCommonMode gives the same
// offsets, bit for bit, on one core and on several (it splits the tracks
// into one run per core), that it finds a known common-mode shake, and
// runs under the race detector (make test).
func TestQuickCommonModeParallel(t *testing.T) {
	const frames = 120
	rng := rand.New(rand.NewPCG(7, 8))
	shake := make([]float64, frames) // px along x, the same for every tracer
	for f := range shake {
		shake[f] = 0.5 * math.Sin(float64(f))
	}
	var pts []tracks.Point
	for id := 0; id < 400; id++ {
		yUM := 800 * rng.Float64()
		x0 := 600 * rng.Float64()
		first, last := rng.IntN(10), frames-1-rng.IntN(10)
		for f := first; f <= last; f++ {
			x := x0 + 2*yUM/800*float64(f) + shake[f] + 0.05*rng.NormFloat64()
			pts = append(pts, tracks.Point{Track: id, Frame: f, XPx: x, YPx: 450 - yUM/2, YUM: yUM})
		}
	}
	pts = append(pts, tracks.Point{Track: tracks.Unlinked, Frame: 3, XPx: 1, YPx: 1, YUM: 400})
	field := &Profile{YUM: []float64{0, 800}, DXPx: []float64{0, 2}, DYPx: []float64{0, 0}, N: []int{100, 100}}
	defer runtime.GOMAXPROCS(runtime.GOMAXPROCS(1))
	one := QuickCommonMode(pts, field, frames)
	for _, procs := range []int{2, 3, 8} {
		runtime.GOMAXPROCS(procs)
		got := QuickCommonMode(pts, field, frames)
		for f := range one {
			if got[f] != one[f] {
				t.Fatalf("%d cores: frame %d offset %+v, one core %+v", procs, f, got[f], one[f])
			}
		}
	}
	// The shake, less its line over each stretch, is what is found: the
	// frame-to-frame differences are the shake's, but for a constant per
	// stretch (the line's slope), here taken from frame 12.
	var worst float64
	ref := one[12].DXPx - one[11].DXPx - (shake[12] - shake[11])
	for f := 11; f < min(frames, quickStretchFrames); f++ {
		got := one[f].DXPx - one[f-1].DXPx - (shake[f] - shake[f-1])
		worst = max(worst, math.Abs(got-ref))
	}
	// tol: each difference is a median of about 300 steps of noise 0.07 px,
	// sd 1.25 x 0.07 / sqrt(300) = 0.005 px (the asymptotic sd of a median,
	// from memory); two of them, 5 sd.
	const tol = 0.035
	t.Logf("frame-to-frame shake within %.4f px", worst)
	if worst > tol {
		t.Errorf("frame-to-frame shake off by up to %.3f px (tol %.3f)", worst, tol)
	}
}

// TestHugeStep checks that a step too large for the displacement histogram
// is an error, not a panic (issue 18: gap_um 1e308, um_per_px 1e-300 and
// rate_per_s 1e300 gave an index out of range here).
func TestHugeStep(t *testing.T) {
	cal := &calib.Calibration{UMPerPx: 2, GapUM: 800, StationaryWallPx: calib.Line{{0, 450}, {639, 450}},
		MovingWallPx: calib.Line{{0, 50}, {639, 50}}, FlowSign: 1}
	frames := [][]Point{{{10, 100}, {20, 200}}, {{11, 100}, {21, 200}}}
	for _, step := range []float64{1e300, math.MaxFloat64, 1e19, math.Inf(1)} {
		if _, err := FromDetections(frames, cal, HistOptions{MaxStepPx: step}); err == nil {
			t.Errorf("MaxStepPx %g: no error", step)
		}
	}
}
