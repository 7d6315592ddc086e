package main

import (
	"flag"
	"fmt"
	"os"
	"strings"

	"gaptrace/calib/experiment"
	"gaptrace/calib/rheolog"
)

// logFlags are the rheometer-log flags, the same on calib, track, profile
// and run (and batch's manifest column log, passed on to run).
type logFlags struct {
	path                                   string
	time, value, kind                      string
	angle, omega, strain, rate             string
	torque, torqueUnit, stress, stressUnit string
	offsetS                                float64
	encoding                               string
}

// add registers the flags on fs.
func (l *logFlags) add(fs *flag.FlagSet) {
	fs.StringVar(&l.path, "log", "", "rheometer log (CSV: comma, semicolon or tab; decimal commas and units in the headers allowed): its motion gives the phases (source log), its torque or stress each shear phase's wall stress")
	fs.StringVar(&l.time, "log-time", "", "the log's time column: header name or 1-based number (default: the column named time, else the first)")
	fs.StringVar(&l.value, "log-value", "", "the log's motion column, of the kind --log-kind says: header name or 1-based number (default: found by the headers' names)")
	fs.StringVar(&l.kind, "log-kind", "", "what the motion column holds: "+strings.Join(rheolog.Kinds, ", ")+" (default: from its header)")
	fs.StringVar(&l.angle, "log-angle", "", "the log's deflection-angle column (rad, or degrees when its header says deg)")
	fs.StringVar(&l.omega, "log-angular-velocity", "", "the log's angular-velocity column (rad/s, or rpm when its header says rpm or 1/min)")
	fs.StringVar(&l.strain, "log-strain", "", "the log's strain column (a fraction, or % when its header says %)")
	fs.StringVar(&l.rate, "log-rate", "", "the log's shear-rate column (1/s)")
	fs.StringVar(&l.torque, "log-torque", "", "the log's torque column (force for sliding plates): header name or number; - for none (default: the column named torque or force)")
	fs.StringVar(&l.torqueUnit, "log-torque-unit", "", "unit of the torque column: N m, mN m, uN m, N or mN (default: from its header, else N m)")
	fs.StringVar(&l.stress, "log-stress", "", "the log's shear-stress column: header name or number; - for none (default: the column named stress)")
	fs.StringVar(&l.stressUnit, "log-stress-unit", "", "unit of the stress column: Pa, kPa, MPa or mPa (default: from its header, else Pa)")
	fs.Float64Var(&l.offsetS, "log-offset", 0, "seconds added to the log's times to put them on the video's clock (t = 0 at the first frame)")
	fs.StringVar(&l.encoding, "log-encoding", rheolog.EncodingAuto, "the log's text encoding: auto, utf-8, utf-16le, utf-16be or latin-1")
}

// spec returns the reader's spec, or bad usage for flags that contradict
// each other.
func (l *logFlags) spec() (rheolog.Spec, error) {
	s := rheolog.Spec{Time: l.time, Motion: l.value, Kind: l.kind, Torque: l.torque, TorqueUnit: l.torqueUnit,
		Stress: l.stress, StressUnit: l.stressUnit, OffsetS: l.offsetS, Encoding: l.encoding}
	var given []string
	for _, c := range []struct{ flag, col, kind string }{
		{"--log-angle", l.angle, rheolog.Angle}, {"--log-angular-velocity", l.omega, rheolog.AngularVelocity},
		{"--log-strain", l.strain, rheolog.Strain}, {"--log-rate", l.rate, rheolog.Rate},
	} {
		if c.col == "" {
			continue
		}
		given = append(given, c.flag)
		s.Motion = c.col
		if l.kind == "" {
			s.Kind = c.kind
		}
	}
	if l.value != "" && len(given) > 0 {
		given = append(given, "--log-value")
	}
	if len(given) > 1 {
		return s, badInputf("%s: give one motion column of the log", strings.Join(given, " and "))
	}
	return s, nil
}

// load reads the log, nil without --log. Every problem is bad input.
func (l *logFlags) load(exp *experiment.Experiment) (*rheolog.Log, error) {
	if l.path == "" {
		for _, f := range []string{l.value, l.kind, l.angle, l.omega, l.strain, l.rate, l.torque, l.stress} {
			if f != "" {
				return nil, badInputf("log columns given without --log")
			}
		}
		return nil, nil
	}
	spec, err := l.spec()
	if err != nil {
		return nil, err
	}
	f, err := os.Open(l.path)
	if err != nil {
		return nil, badInputf("--log: %v", err)
	}
	defer f.Close()
	lg, err := rheolog.Read(f, spec)
	if err != nil {
		return nil, badInputf("--log %s: %v", l.path, err)
	}
	if _, err := lg.Program(exp.Geometry); err != nil {
		return nil, badInputf("--log %s: %v", l.path, err)
	}
	return lg, nil
}

// describe is a line on what the log gave, for stderr.
func describeLog(l *rheolog.Log) string {
	parts := []string{fmt.Sprintf("%d samples, motion %q (%s)", len(l.TimeS), l.MotionHeader, l.Kind)}
	if l.TorqueHeader != "" {
		parts = append(parts, fmt.Sprintf("torque %q", l.TorqueHeader))
	}
	if l.StressHeader != "" {
		parts = append(parts, fmt.Sprintf("stress %q", l.StressHeader))
	}
	return strings.Join(parts, ", ")
}
