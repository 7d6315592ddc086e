package profile

import (
	"math"
	"testing"

	"gaptrace/calib/geometry"
	"gaptrace/profile/summary"
	"gaptrace/track/synth"
)

// The acceptance checks of issue 6 run on synth's true tracer positions
// with localization noise and track breaks added (observe). The truth is the
// scenario's own profile and cessation field.

// seeds is the number of seeds of the repeated checks.
const seeds = 20

// Tolerances of issue 6's acceptance list.
const (
	bulkRateTol      = 0.01  // relative
	homogSlipTol     = 0.005 // of the wall speed
	slipTol          = 0.01  // of the wall speed
	slipFractionTol  = 0.01
	boundaryTol      = 0.03 // of the gap
	bandRateTol      = 0.05 // relative
	planeTol         = 0.03 // of the gap
	onsetFrames      = 2
	recoveredStrainT = 0.1 // relative; not in the list, a sanity bound of our own
)

func wallSpeed(s *synth.Scenario) float64 { return s.Program()[0].WallSpeedUMPerS }

func TestHomogeneousSeeds(t *testing.T) {
	worst := struct{ rate, slipS, slipM float64 }{}
	for seed := range seeds {
		s := plates(int64(seed+1), 0.25, 1.0, 0)
		r := analyze(t, s, uint64(seed+1))
		sp := r.ShearPhases[0]
		v := wallSpeed(s)
		truth := v / s.GapUM()
		dr := math.Abs(float64(sp.BulkRatePerS)/truth - 1)
		ds := math.Abs(float64(sp.SlipStationaryUMPerS)) / v
		dm := math.Abs(float64(sp.SlipMovingUMPerS)) / v
		worst.rate, worst.slipS, worst.slipM = math.Max(worst.rate, dr), math.Max(worst.slipS, ds), math.Max(worst.slipM, dm)
		if dr > bulkRateTol || ds > homogSlipTol || dm > homogSlipTol || sp.Verdict != summary.Homogeneous || sp.Banded {
			t.Errorf("seed %d: bulk rate %.4f (truth %.4f), slips %.3g, %.3g of V, verdict %s, %d bands",
				seed+1, float64(sp.BulkRatePerS), truth, ds, dm, sp.Verdict, len(sp.Bands))
		}
	}
	t.Logf("homogeneous, %d seeds: worst bulk rate error %.2g (tol %g), worst slips %.2g, %.2g of V (tol %g)",
		seeds, worst.rate, bulkRateTol, worst.slipS, worst.slipM, homogSlipTol)
}

func TestSlipBothWalls(t *testing.T) {
	for seed := range 5 {
		s := plates(int64(100+seed), 0.25, 1.0, 0)
		s.Profile = synth.Profile{SlipStationary: 0.15, SlipMoving: 0.25}
		r := analyze(t, s, uint64(100+seed))
		sp := r.ShearPhases[0]
		v := wallSpeed(s)
		ds := float64(sp.SlipStationaryUMPerS)/v - 0.15
		dm := float64(sp.SlipMovingUMPerS)/v - 0.25
		df := float64(sp.SlipFraction) - 0.40
		t.Logf("seed %d: slips %.4f V (truth 0.15), %.4f V (truth 0.25), fraction %.4f (truth 0.40), verdict %s",
			100+seed, float64(sp.SlipStationaryUMPerS)/v, float64(sp.SlipMovingUMPerS)/v, float64(sp.SlipFraction), sp.Verdict)
		if math.Abs(ds) > slipTol || math.Abs(dm) > slipTol || math.Abs(df) > slipFractionTol {
			t.Errorf("seed %d: slip errors %.3g, %.3g of V, slip fraction error %.3g", 100+seed, ds, dm, df)
		}
		if sp.Verdict != summary.WallSlip || sp.Banded {
			t.Errorf("seed %d: verdict %s with %d bands, want wall_slip and one band", 100+seed, sp.Verdict, len(sp.Bands))
		}
	}
}

func TestBands(t *testing.T) {
	cases := []struct {
		name  string
		bands []synth.Band
		slipS float64
	}{
		{"two", []synth.Band{{ToFrac: 0.4, RateWeight: 0.15}, {ToFrac: 1, RateWeight: 1}}, 0},
		{"three", []synth.Band{{ToFrac: 0.3, RateWeight: 1}, {ToFrac: 0.65, RateWeight: 0.1}, {ToFrac: 1, RateWeight: 1}}, 0},
		{"two with slip", []synth.Band{{ToFrac: 0.55, RateWeight: 1}, {ToFrac: 1, RateWeight: 0.2}}, 0.1},
	}
	for _, c := range cases {
		t.Run(c.name, func(t *testing.T) {
			for seed := range 3 {
				s := plates(int64(200+seed), 0.25, 1.0, 0)
				s.Profile = synth.Profile{SlipStationary: c.slipS, Bands: c.bands}
				r := analyze(t, s, uint64(200+seed))
				sp := r.ShearPhases[0]
				v, h := wallSpeed(s), s.GapUM()
				rates := s.Profile.BandRates()
				if len(sp.Bands) != len(c.bands) {
					t.Fatalf("seed %d: %d bands found, want %d: %+v", 200+seed, len(sp.Bands), len(c.bands), sp.Bands)
				}
				for i, b := range sp.Bands {
					want := rates[i] * v / h
					if e := math.Abs(float64(b.RatePerS)/want - 1); e > bandRateTol {
						t.Errorf("seed %d band %d: rate %.4f, truth %.4f (error %.3g)", 200+seed, i, float64(b.RatePerS), want, e)
					}
					if i < len(c.bands)-1 {
						if e := math.Abs(float64(b.ToUM)/h - c.bands[i].ToFrac); e > boundaryTol {
							t.Errorf("seed %d band %d: ends at %.1f um, truth %.1f um (error %.3g of the gap)", 200+seed, i, float64(b.ToUM), c.bands[i].ToFrac*h, e)
						}
					}
				}
				meanRate := (s.Profile.Velocity(1) - s.Profile.Velocity(0)) * v / h
				t.Logf("seed %d: %d bands %v; bulk %.4f (mean rate %.4f), verdict %s", 200+seed, len(sp.Bands), bandList(sp.Bands), float64(sp.BulkRatePerS), meanRate, sp.Verdict)
				if math.Abs(float64(sp.BulkRatePerS)/meanRate-1) > bulkRateTol {
					t.Errorf("seed %d: bulk rate %.4f, mean rate of the sample %.4f", 200+seed, float64(sp.BulkRatePerS), meanRate)
				}
			}
		})
	}
}

func bandList(b []summary.Band) [][3]float64 {
	var o [][3]float64
	for _, x := range b {
		o = append(o, [3]float64{float64(x.FromUM), float64(x.ToUM), float64(x.RatePerS)})
	}
	return o
}

// Newtonian flow in a Couette cell of made-up radii (12 and 12.8 mm, inner
// cylinder rotating): the exact concentric-cylinder profile (Bird, Stewart &
// Lightfoot 2002, Transport Phenomena, example 3.6-3, via geometry.Reference,
// which synth renders) must come out homogeneous, not banded.
func TestCouetteNewtonian(t *testing.T) {
	for seed := range 3 {
		s := plates(int64(300+seed), 0.25, 1.0, 0)
		s.Geometry = geometry.Geometry{Kind: geometry.Couette, InnerRadiusMM: 12, OuterRadiusMM: 12.8}
		// A wide gap for the curvature to matter: 0.8 mm over 12 mm radius.
		r := analyze(t, s, uint64(300+seed))
		sp := r.ShearPhases[0]
		v := wallSpeed(s)
		t.Logf("seed %d: verdict %s, %d bands, bulk %.4f (V/H %.4f), slips %.3g, %.3g of V",
			300+seed, sp.Verdict, len(sp.Bands), float64(sp.BulkRatePerS), v/s.GapUM(),
			float64(sp.SlipStationaryUMPerS)/v, float64(sp.SlipMovingUMPerS)/v)
		if sp.Verdict != summary.Homogeneous || sp.Banded {
			t.Errorf("seed %d: verdict %s with %d bands, want homogeneous", 300+seed, sp.Verdict, len(sp.Bands))
		}
		if e := math.Abs(float64(sp.BulkRatePerS)*s.GapUM()/v - 1); e > bulkRateTol {
			t.Errorf("seed %d: bulk rate %.4f, want V/H %.4f", 300+seed, float64(sp.BulkRatePerS), v/s.GapUM())
		}
	}
}

func TestNoBandsOnSlipOnly(t *testing.T) {
	for seed := range seeds {
		s := plates(int64(400+seed), 0.25, 0.6, 0)
		s.Profile = synth.Profile{SlipStationary: 0.15, SlipMoving: 0.25}
		r := analyze(t, s, uint64(400+seed))
		if sp := r.ShearPhases[0]; sp.Banded {
			t.Errorf("seed %d: slip-only data called banded: %v", 400+seed, bandList(sp.Bands))
		}
	}
}

func TestQuiescentSeeds(t *testing.T) {
	worst := 0.0
	for seed := range seeds {
		s := plates(int64(500+seed), 0.25, 0.5, 1.0)
		r := analyze(t, s, uint64(500+seed))
		a := r.AfterStop
		if a == nil {
			t.Fatalf("seed %d: no after-stop analysis; warnings %v", 500+seed, r.Warnings)
		}
		worst = math.Max(worst, float64(a.MaxDisplacementUM))
		if a.Verdict != summary.Quiescent {
			t.Errorf("seed %d: quiescent sample called %s (mode %v, plane %v, max %.3g um, floor %.3g um)",
				500+seed, a.Verdict, *a.Mode, a.PlaneUM, float64(a.MaxDisplacementUM), float64(a.NoiseFloorUM))
		}
	}
	t.Logf("quiescent, %d seeds: largest layer displacement %.3g um", seeds, worst)
}

func TestFailurePlane(t *testing.T) {
	for seed := range 5 {
		s := plates(int64(600+seed), 0.25, 0.5, 1.0)
		s.Cessation = synth.Cessation{Kind: synth.CessationPlane, PlaneFrac: 0.62, RecoveredStrain: 0.05, OnsetS: 0.1, TauS: 0.05}
		r := analyze(t, s, uint64(600+seed))
		a := r.AfterStop
		if a == nil {
			t.Fatalf("seed %d: no after-stop analysis; warnings %v", 600+seed, r.Warnings)
		}
		if a.Verdict != summary.Moving || a.Mode == nil || *a.Mode != summary.ModeBulk {
			t.Fatalf("seed %d: verdict %s mode %v, want moving bulk", 600+seed, a.Verdict, a.Mode)
		}
		h := s.GapUM()
		dp := math.Abs(float64(a.PlaneUM)-0.62*h) / h
		df := math.Abs(float64(a.OnsetAfterStopS)-0.1) * s.FPS
		ds := math.Abs(float64(a.RecoveredStrain)/0.05 - 1)
		t.Logf("seed %d: plane %.1f um (truth %.1f), onset %.4f s (truth 0.1), recovered %.4f (truth 0.05)",
			600+seed, float64(a.PlaneUM), 0.62*h, float64(a.OnsetAfterStopS), float64(a.RecoveredStrain))
		if dp > planeTol || df > onsetFrames || ds > recoveredStrainT {
			t.Errorf("seed %d: plane error %.3g of the gap, onset error %.2f frames, strain error %.3g", 600+seed, dp, df, ds)
		}
	}
}

func TestSlipAfterCessation(t *testing.T) {
	for _, wall := range []string{synth.WallStationary, synth.WallMoving} {
		s := plates(700, 0.25, 0.5, 1.0)
		s.Cessation = synth.Cessation{Kind: synth.CessationWall, Wall: wall, RecoveredStrain: 0.03, OnsetS: 0.05, TauS: 0.1}
		r := analyze(t, s, 700)
		a := r.AfterStop
		if a == nil || a.Verdict != summary.Moving || a.Mode == nil || *a.Mode != summary.ModeWall {
			t.Fatalf("slip at the %s wall: after stop %+v, want moving, mode wall", wall, a)
		}
		if r.Cessation.Wall != wall {
			t.Errorf("slip at the %s wall found at the %s wall", wall, r.Cessation.Wall)
		}
		t.Logf("slip at the %s wall: mode %s at %s, recovered %.4f (truth 0.03), onset %.4f s (truth 0.05)",
			wall, *a.Mode, r.Cessation.Wall, float64(a.RecoveredStrain), float64(a.OnsetAfterStopS))
	}
}
