package experiment

import (
	"fmt"
	"math"

	"gaptrace/calib/geometry"
)

// speedKeys lists the keys of a motion segment's speed, for messages.
const speedKeys = "rate_per_s, wall_speed_um_per_s, strain, angular_velocity_rad_per_s, rpm or angle_rad"

// speeds returns the segment's speed keys, given or not.
func (s Segment) speeds() []*float64 {
	return []*float64{s.RatePerS, s.WallSpeedUMPerS, s.Strain, s.AngularVelocityRadPerS, s.RPM, s.AngleRad}
}

// radPerRev is the angle of one revolution, rad; a minute is 60 s.
const (
	radPerRev = 2 * math.Pi
	sPerMin   = 60
)

// rotationSpeed returns the moving wall's speed, um/s, of a segment given
// in a rotational instrument's units: the tool's angular velocity (rad/s,
// or revolutions per minute) times the radius at which it moves the
// observed wall (geometry.RotatingRadiusUM: a cone's or plate's rim, the
// rotating cylinder), or the deflection angle over the step's duration
// times that radius. ok is false for a segment given otherwise.
func (s Segment) rotationSpeed(g geometry.Geometry) (float64, bool) {
	rr := g.RotatingRadiusUM()
	d := s.EndS - s.StartS
	switch {
	case s.AngularVelocityRadPerS != nil:
		return *s.AngularVelocityRadPerS * rr, true
	case s.RPM != nil:
		return *s.RPM * radPerRev / sPerMin * rr, true
	case s.AngleRad != nil:
		return *s.AngleRad / d * rr, true
	}
	return 0, false
}

// checkRotation refuses the rotational keys for a tool that does not
// rotate.
func (s Segment) checkRotation(key string, g geometry.Geometry) error {
	if _, ok := s.rotationSpeed(g); !ok || !math.IsNaN(g.RotatingRadiusUM()) {
		return nil
	}
	return fmt.Errorf("%s: %s needs a rotating tool (cone-plate, parallel-plate or couette), not geometry %q; give rate_per_s, wall_speed_um_per_s or strain",
		key, s.givenRotation()[0], g.Kind)
}

// givenRotation lists the rotational keys given, as key=value.
func (s Segment) givenRotation() []string {
	var k []string
	for _, c := range []struct {
		key string
		v   *float64
	}{{"angular_velocity_rad_per_s", s.AngularVelocityRadPerS}, {"rpm", s.RPM}, {"angle_rad", s.AngleRad}} {
		if c.v != nil {
			k = append(k, fmt.Sprintf("%s=%g", c.key, *c.v))
		}
	}
	return k
}
