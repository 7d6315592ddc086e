package synth

import (
	"math"
	"testing"

	"gaptrace/calib/geometry"
	"gaptrace/calib/jsonnum"
)

// truthTol is the relative tolerance of the truth's arithmetic checks.
const truthTol = 1e-12

func near(a jsonnum.Num, b float64) bool {
	return math.Abs(float64(a)-b) <= truthTol*max(1, math.Abs(b))
}

// TestTruthConsistent checks, for every built-in scenario, that the truth's
// fields agree with each other by the contract's definitions: slip fraction
// (V - bulk*H)/V equal to the two slips over V, bands tiling the gap with
// rate x width summing to bulk x H, Navier slip lengths v_s/bulk, the
// verdicts, and phases tiling the recording.
func TestTruthConsistent(t *testing.T) {
	for _, n := range List() {
		t.Run(n.Name, func(t *testing.T) {
			s := mustBuiltin(t, n.Name, 1)
			tr := s.Truth()
			sum := tr.Summary
			h := s.GapUM()
			if len(tr.JitterPx) != s.Frames {
				t.Errorf("%d jitter entries for %d frames", len(tr.JitterPx), s.Frames)
			}
			if sum.Calibration.GapUM != h || sum.Input.Frames != s.Frames {
				t.Errorf("calibration gap %g, frames %d", sum.Calibration.GapUM, sum.Input.Frames)
			}
			end := 0.0
			for _, p := range sum.Phases {
				if math.Abs(p.StartS-end) > truthTol {
					t.Errorf("phase %+v does not start where the last ended (%g)", p, end)
				}
				end = p.EndS
			}
			if math.Abs(end-s.DurationS()) > truthTol {
				t.Errorf("phases end at %g s, the recording at %g s", end, s.DurationS())
			}
			if len(sum.ShearPhases) != len(s.Motion) {
				t.Fatalf("%d shear phases for %d motion steps", len(sum.ShearPhases), len(s.Motion))
			}
			for _, sp := range sum.ShearPhases {
				v := float64(sp.WallSpeedUMPerS)
				bulk := float64(sp.BulkRatePerS)
				ss, sm := float64(sp.SlipStationaryUMPerS), float64(sp.SlipMovingUMPerS)
				if !near(sp.SlipFraction, (v-bulk*h)/v) || !near(sp.SlipFraction, (ss+sm)/v) {
					t.Errorf("slip fraction %g; (V - bulk H)/V = %g; slips/V = %g", sp.SlipFraction, (v-bulk*h)/v, (ss+sm)/v)
				}
				// Navier: slip over the rate of the band at the wall.
				r0, r1 := bulk, bulk
				if n := len(sp.Bands); n > 0 && s.Geometry.Kind != geometry.Couette {
					r0, r1 = float64(sp.Bands[0].RatePerS), float64(sp.Bands[n-1].RatePerS)
				}
				if bulk != 0 && (!near(sp.SlipLengthStationaryUM, ss/r0) || !near(sp.SlipLengthMovingUM, sm/r1)) {
					t.Errorf("slip lengths %g, %g; want %g, %g", sp.SlipLengthStationaryUM, sp.SlipLengthMovingUM, ss/r0, sm/r1)
				}
				from, integral := 0.0, 0.0
				for _, b := range sp.Bands {
					if !near(b.FromUM, from) {
						t.Errorf("band %+v does not start at %g", b, from)
					}
					integral += float64(b.RatePerS) * float64(b.ToUM-b.FromUM)
					from = float64(b.ToUM)
				}
				if from != h || math.Abs(integral-bulk*h) > truthTol*v {
					t.Errorf("bands end at %g (gap %g) and shear %g um/s in all, bulk x H = %g", from, h, integral, bulk*h)
				}
				if sp.Banded != (len(sp.Bands) > 1) || sp.WallSlip != (ss != 0 || sm != 0) {
					t.Errorf("banded %v with %d bands, wall_slip %v with slips %g, %g", sp.Banded, len(sp.Bands), sp.WallSlip, ss, sm)
				}
				// The verdict words of the interface contract.
				want := map[[2]bool]string{{false, false}: "homogeneous", {true, false}: "wall_slip",
					{false, true}: "banded", {true, true}: "wall_slip+banded"}[[2]bool{sp.WallSlip, sp.Banded}]
				if sp.Verdict != want {
					t.Errorf("verdict %q, want %q", sp.Verdict, want)
				}
			}
			a := sum.AfterStop
			if a == nil {
				t.Fatal("no after-stop truth")
			}
			if (a.Verdict == "moving") != s.Cessation.Moves(h) || (a.Mode == nil) != (a.Verdict == "quiescent") {
				t.Errorf("after stop: verdict %q, mode %v for cessation %+v", a.Verdict, a.Mode, s.Cessation)
			}
		})
	}
}

// TestTruthValues checks the truth of three scenarios against values worked
// out by hand from their descriptions.
func TestTruthValues(t *testing.T) {
	// slip: V = 1/s x 800 um; fluid at 0.15 V at the stationary wall and at
	// 0.75 V at the moving one; bulk rate (0.75 - 0.15) V / H = 0.6/s.
	sp := mustBuiltin(t, "slip", 1).Truth().Summary.ShearPhases[0]
	for _, c := range []struct {
		name string
		got  jsonnum.Num
		want float64
	}{
		{"wall speed", sp.WallSpeedUMPerS, 800}, {"nominal rate", sp.NominalRatePerS, 1},
		{"stationary slip", sp.SlipStationaryUMPerS, 120}, {"moving slip", sp.SlipMovingUMPerS, 200},
		{"bulk rate", sp.BulkRatePerS, 0.6}, {"slip fraction", sp.SlipFraction, 0.4},
		{"slip length stationary", sp.SlipLengthStationaryUM, 200}, {"slip length moving", sp.SlipLengthMovingUM, 200.0 / 0.6},
	} {
		if !near(c.got, c.want) {
			t.Errorf("slip: %s = %g, want %g", c.name, c.got, c.want)
		}
	}
	if sp.Verdict != "wall_slip" {
		t.Errorf("slip: verdict %q", sp.Verdict)
	}

	// step-plane: stop at 0.5 s, last frame at 399/200 s, so 1.495 s after
	// the stop; g = 0.05 (1 - exp(-(1.495 - 0.1)/0.2)); plane at 0.6 x 800;
	// the larger part (480 um) moves by g x 480.
	a := mustBuiltin(t, "step-plane", 1).Truth().Summary.AfterStop
	g := 0.05 * (1 - math.Exp(-(1.495-0.1)/0.2))
	if a.Verdict != "moving" || a.Mode == nil || *a.Mode != "bulk" || !near(a.PlaneUM, 480) ||
		!near(a.RecoveredStrain, g) || !near(a.OnsetAfterStopS, 0.1) || !near(a.MaxDisplacementUM, g*480) || a.StopS != 0.5 {
		t.Errorf("step-plane after stop: %+v (mode %v), want bulk plane at 480 um, strain %g, onset 0.1 s", a, a.Mode, g)
	}

	// couette: the wall speed is the representative rate's (geometry.WallSpeed),
	// the bulk rate V/H; the profile is the curved Newtonian one.
	s := mustBuiltin(t, "couette", 1)
	sc := s.Truth().Summary.ShearPhases[0]
	v := s.Geometry.WallSpeed(1)
	if !near(sc.WallSpeedUMPerS, v) || !near(sc.BulkRatePerS, v/1000) || sc.Verdict != "homogeneous" {
		t.Errorf("couette: %+v, want wall speed %g, bulk rate %g", sc, v, v/1000)
	}
	if mid, lin := s.VelocityFraction(500), 0.5; mid == lin || math.Abs(mid-s.Geometry.Reference(500, 1)) > truthTol {
		t.Errorf("couette: v/V at mid-gap %g, want the concentric-cylinder value %g (not linear)", mid, s.Geometry.Reference(500, 1))
	}
	if s.Geometry.Kind != geometry.Couette {
		t.Errorf("couette scenario has geometry %q", s.Geometry.Kind)
	}
}

// TestTruthAtRest checks the truth of a recording without motion: one rest
// phase, no shear phase, no after-stop part, and tracers that stay put.
func TestTruthAtRest(t *testing.T) {
	s := mustBuiltin(t, "homogeneous", 1)
	s.Motion = nil
	sum := s.Truth().Summary
	if len(sum.Phases) != 1 || sum.Phases[0].Kind != PhaseRest || len(sum.ShearPhases) != 0 || sum.AfterStop != nil {
		t.Errorf("at rest: phases %+v, %d shear phases, after stop %+v", sum.Phases, len(sum.ShearPhases), sum.AfterStop)
	}
	a, b := byID(s.Positions(0)), byID(s.Positions(s.Frames-1))
	for id, p := range a {
		if q, ok := b[id]; ok && (q.XPx != p.XPx || q.YPx != p.YPx) {
			t.Fatalf("tracer %d moved at rest from (%g, %g) to (%g, %g)", id, p.XPx, p.YPx, q.XPx, q.YPx)
		}
	}
}
