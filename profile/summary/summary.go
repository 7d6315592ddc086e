// Package summary defines summary.json, the machine-readable result of a
// gaptrace run, as fixed by the interface contract, and writes it so that a
// failed run never leaves a complete-looking file behind.
//
// Unknown numbers are NaN in Go and null in JSON (type Num). The schema
// only: the verdicts are decided in rheometry and cessation, and the
// summary is assembled by pipeline.
package summary

import (
	"encoding/json"
	"fmt"
	"os"

	"gaptrace/calib"
	"gaptrace/calib/atomicfile"
	"gaptrace/calib/jsonnum"
	"gaptrace/profile/phases"
)

// Num is summary.json's number: null when unknown, NaN in Go.
type Num = jsonnum.Num

// Null is the unknown Num.
var Null = jsonnum.Null

// Summary is summary.json.
type Summary struct {
	Tool        Tool               `json:"tool"`
	Experiment  string             `json:"experiment,omitempty"` // the experiment's name
	Input       Input              `json:"input"`
	Calibration *calib.Calibration `json:"calibration"`
	Tracking    Tracking           `json:"tracking"`
	Phases      []phases.Phase     `json:"phases"`
	ShearPhases []ShearPhase       `json:"shear_phases"`
	AfterStop   *AfterStop         `json:"after_stop"`
	// SlipLaw is fitted across the shear phases when the rheometer log
	// gives their wall stress (null otherwise).
	SlipLaw  *SlipLaws `json:"slip_law"`
	Warnings []string  `json:"warnings"`
}

// Tool names the program.
type Tool struct {
	Name    string `json:"name"`
	Version string `json:"version"`
}

// Version is the tool.version that summary.json carries: gaptrace's
// version.
const Version = "0.1.0"

// Input describes the video.
type Input struct {
	Path     string  `json:"path"`
	Frames   int     `json:"frames"`
	FPS      float64 `json:"fps"`
	WidthPx  int     `json:"width_px"`
	HeightPx int     `json:"height_px"`
	// Grey is how a video's colour channels were reduced to grey (an
	// extension of the contract; absent for still frames).
	Grey *Grey `json:"grey,omitempty"`
}

// Grey is the reduction of a video's three channels to the grey image the
// tracers are found in (track/frames.Grey).
type Grey struct {
	// Method is "luma" (the standard luma weights; Motion JPEG decoded to
	// its own luma plane) or "weighted" (weights chosen per recording for
	// the tracers' contrast against the noise).
	Method     string     `json:"method"`
	WeightsBGR [3]float64 `json:"weights_bgr"`
	// LumaCNRFraction is the tracers' contrast-to-noise ratio in luma as
	// a fraction of the best weighting's, on the first frames; null when
	// luma was kept unmeasured, for a codec that stores the colour at a
	// lower resolution than luma.
	LumaCNRFraction *float64 `json:"luma_cnr_fraction"`
}

// Tracking counts what the linker produced.
type Tracking struct {
	Detections        int `json:"detections"`
	Tracks            int `json:"tracks"`
	MedianTrackFrames int `json:"median_track_frames"`
}

// Band is one layer of uniform local shear rate, from FromUM to ToUM above
// the stationary wall.
type Band struct {
	FromUM      Num `json:"from_um"`
	ToUM        Num `json:"to_um"`
	RatePerS    Num `json:"rate_per_s"`
	RateErrPerS Num `json:"rate_err_per_s"`
	// Boundary uncertainty of ToUM, um (null for the top band).
	ToErrUM Num `json:"to_err_um"`
}

// ShearPhase is the rheometric decomposition of one shear phase.
type ShearPhase struct {
	StartS                    float64    `json:"start_s"`
	EndS                      float64    `json:"end_s"`
	WindowS                   [2]float64 `json:"window_s"`
	WallSpeedUMPerS           Num        `json:"wall_speed_um_per_s"`
	NominalRatePerS           Num        `json:"nominal_rate_per_s"`
	BulkRatePerS              Num        `json:"bulk_rate_per_s"`
	BulkRateErrPerS           Num        `json:"bulk_rate_err_per_s"`
	SlipStationaryUMPerS      Num        `json:"slip_stationary_um_per_s"`
	SlipStationaryErrUMPerS   Num        `json:"slip_stationary_err_um_per_s"`
	SlipMovingUMPerS          Num        `json:"slip_moving_um_per_s"`
	SlipMovingErrUMPerS       Num        `json:"slip_moving_err_um_per_s"`
	SlipLengthStationaryUM    Num        `json:"slip_length_stationary_um"`
	SlipLengthStationaryErrUM Num        `json:"slip_length_stationary_err_um"`
	SlipLengthMovingUM        Num        `json:"slip_length_moving_um"`
	SlipLengthMovingErrUM     Num        `json:"slip_length_moving_err_um"`
	SlipFraction              Num        `json:"slip_fraction"`
	SlipFractionErr           Num        `json:"slip_fraction_err"`
	WallSlip                  bool       `json:"wall_slip"`
	Bands                     []Band     `json:"bands"`
	Banded                    bool       `json:"banded"`
	// Verdict is one of rheometry's verdicts (rheometry.VerdictOf).
	Verdict string `json:"verdict"`
	// InTime holds the time-resolved windows of the phase (--every), in
	// time order; absent without --every. Windows whose profile could not
	// be fitted are left out, with a warning.
	InTime []InTime `json:"in_time,omitempty"`
	// InTimeWindowS is the length of the windows the onset was found
	// with, s: --every's, or the default chosen from the tracer density.
	InTimeWindowS Num `json:"in_time_window_s"`
	// InhomogeneityOnsetS is the time after the phase's start at which the
	// profile first departs from the affine no-slip profile, s, with its
	// standard uncertainty; null when it never does.
	InhomogeneityOnsetS    Num `json:"inhomogeneity_onset_s"`
	InhomogeneityOnsetErrS Num `json:"inhomogeneity_onset_err_s"`
	// InhomogeneityOnsetStrain is the nominal strain at the onset.
	InhomogeneityOnsetStrain Num `json:"inhomogeneity_onset_strain"`
	// InhomogeneityFirst is "slip" or "bands", whichever departed first;
	// null with the onset.
	InhomogeneityFirst *string `json:"inhomogeneity_first"`
	PhaseStress
	// Budget lists, per quantity (its summary field's name), each
	// component's standard uncertainty in the quantity's unit; the field's
	// error is their root sum of squares (see profile/uncertainty).
	Budget Budget `json:"budget"`
}

// Budget is an uncertainty budget: per quantity, the standard uncertainty
// each component contributes, by the component's name.
type Budget map[string]map[string]Num

// InTime is one time-resolved window of a shear phase.
type InTime struct {
	TStartS float64 `json:"t_start_s"`
	TEndS   float64 `json:"t_end_s"`
	// Strain is the nominal strain at the window's middle.
	Strain                  Num    `json:"strain"`
	BulkRatePerS            Num    `json:"bulk_rate_per_s"`
	BulkRateErrPerS         Num    `json:"bulk_rate_err_per_s"`
	SlipStationaryUMPerS    Num    `json:"slip_stationary_um_per_s"`
	SlipStationaryErrUMPerS Num    `json:"slip_stationary_err_um_per_s"`
	SlipMovingUMPerS        Num    `json:"slip_moving_um_per_s"`
	SlipMovingErrUMPerS     Num    `json:"slip_moving_err_um_per_s"`
	Bands                   []Band `json:"bands"`
	Verdict                 string `json:"verdict"`
}

// AfterStop is the analysis of the time after the last shear phase.
type AfterStop struct {
	StopS             float64 `json:"stop_s"`
	ObservedS         float64 `json:"observed_s"`
	NoiseFloorUM      Num     `json:"noise_floor_um"`
	MaxDisplacementUM Num     `json:"max_displacement_um"`
	RecoveredStrain   Num     `json:"recovered_strain"`
	Verdict           string  `json:"verdict"` // cessation.Quiescent or cessation.Moving
	Mode              *string `json:"mode"`    // cessation.ModeWall or ModeBulk; nil when quiescent
	PlaneUM           Num     `json:"plane_um"`
	OnsetAfterStopS   Num     `json:"onset_after_stop_s"`
	// Standard uncertainties of the values above (null when unknown).
	PlaneErrUM         Num    `json:"plane_err_um"`
	OnsetAfterStopErrS Num    `json:"onset_after_stop_err_s"`
	RecoveredStrainErr Num    `json:"recovered_strain_err"`
	Budget             Budget `json:"budget"`
}

// New returns a summary with the tool filled in and empty, non-null lists.
func New() *Summary {
	return &Summary{Tool: Tool{Name: "gaptrace", Version: Version}, Phases: []phases.Phase{},
		ShearPhases: []ShearPhase{}, Warnings: []string{}}
}

// Write writes s as indented JSON to path, atomically.
func (s *Summary) Write(path string) error {
	b, err := json.MarshalIndent(s, "", "  ")
	if err != nil {
		return err
	}
	return atomicfile.WriteBytes(path, append(b, '\n'))
}

// Read reads a summary.json file.
func Read(path string) (*Summary, error) {
	b, err := os.ReadFile(path)
	if err != nil {
		return nil, err
	}
	var s Summary
	if err := json.Unmarshal(b, &s); err != nil {
		return nil, fmt.Errorf("%s: %w", path, err)
	}
	return &s, nil
}
