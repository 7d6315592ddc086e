package wallstress_test

import (
	"bytes"
	"fmt"
	"math"
	"strings"
	"testing"

	"gaptrace/calib/geometry"
	"gaptrace/calib/rheolog"
	"gaptrace/profile/wallstress"
	"gaptrace/track/synth"
)

// TestConePlateLog renders the three-step start-up's rheometer log
// (strain and torque in mN m, decimal commas, semicolons, units in the
// headers, the log's clock 3.2 s ahead), reads it and checks, for each
// step's second half, the mean wall stress against the renderer's stress
// model through the cone-plate relation tau = 3M / (2 pi R^3) (Macosko,
// Rheology, 1994, ch. 5, from memory) written out here, and each step's
// stress maximum against the renderer's truth within one log sample.
func TestConePlateLog(t *testing.T) {
	s, err := synth.Builtin("startup-3step", 1)
	if err != nil {
		t.Fatal(err)
	}
	var b bytes.Buffer
	if err := s.WriteLog(&b); err != nil {
		t.Fatal(err)
	}
	l, err := rheolog.Read(&b, rheolog.Spec{OffsetS: -s.Log.ClockOffsetS})
	if err != nil {
		t.Fatal(err)
	}
	if !l.DecimalComma || l.Separator != ";" || l.Kind != rheolog.Strain || l.TorqueHeader != "torque [mN m]" {
		t.Fatalf("read as %+v", l)
	}
	prog, err := l.Program(s.Geometry)
	if err != nil {
		t.Fatal(err)
	}
	want := s.Program()
	if len(prog) != len(want) {
		t.Fatalf("%d steps from the log, want %d", len(prog), len(want))
	}
	dt := 1 / s.Log.RateHz
	for i := range want {
		if math.Abs(prog[i].StartS-want[i].StartS) > dt || math.Abs(prog[i].EndS-want[i].EndS) > dt {
			t.Errorf("step %d from the log %.4f-%.4f s, want %.4f-%.4f s", i+1, prog[i].StartS, prog[i].EndS, want[i].StartS, want[i].EndS)
		}
	}
	var ws []wallstress.Window
	for _, st := range want {
		ws = append(ws, wallstress.Window{T0S: (st.StartS + st.EndS) / 2, T1S: st.EndS, RatePerS: st.RatePerS})
	}
	c, warn := wallstress.NewConverter(l, s.Geometry, ws)
	if c == nil || len(warn) > 0 || c.Source != wallstress.SourceCone {
		t.Fatalf("converter %+v, warnings %v", c, warn)
	}
	r := s.Geometry.RadiusMM * 1e-3
	perNM := 3 / (2 * math.Pi * r * r * r)
	truth := s.Truth()
	series := c.Series(l)
	for i, w := range ws {
		st, ok := c.Mean(l, w)
		if !ok {
			t.Fatalf("step %d: no mean", i+1)
		}
		var model, fromTorque float64
		i0, i1 := l.Window(w.T0S, w.T1S)
		for k := i0; k < i1; k++ {
			model += s.StressPa(l.TimeS[k])
			fromTorque += l.TorqueNM[k] * perNM
		}
		model /= float64(i1 - i0)
		fromTorque /= float64(i1 - i0)
		if math.Abs(st.Pa-fromTorque) > 1e-9*math.Abs(fromTorque) {
			t.Errorf("step %d: wall stress %.6g Pa, the formula gives %.6g Pa", i+1, st.Pa, fromTorque)
		}
		// The log's noise (0.2 % of the largest stress per sample) is all
		// that separates the mean from the model's.
		if math.Abs(st.Pa-model) > 3*st.ErrPa {
			t.Errorf("step %d: wall stress %.2f ± %.2f Pa, the model's mean %.2f Pa", i+1, st.Pa, st.ErrPa, model)
		}
		pk, ok := wallstress.FindPeak(l, series, prog[i].StartS, prog[i].EndS, prog[i].RatePerS)
		tr := truth.Steps[i]
		if ok != tr.StressPeakS.Known() {
			t.Errorf("step %d: stress peak found %v (%+v), truth %v", i+1, ok, pk, tr.StressPeakS)
			continue
		}
		if !ok {
			continue
		}
		if got, wantS := pk.AfterStartS, float64(tr.StressPeakS)-tr.StartS; math.Abs(got-wantS) > dt {
			t.Errorf("step %d: stress peak %.4f s after the start, truth %.4f s", i+1, got, wantS)
		}
		if math.Abs(pk.Strain-float64(tr.StressPeakStrain)) > math.Abs(prog[i].RatePerS)*dt {
			t.Errorf("step %d: stress peak at strain %.4f, truth %.4f", i+1, pk.Strain, float64(tr.StressPeakStrain))
		}
		t.Logf("step %d: peak %.4f s after the start (truth %.4f), strain %.3f (truth %.3f), %.1f Pa (truth %.1f)",
			i+1, pk.AfterStartS, float64(tr.StressPeakS)-tr.StartS, pk.Strain, float64(tr.StressPeakStrain), pk.Pa, float64(tr.StressPeakPa))
	}
}

// powerLawLog writes a made-up log of two steady steps of a parallel
// plate on a shear-thinning sample whose torque goes as the rim rate to
// the power n.
func powerLawLog(n float64, rates []float64) string {
	var b strings.Builder
	b.WriteString("time [s];rate [1/s];torque [mN m]\n")
	for k := 0; k <= 400; k++ {
		tS := float64(k) / 100
		step := int(tS)
		rate := 0.0
		if step >= 1 && step <= len(rates) {
			rate = rates[step-1]
		}
		m := 0.0
		if rate > 0 {
			m = 2 * math.Pow(rate, n)
		}
		fmt.Fprintf(&b, "%s;%g;%g\n", strings.Replace(fmt.Sprint(tS), ".", ",", 1), rate, m)
	}
	return b.String()
}

// TestParallelPlate checks the Weissenberg–Rabinowitsch correction at the
// rim, tau_R = M / (2 pi R^3) (3 + d ln M / d ln rate_R) (Macosko, Rheology,
// 1994, eq. 5.3.x, from memory), on a power-law torque of exponent 0.4,
// and the apparent 2M / (pi R^3) with one rate only.
func TestParallelPlate(t *testing.T) {
	g := geometry.Geometry{Kind: geometry.ParallelPlate, RadiusMM: 12.5, GapUM: 1000}
	r := 12.5e-3
	const n = 0.4
	l, err := rheolog.Read(strings.NewReader(powerLawLog(n, []float64{1, 4})), rheolog.Spec{})
	if err != nil {
		t.Fatal(err)
	}
	ws := []wallstress.Window{{T0S: 1.5, T1S: 1.95, RatePerS: 1}, {T0S: 2.5, T1S: 2.95, RatePerS: 4}}
	c, _ := wallstress.NewConverter(l, g, ws)
	if c.Source != wallstress.SourcePlateWR || math.Abs(c.Slope-n) > 1e-9 {
		t.Fatalf("source %q, slope %g, want the corrected value with slope %g", c.Source, c.Slope, n)
	}
	st, _ := c.Mean(l, ws[1])
	m := 2e-3 * math.Pow(4, n)
	if want := m / (2 * math.Pi * r * r * r) * (3 + n); math.Abs(st.Pa/want-1) > 1e-9 {
		t.Errorf("corrected rim stress %g Pa, want %g", st.Pa, want)
	}
	c1, _ := wallstress.NewConverter(l, g, ws[:1])
	st1, _ := c1.Mean(l, ws[0])
	if want := 2 * 2e-3 / (math.Pi * r * r * r); c1.Source != wallstress.SourcePlateApparent || math.Abs(st1.Pa/want-1) > 1e-9 {
		t.Errorf("one rate: %q, %g Pa, want the apparent %g Pa", c1.Source, st1.Pa, want)
	}
}

// TestCouette checks tau = M / (2 pi r^2 L) at each cylinder (Macosko,
// Rheology, 1994, ch. 5, from memory), the inner one rotating, and that a
// cell without its length has no stress.
func TestCouette(t *testing.T) {
	g := geometry.Geometry{Kind: geometry.Couette, InnerRadiusMM: 10, OuterRadiusMM: 11, LengthMM: 30}
	l, err := rheolog.Read(strings.NewReader(powerLawLog(1, []float64{2})), rheolog.Spec{})
	if err != nil {
		t.Fatal(err)
	}
	w := wallstress.Window{T0S: 1.5, T1S: 1.95, RatePerS: 2}
	c, _ := wallstress.NewConverter(l, g, []wallstress.Window{w})
	st, _ := c.Mean(l, w)
	m, length := 4e-3, 30e-3
	in, out := m/(2*math.Pi*1e-4*length), m/(2*math.Pi*1.21e-4*length)
	if math.Abs(st.Pa/in-1) > 1e-9 || math.Abs(st.OuterPa/out-1) > 1e-9 || st.MovingPa != st.Pa || st.StationaryPa != st.OuterPa {
		t.Errorf("stresses %+v, want %g Pa inside (moving) and %g Pa outside (stationary)", st, in, out)
	}
	g.LengthMM = 0
	if c, warn := wallstress.NewConverter(l, g, nil); c != nil || len(warn) != 1 || !strings.Contains(warn[0], "length_mm") {
		t.Errorf("no length: %v, %v", c, warn)
	}
}

// TestSlipLaw fits made-up points of v = 0.02 sigma^1.6 (a power-law slip
// law) and of Navier's v = 0.5 sigma.
func TestSlipLaw(t *testing.T) {
	var pl, nav []wallstress.Point
	for _, s := range []float64{50, 100, 200, 400} {
		v := 0.02 * math.Pow(s, 1.6)
		pl = append(pl, wallstress.Point{StressPa: s, StressErrPa: 0.01 * s, SlipUMPerS: v, SlipErrUMPerS: 0.02 * v, Significant: true})
		nav = append(nav, wallstress.Point{StressPa: s, StressErrPa: 1, SlipUMPerS: 0.5 * s, SlipErrUMPerS: 1, Significant: true})
	}
	law, ok := wallstress.FitSlipLaw(pl)
	if !ok || math.Abs(law.PowerLawExponent-1.6) > 1e-9 || math.Abs(law.PowerLawCoefficient/0.02-1) > 1e-9 || law.PowerLawPhases != 4 {
		t.Errorf("power law: %+v", law)
	}
	law, ok = wallstress.FitSlipLaw(nav)
	if !ok || math.Abs(law.NavierUMPerSPerPa-0.5) > 1e-12 || !(law.NavierErrUMPerSPerPa > 0) || math.Abs(law.PowerLawExponent-1) > 1e-9 {
		t.Errorf("Navier: %+v", law)
	}
	for i := range nav {
		nav[i].Significant = false
	}
	if _, ok := wallstress.FitSlipLaw(nav); ok {
		t.Error("a slip law fitted to a wall without significant slip")
	}
}
