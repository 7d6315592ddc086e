// Package detect finds tracer particles in background-subtracted frames and
// locates them to a fraction of a pixel.
//
// A frame is processed in five steps:
//
//  1. Low cut: the frame minus a background image (usually the temporal
//     median of frames.Median), which removes the static walls,
//     reflections and stuck particles; without a background image, minus
//     the frame's own box mean two tracer diameters wide (the band-pass of
//     Crocker & Grier 1996). The polarity sets the sign so that tracers are
//     positive: bright tracers on a dark field, or dark (absorbing) tracers
//     on a bright one; PolarityAuto decides from the first frame.
//  2. High cut: a Gaussian matched to the tracer's apparent size, the
//     detection-theory optimum for a spot of known shape in white noise.
//     With step 1 it makes the band-pass; both are computed on the
//     frame's own 8 or 16-bit grey levels, negative values clipped to zero
//     (only the tracers' side matters for finding them).
//  3. Candidates: local maxima of the band-passed image above a threshold set
//     from the frame's own noise, so that MinSNR is a signal-to-noise ratio
//     and not a grey level; maxima closer than MinSeparationPx keep only the
//     strongest, and those inside the Mask only.
//  4. Sub-pixel position by one of two published estimators (see
//     Estimator), on the unfiltered background-subtracted pixels around the
//     candidate.
//  5. Amplitude and local offset by least squares, then shape: size (radius
//     of gyration), eccentricity and integrated brightness; blobs too large,
//     too elongated are rejected, unless they are motion streaks along
//     the flow (Options.MaxStreakPx). Crowded spots are deblended: each is
//     refined with the fitted spots of its neighbours subtracted, twice
//     over, so that overlapping tracers are found and located each on its
//     own. Spots cut by the frame's edge are fitted on their visible part.
//
// # Signal-to-noise ratio
//
// The SNR of a detection is A/sigma. A is the spot's amplitude in grey
// levels: the peak of the Gaussian density N/(2 pi s^2) of a spot of
// integrated brightness N and the nominal spread s = DiameterPx/4, fitted by
// least squares (with a constant offset) to the background-subtracted pixels
// at the refined position. sigma is the frame's per-pixel noise standard
// deviation: half of 1.4826 times the median absolute deviation of the sums
// of 2x2 background-subtracted pixels, taken on a regular subsample of the
// frame inside the Mask and away from every candidate spot (for white noise,
// the per-pixel sd). Both are computed on every frame. Where the noise is
// not white (the blotches of hard compression), sigma is raised to the
// noise that makes the amplitude scatter as much as it does at the frame's
// empty places.
//
// Run processes a whole Source on several goroutines, each with its own
// Detector, and hands the detections back in frame order; the result does
// not depend on the number of workers.
package detect

import (
	"errors"
	"fmt"
	"math"

	"gaptrace/calib/walls"
)

// Polarities of the tracers against the background.
const (
	PolarityAuto   = "auto"   // decided from the frame
	PolarityBright = "bright" // bright tracers on a darker background
	PolarityDark   = "dark"   // dark tracers on a brighter background
)

// Estimator is a sub-pixel localization method.
type Estimator int

const (
	// Centroid is the iterated intensity-weighted centroid of Crocker &
	// Grier (1996), with a Gaussian mask of the nominal spot spread that is
	// moved by sub-pixel steps to the last estimate until it stops moving.
	// For a Gaussian spot its fixed point is the spot's centre, so it does
	// not lock to pixel centres; for additive noise it is the
	// maximum-likelihood estimate of a spot of known width.
	Centroid Estimator = iota
	// RadialSymmetry is the radial-symmetry centre of Parthasarathy (2012):
	// the point closest, in weighted least squares, to the lines through
	// every gradient of the spot's image.
	RadialSymmetry
)

// String names the estimator: "centroid" or "radial-symmetry".
func (e Estimator) String() string {
	switch e {
	case Centroid:
		return "centroid"
	case RadialSymmetry:
		return "radial-symmetry"
	}
	return fmt.Sprintf("Estimator(%d)", int(e))
}

// ParseEstimator returns the Estimator named s ("centroid" or
// "radial-symmetry").
func ParseEstimator(s string) (Estimator, error) {
	for _, e := range []Estimator{Centroid, RadialSymmetry} {
		if s == e.String() {
			return e, nil
		}
	}
	return 0, fmt.Errorf("detect: unknown estimator %q (want centroid or radial-symmetry)", s)
}

// Detection is one tracer found in one frame.
type Detection struct {
	Frame int
	// XPx, YPx is the position in image pixels, the origin at the centre
	// of the top-left pixel, x to the right and y down.
	XPx, YPx float64
	// Brightness is the integrated background-subtracted intensity of the
	// spot in grey levels (positive in either polarity).
	Brightness float64
	// SizePx is the spot's radius of gyration in pixels, sqrt(<r^2>): sqrt(2)
	// times the sd of a Gaussian spot.
	SizePx float64
	// Eccentricity is sqrt(1 - b^2/a^2) of the spot's second-moment ellipse
	// with axes a >= b: 0 for a round spot, towards 1 for an elongated one.
	Eccentricity float64
	// SNR is the spot amplitude over the frame's noise (see the package
	// documentation).
	SNR float64
}

// Mask keeps the detections between two wall lines, each given by two
// points in image pixels, at least MarginPx away from each. A negative
// margin, down to minus half a tracer diameter, admits centres that far
// beyond the lines: a tracer touching a wall, whose centre the
// localization noise may put a little beyond it. A
// calib.Calibration's StationaryWallPx and MovingWallPx (calib.Line) assign
// to the fields directly.
type Mask struct {
	Stationary, Moving [2][2]float64
	MarginPx           float64
}

// lineDist returns the signed distance of (x, y) from l, positive on the
// side of (px, py).
func lineDist(l [2][2]float64, x, y, px, py float64) float64 {
	dx, dy := l[1][0]-l[0][0], l[1][1]-l[0][1]
	n := math.Hypot(dx, dy)
	d := ((x-l[0][0])*dy - (y-l[0][1])*dx) / n
	if ((px-l[0][0])*dy - (py-l[0][1])*dx) < 0 {
		d = -d
	}
	return d
}

// Contains reports whether (xPx, yPx) lies between the walls with the margin.
func (m *Mask) Contains(xPx, yPx float64) bool {
	sm := (m.Moving[0][0] + m.Moving[1][0]) / 2
	smy := (m.Moving[0][1] + m.Moving[1][1]) / 2
	ss := (m.Stationary[0][0] + m.Stationary[1][0]) / 2
	ssy := (m.Stationary[0][1] + m.Stationary[1][1]) / 2
	return lineDist(m.Stationary, xPx, yPx, sm, smy) >= m.MarginPx &&
		lineDist(m.Moving, xPx, yPx, ss, ssy) >= m.MarginPx
}

func (m *Mask) check() error {
	for _, l := range [][2][2]float64{m.Stationary, m.Moving} {
		if l[0] == l[1] {
			return fmt.Errorf("detect: mask wall line %v has two equal points", l)
		}
	}
	if math.IsNaN(m.MarginPx) || math.IsInf(m.MarginPx, 0) {
		return fmt.Errorf("detect: mask margin %g px", m.MarginPx)
	}
	return nil
}

// Options configure detection. Zero fields take the defaults given.
type Options struct {
	// DiameterPx is the tracers' apparent diameter in pixels, four times
	// the sd of their spot (the e^-2 width); required, at least 2.
	DiameterPx float64
	// Polarity is PolarityAuto (default), PolarityBright or PolarityDark.
	Polarity string
	// MinSNR is the smallest SNR kept (default DefaultMinSNR).
	MinSNR float64
	// MinSeparationPx is the smallest distance between two spots: the
	// weaker of two closer maxima is taken for a ripple of the stronger
	// and dropped (default half DiameterPx, two spot sds, within which two
	// spots do not make two maxima); farther maxima are deblended.
	MinSeparationPx float64
	// MaxSizePx rejects spots whose radius of gyration is larger (default
	// DefaultMaxSizeRatio times that of a pixel-integrated spot of the
	// nominal diameter, sqrt(2 (s^2 + 1/12)) for s = DiameterPx/4).
	MaxSizePx float64
	// MaxEccentricity rejects more elongated spots with an SNR of 10 or
	// more (default DefaultMaxEccentricity), unless they are motion
	// streaks (see MaxStreakPx).
	MaxEccentricity float64
	// MaxStreakPx is the longest motion streak kept, px: the distance a
	// tracer travels during the exposure (default DefaultMaxStreakRatio
	// times DiameterPx). A spot too elongated or too large for the two
	// limits above is kept as a streak when its long axis lies within
	// streakAngleDeg of the flow (along the Mask's moving wall line, or
	// the image rows without a Mask), its short axis is a spot within
	// MaxSizePx, and its length, sqrt(12) times the sd the long axis adds,
	// is at most MaxStreakPx. Its centre is the streak's middle.
	MaxStreakPx float64
	// Estimator is the sub-pixel estimator (default Centroid).
	Estimator Estimator
	// Workers is the number of frames Run processes at once (default
	// runtime.GOMAXPROCS).
	Workers int
	// Mask, when not nil, keeps only the detections inside it.
	Mask *Mask
	// Walls, when not empty, are the static profiles of the walls
	// (walls.MeasureProfile on the median image, reaching at least
	// WallReachPx from each line): next to each wall the frame minus its
	// profile is band-passed and refined, so that the wall's edge and
	// reflection line neither hide a tracer touching them nor pull its
	// centre towards them.
	Walls []*walls.Profile
}

// Defaults.
const (
	// DefaultMinSNR keeps spots four times above the noise: below that the
	// false-positive rate rises quickly (in TestRecallPrecision, precision
	// falls from 1.00 at SNR 4-5 to 0.96 at 2-3 with a background image, and
	// from 0.95 to 0.72 without one, on a frame with a reflection band) and
	// the position error is a large fraction of a pixel.
	DefaultMinSNR = 4
	// DefaultMaxSizeRatio allows spots up to 1.5 times the nominal radius
	// of gyration: a tracer out of focus, or two touching ones, is larger,
	// while 99.9% of round spots at SNR 5 stay under 1.4 times
	// (TestShapeNoise). The measure saturates for blobs much larger than the
	// refinement window, so the limit cannot be much looser.
	DefaultMaxSizeRatio = 1.5
	// DefaultMaxEccentricity allows an axis ratio down to 0.6
	// (sqrt(1-0.6^2) = 0.8): round tracers, noisy at low SNR, stay; streaks
	// of tracers that moved several diameters within the exposure go. Two
	// touching tracers are deblended instead (see the package
	// documentation).
	DefaultMaxEccentricity = 0.8
	// DefaultMaxStreakRatio keeps streaks measured up to two tracer
	// diameters long. The length is measured from the Gaussian-weighted
	// moments, which take a streak for a Gaussian, overestimate it and
	// scatter widely: the 6 px streaks of 5 px tracers in track/synth's
	// blur scenario (an exposure of half the frame interval at the moving
	// wall) measure 8 px (median of the 1128 isolated ones the eccentricity
	// cut dropped in frames 60-190, seed 7), and in TestStreak 2.7 % of 6
	// px streaks measure over 10 px. Three diameters keep those too, but
	// also pairs of tracers along the flow merged into one spot: a false
	// "moving" after the stop in TestShakeLowFrameRate at 25 frames/s.
	DefaultMaxStreakRatio = 2
	// minDiameterPx is the smallest diameter the band-pass can match: below
	// 2 px (sd 0.5 px) a spot is a single pixel and sub-pixel estimators
	// lock to the grid.
	minDiameterPx = 2
	// maxDiameterPx is the largest: beyond, a tracer is a disc to be
	// located by its edges, not a spot.
	maxDiameterPx = 40
)

// withDefaults returns o with its zero fields filled and checks it.
func (o Options) withDefaults() (Options, error) {
	if !(o.DiameterPx >= minDiameterPx && o.DiameterPx <= maxDiameterPx) {
		return o, fmt.Errorf("detect: tracer diameter %g px: need %d to %d px", o.DiameterPx, minDiameterPx, maxDiameterPx)
	}
	switch o.Polarity {
	case "":
		o.Polarity = PolarityAuto
	case PolarityAuto, PolarityBright, PolarityDark:
	default:
		return o, fmt.Errorf("detect: polarity %q: want auto, bright or dark", o.Polarity)
	}
	sigma := o.DiameterPx / diameterSigmas
	def := func(v *float64, d float64, name string) error {
		if *v == 0 {
			*v = d
		}
		if !(*v > 0) || math.IsInf(*v, 0) {
			return fmt.Errorf("detect: %s %g must be positive", name, *v)
		}
		return nil
	}
	if err := errors.Join(
		def(&o.MinSNR, DefaultMinSNR, "minimum SNR"),
		def(&o.MinSeparationPx, o.DiameterPx/2, "minimum separation (px)"),
		def(&o.MaxSizePx, DefaultMaxSizeRatio*math.Sqrt(2*(sigma*sigma+1.0/12)), "largest size (px)"),
		def(&o.MaxEccentricity, DefaultMaxEccentricity, "largest eccentricity"),
		def(&o.MaxStreakPx, DefaultMaxStreakRatio*o.DiameterPx, "longest streak (px)"),
	); err != nil {
		return o, err
	}
	if o.Estimator != Centroid && o.Estimator != RadialSymmetry {
		return o, fmt.Errorf("detect: unknown estimator %d", int(o.Estimator))
	}
	if o.Workers < 0 {
		return o, fmt.Errorf("detect: %d workers", o.Workers)
	}
	if o.Mask != nil {
		if err := o.Mask.check(); err != nil {
			return o, err
		}
		if o.Mask.MarginPx < -o.DiameterPx/2 {
			return o, fmt.Errorf("detect: mask margin %g px is beyond half the tracer diameter (%g px) outside the walls", o.Mask.MarginPx, o.DiameterPx)
		}
	}
	return o, nil
}
