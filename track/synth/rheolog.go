package synth

import (
	"bufio"
	"fmt"
	"io"
	"math"
	"strconv"
	"strings"

	"gaptrace/calib/experiment"
	"gaptrace/calib/geometry"
)

// StressModel is the sample's shear stress during the motion program, for
// the rheometer log and the truth's stress maximum. The steady stress of a
// step at nominal rate g is ViscosityPaS x g. When a step starts, the
// stress moves from its value then, s0, towards that steady value as the
// step response of an underdamped second-order system (Ogata, Modern
// Control Engineering, 5th ed. 2010, section 5-3, from memory):
//
//	s(t) = s0 + (ViscosityPaS g - s0) x (1 - exp(-z wn t) (cos wd t + z/sqrt(1-z^2) sin wd t)),
//
// t the time since the step's start, with its first maximum at
// tp = pi/wd and an overshoot exp(-z pi / sqrt(1 - z^2)) of the change.
// The model is chosen so that the maximum comes at the strain PeakStrain
// (tp = PeakStrain / |g|) with the relative overshoot Overshoot: a start-up
// stress overshoot of an entangled polymer, which peaks at a strain of
// about 2 (from memory). At rest and after the stop the stress relaxes
// exponentially with the time constant 1/(z wn) of the last step. Zero
// ViscosityPaS: no stress model.
type StressModel struct {
	ViscosityPaS float64 // steady shear viscosity, Pa s
	PeakStrain   float64 // strain since a step's start at the stress maximum; 0: 2.2
	Overshoot    float64 // the maximum's excess over the steady stress, relative to the change (0..1); 0: 0.4
}

// Defaults of StressModel.
const (
	defaultPeakStrain = 2.2
	defaultOvershoot  = 0.4
)

func (m StressModel) on() bool { return m.ViscosityPaS > 0 }

func (m StressModel) validate() error {
	switch {
	case !(m.ViscosityPaS >= 0) || math.IsInf(m.ViscosityPaS, 0):
		return fmt.Errorf("stress model viscosity %g Pa s, must be positive or 0 (none)", m.ViscosityPaS)
	case !(m.PeakStrain >= 0) || math.IsInf(m.PeakStrain, 0):
		return fmt.Errorf("stress model peak strain %g, must be positive", m.PeakStrain)
	case !(m.Overshoot >= 0 && m.Overshoot < 1):
		return fmt.Errorf("stress model overshoot %g, must be in (0, 1)", m.Overshoot)
	}
	return nil
}

// response holds the second-order response of one step: damping ratio z,
// natural and damped angular frequencies, s^-1.
type response struct{ z, wn, wd float64 }

func (m StressModel) response(ratePerS float64) response {
	tp := orDefault(m.PeakStrain, defaultPeakStrain) / math.Abs(ratePerS)
	l := math.Log(orDefault(m.Overshoot, defaultOvershoot))
	z := -l / math.Sqrt(math.Pi*math.Pi+l*l)
	wd := math.Pi / tp
	return response{z: z, wn: wd / math.Sqrt(1-z*z), wd: wd}
}

// step is the unit step response x(t).
func (r response) step(tS float64) float64 {
	if tS <= 0 {
		return 0
	}
	return 1 - math.Exp(-r.z*r.wn*tS)*(math.Cos(r.wd*tS)+r.z/math.Sqrt(1-r.z*r.z)*math.Sin(r.wd*tS))
}

// stressPeak is a step's stress maximum.
type stressPeak struct {
	ok             bool
	tS, strain, pa float64
}

// stressState walks the program: for each step the stress at its start
// and its response.
type stressState struct {
	prog   experiment.Program
	s0     []float64 // stress at each step's start, Pa
	resp   []response
	target []float64 // steady stress of each step, Pa
}

func (s *Scenario) stressState(prog experiment.Program) *stressState {
	m := s.Stress
	sense := flowSense(prog)
	st := &stressState{prog: prog, s0: make([]float64, len(prog)), resp: make([]response, len(prog)),
		target: make([]float64, len(prog))}
	for i, p := range prog {
		rate := sense * p.RatePerS
		st.target[i] = m.ViscosityPaS * rate
		st.resp[i] = m.response(rate)
		if i > 0 {
			st.s0[i] = st.at(p.StartS, i-1)
		}
	}
	return st
}

// at is the stress at tS when step k is the last one started, Pa.
func (st *stressState) at(tS float64, k int) float64 {
	p := st.prog[k]
	if tS <= p.EndS {
		return st.s0[k] + (st.target[k]-st.s0[k])*st.resp[k].step(tS-p.StartS)
	}
	end := st.s0[k] + (st.target[k]-st.s0[k])*st.resp[k].step(p.DurationS())
	r := st.resp[k]
	return end * math.Exp(-r.z*r.wn*(tS-p.EndS))
}

// StressPa returns the StressModel's shear stress at tS, Pa (0 before the
// first step and without a model).
func (s *Scenario) StressPa(tS float64) float64 {
	if !s.Stress.on() {
		return 0
	}
	prog := s.Program()
	st := s.stressState(prog)
	return st.stress(tS)
}

func (st *stressState) stress(tS float64) float64 {
	k := -1
	for i, p := range st.prog {
		if tS >= p.StartS {
			k = i
		}
	}
	if k < 0 {
		return 0
	}
	return st.at(tS, k)
}

// stressSteps returns each step's stress maximum: at tp after its start
// when the stress rises towards its steady value and the step lasts beyond
// tp (the response's later maxima are lower).
func (s *Scenario) stressSteps(prog experiment.Program) []stressPeak {
	out := make([]stressPeak, len(prog))
	if !s.Stress.on() {
		return out
	}
	st := s.stressState(prog)
	os := orDefault(s.Stress.Overshoot, defaultOvershoot)
	for i, p := range prog {
		r := st.resp[i]
		tp := math.Pi / r.wd
		rise := st.target[i] - st.s0[i]
		if tp >= p.DurationS() || math.Abs(st.target[i]) <= math.Abs(st.s0[i]) || rise == 0 {
			continue
		}
		out[i] = stressPeak{ok: true, tS: p.StartS + tp, strain: math.Abs(p.RatePerS) * tp, pa: st.s0[i] + rise*(1+os)}
	}
	return out
}

// RheometerLog says how Write renders the rheometer's log,
// rheometer_log.csv: one line per sample at RateHz from LeadS before the
// first frame to the last frame, on the rheometer's clock, which reads the
// video's time plus ClockOffsetS (so a reader puts the log on the video's
// clock by adding -ClockOffsetS). Zero RateHz: no log.
//
// Columns is the list of columns, in order, from: "time" (s), "angle" (the
// tool's deflection angle: the moving wall's travel over the rotating
// radius, rad or with AngleDeg degrees; rotating tools only), "strain"
// (the nominal strain since the start), "rate" (the nominal rate, 1/s),
// "torque" (N m, or mN m with Units; for sliding plates the force on the
// moving plate, N) and "stress" (Pa); nil: every column the geometry and
// the StressModel allow. Torque follows from the stress by each
// geometry's standard conversion: cone-plate M = 2 pi R^3 s / 3;
// parallel plate M = pi R^3 s / 2, s being the apparent (Newtonian) stress
// at the rim; Couette M = 2 pi Ri^2 L s, s the stress at the inner
// cylinder; sliding plates F = A s (Macosko, Rheology: Principles,
// Measurements, and Applications, 1994, chapter 5, from memory).
//
// Separator is ",", ";" or "\t" (""= ","); DecimalComma writes 0,02 for
// 0.02 (needs ";" or "\t"); Units writes units in the headers ("time [s]")
// instead of the bare names; StressNoise adds Gaussian noise of that sd,
// relative to the largest steady stress, to torque and stress.
type RheometerLog struct {
	RateHz       float64
	LeadS        float64 // seconds of log before the first frame
	ClockOffsetS float64
	Columns      []string
	Separator    string
	DecimalComma bool
	Units        bool
	AngleDeg     bool
	StressNoise  float64
	// PlateAreaMM2 is the sheared area of sliding plates, mm^2; 0: 400.
	PlateAreaMM2 float64
	// CylinderLengthMM is the immersed length of a Couette cell, mm; 0: 40.
	CylinderLengthMM float64
}

// LogFile is the name of the rheometer log Write makes.
const LogFile = "rheometer_log.csv"

// Log columns.
const (
	LogTime   = "time"
	LogAngle  = "angle"
	LogStrain = "strain"
	LogRate   = "rate"
	LogTorque = "torque"
	LogStress = "stress"
)

// Defaults and bounds of RheometerLog.
const (
	defaultPlateAreaMM2     = 400.0
	defaultCylinderLengthMM = 40.0
	maxLogRateHz            = 10000.0
	maxLogSamples           = 10_000_000
)

func (l RheometerLog) on() bool { return l.RateHz > 0 }

// columns returns the log's columns for geometry g with or without a
// stress model.
func (l RheometerLog) columns(g geometry.Geometry, stress bool) []string {
	if l.Columns != nil {
		return l.Columns
	}
	c := []string{LogTime}
	if !math.IsNaN(g.RotatingRadiusUM()) {
		c = append(c, LogAngle)
	}
	c = append(c, LogStrain, LogRate)
	if stress {
		c = append(c, LogTorque, LogStress)
	}
	return c
}

func (s *Scenario) validateLog() error {
	l := s.Log
	if !l.on() {
		if l.RateHz < 0 {
			return fmt.Errorf("log rate %g Hz, must not be negative", l.RateHz)
		}
		return nil
	}
	switch {
	case l.RateHz > maxLogRateHz || math.IsInf(l.RateHz, 0):
		return fmt.Errorf("log rate %g Hz exceeds %g Hz", l.RateHz, maxLogRateHz)
	case (s.DurationS()+l.LeadS)*l.RateHz > maxLogSamples:
		return fmt.Errorf("log of %g s at %g Hz exceeds %d samples", s.DurationS()+l.LeadS, l.RateHz, maxLogSamples)
	case !(l.LeadS >= 0) || math.IsInf(l.LeadS, 0) || math.IsNaN(l.ClockOffsetS) || math.IsInf(l.ClockOffsetS, 0):
		return fmt.Errorf("log lead %g s and clock offset %g s must be finite, the lead not negative", l.LeadS, l.ClockOffsetS)
	case l.Separator != "" && l.Separator != "," && l.Separator != ";" && l.Separator != "\t":
		return fmt.Errorf("log separator %q is not a comma, semicolon or tab", l.Separator)
	case l.DecimalComma && (l.Separator == "" || l.Separator == ","):
		return fmt.Errorf("a log with decimal commas needs a semicolon or tab separator")
	case !(l.StressNoise >= 0) || l.PlateAreaMM2 < 0 || l.CylinderLengthMM < 0:
		return fmt.Errorf("log stress noise %g, plate area %g mm^2 and cylinder length %g mm must not be negative",
			l.StressNoise, l.PlateAreaMM2, l.CylinderLengthMM)
	}
	rotating := !math.IsNaN(s.Geometry.RotatingRadiusUM())
	for _, c := range l.columns(s.Geometry, s.Stress.on()) {
		switch c {
		case LogTime, LogStrain, LogRate:
		case LogAngle:
			if !rotating {
				return fmt.Errorf("log column %q needs a rotating tool, not %q", c, s.Geometry.Kind)
			}
		case LogTorque, LogStress:
			if !s.Stress.on() {
				return fmt.Errorf("log column %q needs a stress model (Stress.ViscosityPaS)", c)
			}
		default:
			return fmt.Errorf("log column %q is not one of time, angle, strain, rate, torque, stress", c)
		}
	}
	return nil
}

// torquePerPa returns the torque (N m), or for sliding plates the force
// (N), per Pa of the model's stress.
func (s *Scenario) torquePerPa() float64 {
	const mPerMM = 1e-3
	g := s.Geometry
	switch g.Kind {
	case geometry.ConePlate:
		r := g.RadiusMM * mPerMM
		return 2 * math.Pi * r * r * r / 3
	case geometry.ParallelPlate:
		r := g.RadiusMM * mPerMM
		return math.Pi * r * r * r / 2
	case geometry.Couette:
		ri := g.InnerRadiusMM * mPerMM
		return 2 * math.Pi * ri * ri * orDefault(s.Log.CylinderLengthMM, defaultCylinderLengthMM) * mPerMM
	}
	return orDefault(s.Log.PlateAreaMM2, defaultPlateAreaMM2) * mPerMM * mPerMM
}

// logHeader returns a column's header.
func (s *Scenario) logHeader(c string) string {
	if !s.Log.Units {
		return c
	}
	switch c {
	case LogTime:
		return "time [s]"
	case LogAngle:
		if s.Log.AngleDeg {
			return "angle [deg]"
		}
		return "angle [rad]"
	case LogStrain:
		return "strain [1]"
	case LogRate:
		return "rate [1/s]"
	case LogTorque:
		if s.Geometry.Kind == geometry.Plates {
			return "force [N]"
		}
		return "torque [mN m]"
	case LogStress:
		return "stress [Pa]"
	}
	return c
}

// WriteLog writes the rheometer log of the scenario's motion program to w,
// as RheometerLog describes; Write calls it for rheometer_log.csv.
func (s *Scenario) WriteLog(w io.Writer) error {
	if err := s.Validate(); err != nil {
		return err
	}
	l := s.Log
	if !l.on() {
		return fmt.Errorf("synth: scenario %q has no rheometer log (Log.RateHz is 0)", s.Name)
	}
	sep := l.Separator
	if sep == "" {
		sep = ","
	}
	cols := l.columns(s.Geometry, s.Stress.on())
	prog := s.Program()
	var st *stressState
	var noise float64
	if s.Stress.on() {
		st = s.stressState(prog)
		for _, t := range st.target {
			noise = max(noise, math.Abs(t))
		}
		noise *= l.StressNoise
	}
	rng := s.rng(streamLog, 0)
	rr := s.Geometry.RotatingRadiusUM()
	torque := s.torquePerPa()
	if l.Units && s.Geometry.Kind != geometry.Plates {
		torque *= 1e3 // mN m
	}
	bw := bufio.NewWriter(w)
	for i, c := range cols {
		if i > 0 {
			bw.WriteString(sep)
		}
		bw.WriteString(s.logHeader(c))
	}
	bw.WriteString("\n")
	end := float64(s.Frames-1) / s.FPS
	if times := s.frameTimes(); times != nil {
		end = times[len(times)-1]
	}
	n := int(math.Floor((end+l.LeadS)*l.RateHz+1e-9)) + 1
	sense := flowSense(prog)
	var line []byte
	for k := range n {
		t := float64(k)/l.RateHz - l.LeadS // the video's clock
		var stress float64
		if st != nil {
			stress = st.stress(t)
			if noise > 0 {
				stress += noise * rng.NormFloat64()
			}
		}
		line = line[:0]
		for i, c := range cols {
			if i > 0 {
				line = append(line, sep...)
			}
			var v float64
			switch c {
			case LogTime:
				v = t + l.ClockOffsetS
			case LogAngle:
				v = s.wallDisplacement(prog, t) / rr
				if l.AngleDeg {
					v *= 180 / math.Pi
				}
			case LogStrain:
				v = s.NominalStrain(t)
			case LogRate:
				for _, p := range prog {
					if t >= p.StartS && t < p.EndS {
						v = sense * p.RatePerS
					}
				}
			case LogTorque:
				v = stress * torque
			case LogStress:
				v = stress
			}
			line = appendLogNumber(line, v, l.DecimalComma)
		}
		line = append(line, '\n')
		if _, err := bw.Write(line); err != nil {
			return err
		}
	}
	return bw.Flush()
}

// logDigits is the number of significant digits of the log's numbers:
// more than an instrument gives, so that the log adds no rounding of its
// own beyond 1e-9.
const logDigits = 10

func appendLogNumber(b []byte, v float64, decimalComma bool) []byte {
	if v == 0 {
		v = 0 // no -0
	}
	n := len(b)
	b = strconv.AppendFloat(b, v, 'g', logDigits, 64)
	if decimalComma {
		if i := strings.IndexByte(string(b[n:]), '.'); i >= 0 {
			b[n+i] = ','
		}
	}
	return b
}
