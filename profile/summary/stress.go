package summary

// PhaseStress is what a rheometer log says about one shear phase, part of
// its ShearPhase (the fields stand beside the others in summary.json).
// Every number is null without a log that has a torque or stress column.
type PhaseStress struct {
	// WallStressPa is the mean shear stress at the wall over the phase's
	// window (WindowS), Pa, with its standard uncertainty; for a Couette
	// cell at the inner cylinder, WallStressOuterPa at the outer one (null
	// for the other tools, whose wall stress is the same at both walls).
	WallStressPa         Num `json:"wall_stress_pa"`
	WallStressErrPa      Num `json:"wall_stress_err_pa"`
	WallStressOuterPa    Num `json:"wall_stress_outer_pa"`
	WallStressOuterErrPa Num `json:"wall_stress_outer_err_pa"`
	// WallStressSource names the conversion from torque to stress and its
	// source ("" without a stress).
	WallStressSource string `json:"wall_stress_source,omitempty"`
	// StressPeakS is the time of the stress maximum of a start-up, in s
	// after the phase's start (StartS); StressPeakStrain the nominal
	// strain imposed since the start then; StressPeakPa the stress. Null
	// when the stress does not overshoot inside the phase.
	StressPeakS      Num `json:"stress_peak_s"`
	StressPeakStrain Num `json:"stress_peak_strain"`
	StressPeakPa     Num `json:"stress_peak_pa"`
}

// NoStress is the PhaseStress of a phase without a stress from the log.
var NoStress = PhaseStress{WallStressPa: Null, WallStressErrPa: Null, WallStressOuterPa: Null, WallStressOuterErrPa: Null,
	StressPeakS: Null, StressPeakStrain: Null, StressPeakPa: Null}

// SlipLaws are the slip laws fitted across the shear phases, one per wall
// (null where a wall has no phase with both a slip and a wall stress).
type SlipLaws struct {
	Stationary *SlipLaw `json:"stationary"`
	Moving     *SlipLaw `json:"moving"`
}

// SlipLaw is the slip velocity at one wall against the wall stress there,
// fitted across the shear phases: Navier's v = beta sigma
// (NavierUMPerSPerPa, um/s per Pa) and the power law v = k sigma^p
// (PowerLawExponent p, PowerLawCoefficient k in um/s per Pa^p, fitted to
// the phases of positive slip).
type SlipLaw struct {
	Phases               int `json:"phases"`
	NavierUMPerSPerPa    Num `json:"navier_um_per_s_per_pa"`
	NavierErrUMPerSPerPa Num `json:"navier_err_um_per_s_per_pa"`
	PowerLawExponent     Num `json:"power_law_exponent"`
	PowerLawExponentErr  Num `json:"power_law_exponent_err"`
	PowerLawCoefficient  Num `json:"power_law_coefficient"`
	PowerLawPhases       int `json:"power_law_phases"`
}
