// Package acceptance holds, once, the acceptance limits that the tests hold
// gaptrace to on the test bed's rendered recordings (package synth): the
// numbers of the issues that set them, each under the quantity and unit it
// bounds. Tests import it; nothing of the product does.
//
// Limits a test sets for itself (a looser end-to-end bound, a sanity check)
// stay beside that test with their reason.
package acceptance

// Calibration on rendered videos with tilts from -3 to +3 degrees, both
// polarities, noise and jitter (issue 4).
const (
	// WallLinePx bounds the error of a wall line's height, px.
	WallLinePx = 0.3
	// TiltDeg bounds the error of the walls' tilt, degrees.
	TiltDeg = 0.05
	// ScaleFromGapFrac bounds the relative error of um_per_px derived from
	// the gap.
	ScaleFromGapFrac = 0.005
	// TargetSquareFrac bounds the relative error of a checkerboard's square
	// size recovered from a rendered target with radial distortion.
	TargetSquareFrac = 0.005
	// UndistortPx bounds the error of undistorted target points, px.
	UndistortPx = 0.3
)

// Linking on rendered shear videos with known identities (issue 5). The
// ratio is the moving wall's displacement per frame over the mean tracer
// spacing.
const (
	// CorrectLinksAtHalf is the least fraction of correct links at a ratio
	// of 0.5.
	CorrectLinksAtHalf = 0.99
	// CorrectLinksAtEightTenths is the least fraction of correct links at a
	// ratio of 0.8.
	CorrectLinksAtEightTenths = 0.95
	// GapClosingLengthFrac is the least median track length, with 10 % of
	// the detections dropped at random, as a fraction of the undropped
	// case's.
	GapClosingLengthFrac = 0.80
)

// Profiles and verdicts on the true tracer positions with localization
// noise and track breaks (issue 6).
const (
	// Seeds is the number of seeds of the repeated checks ("20 of 20").
	Seeds = 20
	// BulkRateFrac bounds the relative error of the bulk rate.
	BulkRateFrac = 0.01
	// HomogeneousSlipFrac bounds each slip velocity of a homogeneous shear,
	// as a fraction of the wall speed.
	HomogeneousSlipFrac = 0.005
	// SlipFrac bounds the error of each slip velocity, as a fraction of
	// the wall speed.
	SlipFrac = 0.01
	// SlipFraction bounds the absolute error of the slip fraction.
	SlipFraction = 0.01
	// BandBoundaryFrac bounds the error of a band boundary, as a fraction
	// of the gap.
	BandBoundaryFrac = 0.03
	// BandRateFrac bounds the relative error of a band's rate.
	BandRateFrac = 0.05
	// PlaneFrac bounds the error of a failure plane's height after
	// cessation, as a fraction of the gap.
	PlaneFrac = 0.03
	// OnsetFrames bounds the error of the onset of motion after the stop,
	// in frames.
	OnsetFrames = 2
)
