package experiment

import (
	"fmt"
	"math"
)

// Bounds of the experiment file's values. A value outside them is refused:
// it is a typing or unit mistake, not an experiment, and left in it would
// make later stages allocate without bound or divide a gap into nothing.
// Each bound is far beyond what rheometers and cameras do (the reason is
// beside it), so that no real experiment meets it. The README lists them.
const (
	// MinGapUM: one micrometre, below the optical resolution of a
	// microscope objective (about 0.2 um for green light, Abbe's limit)
	// and so below any gap whose profile can be filmed.
	MinGapUM = 1.0
	// MaxGapUM: 100 mm, more than any rheometer's gap or Couette annulus
	// (a few mm at most, common practice).
	MaxGapUM = 100e3
	// MinRadiusMM: 0.1 mm; rheometer tools are 4 to 60 mm across (common
	// practice), microfluidic cells no smaller than this.
	MinRadiusMM = 0.1
	// MaxRadiusMM: 1 m, larger than any rheometer tool.
	MaxRadiusMM = 1000.0
	// MinFPS: one frame per 100 s, a slow time-lapse.
	MinFPS = 0.01
	// MaxFPS: ten million frames per second, the fastest high-speed
	// cameras (from memory); any more is a unit mistake.
	MaxFPS = 1e7
	// MinUMPerPx: 10 nm per pixel, five times finer than the resolution of
	// the best oil-immersion objective, which no camera needs to sample.
	MinUMPerPx = 0.01
	// MaxUMPerPx: 10 mm per pixel; a gap of a few mm would then be less
	// than one pixel.
	MaxUMPerPx = 10e3
	// MaxRatePerS: a million per second, beyond what rotational rheometers
	// impose (about 1e4 to 1e5 1/s, common practice).
	MaxRatePerS = 1e6
	// MaxWallSpeedUMPerS: 100 m/s, beyond any tool's rim speed.
	MaxWallSpeedUMPerS = 100e6
	// MaxStrain: ten million strain units in one step, a day at 100/s.
	MaxStrain = 1e7
	// MaxTimeS: a motion program of at most ten days.
	MaxTimeS = 864e3
	// MaxSegments: ten thousand steps, more than any rheometer program;
	// each step is a phase with its own analysis.
	MaxSegments = 10000
	// MaxDiameterPx: a tracer image 500 px across is no tracer.
	MaxDiameterPx = 500.0
	// MinDiameterPx: a tracer image must cover about a pixel to be
	// localized at all.
	MinDiameterPx = 0.5
	// MaxWallPx: wall points beyond 100 000 px lie outside any sensor.
	MaxWallPx = 100e3
	// MinGapPx: a gap of fewer than 8 px cannot hold a profile: the walls'
	// edges alone are a few pixels wide.
	MinGapPx = 8.0
)

// checkBounds reports the first value outside the bounds above, naming the
// key, its value and the bound.
func (e *Experiment) checkBounds() error {
	inside := func(key string, v, lo, hi float64, unit string) error {
		if v == 0 {
			return nil // not given (the keys that must be given are checked before)
		}
		if !(v >= lo && v <= hi) {
			return fmt.Errorf("%s: %g %s is outside [%g, %g] %s", key, v, unit, lo, hi, unit)
		}
		return nil
	}
	g := e.Geometry
	for _, c := range []struct {
		key    string
		v      float64
		lo, hi float64
		unit   string
	}{
		{"geometry.gap_um", g.GapUM, MinGapUM, MaxGapUM, "um"},
		{"geometry.radius_mm", g.RadiusMM, MinRadiusMM, MaxRadiusMM, "mm"},
		{"geometry.inner_radius_mm", g.InnerRadiusMM, MinRadiusMM, MaxRadiusMM, "mm"},
		{"geometry.outer_radius_mm", g.OuterRadiusMM, MinRadiusMM, MaxRadiusMM, "mm"},
		{"camera.fps", e.Camera.FPS, MinFPS, MaxFPS, "frames/s"},
		{"camera.um_per_px", e.Camera.UMPerPx, MinUMPerPx, MaxUMPerPx, "um/px"},
		{"tracers.diameter_px", e.Tracers.DiameterPx, MinDiameterPx, MaxDiameterPx, "px"},
	} {
		if err := inside(c.key, c.v, c.lo, c.hi, c.unit); err != nil {
			return err
		}
	}
	if gap := g.Gap(); gap > 0 && !(gap >= MinGapUM && gap <= MaxGapUM) {
		return fmt.Errorf("geometry: the gap of %g um is outside [%g, %g] um", gap, MinGapUM, MaxGapUM)
	}
	if u := e.Camera.UMPerPx; u > 0 {
		if gapPx := g.Gap() / u; gapPx < MinGapPx {
			return fmt.Errorf("camera.um_per_px: %g um/px makes the %g um gap %.3g px, fewer than %g", u, g.Gap(), gapPx, MinGapPx)
		}
	}
	if len(e.Motion) > MaxSegments {
		return fmt.Errorf("motion: %d steps, more than %d", len(e.Motion), MaxSegments)
	}
	for i, s := range e.Motion {
		key := fmt.Sprintf("motion[%d]", i)
		if s.EndS > MaxTimeS {
			return fmt.Errorf("%s.end_s: %g s is past %g s (ten days)", key, s.EndS, MaxTimeS)
		}
		for _, c := range []struct {
			name string
			p    *float64
			max  float64
			unit string
		}{{"rate_per_s", s.RatePerS, MaxRatePerS, "1/s"}, {"wall_speed_um_per_s", s.WallSpeedUMPerS, MaxWallSpeedUMPerS, "um/s"},
			{"strain", s.Strain, MaxStrain, ""}} {
			if c.p != nil && math.Abs(*c.p) > c.max {
				return fmt.Errorf("%s.%s: %g %s is beyond ±%g %s", key, c.name, *c.p, c.unit, c.max, c.unit)
			}
		}
		if s.Strain != nil {
			if r := math.Abs(*s.Strain) / (s.EndS - s.StartS); r > MaxRatePerS {
				return fmt.Errorf("%s.strain: %g over %g s is a rate of %g 1/s, beyond %g 1/s", key, *s.Strain, s.EndS-s.StartS, r, MaxRatePerS)
			}
		}
	}
	for _, l := range []struct {
		key string
		pts [][2]float64
	}{{"walls.stationary_px", e.Walls.StationaryPx}, {"walls.moving_px", e.Walls.MovingPx}} {
		for _, p := range l.pts {
			if !(p[0] <= MaxWallPx && p[1] <= MaxWallPx) {
				return fmt.Errorf("%s: point %v is beyond %g px", l.key, p, MaxWallPx)
			}
		}
	}
	return e.CheckAgainstRate(e.Camera.FPS)
}

// MinPhaseFrames is the fewest frames a step of the motion program must
// span for its own analysis (see CheckAgainstRate): a step shorter than a
// frame interval is never seen.
const MinPhaseFrames = 1

// CheckAgainstRate reports a motion step shorter than MinPhaseFrames frame
// intervals at fps frames/s (the video's rate, once known).
func (e *Experiment) CheckAgainstRate(fps float64) error {
	if !(fps > 0) {
		return nil
	}
	for i, s := range e.Motion {
		if d := s.EndS - s.StartS; d < MinPhaseFrames/fps {
			return fmt.Errorf("motion[%d]: lasts %g s, shorter than one frame interval (%g s at %g frames/s)", i, d, 1/fps, fps)
		}
	}
	return nil
}
