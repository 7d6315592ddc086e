// Package geometry holds the kinematics of the rheometer tools that gaptrace
// observes: the gap at the observed rim, the relation between the moving
// wall's speed and the nominal shear rate, and the Newtonian (no-slip)
// reference velocity profile across the gap.
//
// Lengths are in micrometres (um) unless the name says otherwise, speeds in
// um/s, rates in 1/s, angles in degrees where the name ends in Deg.
package geometry

import (
	"fmt"
	"math"
)

// Kind names a tool geometry.
type Kind string

// The geometries of the experiment file.
const (
	Plates        Kind = "plates"         // sliding plates: uniform shear, gap_um given
	ConePlate     Kind = "cone-plate"     // gap at the rim = radius x tan(cone angle)
	ParallelPlate Kind = "parallel-plate" // gap_um given; observed at the rim radius
	Couette       Kind = "couette"        // concentric cylinders, gap = outer - inner radius
)

// Rotating cylinders of a Couette cell.
const (
	InnerRotates = "inner"
	OuterRotates = "outer"
)

const umPerMM = 1000.0

// Geometry is the tool as written in the experiment file's geometry section.
// Which fields are needed depends on Kind; see Validate.
type Geometry struct {
	Kind         Kind    `yaml:"kind" json:"kind"`
	GapUM        float64 `yaml:"gap_um,omitempty" json:"gap_um,omitempty"`
	RadiusMM     float64 `yaml:"radius_mm,omitempty" json:"radius_mm,omitempty"`
	ConeAngleDeg float64 `yaml:"cone_angle_deg,omitempty" json:"cone_angle_deg,omitempty"`
	// ConeAngleRad is the cone angle in radians, instead of ConeAngleDeg.
	ConeAngleRad  float64 `yaml:"cone_angle_rad,omitempty" json:"cone_angle_rad,omitempty"`
	InnerRadiusMM float64 `yaml:"inner_radius_mm,omitempty" json:"inner_radius_mm,omitempty"`
	OuterRadiusMM float64 `yaml:"outer_radius_mm,omitempty" json:"outer_radius_mm,omitempty"`
	// Rotating is "inner" (the default) or "outer" for a Couette cell.
	Rotating string `yaml:"rotating,omitempty" json:"rotating,omitempty"`
	// RateAt chooses a Couette cell's nominal rate (rates.go): "inner" or
	// "outer", the Newtonian rate at that cylinder, or "representative"
	// (the default), that of DIN 53019-1 / ISO 3219.
	RateAt string `yaml:"rate_at,omitempty" json:"rate_at,omitempty"`
	// LengthMM is a Couette cell's immersed length, mm: with the torque
	// it gives the wall stress (optional).
	LengthMM float64 `yaml:"length_mm,omitempty" json:"length_mm,omitempty"`
	// AreaMM2 is the sheared area of sliding plates, mm^2: with the force
	// it gives the wall stress (optional).
	AreaMM2 float64 `yaml:"area_mm2,omitempty" json:"area_mm2,omitempty"`
	// GapErrUM is the standard uncertainty of the gap as measured, um; 0
	// means not stated.
	GapErrUM float64 `yaml:"gap_err_um,omitempty" json:"gap_err_um,omitempty"`
}

// maxConeAngleDeg bounds the cone angle: rheometer cones are a few degrees;
// above 45 degrees the small-gap picture behind cone-plate flow is meaningless.
const maxConeAngleDeg = 45

// Validate reports the first field that makes the geometry unusable, naming
// the experiment-file key and its value.
func (g Geometry) Validate() error {
	if g.GapErrUM < 0 || math.IsNaN(g.GapErrUM) || math.IsInf(g.GapErrUM, 0) {
		return fmt.Errorf("geometry.gap_err_um: must be a finite standard uncertainty of at least 0, got %g", g.GapErrUM)
	}
	pos := func(key string, v float64) error {
		if !(v > 0) || math.IsInf(v, 0) {
			if v == 0 {
				return fmt.Errorf("geometry.%s: missing or zero, must be positive for kind %q", key, g.Kind)
			}
			return fmt.Errorf("geometry.%s: must be positive, got %g", key, v)
		}
		return nil
	}
	nonneg := func(key string, v float64) error {
		if v < 0 {
			return fmt.Errorf("geometry.%s: must not be negative, got %g", key, v)
		}
		return nil
	}
	for _, c := range []struct {
		key string
		v   float64
	}{{"gap_um", g.GapUM}, {"radius_mm", g.RadiusMM}, {"cone_angle_deg", g.ConeAngleDeg}, {"cone_angle_rad", g.ConeAngleRad},
		{"inner_radius_mm", g.InnerRadiusMM}, {"outer_radius_mm", g.OuterRadiusMM},
		{"length_mm", g.LengthMM}, {"area_mm2", g.AreaMM2}} {
		if err := nonneg(c.key, c.v); err != nil {
			return err
		}
	}
	if err := g.checkRateAt(); err != nil {
		return err
	}
	switch g.Kind {
	case Plates:
		return pos("gap_um", g.GapUM)
	case ParallelPlate:
		if err := pos("gap_um", g.GapUM); err != nil {
			return err
		}
		return pos("radius_mm", g.RadiusMM)
	case ConePlate:
		if err := pos("radius_mm", g.RadiusMM); err != nil {
			return err
		}
		if err := g.checkConeAngle(); err != nil {
			return err
		}
		if err := pos("cone_angle_deg", g.coneAngleDeg()); err != nil {
			return err
		}
		if g.coneAngleDeg() >= maxConeAngleDeg {
			return fmt.Errorf("geometry.cone_angle_deg: %g is not a rheometer cone (must be below %d)", g.coneAngleDeg(), maxConeAngleDeg)
		}
		if g.GapUM > 0 {
			return fmt.Errorf("geometry.gap_um: %g given for a cone-plate, whose gap is radius_mm x tan(cone_angle_deg); remove it", g.GapUM)
		}
		return nil
	case Couette:
		if err := pos("inner_radius_mm", g.InnerRadiusMM); err != nil {
			return err
		}
		if err := pos("outer_radius_mm", g.OuterRadiusMM); err != nil {
			return err
		}
		if g.OuterRadiusMM <= g.InnerRadiusMM {
			return fmt.Errorf("geometry.outer_radius_mm: %g must exceed inner_radius_mm %g", g.OuterRadiusMM, g.InnerRadiusMM)
		}
		if g.Rotating != "" && g.Rotating != InnerRotates && g.Rotating != OuterRotates {
			return fmt.Errorf("geometry.rotating: %q is not inner or outer", g.Rotating)
		}
		if g.GapUM > 0 {
			return fmt.Errorf("geometry.gap_um: %g given for a couette, whose gap is outer_radius_mm - inner_radius_mm; remove it", g.GapUM)
		}
		return nil
	case "":
		return fmt.Errorf("geometry.kind: missing (plates, cone-plate, parallel-plate or couette)")
	default:
		return fmt.Errorf("geometry.kind: %q is not plates, cone-plate, parallel-plate or couette", g.Kind)
	}
}

// Gap returns the gap in um at the observed position: the given gap for
// plates and parallel plates, radius x tan(angle) at the rim of a cone,
// outer minus inner radius for a Couette cell.
func (g Geometry) Gap() float64 {
	switch g.Kind {
	case ConePlate:
		return g.RadiusMM * umPerMM * math.Tan(g.coneAngleDeg()*math.Pi/180)
	case Couette:
		return (g.OuterRadiusMM - g.InnerRadiusMM) * umPerMM
	default:
		return g.GapUM
	}
}

// radii returns the radius of the rotating and of the stationary cylinder, in um.
func (g Geometry) radii() (rotUM, statUM float64) {
	ri, ro := g.InnerRadiusMM*umPerMM, g.OuterRadiusMM*umPerMM
	if g.Rotating == OuterRotates {
		return ro, ri
	}
	return ri, ro
}

// NominalRate returns the nominal shear rate in 1/s that the instrument
// assumes for a moving-wall speed v in um/s: v / gap for plates, parallel
// plates at the rim and cones (where the rim speed over the rim gap equals the
// angular speed over tan(angle)), and the representative rate of the
// standard for a Couette cell.
func (g Geometry) NominalRate(vUMPerS float64) float64 {
	if g.Kind == Couette {
		rot, _ := g.radii()
		return vUMPerS / rot * g.couetteRateFactor()
	}
	return vUMPerS / g.Gap()
}

// WallSpeed is the inverse of NominalRate: the moving wall's speed in um/s
// for a nominal rate in 1/s.
func (g Geometry) WallSpeed(ratePerS float64) float64 {
	if g.Kind == Couette {
		rot, _ := g.radii()
		return ratePerS / g.couetteRateFactor() * rot
	}
	return ratePerS * g.Gap()
}

// Reference returns the Newtonian no-slip velocity in um/s at height yUM
// above the stationary wall, when the moving wall travels at vUMPerS.
// Between plates (and locally at the rim of a cone or parallel plate) the
// profile is linear. In a Couette cell it is the exact concentric-cylinder
// profile (Bird, Stewart & Lightfoot, Transport Phenomena, 2nd ed. 2002,
// example 3.6-3): with the rotating cylinder at radius Rr and the stationary
// one at Rs, v(r) = V (r/Rs - Rs/r) / (Rr/Rs - Rs/Rr).
func (g Geometry) Reference(yUM, vUMPerS float64) float64 {
	if g.Kind != Couette {
		return vUMPerS * yUM / g.Gap()
	}
	rot, stat := g.radii()
	r := stat + yUM // the inner cylinder is stationary
	if stat > rot {
		r = stat - yUM // the outer cylinder is stationary: y grows inwards
	}
	return vUMPerS * (r/stat - stat/r) / (rot/stat - stat/rot)
}

// LocalRate returns the Newtonian local shear rate magnitude in 1/s at height
// yUM, the derivative of Reference with respect to y for plates and the
// rate r d(v/r)/dr of the concentric-cylinder flow for a Couette cell.
func (g Geometry) LocalRate(yUM, vUMPerS float64) float64 {
	if g.Kind != Couette {
		return vUMPerS / g.Gap()
	}
	rot, stat := g.radii()
	r := stat + yUM
	if stat > rot {
		r = stat - yUM
	}
	// v = A (r/Rs - Rs/r); v/r = A (1/Rs - Rs/r^2); r d(v/r)/dr = 2 A Rs / r^2.
	a := vUMPerS / (rot/stat - stat/rot)
	return math.Abs(2 * a * stat / (r * r))
}

// RotatingRadiusUM returns the radius in um at which the tool's angular
// speed becomes the moving wall's speed: the observed rim of a cone or a
// parallel plate, the rotating cylinder of a Couette cell. Sliding plates
// do not rotate: NaN.
func (g Geometry) RotatingRadiusUM() float64 {
	switch g.Kind {
	case ConePlate, ParallelPlate:
		return g.RadiusMM * umPerMM
	case Couette:
		rot, _ := g.radii()
		return rot
	}
	return math.NaN()
}
