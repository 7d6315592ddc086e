package synth

import (
	"fmt"
	"math"
)

// Profile is the steady velocity profile across the gap during a shear
// step, as v/V (fluid speed over the moving wall's speed V) at height y/H
// above the stationary wall (H the gap).
//
// The fluid moves at SlipStationary*V at the stationary wall and at
// (1-SlipMoving)*V at the moving wall; in between it shears in the bands,
// each with a uniform local rate proportional to its RateWeight. With no
// bands the sample shears uniformly.
type Profile struct {
	// SlipStationary is the fluid speed at the stationary wall over V.
	SlipStationary float64
	// SlipMoving is (V - fluid speed at the moving wall) / V.
	SlipMoving float64
	// Bands, from the stationary wall up; nil or empty is one band.
	Bands []Band
}

// Band is one layer of uniform local shear rate, from the previous band's
// upper boundary (or the stationary wall) to ToFrac (y/H). RateWeight is its
// local shear rate relative to the other bands; only ratios matter.
type Band struct {
	ToFrac     float64
	RateWeight float64
}

// Validate reports the first problem of the profile, naming the field and
// its value.
func (p Profile) Validate() error {
	if math.IsNaN(p.SlipStationary) || math.IsNaN(p.SlipMoving) {
		return fmt.Errorf("synth: profile slips %g, %g are not numbers", p.SlipStationary, p.SlipMoving)
	}
	if p.SlipStationary+p.SlipMoving > 1 {
		return fmt.Errorf("synth: profile slips %g + %g exceed the wall speed", p.SlipStationary, p.SlipMoving)
	}
	prev := 0.0
	for i, b := range p.Bands {
		if !(b.ToFrac > prev) || b.ToFrac > 1 {
			return fmt.Errorf("synth: band %d ends at y/H = %g, not above %g and at most 1", i, b.ToFrac, prev)
		}
		if !(b.RateWeight >= 0) {
			return fmt.Errorf("synth: band %d has rate weight %g, must not be negative", i, b.RateWeight)
		}
		prev = b.ToFrac
	}
	if len(p.Bands) > 0 {
		if prev != 1 {
			return fmt.Errorf("synth: the last band ends at y/H = %g, must end at 1", prev)
		}
		if p.weightIntegral() == 0 {
			return fmt.Errorf("synth: every band has rate weight 0")
		}
	}
	return nil
}

// IsDefault reports whether p is the no-slip, unbanded profile.
func (p Profile) IsDefault() bool {
	return p.SlipStationary == 0 && p.SlipMoving == 0 && len(p.Bands) < 2
}

func (p Profile) weightIntegral() float64 {
	s, prev := 0.0, 0.0
	for _, b := range p.Bands {
		s += b.RateWeight * (b.ToFrac - prev)
		prev = b.ToFrac
	}
	return s
}

// sheared returns the fraction of V taken up by shear in the bulk.
func (p Profile) sheared() float64 { return 1 - p.SlipStationary - p.SlipMoving }

// Velocity returns v/V at height yFrac = y/H (clamped to [0, 1]): continuous
// and piecewise linear, SlipStationary at 0 and 1-SlipMoving at 1.
func (p Profile) Velocity(yFrac float64) float64 {
	y := clamp(yFrac, 0, 1)
	if len(p.Bands) == 0 {
		return p.SlipStationary + p.sheared()*y
	}
	s, prev := 0.0, 0.0
	for _, b := range p.Bands {
		if y <= b.ToFrac {
			s += b.RateWeight * (y - prev)
			break
		}
		s += b.RateWeight * (b.ToFrac - prev)
		prev = b.ToFrac
	}
	return p.SlipStationary + p.sheared()*s/p.weightIntegral()
}

// BandRates returns each band's local shear rate in units of V/H (one value
// for an unbanded profile). The rates times the band widths sum to
// 1 - SlipStationary - SlipMoving.
func (p Profile) BandRates() []float64 {
	if len(p.Bands) == 0 {
		return []float64{p.sheared()}
	}
	w := p.weightIntegral()
	r := make([]float64, len(p.Bands))
	for i, b := range p.Bands {
		r[i] = p.sheared() * b.RateWeight / w
	}
	return r
}

// Cessation kinds.
const (
	CessationNone  = "none"
	CessationWall  = "wall"
	CessationPlane = "plane"
)

// Wall names for Cessation.Wall.
const (
	WallStationary = "stationary"
	WallMoving     = "moving"
)

// Cessation is the displacement field of the sample after the last shear
// step stops: the elastic recoil of a sample that has failed at a plane
// inside the gap, or at one wall, or none at all.
//
// Physically: the sample is sheared forward (the moving wall travelled +x),
// so its layers hold a positive elastic strain. When it has failed along a
// surface, the stored strain relaxes: each part of the sample keeps hold of
// the wall it still sticks to (its anchoring wall) and recovers the shear
// strain RecoveredStrain uniformly, so the displacement dx(y) is linear with
// slope -RecoveredStrain in each part, zero at the anchoring wall, and jumps
// at the failure surface:
//
//   - "plane" at y_p = PlaneFrac*H: below, anchored to the stationary wall,
//     dx = -g*y; above, anchored to the (now stopped) moving wall,
//     dx = g*(H - y). The jump dx(y_p+) - dx(y_p-) is g*H.
//   - "wall", Wall "stationary": the sample lets go of the stationary wall
//     and stays anchored to the moving one, dx = g*(H - y); the fluid at the
//     stationary wall moves by +g*H relative to it.
//   - "wall", Wall "moving": anchored to the stationary wall, dx = -g*y; the
//     fluid at the moving wall moves by -g*H relative to it.
//
// Here g = RecoveredStrain * f(t), f(t) = 1 - exp(-(t-OnsetS)/TauS) for
// t > OnsetS (a step at OnsetS when TauS is 0) and 0 before. Positive
// RecoveredStrain means the layers move back against the earlier shear.
//
// JumpUM, when not zero, is the final jump of the fluid's displacement at the
// failure surface (upper side minus lower side for a plane; fluid minus wall
// for a wall, so negative means backwards); it then fixes the recovered
// strain, JumpUM = +-RecoveredStrain*H, and must agree with RecoveredStrain
// when both are given (see Validate).
type Cessation struct {
	Kind            string  // "none" (or "") | "wall" | "plane"
	Wall            string  // for "wall": "stationary" | "moving"
	PlaneFrac       float64 // for "plane": height of the failure plane, y/H
	RecoveredStrain float64 // strain the layers recover (positive: back against the shear)
	JumpUM          float64 // optional: the displacement jump at the plane or wall, um
	OnsetS, TauS    float64 // delay after the stop and time constant, s
}

// jumpSign is the sign relating the jump at the failure surface to the
// recovered strain: jump = jumpSign * strain * H.
func (c Cessation) jumpSign() float64 {
	if c.Kind == CessationWall && c.Wall == WallMoving {
		return -1
	}
	return 1
}

// jumpTolerance is the relative mismatch allowed between JumpUM and
// RecoveredStrain*H when both are given: they are the same number written
// twice, so only rounding may separate them.
const jumpTolerance = 1e-9

// Validate reports the first inconsistent field of c, for a gap of gapUM.
func (c Cessation) Validate(gapUM float64) error {
	switch c.Kind {
	case "", CessationNone:
		return nil
	case CessationWall:
		if c.Wall != WallStationary && c.Wall != WallMoving {
			return fmt.Errorf("synth: cessation wall %q is not stationary or moving", c.Wall)
		}
	case CessationPlane:
		if !(c.PlaneFrac > 0 && c.PlaneFrac < 1) {
			return fmt.Errorf("synth: failure plane at y/H = %g, must lie inside the gap (0 < y/H < 1)", c.PlaneFrac)
		}
	default:
		return fmt.Errorf("synth: cessation kind %q is not none, wall or plane", c.Kind)
	}
	if c.OnsetS < 0 || c.TauS < 0 || math.IsNaN(c.OnsetS+c.TauS) {
		return fmt.Errorf("synth: cessation onset %g s and time constant %g s must not be negative", c.OnsetS, c.TauS)
	}
	if c.JumpUM != 0 && c.RecoveredStrain != 0 {
		want := c.jumpSign() * c.RecoveredStrain * gapUM
		if math.Abs(c.JumpUM-want) > jumpTolerance*math.Abs(want) {
			return fmt.Errorf("synth: cessation jump %g um disagrees with recovered strain %g x gap %g um = %g um",
				c.JumpUM, c.RecoveredStrain, gapUM, want)
		}
	}
	return nil
}

// Strain returns the recovered strain the field heads for, taking it from
// JumpUM when RecoveredStrain is zero.
func (c Cessation) Strain(gapUM float64) float64 {
	if c.RecoveredStrain == 0 && c.JumpUM != 0 && gapUM > 0 {
		return c.JumpUM / (c.jumpSign() * gapUM)
	}
	return c.RecoveredStrain
}

// Progress returns f(t), the fraction of the final displacement reached
// tAfterS seconds after the stop.
func (c Cessation) Progress(tAfterS float64) float64 {
	dt := tAfterS - c.OnsetS
	if dt <= 0 {
		return 0
	}
	if c.TauS == 0 {
		return 1
	}
	return -math.Expm1(-dt / c.TauS)
}

// Moves reports whether the field is not identically zero.
func (c Cessation) Moves(gapUM float64) bool {
	return (c.Kind == CessationWall || c.Kind == CessationPlane) && c.Strain(gapUM) != 0
}

// Displacement returns dx in um along the flow, since the stop, of the layer
// at height yUM above the stationary wall, in a gap of gapUM, tAfterS seconds
// after the last shear step stopped (zero for tAfterS <= 0). At the plane
// itself the upper part's value is returned.
func (c Cessation) Displacement(yUM, gapUM, tAfterS float64) float64 {
	if !c.Moves(gapUM) || tAfterS <= 0 {
		return 0
	}
	g := c.Strain(gapUM) * c.Progress(tAfterS)
	anchoredAbove := false // anchored to the moving wall
	switch c.Kind {
	case CessationPlane:
		anchoredAbove = yUM >= c.PlaneFrac*gapUM
	case CessationWall:
		anchoredAbove = c.Wall == WallStationary
	}
	if anchoredAbove {
		return g * (gapUM - yUM)
	}
	return 0 - g*yUM // +0, not -0, at the stationary wall
}
