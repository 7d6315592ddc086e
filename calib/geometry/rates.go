package geometry

import (
	"fmt"
	"math"
)

// Couette rate conventions (Geometry.RateAt).
const (
	RateAtInner          = "inner"
	RateAtOuter          = "outer"
	RateAtRepresentative = "representative"
)

// couetteRateFactor returns a Couette cell's nominal shear rate per unit
// angular velocity of the rotating cylinder, with delta = Ro/Ri:
//
//   - representative (the default): (1 + delta^2) / (delta^2 - 1), the
//     representative shear rate of DIN 53019-1 / ISO 3219 (from memory),
//     the Newtonian rate at the radius r where r^2 = 2 Ri^2 Ro^2 /
//     (Ri^2 + Ro^2), between the rates at the two walls;
//   - inner: 2 delta^2 / (delta^2 - 1), the Newtonian rate at the inner
//     cylinder;
//   - outer: 2 / (delta^2 - 1), the Newtonian rate at the outer cylinder.
//
// The wall rates are those of the concentric-cylinder flow of a Newtonian
// liquid, rate(r) = 2 omega Ri^2 Ro^2 / ((Ro^2 - Ri^2) r^2) (Bird, Stewart
// & Lightfoot, Transport Phenomena, 2nd ed. 2002, example 3.6-3, as
// LocalRate).
func (g Geometry) couetteRateFactor() float64 {
	d := g.OuterRadiusMM / g.InnerRadiusMM
	switch g.RateAt {
	case RateAtInner:
		return 2 * d * d / (d*d - 1)
	case RateAtOuter:
		return 2 / (d*d - 1)
	}
	return (1 + d*d) / (d*d - 1)
}

// checkRateAt refuses an unknown rate_at, and one outside a Couette cell.
func (g Geometry) checkRateAt() error {
	switch g.RateAt {
	case "":
		return nil
	case RateAtInner, RateAtOuter, RateAtRepresentative:
		if g.Kind != Couette {
			return fmt.Errorf("geometry.rate_at: %q is for a couette cell, not %q", g.RateAt, g.Kind)
		}
		return nil
	}
	return fmt.Errorf("geometry.rate_at: %q is not inner, outer or representative", g.RateAt)
}

// coneAngleDeg returns the cone angle in degrees, from whichever of
// cone_angle_deg and cone_angle_rad is given.
func (g Geometry) coneAngleDeg() float64 {
	if g.ConeAngleRad != 0 {
		return g.ConeAngleRad * 180 / math.Pi
	}
	return g.ConeAngleDeg
}

// ConeAngleRadians returns the cone angle in radians (0 without a cone).
func (g Geometry) ConeAngleRadians() float64 { return g.coneAngleDeg() * math.Pi / 180 }

// checkConeAngle refuses both cone angles at once.
func (g Geometry) checkConeAngle() error {
	if g.ConeAngleDeg != 0 && g.ConeAngleRad != 0 {
		return fmt.Errorf("geometry: give cone_angle_deg (%g) or cone_angle_rad (%g), not both", g.ConeAngleDeg, g.ConeAngleRad)
	}
	return nil
}
