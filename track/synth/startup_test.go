package synth

import (
	"bytes"
	"math"
	"strconv"
	"strings"
	"testing"

	"gaptrace/calib/experiment"
	"gaptrace/calib/geometry"
	"gaptrace/calib/rheolog"
)

// startup returns a start-up with slip and two bands that develop after
// the step's start: slip from 0.4 s (tau 0.15 s), bands from 0.2 s (tau
// 0.3 s), in a step of rate 1/s from 0.5 s to 2 s.
func startup(t testing.TB) *Scenario {
	s := mustBuiltin(t, "homogeneous", 2)
	s.Profile = Profile{SlipStationary: 0.1, SlipMoving: 0.05, Bands: []Band{{ToFrac: 0.35, RateWeight: 3}, {ToFrac: 1, RateWeight: 0.5}}}
	s.Transient = Transient{SlipOnsetS: 0.4, SlipTauS: 0.15, BandsOnsetS: 0.2, BandsTauS: 0.3}
	if err := s.Validate(); err != nil {
		t.Fatal(err)
	}
	return s
}

// fieldUMPerS is the start-up's velocity written out from Transient's
// definition, for the tests: v/V = y/H + Ps (lin - y/H) + Pb (v_P - lin),
// lin the Profile's slips with uniform shear, v_P the Profile.
func fieldUMPerS(s *Scenario, yUM, tS float64) float64 {
	st := s.Program()[0]
	if tS < st.StartS || tS >= st.EndS {
		return 0
	}
	tau := tS - st.StartS
	p := func(on, k float64) float64 {
		if tau <= on {
			return 0
		}
		return 1 - math.Exp(-(tau-on)/k)
	}
	tr, pr := s.Transient, s.Profile
	y := yUM / s.GapUM()
	lin := pr.SlipStationary + (1-pr.SlipStationary-pr.SlipMoving)*y
	return st.WallSpeedUMPerS * (y + p(tr.SlipOnsetS, tr.SlipTauS)*(lin-y) + p(tr.BandsOnsetS, tr.BandsTauS)*(pr.Velocity(y)-lin))
}

// simpson2 is the mean of f over [a, b] by Simpson's rule on n intervals,
// splitting at the given kinks, where the integrand's derivative jumps
// and where it jumps (Abramowitz & Stegun 1964, eq. 25.4.5 on each piece).
func simpson2(f func(float64) float64, a, b float64, n int, kinks ...float64) float64 {
	cuts := []float64{a}
	for _, k := range kinks {
		if k > a && k < b {
			cuts = append(cuts, k)
		}
	}
	cuts = append(cuts, b)
	sum := 0.0
	for i := 1; i < len(cuts); i++ {
		// Each piece's ends are nudged inwards, so that a jump at a cut
		// takes the piece's own side.
		a, b := cuts[i-1], cuts[i]
		e := 1e-12 * (b - a)
		g := func(x float64) float64 { return f(clamp(x, a+e, b-e)) }
		sum += simpsonMean(g, a, b, n) * (b - a)
	}
	return sum / (b - a)
}

// meanVelTolFrac is the agreement asked of MeanVelocityUMPerS and the
// Simpson double integral, relative to the wall speed: Simpson's error on
// 200 intervals of these smooth pieces is below 1e-9.
const meanVelTolFrac = 1e-7

// TestMeanVelocityStartup checks the exact window means of each gap bin
// against a Simpson double integral of the velocity written out from its
// definition, for windows before, across and after the onsets, and across
// the step's end.
func TestMeanVelocityStartup(t *testing.T) {
	s := startup(t)
	h := s.GapUM()
	st := s.Program()[0]
	v := st.WallSpeedUMPerS
	kinksT := []float64{st.StartS, st.StartS + s.Transient.BandsOnsetS, st.StartS + s.Transient.SlipOnsetS, st.EndS}
	for _, w := range [][2]float64{{0.5, 0.65}, {0.6, 0.8}, {0.85, 1.1}, {1.6, 2.0}, {1.9, 2.2}, {0.2, 0.6}} {
		for _, bin := range [][2]float64{{0, 40}, {200, 320}, {260, 300}, {700, 800}, {0, 800}} {
			got, err := s.MeanVelocityUMPerS(bin[0], bin[1], w[0], w[1])
			if err != nil {
				t.Fatal(err)
			}
			want := simpson2(func(tS float64) float64 {
				return simpson2(func(y float64) float64 { return fieldUMPerS(s, y, tS) }, bin[0], bin[1], 200, 0.35*h)
			}, w[0], w[1], 200, kinksT...)
			if math.Abs(got-want) > meanVelTolFrac*v {
				t.Errorf("window %v s, bin %v um: mean velocity %.6f um/s, Simpson %.6f", w, bin, got, want)
			}
		}
	}
	if _, err := s.MeanVelocityUMPerS(0, 10, 1, 1); err == nil {
		t.Error("an empty window gave no error")
	}
}

// TestStartupPositions checks that tracers move by the time integral of
// the velocity at their height (Simpson's rule on the written-out field).
func TestStartupPositions(t *testing.T) {
	s := startup(t)
	const f0, f1 = 105, 140 // 1.05 s to 1.40 s, while slip and bands grow
	a, b := byID(s.Positions(f0)), byID(s.Positions(f1))
	t0, t1 := float64(f0)/s.FPS, float64(f1)/s.FPS
	n := 0
	for id, p := range a {
		q, ok := b[id]
		if !ok || math.Abs(q.XUM-p.XUM) > float64(s.WidthPx)*s.UMPerPx/2 { // wrapped
			continue
		}
		want := (t1 - t0) * simpson2(func(tS float64) float64 { return fieldUMPerS(s, p.YUM, tS) }, t0, t1, 400,
			0.5+s.Transient.SlipOnsetS, 0.5+s.Transient.BandsOnsetS)
		if d := q.XUM - p.XUM; math.Abs(d-want) > 1e-6 {
			t.Fatalf("tracer %d at %.1f um moved %.6f um, want %.6f", id, p.YUM, d, want)
		}
		n++
	}
	if n < 100 {
		t.Errorf("only %d tracers compared", n)
	}
}

// TestWindowTruth checks the truth of windows during the start-up: before
// the onsets the affine no-slip profile, long after them the steady truth,
// in between slips and band rates equal to the time means of the
// written-out field's wall velocities and local rates.
func TestWindowTruth(t *testing.T) {
	s := startup(t)
	h := s.GapUM()
	st := s.Program()[0]
	early, err := s.WindowTruth(0.5, 0.65)
	if err != nil {
		t.Fatal(err)
	}
	if early.Verdict != "homogeneous" || math.Abs(float64(early.BulkRatePerS)-1) > 1e-12 || len(early.Bands) != 1 {
		t.Errorf("before the onsets: verdict %s, bulk rate %g, %d bands; want homogeneous at 1/s in one band",
			early.Verdict, early.BulkRatePerS, len(early.Bands))
	}
	// 20 time constants after the onsets, within 1e-8 of the steady truth.
	s.Motion[0].EndS = 12
	steady := s.Truth().Summary.ShearPhases[0]
	late, err := s.WindowTruth(11, 12)
	if err != nil {
		t.Fatal(err)
	}
	for _, c := range [][2]float64{{float64(late.SlipStationaryUMPerS), float64(steady.SlipStationaryUMPerS)},
		{float64(late.SlipMovingUMPerS), float64(steady.SlipMovingUMPerS)}, {float64(late.BulkRatePerS), float64(steady.BulkRatePerS)},
		{float64(late.Bands[0].RatePerS), float64(steady.Bands[0].RatePerS)}} {
		if math.Abs(c[0]-c[1]) > 1e-8*st.WallSpeedUMPerS {
			t.Errorf("late window %g, steady %g", c[0], c[1])
		}
	}
	s.Motion[0].EndS = 2
	mid, err := s.WindowTruth(0.8, 1.0)
	if err != nil {
		t.Fatal(err)
	}
	kinks := []float64{0.5 + s.Transient.SlipOnsetS, 0.5 + s.Transient.BandsOnsetS}
	slipS := simpson2(func(tS float64) float64 { return fieldUMPerS(s, 0, tS) }, 0.8, 1.0, 400, kinks...)
	slipM := st.WallSpeedUMPerS - simpson2(func(tS float64) float64 { return fieldUMPerS(s, h, tS) }, 0.8, 1.0, 400, kinks...)
	// The local rate inside each band, by a central difference of the
	// (linear) field there.
	rate := func(y float64) float64 {
		return simpson2(func(tS float64) float64 { return (fieldUMPerS(s, y+1, tS) - fieldUMPerS(s, y-1, tS)) / 2 }, 0.8, 1.0, 400, kinks...)
	}
	for _, c := range []struct {
		name      string
		got, want float64
	}{
		{"stationary slip", float64(mid.SlipStationaryUMPerS), slipS},
		{"moving slip", float64(mid.SlipMovingUMPerS), slipM},
		{"lower band rate", float64(mid.Bands[0].RatePerS), rate(100)},
		{"upper band rate", float64(mid.Bands[1].RatePerS), rate(600)},
	} {
		if math.Abs(c.got-c.want) > 1e-7*math.Max(1, math.Abs(c.want)) {
			t.Errorf("window 0.8-1.0 s: %s %.8g, want %.8g", c.name, c.got, c.want)
		}
	}
	if _, err := s.WindowTruth(1.9, 2.1); err == nil {
		t.Error("a window across the step's end gave no error")
	}
	steps := s.Steps()
	if len(steps) != 1 {
		t.Fatalf("%d steps", len(steps))
	}
	if got := steps[0]; float64(got.InhomogeneityOnsetS) != 0.2 || got.InhomogeneityFirst == nil ||
		*got.InhomogeneityFirst != "bands" || math.Abs(float64(got.InhomogeneityOnsetStrain)-0.2) > 1e-12 {
		t.Errorf("step truth %+v: want the bands first at 0.2 s, strain 0.2", got)
	}
	s.Profile = Profile{}
	if got := s.Steps()[0]; got.InhomogeneityOnsetS.Known() || got.InhomogeneityFirst != nil {
		t.Errorf("homogeneous start-up: onset %v, first %v; want null", got.InhomogeneityOnsetS, got.InhomogeneityFirst)
	}
}

// TestNominalStrain checks the nominal strain of a three-step program
// against the rates times the times spent, added by hand.
func TestNominalStrain(t *testing.T) {
	s := mustBuiltin(t, "homogeneous", 1)
	s.Motion = []experiment.Segment{{StartS: 0.5, EndS: 1, RatePerS: ptr(0.5)},
		{StartS: 1, EndS: 1.5, RatePerS: ptr(2)}, {StartS: 2, EndS: 2.5, RatePerS: ptr(1)}}
	for _, c := range [][2]float64{{0.4, 0}, {0.75, 0.125}, {1.25, 0.25 + 0.5}, {1.75, 0.25 + 1}, {2.2, 1.25 + 0.2}, {2.9, 1.75}} {
		if got := s.NominalStrain(c[0]); math.Abs(got-c[1]) > 1e-12 {
			t.Errorf("strain at %g s: %g, want %g", c[0], got, c[1])
		}
	}
}

// TestStressModel checks the stress against its definition: a maximum
// found by scanning a fine grid lies at the truth's time and strain, with
// the stated overshoot, and the stress settles to viscosity x rate.
func TestStressModel(t *testing.T) {
	for _, c := range []struct {
		rate, peakStrain, overshoot float64
	}{{1, 2.2, 0.4}, {3, 1.5, 0.25}, {0.5, 2.5, 0.6}} {
		s := mustBuiltin(t, "homogeneous", 1)
		// Sixty times the time of the maximum: the envelope of the response
		// falls by the overshoot ratio in each such time, to below 1e-12.
		end := 0.5 + 60*c.peakStrain/c.rate
		s.Motion = []experiment.Segment{{StartS: 0.5, EndS: end, RatePerS: ptr(c.rate)}}
		s.Frames = int(end*s.FPS) + 100
		s.Stress = StressModel{ViscosityPaS: 800, PeakStrain: c.peakStrain, Overshoot: c.overshoot}
		const dt = 1e-4
		best, bestT := math.Inf(-1), 0.0
		for tS := 0.5; tS < 0.5+3*c.peakStrain/c.rate; tS += dt {
			if v := s.StressPa(tS); v > best {
				best, bestT = v, tS
			}
		}
		st := s.Steps()[0]
		steady := 800 * c.rate
		if math.Abs(bestT-float64(st.StressPeakS)) > 2*dt || math.Abs(float64(st.StressPeakStrain)-c.peakStrain) > 1e-9 {
			t.Errorf("rate %g: maximum at %.5f s by scan, truth %.5f s (strain %g)", c.rate, bestT, st.StressPeakS, st.StressPeakStrain)
		}
		if math.Abs(best/steady-1-c.overshoot) > 1e-6 || math.Abs(float64(st.StressPeakPa)-best) > 1e-6*steady {
			t.Errorf("rate %g: maximum %.4f Pa, truth %.4f, steady %.1f Pa: overshoot %.5f, want %g",
				c.rate, best, st.StressPeakPa, steady, best/steady-1, c.overshoot)
		}
		if v := s.StressPa(end - 0.01); math.Abs(v/steady-1) > 1e-9 {
			t.Errorf("rate %g: stress %.4f Pa at the step's end, want the steady %.1f", c.rate, v, steady)
		}
		if v := s.StressPa(end + 5*c.peakStrain/c.rate); !(v > 0 && v < steady*0.2) {
			t.Errorf("rate %g: stress %.4f Pa after the stop, want it relaxing towards 0 from %.1f", c.rate, v, steady)
		}
	}
}

// TestRheometerLog writes the log of a three-step start-up on a cone and
// plate, reads the plain variant with the project's log reader and checks
// the steps within one sample, checks the torque column against the
// cone-plate relation M = 2 pi R^3 tau / 3 (Macosko 1994, Rheology, ch. 5,
// from memory), and reads the decimal-comma, tab and unit-header variants
// by hand.
func TestRheometerLog(t *testing.T) {
	s := mustBuiltin(t, "homogeneous", 1)
	s.Geometry = geometry.Geometry{Kind: geometry.ConePlate, RadiusMM: 20, ConeAngleDeg: 2.2906} // gap 800 um
	s.Motion = []experiment.Segment{{StartS: 0.4, EndS: 1.2, RatePerS: ptr(0.5)},
		{StartS: 1.2, EndS: 2, RatePerS: ptr(2)}, {StartS: 2, EndS: 2.6, RatePerS: ptr(1)}}
	s.Stress = StressModel{ViscosityPaS: 500}
	const hz = 50.0
	s.Log = RheometerLog{RateHz: hz, LeadS: 0.3, ClockOffsetS: 12.5}
	var plain bytes.Buffer
	if err := s.WriteLog(&plain); err != nil {
		t.Fatal(err)
	}
	lines := strings.Split(strings.TrimSpace(plain.String()), "\n")
	if lines[0] != "time,angle,strain,rate,torque,stress" {
		t.Fatalf("header %q", lines[0])
	}
	rl, err := rheolog.Read(strings.NewReader(plain.String()), rheolog.Spec{Time: "time", Motion: "strain", Kind: rheolog.Strain, OffsetS: -12.5})
	if err != nil {
		t.Fatal(err)
	}
	prog, err := rl.Program(s.Geometry)
	if err != nil {
		t.Fatal(err)
	}
	want := s.Program()
	if len(prog) != len(want) {
		t.Fatalf("the reader finds %d steps in the log, want %d: %+v", len(prog), len(want), prog)
	}
	for i := range prog {
		if math.Abs(prog[i].StartS-want[i].StartS) > 1/hz || math.Abs(prog[i].EndS-want[i].EndS) > 1/hz ||
			math.Abs(prog[i].RatePerS-want[i].RatePerS) > 0.02*want[i].RatePerS {
			t.Errorf("step %d read as %.3f-%.3f s at %.3f/s, want %.3f-%.3f s at %.3f/s", i,
				prog[i].StartS, prog[i].EndS, prog[i].RatePerS, want[i].StartS, want[i].EndS, want[i].RatePerS)
		}
	}
	r := 20e-3
	cone := 2 * math.Pi * r * r * r / 3
	rr := s.Geometry.RotatingRadiusUM()
	for _, l := range lines[1:] {
		f := parseLogLine(t, l, ",", false)
		if math.Abs(f[4]-cone*f[5]) > 1e-9*max(1, math.Abs(f[4])) {
			t.Fatalf("line %q: torque %g N m, want 2 pi R^3 tau / 3 = %g", l, f[4], cone*f[5])
		}
		tv := f[0] - 12.5
		if math.Abs(f[2]-s.NominalStrain(tv)) > 1e-9 || math.Abs(f[1]-s.NominalStrain(tv)*s.GapUM()/rr) > 1e-9 {
			t.Fatalf("line %q: strain %g and angle %g rad at %g s, want %g and strain x gap / radius", l, f[2], f[1], tv, s.NominalStrain(tv))
		}
	}
	if first := parseLogLine(t, lines[1], ",", false)[0]; math.Abs(first-(12.5-0.3)) > 1e-9 {
		t.Errorf("first log time %g, want the clock offset minus the lead, %g", first, 12.5-0.3)
	}
	for _, c := range []struct {
		sep    string
		comma  bool
		units  bool
		header string
	}{
		{";", true, false, "time;angle;strain;rate;torque;stress"},
		{"\t", false, true, "time [s]\tangle [rad]\tstrain [1]\trate [1/s]\ttorque [mN m]\tstress [Pa]"},
		{";", true, true, "time [s];angle [rad];strain [1];rate [1/s];torque [mN m];stress [Pa]"},
	} {
		v := *s
		v.Log.Separator, v.Log.DecimalComma, v.Log.Units = c.sep, c.comma, c.units
		var b bytes.Buffer
		if err := v.WriteLog(&b); err != nil {
			t.Fatal(err)
		}
		ls := strings.Split(strings.TrimSpace(b.String()), "\n")
		if ls[0] != c.header || len(ls) != len(lines) {
			t.Errorf("variant %+v: header %q, %d lines; want %q, %d", c, ls[0], len(ls), c.header, len(lines))
			continue
		}
		if c.comma && !strings.Contains(b.String(), ",") {
			t.Errorf("variant %+v: no decimal comma", c)
		}
		for i := 1; i < len(ls); i++ {
			got, ref := parseLogLine(t, ls[i], c.sep, c.comma), parseLogLine(t, lines[i], ",", false)
			for k := range got {
				want := ref[k]
				if c.units && k == 4 {
					want *= 1000 // mN m
				}
				if math.Abs(got[k]-want) > 1e-9*max(1, math.Abs(want)) {
					t.Fatalf("variant %+v, line %d, column %d: %g, want %g", c, i, k, got[k], want)
				}
			}
		}
	}
	bad := *s
	bad.Log.DecimalComma = true
	if err := bad.Validate(); err == nil || !strings.Contains(err.Error(), "decimal commas") {
		t.Errorf("decimal commas with comma separators: %v", err)
	}
}

func parseLogLine(t *testing.T, l, sep string, comma bool) []float64 {
	t.Helper()
	var out []float64
	for _, f := range strings.Split(l, sep) {
		if comma {
			f = strings.Replace(f, ",", ".", 1)
		}
		v, err := strconv.ParseFloat(f, 64)
		if err != nil {
			t.Fatalf("log line %q: %v", l, err)
		}
		out = append(out, v)
	}
	return out
}
