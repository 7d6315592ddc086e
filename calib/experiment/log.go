package experiment

import (
	"bufio"
	"fmt"
	"io"
	"math"
	"strconv"
	"strings"

	"gaptrace/calib/geometry"
)

// Kinds of motion column in a rheometer's log.
const (
	LogAngleRad = "angle_rad" // the tool's deflection angle, rad
	LogAngleDeg = "angle_deg" // the tool's deflection angle, degrees
	LogStrain   = "strain"    // the nominal strain
	LogRate     = "rate"      // the nominal shear rate, 1/s
)

// LogColumns says how to read a rheometer's exported log: which column
// holds the time in s and which the motion, as a header name (matched
// without regard to case or surrounding space) or a 1-based column number,
// and what the motion column measures (one of the Log kinds). OffsetS is
// added to the log's times to put them on the video's clock (t = 0 at the
// first frame).
type LogColumns struct {
	Time, Value string
	Kind        string
	OffsetS     float64
}

// Log resolution.
const (
	// logZeroFrac: a rate below this fraction of the log's largest rate is
	// the tool at rest (the instrument's control noise).
	logZeroFrac = 0.01
	// logSameFrac: neighbouring intervals whose rates differ by less than
	// this fraction of the larger one belong to the same step.
	logSameFrac = 0.05
)

// ReadLog reads a rheometer's CSV log (comma, semicolon or tab separated,
// with or without a header line) and turns it into a motion program for
// geometry g: the rate in each interval between samples follows from the
// change of angle or strain over it (or is the logged rate), and
// consecutive intervals of nearly the same rate make one step; intervals at
// rest make none.
func ReadLog(r io.Reader, c LogColumns, g geometry.Geometry) (Program, error) {
	switch c.Kind {
	case LogAngleRad, LogAngleDeg, LogStrain, LogRate:
	default:
		return nil, fmt.Errorf("log: column kind %q is not %s, %s, %s or %s", c.Kind, LogAngleRad, LogAngleDeg, LogStrain, LogRate)
	}
	rr := math.NaN()
	if c.Kind == LogAngleRad || c.Kind == LogAngleDeg {
		rr = g.RotatingRadiusUM()
		if math.IsNaN(rr) {
			return nil, fmt.Errorf("log: an angle column needs a rotating tool, not geometry %q", g.Kind)
		}
	}
	ts, vs, err := readColumns(r, c.Time, c.Value)
	if err != nil {
		return nil, err
	}
	if len(ts) < 2 {
		return nil, fmt.Errorf("log: %d samples, need at least 2", len(ts))
	}
	n := len(ts) - 1
	rate := make([]float64, n)
	var maxRate float64
	for i := 0; i < n; i++ {
		dt := ts[i+1] - ts[i]
		if !(dt > 0) {
			return nil, fmt.Errorf("log: time %g s on sample %d does not come after %g s", ts[i+1], i+2, ts[i])
		}
		switch c.Kind {
		case LogRate:
			rate[i] = (vs[i] + vs[i+1]) / 2
		case LogStrain:
			rate[i] = (vs[i+1] - vs[i]) / dt
		default:
			dth := vs[i+1] - vs[i]
			if c.Kind == LogAngleDeg {
				dth *= math.Pi / 180
			}
			rate[i] = g.NominalRate(dth / dt * rr)
		}
		maxRate = math.Max(maxRate, math.Abs(rate[i]))
	}
	var p Program
	for i := 0; i < n; {
		if math.Abs(rate[i]) <= logZeroFrac*maxRate {
			i++
			continue
		}
		j := i + 1
		sumRate := rate[i] * (ts[i+1] - ts[i])
		for j < n && math.Abs(rate[j]-rate[i]) <= logSameFrac*math.Max(math.Abs(rate[j]), math.Abs(rate[i])) {
			sumRate += rate[j] * (ts[j+1] - ts[j])
			j++
		}
		st := Step{StartS: ts[i] + c.OffsetS, EndS: ts[j] + c.OffsetS}
		st.RatePerS = sumRate / (ts[j] - ts[i])
		st.WallSpeedUMPerS = g.WallSpeed(st.RatePerS)
		st.Strain = st.RatePerS * st.DurationS()
		p = append(p, st)
		i = j
	}
	return p, nil
}

// readColumns returns the two chosen columns of a CSV log as numbers.
func readColumns(r io.Reader, timeCol, valueCol string) ([]float64, []float64, error) {
	sc := bufio.NewScanner(r)
	var sep string
	ti, vi := -1, -1
	var ts, vs []float64
	line := 0
	for sc.Scan() {
		line++
		text := strings.TrimSpace(sc.Text())
		if text == "" || strings.HasPrefix(text, "#") {
			continue
		}
		if sep == "" {
			sep = ","
			for _, s := range []string{"\t", ";"} {
				if strings.Count(text, s) > strings.Count(text, sep) {
					sep = s
				}
			}
		}
		fields := strings.Split(text, sep)
		for k := range fields {
			fields[k] = strings.Trim(strings.TrimSpace(fields[k]), `"`)
		}
		if ti < 0 {
			var err error
			ti, err = columnIndex(timeCol, fields)
			if err != nil {
				return nil, nil, fmt.Errorf("log: time column: %w", err)
			}
			vi, err = columnIndex(valueCol, fields)
			if err != nil {
				return nil, nil, fmt.Errorf("log: motion column: %w", err)
			}
			if _, err := strconv.ParseFloat(fields[ti], 64); err != nil {
				continue // a header line
			}
		}
		if ti >= len(fields) || vi >= len(fields) {
			return nil, nil, fmt.Errorf("log: line %d has %d columns, need %d", line, len(fields), max(ti, vi)+1)
		}
		t, err1 := strconv.ParseFloat(fields[ti], 64)
		v, err2 := strconv.ParseFloat(fields[vi], 64)
		if err1 != nil || err2 != nil {
			return nil, nil, fmt.Errorf("log: line %d: %q, %q are not numbers", line, fields[ti], fields[vi])
		}
		ts, vs = append(ts, t), append(vs, v)
	}
	if err := sc.Err(); err != nil {
		return nil, nil, fmt.Errorf("log: %w", err)
	}
	if ti < 0 {
		return nil, nil, fmt.Errorf("log: no data lines")
	}
	return ts, vs, nil
}

// columnIndex finds a column by 1-based number or by header name in the
// first line's fields.
func columnIndex(col string, first []string) (int, error) {
	if n, err := strconv.Atoi(col); err == nil {
		if n < 1 || n > len(first) {
			return 0, fmt.Errorf("column %d is not among the %d columns", n, len(first))
		}
		return n - 1, nil
	}
	for k, f := range first {
		if strings.EqualFold(f, strings.TrimSpace(col)) {
			return k, nil
		}
	}
	return 0, fmt.Errorf("no column named %q in %q", col, strings.Join(first, ", "))
}
