package link

import (
	"fmt"
	"math"
	"math/rand/v2"
	"sort"
	"testing"

	"gaptrace/calib"
	"gaptrace/calib/experiment"
	"gaptrace/track/flowprior"
	"gaptrace/track/synth"
	"gaptrace/track/synth/acceptance"
	"gaptrace/track/tracks"
)

// profileBins is the number of gap bins of the velocity check: twenty, so
// that the bins next to the walls are 5% of the gap.
const profileBins = 20

// stepVelocities bins the one-frame steps of the output tracks by their mean
// height and returns, per bin, the mean measured velocity along the flow
// (um/s), the mean true velocity at the same heights (the scenario's
// profile, um/s) and the number of steps.
func (sm *sample) stepVelocities(pts []tracks.Point) (meas, truth []float64, n []int) {
	gap := sm.cal.GapUM
	meas, truth, n = make([]float64, profileBins), make([]float64, profileBins), make([]int, profileBins)
	prog := sm.s.Program()
	v := prog[0].WallSpeedUMPerS
	for i := 1; i < len(pts); i++ {
		a, b := pts[i-1], pts[i]
		if a.Track == tracks.Unlinked || a.Track != b.Track || b.Frame != a.Frame+1 {
			continue
		}
		y := (a.YUM + b.YUM) / 2
		bi := int(y / gap * profileBins)
		if bi < 0 || bi >= profileBins {
			continue
		}
		meas[bi] += (b.XUM - a.XUM) * sm.s.FPS
		// Truth at the tracer's true height (its true y is fixed in synth).
		ta := sm.truth[truthKey{a.Frame, a.XPx, a.YPx}]
		truth[bi] += v * sm.s.VelocityFraction(ta.YUM)
		n[bi]++
	}
	for i := range meas {
		meas[i] /= float64(n[i])
		truth[i] /= float64(n[i])
	}
	return meas, truth, n
}

// TestLinkVelocityProfile checks that the tracks reproduce the rendered
// profile within 1% of the wall speed in every one of 20 gap bins, on three
// profiles of package synth (linear, slip at both walls, two bands), with the
// wall travelling half the tracer spacing per frame (and 0.8 of it for the
// linear one), and on the jittery
// scenario with the common mode measured from the tracks.
func TestLinkVelocityProfile(t *testing.T) {
	// tol is the aim: 1% of the wall speed in every bin.
	const tol = 0.01
	cases := []struct {
		name    string
		ratio   float64
		measure bool
	}{{"homogeneous", 0.5, false}, {"homogeneous", 0.8, false}, {"slip", 0.5, false}, {"banded2", 0.5, false}, {"dark", 0.5, true}}
	for ci, c := range cases {
		sm := detect(t, shear(t, c.name, c.ratio, 80, 0.02, int64(200+ci)), uint64(20+ci))
		opt := sm.options()
		opt.MeasureCommonMode = c.measure
		pts, _, err := Link(sm.frames, sm.cal, opt)
		if err != nil {
			t.Fatal(err)
		}
		meas, truth, n := sm.stepVelocities(pts)
		v := sm.s.Program()[0].WallSpeedUMPerS
		worst, wb := 0.0, 0
		for b := range meas {
			if n[b] == 0 {
				t.Errorf("%s: bin %d has no steps", c.name, b)
				continue
			}
			if d := math.Abs(meas[b]-truth[b]) / v; d > worst {
				worst, wb = d, b
			}
		}
		t.Logf("%-12s ratio %.1f, wall %.0f um/s: worst bin %2d off by %.4f V (tracks %.1f, truth %.1f um/s, %d steps); wall bins %.4f V, %.4f V",
			c.name, c.ratio, v, wb, worst, meas[wb], truth[wb], n[wb],
			math.Abs(meas[0]-truth[0])/v, math.Abs(meas[profileBins-1]-truth[profileBins-1])/v)
		if worst > tol {
			t.Errorf("%s: bin %d velocity %.2f um/s, truth %.2f um/s: off by %.4f of the wall speed, more than %.2f",
				c.name, wb, meas[wb], truth[wb], worst, tol)
		}
	}
}

// trackLengths returns the frames spanned by each kept track.
func trackLengths(pts []tracks.Point) []int {
	var ls []int
	for i := 0; i < len(pts); {
		j := i
		for j < len(pts) && pts[j].Track == pts[i].Track {
			j++
		}
		if pts[i].Track != tracks.Unlinked {
			ls = append(ls, pts[j-1].Frame-pts[i].Frame+1)
		}
		i = j
	}
	return ls
}

func medianInt(v []int) int {
	s := append([]int(nil), v...)
	sort.Ints(s)
	return s[len(s)/2]
}

// TestLinkGapClosing drops 10% of the detections at random and compares the
// median track length, in frames spanned, with the undropped case: the issue
// asks for at least 80%.
func TestLinkGapClosing(t *testing.T) {
	const (
		frames = 100
		drop   = 0.10
		aim    = acceptance.GapClosingLengthFrac
	)
	full := detect(t, shear(t, "homogeneous", 0.5, frames, 0, 300), 30)
	dropped := detect(t, shear(t, "homogeneous", 0.5, frames, drop, 300), 30)
	pf, sf, err := Link(full.frames, full.cal, full.options())
	if err != nil {
		t.Fatal(err)
	}
	pd, sd, err := Link(dropped.frames, dropped.cal, dropped.options())
	if err != nil {
		t.Fatal(err)
	}
	noGap := dropped.options()
	noGap.GapFrames = 0
	pn, _, err := Link(dropped.frames, dropped.cal, noGap)
	if err != nil {
		t.Fatal(err)
	}
	mf, md, mn := medianInt(trackLengths(pf)), medianInt(trackLengths(pd)), medianInt(trackLengths(pn))
	sc := dropped.score(pd)
	t.Logf("median track length: %d frames undropped (%d tracks), %d with %.0f%% dropped (%d tracks, %d gap links, %.4f wrong), %d without gap closing",
		mf, sf.Tracks, md, 100*drop, sd.Tracks, sd.GapLinks, sc.fracWrong(), mn)
	if float64(md) < aim*float64(mf) {
		t.Errorf("median track length %d frames with %.0f%% dropped, below %.0f%% of %d", md, 100*drop, 100*aim, mf)
	}
	// maxWrong bounds wrong links with gap closing on: bridging must not
	// join different tracers.
	const maxWrong = 0.01
	if sc.fracWrong() > maxWrong {
		t.Errorf("%.4f of links wrong with gap closing, more than %.2f", sc.fracWrong(), maxWrong)
	}
}

// TestLinkCommonMode checks the measured common-mode shift against the
// scenario's camera jitter (package synth's "dark" scenario, 0.3 px per axis
// and frame), relative to frame 0.
func TestLinkCommonMode(t *testing.T) {
	sm := detect(t, shear(t, "dark", 0.5, 60, 0.02, 400), 40)
	opt := sm.options()
	opt.MeasureCommonMode = true
	_, st, err := Link(sm.frames, sm.cal, opt)
	if err != nil {
		t.Fatal(err)
	}
	if len(st.CommonMode) != len(sm.frames) {
		t.Fatalf("common mode has %d frames, want %d", len(st.CommonMode), len(sm.frames))
	}
	// A steady drift cannot be told from flow by tracks (CommonModeFromTracks
	// removes the linear trend), so the error is taken after removing the
	// least-squares line from the difference to the truth; along the flow
	// only the jitter's fast part is removed (jitterOnly), so the truth there
	// is the rendered jitter less its own running median.
	n := len(st.CommonMode)
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
	rms := math.Sqrt(se / float64(2*len(st.CommonMode)))
	// maxRMS: the per-frame median over ~400 points of noise 0.15 px has
	// an error of about 0.01 px (1.25 sigma/sqrt(n), from memory); 0.04 px
	// leaves room for the lines' own errors and is an eighth of the jitter.
	const maxRMS = 0.04
	t.Logf("common mode: RMS error %.3f px per axis against jitter of %.2f px", rms, sm.s.JitterPx)
	if rms > maxRMS {
		t.Errorf("common mode RMS error %.3f px, more than %.2f px", rms, maxRMS)
	}
}

// TestLinkBuiltins links every built-in scenario of package synth as it is
// (rest, shear, cessation; slip, bands, a Couette cell, jitter, failure
// planes after a step strain), then the homogeneous one with an abrupt
// start and stop at up to 0.8 of the mean spacing per frame, where every
// tracer must change its speed at once.
func TestLinkBuiltins(t *testing.T) {
	// minCorrect, maxWrong: the built-ins move at a ratio of 0.13 to 0.16,
	// where the table finds all links; a few are lost at the start and stop.
	const minCorrect, maxWrong = 0.99, 0.01
	check := func(label string, s *synth.Scenario, wallUMPerS float64) {
		b := detect(t, s, 50)
		// The true frame times: irregular for the variable-rate camera
		// (vfr), frame/FPS for the others.
		opt := Options{FPS: s.FPS, MaxStepPx: MaxStepFor(wallUMPerS, s.FPS, s.UMPerPx), GapFrames: DefaultGapFrames,
			MeasureCommonMode: s.JitterPx > 0, FrameTimesS: s.FrameTimes()}
		pts, st, err := Link(b.frames, b.cal, opt)
		if err != nil {
			t.Fatal(err)
		}
		sc := b.score(pts)
		ratio := wallUMPerS / s.FPS / s.UMPerPx / b.spacing
		t.Logf("%-22s ratio %.2f: %.4f correct, %.4f wrong, %d tracks", label, ratio, sc.fracCorrect(), sc.fracWrong(), st.Tracks)
		if sc.fracCorrect() < minCorrect || sc.fracWrong() > maxWrong {
			t.Errorf("%s: %.4f correct, %.4f wrong; want at least %.2f and at most %.2f", label, sc.fracCorrect(), sc.fracWrong(), minCorrect, maxWrong)
		}
	}
	for _, n := range synth.List() {
		s, err := synth.Builtin(n.Name, 3)
		if err != nil {
			t.Fatal(err)
		}
		v := 0.0
		for _, st := range s.Program() {
			v = math.Max(v, math.Abs(st.WallSpeedUMPerS))
		}
		check(n.Name, s, v)
	}
	for _, ratio := range []float64{0.5, 0.8} {
		s, err := synth.Builtin("homogeneous", 4)
		if err != nil {
			t.Fatal(err)
		}
		spacing := math.Sqrt(float64(s.WidthPx) * s.GapPx() / float64(len(s.Positions(0))))
		v := ratio * spacing * s.UMPerPx * s.FPS
		s.Motion = []experiment.Segment{{StartS: 0.5, EndS: 2.0, WallSpeedUMPerS: &v}}
		if err := s.Validate(); err != nil {
			t.Fatal(err)
		}
		check(fmt.Sprintf("start/stop at %.1f", ratio), s, v)
	}
}

// TestOptionsErrors checks that bad options are refused with the value.
func TestOptionsErrors(t *testing.T) {
	cal := &calib.Calibration{UMPerPx: 2, GapUM: 800, StationaryWallPx: calib.Line{{0, 450}, {639, 450}},
		MovingWallPx: calib.Line{{0, 50}, {639, 50}}, FlowSign: 1}
	cases := []struct {
		name string
		opt  Options
	}{
		{"no fps", Options{MaxStepPx: 5}},
		{"no max step", Options{FPS: 100}},
		{"negative search", Options{FPS: 100, MaxStepPx: 5, SearchPx: -1}},
		{"negative gap", Options{FPS: 100, MaxStepPx: 5, GapFrames: -1}},
		{"nan step", Options{FPS: 100, MaxStepPx: math.NaN()}},
	}
	for _, c := range cases {
		if _, err := NewLinker(cal, c.opt); err == nil {
			t.Errorf("%s: no error", c.name)
		} else {
			t.Logf("%s: %v", c.name, err)
		}
	}
	l, err := NewLinker(cal, Options{FPS: 100, MaxStepPx: 5})
	if err != nil {
		t.Fatal(err)
	}
	if err := l.Add(3, nil); err != nil {
		t.Fatal(err)
	}
	if err := l.Add(3, nil); err == nil {
		t.Error("frame 3 twice: no error")
	}
	if err := l.Add(4, []Detection{{XPx: math.NaN()}}); err == nil {
		t.Error("NaN position: no error")
	}
	if _, err := NewLinker(nil, Options{FPS: 1, MaxStepPx: 1}); err == nil {
		t.Error("nil calibration: no error")
	}
}

// TestAssignerBruteForce compares the Hungarian solver with exhaustive
// search over all assignments (the definition of the optimum) on random
// sparse problems with forbidden (zero) entries, as the linker builds them.
func TestAssignerBruteForce(t *testing.T) {
	rng := rand.New(rand.NewPCG(11, 12))
	var a assigner
	for trial := 0; trial < 300; trial++ {
		n := 1 + rng.IntN(6)
		m := n + rng.IntN(3)
		c := make([]float64, n*m)
		for i := range c {
			if rng.Float64() < 0.5 {
				c[i] = -rng.Float64()
			}
		}
		col := a.solve(c, n, m)
		got := 0.0
		seen := map[int]bool{}
		for i := 0; i < n; i++ {
			if seen[col[i]] {
				t.Fatalf("trial %d: column %d used twice", trial, col[i])
			}
			seen[col[i]] = true
			got += c[i*m+col[i]]
		}
		best := math.Inf(1)
		var rec func(i int, used uint, acc float64)
		rec = func(i int, used uint, acc float64) {
			if i == n {
				best = math.Min(best, acc)
				return
			}
			for j := 0; j < m; j++ {
				if used&(1<<j) == 0 {
					rec(i+1, used|1<<j, acc+c[i*m+j])
				}
			}
		}
		rec(0, 0, 0)
		// tol: sums of a few float64 in a different order.
		const tol = 1e-12
		if math.Abs(got-best) > tol {
			t.Fatalf("trial %d (%dx%d): cost %g, optimum %g", trial, n, m, got, best)
		}
	}
}

// residualsOfLine returns v minus its least-squares line against the index.
func residualsOfLine(v []float64) []float64 {
	n := float64(len(v))
	var sf, sff, sv, sfv float64
	for i, x := range v {
		f := float64(i)
		sf, sff, sv, sfv = sf+f, sff+f*f, sv+x, sfv+f*x
	}
	b := (n*sfv - sf*sv) / (n*sff - sf*sf)
	a := (sv - b*sf) / n
	out := make([]float64, len(v))
	for i, x := range v {
		out[i] = x - a - b*float64(i)
	}
	return out
}
