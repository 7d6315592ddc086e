package synth

import (
	"math"
	"strings"
	"testing"
)

// flowTol is the tolerance of exact piecewise-linear arithmetic in the flow
// model: a few ulps of numbers of order 1.
const flowTol = 1e-12

// limitStep is the offset used to take left and right limits of a
// piecewise-linear function; its slopes are below 10, so limits differ from
// the value at the point by less than 1e-8.
const limitStep = 1e-9

func TestProfileVelocity(t *testing.T) {
	for _, c := range []struct {
		name  string
		p     Profile
		rates []float64 // local rate of each band in V/H, worked out by hand
	}{
		{"linear", Profile{}, []float64{1}},
		{"slip", Profile{SlipStationary: 0.15, SlipMoving: 0.25}, []float64{0.6}},
		// weights 3 and 0.5 over widths 0.35 and 0.65: integral 1.375
		{"banded2", Profile{Bands: []Band{{0.35, 3}, {1, 0.5}}}, []float64{3 / 1.375, 0.5 / 1.375}},
		// sheared 0.8, weights 0.5, 3, 0.5 over 0.3, 0.3, 0.4: integral 0.15 + 0.9 + 0.2 = 1.25
		{"banded3+slip", Profile{SlipStationary: 0.05, SlipMoving: 0.15, Bands: []Band{{0.3, 0.5}, {0.6, 3}, {1, 0.5}}},
			[]float64{0.8 * 0.5 / 1.25, 0.8 * 3 / 1.25, 0.8 * 0.5 / 1.25}},
	} {
		t.Run(c.name, func(t *testing.T) {
			p := c.p
			if err := p.Validate(); err != nil {
				t.Fatal(err)
			}
			if got := p.Velocity(0); math.Abs(got-p.SlipStationary) > flowTol {
				t.Errorf("v(0)/V = %g, want the stationary slip %g", got, p.SlipStationary)
			}
			if got := p.Velocity(1); math.Abs(got-(1-p.SlipMoving)) > flowTol {
				t.Errorf("v(H)/V = %g, want 1 - %g", got, p.SlipMoving)
			}
			if got := p.BandRates(); len(got) != len(c.rates) {
				t.Fatalf("BandRates %v, want %v", got, c.rates)
			}
			tops := []float64{1}
			if len(p.Bands) > 0 {
				tops = nil
				for _, b := range p.Bands {
					tops = append(tops, b.ToFrac)
				}
			}
			from := 0.0
			for i, top := range tops {
				// Slope inside the band, by a finite difference over its middle half.
				a, b := from+(top-from)/4, top-(top-from)/4
				slope := (p.Velocity(b) - p.Velocity(a)) / (b - a)
				if math.Abs(slope-c.rates[i]) > 1e-9 {
					t.Errorf("band %d: slope %g, want %g", i, slope, c.rates[i])
				}
				if r := p.BandRates()[i]; math.Abs(r-c.rates[i]) > flowTol {
					t.Errorf("band %d: BandRates %g, want %g", i, r, c.rates[i])
				}
				// Continuity at the band's top.
				if top < 1 {
					lo, hi := p.Velocity(top-limitStep), p.Velocity(top+limitStep)
					if math.Abs(hi-lo) > 1e-8 {
						t.Errorf("v/V jumps by %g at the band boundary y/H = %g", hi-lo, top)
					}
				}
				from = top
			}
		})
	}
}

func TestProfileValidate(t *testing.T) {
	for _, c := range []struct {
		p    Profile
		want string
	}{
		{Profile{SlipStationary: 0.6, SlipMoving: 0.5}, "exceed"},
		{Profile{Bands: []Band{{0.5, 1}, {0.4, 1}}}, "band 1 ends at y/H = 0.4"},
		{Profile{Bands: []Band{{0.5, 1}}}, "must end at 1"},
		{Profile{Bands: []Band{{0.5, -1}, {1, 1}}}, "rate weight -1"},
		{Profile{Bands: []Band{{0.5, 0}, {1, 0}}}, "weight 0"},
	} {
		err := c.p.Validate()
		if err == nil || !strings.Contains(err.Error(), c.want) {
			t.Errorf("%+v: error %v, want one containing %q", c.p, err, c.want)
		}
	}
}

func TestCessationDisplacement(t *testing.T) {
	const gap, strain, onset, tau = 800.0, 0.05, 0.1, 0.2
	tAfter := onset + tau // progress 1 - 1/e
	g := strain * (1 - math.Exp(-1))
	for _, c := range []struct {
		name     string
		c        Cessation
		jumpAtUM float64
		jump     float64 // dx just above minus dx just below the jump
		atStat   float64 // fluid displacement at y = 0+
		atMoving float64 // at y = H-
	}{
		{"plane", Cessation{Kind: CessationPlane, PlaneFrac: 0.6, RecoveredStrain: strain, OnsetS: onset, TauS: tau},
			480, g * gap, 0, 0},
		{"stationary wall", Cessation{Kind: CessationWall, Wall: WallStationary, RecoveredStrain: strain, OnsetS: onset, TauS: tau},
			0, g * gap, g * gap, 0},
		{"moving wall", Cessation{Kind: CessationWall, Wall: WallMoving, RecoveredStrain: strain, OnsetS: onset, TauS: tau},
			gap, -g * gap, 0, -g * gap},
		{"plane from jump", Cessation{Kind: CessationPlane, PlaneFrac: 0.6, JumpUM: strain * gap, OnsetS: onset, TauS: tau},
			480, g * gap, 0, 0},
	} {
		t.Run(c.name, func(t *testing.T) {
			cs := c.c
			if err := cs.Validate(gap); err != nil {
				t.Fatal(err)
			}
			d := func(y float64) float64 { return cs.Displacement(y, gap, tAfter) }
			if got := d(limitStep); math.Abs(got-c.atStat) > 1e-6 {
				t.Errorf("dx(0+) = %g, want %g", got, c.atStat)
			}
			if got := d(gap - limitStep); math.Abs(got-c.atMoving) > 1e-6 {
				t.Errorf("dx(H-) = %g, want %g", got, c.atMoving)
			}
			if cs.Kind == CessationPlane {
				got := d(c.jumpAtUM+limitStep) - d(c.jumpAtUM-limitStep)
				if math.Abs(got-c.jump) > 1e-6 {
					t.Errorf("jump at the plane %g um: %g, want %g", c.jumpAtUM, got, c.jump)
				}
			}
			// Elsewhere dx is continuous with slope -g: the layers recover
			// the strain uniformly.
			for _, y := range []float64{50, 200, 400, 470, 490, 600, 790} {
				if math.Abs(y-c.jumpAtUM) < 5 {
					continue
				}
				slope := (d(y+1) - d(y-1)) / 2
				if math.Abs(slope+g) > 1e-12 {
					t.Errorf("slope of dx at y = %g um: %g, want %g", y, slope, -g)
				}
			}
			if got := cs.Displacement(400, gap, onset*0.99); got != 0 {
				t.Errorf("dx before the onset = %g, want 0", got)
			}
			if got := cs.Displacement(400, gap, -1); got != 0 {
				t.Errorf("dx before the stop = %g, want 0", got)
			}
		})
	}
	if got := (Cessation{}).Displacement(300, gap, 5); got != 0 {
		t.Errorf("no cessation: dx = %g", got)
	}
	step := Cessation{Kind: CessationWall, Wall: WallMoving, RecoveredStrain: 0.01, OnsetS: 0.5}
	if got := step.Displacement(gap, gap, 0.6); math.Abs(got+0.01*gap) > flowTol {
		t.Errorf("tau 0: dx(H) after the onset = %g, want the full %g", got, -0.01*gap)
	}
}

func TestCessationValidate(t *testing.T) {
	for _, c := range []struct {
		c    Cessation
		want string
	}{
		{Cessation{Kind: "slide"}, `"slide"`},
		{Cessation{Kind: CessationWall, Wall: "left"}, `"left"`},
		{Cessation{Kind: CessationPlane, PlaneFrac: 1.2}, "1.2"},
		{Cessation{Kind: CessationPlane, PlaneFrac: 0.5, RecoveredStrain: 0.05, JumpUM: 30}, "jump 30 um disagrees"},
		{Cessation{Kind: CessationWall, Wall: WallMoving, RecoveredStrain: 0.05, JumpUM: 40}, "jump 40 um disagrees"},
		{Cessation{Kind: CessationPlane, PlaneFrac: 0.5, TauS: -1}, "-1"},
	} {
		err := c.c.Validate(800)
		if err == nil || !strings.Contains(err.Error(), c.want) {
			t.Errorf("%+v: error %v, want one containing %q", c.c, err, c.want)
		}
	}
	ok := Cessation{Kind: CessationWall, Wall: WallMoving, RecoveredStrain: 0.05, JumpUM: -40}
	if err := ok.Validate(800); err != nil {
		t.Errorf("consistent moving-wall jump: %v", err)
	}
}
