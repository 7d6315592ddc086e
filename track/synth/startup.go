package synth

import (
	"fmt"
	"math"
	"sort"

	"gonum.org/v1/gonum/integrate/quad"

	"gaptrace/calib/experiment"
	"gaptrace/calib/jsonnum"
)

// Transient makes the profile of every shear step develop from the affine
// one: at the step's start the sample shears uniformly without slip
// (v/V = y/H), and the Profile's slip and bands grow in from their onsets.
//
// Writing the Profile's v/V as a(y) + s(y) + b(y), with a(y) = y/H the
// affine profile, s(y) the slip part (the linear profile with the
// Profile's slips, minus a) and b(y) the band part (the Profile minus that
// linear profile, zero at both walls), the fluid during a step moves at
//
//	v(y, t)/V = a(y) + Ps(t) s(y) + Pb(t) b(y),
//
// where t is the time since the step's start and P(t) = 0 before its onset
// and 1 - exp(-(t - onset)/tau) after it (a step at the onset when tau is
// 0). The zero Transient is off: the Profile from the first instant, as
// before. Onsets and time constants are in s.
type Transient struct {
	SlipOnsetS, SlipTauS   float64 // when slip begins after a step's start, and its time constant
	BandsOnsetS, BandsTauS float64 // when the bands begin to form, and their time constant
}

func (tr Transient) on() bool {
	return tr.SlipOnsetS != 0 || tr.SlipTauS != 0 || tr.BandsOnsetS != 0 || tr.BandsTauS != 0
}

// validate reports the first unusable field.
func (tr Transient) validate() error {
	for _, v := range []float64{tr.SlipOnsetS, tr.SlipTauS, tr.BandsOnsetS, tr.BandsTauS} {
		if !(v >= 0) || math.IsInf(v, 0) {
			return fmt.Errorf("transient %+v: onsets and time constants must be finite and not negative", tr)
		}
	}
	return nil
}

// transientProgress is P(t) for an onset and time constant.
func transientProgress(onsetS, tauS, tS float64) float64 {
	dt := tS - onsetS
	if dt <= 0 {
		return 0
	}
	if tauS == 0 {
		return 1
	}
	return -math.Expm1(-dt / tauS)
}

// transientIntegral is the integral of P from 0 to t, s.
func transientIntegral(onsetS, tauS, tS float64) float64 {
	dt := tS - onsetS
	if dt <= 0 {
		return 0
	}
	if tauS == 0 {
		return dt
	}
	return dt + tauS*math.Expm1(-dt/tauS)
}

// Progress returns the slip's and the bands' development (0 to 1) at tS
// seconds after a step's start.
func (tr Transient) Progress(tS float64) (slip, bands float64) {
	return transientProgress(tr.SlipOnsetS, tr.SlipTauS, tS), transientProgress(tr.BandsOnsetS, tr.BandsTauS, tS)
}

// parts returns the affine, slip and band parts of v/V at height yUM.
func (s *Scenario) parts(yUM float64) (a, sl, b float64) {
	p := s.Profile
	y := clamp(yUM/s.GapUM(), 0, 1)
	lin := p.SlipStationary + p.sheared()*y
	return y, lin - y, p.Velocity(y) - lin
}

// stepDisplacement is the displacement in um of the layer at yUM during a
// step of wall speed vUMPerS (signed) after dtS seconds of it.
func (s *Scenario) stepDisplacement(vUMPerS, yUM, dtS float64) float64 {
	tr := s.Transient
	a, sl, b := s.parts(yUM)
	return vUMPerS * (a*dtS + sl*transientIntegral(tr.SlipOnsetS, tr.SlipTauS, dtS) +
		b*transientIntegral(tr.BandsOnsetS, tr.BandsTauS, dtS))
}

// NominalStrain returns the nominal strain imposed between time 0 and tS:
// the sum over the shear steps of their nominal rate times the time spent
// in them (positive for the first step's sense). The strain within a phase
// is NominalStrain(t) - NominalStrain(phase start).
func (s *Scenario) NominalStrain(tS float64) float64 {
	p := s.Program()
	sense := flowSense(p)
	g := 0.0
	for _, st := range p {
		if dt := min(tS, st.EndS) - st.StartS; dt > 0 {
			g += sense * st.RatePerS * dt
		}
	}
	return g
}

// velocityQuadNodes is the order of the Gauss-Legendre rule MeanVelocity
// uses on each smooth piece of the profile: exact for the piecewise-linear
// profiles, and far below 1e-9 of the wall speed for the curved Couette
// profile over any bin.
const velocityQuadNodes = 16

// MeanVelocityUMPerS returns the exact mean fluid velocity along gap +x, in
// um/s, of the layer between heights y0UM and y1UM over the time window
// [t0S, t1S]: the mean over the layer of the displacement between the two
// times, over their difference. It holds for any window (rest, shear,
// start-up transients, after the stop); the heights are clamped to the gap.
func (s *Scenario) MeanVelocityUMPerS(y0UM, y1UM, t0S, t1S float64) (float64, error) {
	h := s.GapUM()
	y0, y1 := clamp(min(y0UM, y1UM), 0, h), clamp(max(y0UM, y1UM), 0, h)
	if !(t1S > t0S) || !(y1 > y0) {
		return math.NaN(), fmt.Errorf("synth: mean velocity over y [%g, %g] um and t [%g, %g] s: need an upper bound above the lower",
			y0UM, y1UM, t0S, t1S)
	}
	prog := s.Program()
	f := func(y float64) float64 { return s.displacement(prog, y, t1S) - s.displacement(prog, y, t0S) }
	// Breakpoints of the piecewise-linear profile and of the failure plane.
	cuts := []float64{y0, y1}
	for _, b := range s.Profile.Bands {
		cuts = append(cuts, b.ToFrac*h)
	}
	if s.Cessation.Kind == CessationPlane {
		cuts = append(cuts, s.Cessation.PlaneFrac*h)
	}
	sort.Float64s(cuts)
	sum := 0.0
	for i := 1; i < len(cuts); i++ {
		a, b := max(cuts[i-1], y0), min(cuts[i], y1)
		if b > a {
			sum += quad.Fixed(f, a, b, velocityQuadNodes, quad.Legendre{}, 0)
		}
	}
	return sum / (y1 - y0) / (t1S - t0S), nil
}

// stepAt returns the index of the shear step that holds the window
// [t0S, t1S], or an error naming the window.
func stepAt(p experiment.Program, t0S, t1S float64) (int, error) {
	for i, st := range p {
		if t0S >= st.StartS && t1S <= st.EndS && t1S > t0S {
			return i, nil
		}
	}
	return -1, fmt.Errorf("synth: window [%g, %g] s does not lie inside one shear step", t0S, t1S)
}

// WindowTruth returns the true decomposition of the mean profile over a
// time window inside one shear step, as summary.json's shear phase would
// hold it for that window: the mean over the window of the developing
// profile is again continuous and piecewise linear, with slips and band
// rates that mix the affine and the Profile's by the window means of the
// slip's and the bands' development. Without a Transient it is the step's
// steady truth.
func (s *Scenario) WindowTruth(t0S, t1S float64) (ShearTruth, error) {
	prog := s.Program()
	i, err := stepAt(prog, t0S, t1S)
	if err != nil {
		return ShearTruth{}, err
	}
	st := prog[i]
	sense := flowSense(prog)
	prof := s.windowProfile(t0S-st.StartS, t1S-st.StartS)
	sp := s.shearTruthOf(prof, t0S, t1S, sense*st.WallSpeedUMPerS, sense*st.RatePerS)
	sp.StartS, sp.EndS = st.StartS, st.EndS
	return sp, nil
}

// windowProfile is the mean profile over [a, b] s after a step's start.
func (s *Scenario) windowProfile(aS, bS float64) Profile {
	if !s.Transient.on() {
		return s.Profile
	}
	tr := s.Transient
	mean := func(on, tau float64) float64 {
		return (transientIntegral(on, tau, bS) - transientIntegral(on, tau, aS)) / (bS - aS)
	}
	ps, pb := mean(tr.SlipOnsetS, tr.SlipTauS), mean(tr.BandsOnsetS, tr.BandsTauS)
	p := s.Profile
	out := Profile{SlipStationary: ps * p.SlipStationary, SlipMoving: ps * p.SlipMoving}
	if len(p.Bands) > 0 {
		// Local rate of each band in units of V/H: the affine 1, less the
		// slips' share, plus the bands' departure from the linear profile.
		rates := p.BandRates()
		for k, b := range p.Bands {
			r := 1 - ps*(p.SlipStationary+p.SlipMoving) + pb*(rates[k]-p.sheared())
			out.Bands = append(out.Bands, Band{ToFrac: b.ToFrac, RateWeight: r})
		}
	}
	return out
}

// StepTruth is what truth.json says about one shear step beyond the
// summary: its program, the start-up transient, and the stress maximum of
// the StressModel. Times are on the video's clock unless the name says
// "after the step's start"; null numbers are unknown or absent.
type StepTruth struct {
	StartS   float64 `json:"start_s"`
	EndS     float64 `json:"end_s"`
	RatePerS float64 `json:"rate_per_s"` // nominal rate, signed along gap +x
	// InhomogeneityOnsetS is the time after the step's start when the
	// profile first departs from the affine no-slip profile (the earlier
	// of the slip's and the bands' onsets that changes the profile); null
	// when it never departs within the step.
	InhomogeneityOnsetS      jsonnum.Num `json:"inhomogeneity_onset_s"`
	InhomogeneityOnsetStrain jsonnum.Num `json:"inhomogeneity_onset_strain"` // nominal strain since the step's start at the onset
	// InhomogeneityFirst is "slip", "bands", "slip+bands" (both at once) or
	// null with the onset.
	InhomogeneityFirst *string     `json:"inhomogeneity_first"`
	SlipOnsetS         jsonnum.Num `json:"slip_onset_s"` // after the step's start; null without slip
	SlipTauS           jsonnum.Num `json:"slip_tau_s"`
	BandsOnsetS        jsonnum.Num `json:"bands_onset_s"` // null without bands
	BandsTauS          jsonnum.Num `json:"bands_tau_s"`
	// StressPeakS is the time of the stress maximum within the step (video
	// clock), StressPeakStrain the nominal strain since the step's start
	// then, StressPeakPa the stress; null without a StressModel or when the
	// stress does not peak inside the step.
	StressPeakS      jsonnum.Num `json:"stress_peak_s"`
	StressPeakStrain jsonnum.Num `json:"stress_peak_strain"`
	StressPeakPa     jsonnum.Num `json:"stress_peak_pa"`
}

// Steps returns the StepTruth of every shear step.
func (s *Scenario) Steps() []StepTruth {
	prog := s.Program()
	sense := flowSense(prog)
	hasSlip := s.Profile.SlipStationary != 0 || s.Profile.SlipMoving != 0
	rates := s.Profile.BandRates()
	hasBands := false
	for _, r := range rates {
		hasBands = hasBands || r != rates[0]
	}
	out := make([]StepTruth, 0, len(prog))
	stress := s.stressSteps(prog)
	for i, st := range prog {
		t := StepTruth{StartS: st.StartS, EndS: st.EndS, RatePerS: sense * st.RatePerS,
			InhomogeneityOnsetS: jsonnum.Null, InhomogeneityOnsetStrain: jsonnum.Null,
			SlipOnsetS: jsonnum.Null, SlipTauS: jsonnum.Null, BandsOnsetS: jsonnum.Null, BandsTauS: jsonnum.Null,
			StressPeakS: jsonnum.Null, StressPeakStrain: jsonnum.Null, StressPeakPa: jsonnum.Null}
		tr := s.Transient
		dur := st.DurationS()
		onset, first := math.Inf(1), ""
		if hasSlip {
			t.SlipOnsetS, t.SlipTauS = jsonnum.Num(tr.SlipOnsetS), jsonnum.Num(tr.SlipTauS)
			if tr.SlipOnsetS < dur {
				onset, first = tr.SlipOnsetS, "slip"
			}
		}
		if hasBands {
			t.BandsOnsetS, t.BandsTauS = jsonnum.Num(tr.BandsOnsetS), jsonnum.Num(tr.BandsTauS)
			switch {
			case tr.BandsOnsetS >= dur:
			case tr.BandsOnsetS < onset:
				onset, first = tr.BandsOnsetS, "bands"
			case tr.BandsOnsetS == onset:
				first = "slip+bands"
			}
		}
		if first != "" {
			t.InhomogeneityOnsetS = jsonnum.Num(onset)
			t.InhomogeneityOnsetStrain = jsonnum.Num(math.Abs(st.RatePerS) * onset)
			t.InhomogeneityFirst = &first
		}
		if pk := stress[i]; pk.ok {
			t.StressPeakS, t.StressPeakStrain, t.StressPeakPa = jsonnum.Num(pk.tS), jsonnum.Num(pk.strain), jsonnum.Num(pk.pa)
		}
		out = append(out, t)
	}
	return out
}
