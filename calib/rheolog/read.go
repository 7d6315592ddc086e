// Package rheolog reads a rotational or sliding-plate rheometer's exported
// log: a table of samples in time with the tool's motion (deflection
// angle, angular velocity, strain or rate) and, when the instrument wrote
// them, its torque or shear stress. It accepts what instruments export in
// practice: comma, semicolon or tab separators, decimal commas, units in
// the headers ("torque [mN m]", "time_s", a line of units under the
// header), lines of metadata before the header, and text in UTF-8 (with or
// without a byte-order mark), UTF-16 with a byte-order mark or Latin-1.
//
// Read returns the samples; Log.Program turns the motion into the motion
// program of package experiment, its steps placed to a fraction of a
// sample. Times are in s on the video's clock (the log's time plus
// Spec.OffsetS), torques in N m, forces in N, stresses in Pa.
package rheolog

import (
	"bytes"
	"errors"
	"fmt"
	"io"
	"math"
	"strconv"
	"strings"
	"unicode"
	"unicode/utf16"
	"unicode/utf8"
)

// Kinds of motion column.
const (
	AngleRad   = "angle_rad"                  // the tool's deflection angle, rad
	AngleDeg   = "angle_deg"                  // the tool's deflection angle, degrees
	OmegaRadPS = "angular_velocity_rad_per_s" // the tool's angular velocity, rad/s
	RPM        = "rpm"                        // the tool's speed, revolutions per minute
	Strain     = "strain"                     // the nominal strain since the start (1, or % with the unit)
	Rate       = "rate"                       // the nominal shear rate, 1/s
)

// Kinds lists the motion kinds, for messages and help.
var Kinds = []string{AngleRad, AngleDeg, OmegaRadPS, RPM, Strain, Rate}

// Quantities that leave the unit to the column's header: an angle in rad
// (or degrees with "deg" or "°" in the header), an angular velocity in
// rad/s (or rpm, 1/min).
const (
	Angle           = "angle"
	AngularVelocity = "angular_velocity"
)

// Encodings of the log's text.
const (
	EncodingAuto    = "auto" // a byte-order mark, else UTF-8 when valid, else Latin-1
	EncodingUTF8    = "utf-8"
	EncodingUTF16LE = "utf-16le"
	EncodingUTF16BE = "utf-16be"
	EncodingLatin1  = "latin-1"
)

// Spec says how to read a log. A column is a header name (matched without
// regard to case, surrounding space or a unit in brackets, parentheses or
// after an underscore) or a 1-based column number; "" finds the column by
// the header's names (time; angle or deflection; angular velocity; speed;
// strain; rate; torque; stress; force), and "-" means none. The units of
// the motion, torque and stress columns come from their headers when the
// headers carry them, else from Kind (the motion) and N m and Pa.
type Spec struct {
	Time   string
	Motion string
	// Kind is what the motion column holds (one of Kinds); "" takes it from
	// the column's header.
	Kind   string
	Torque string
	Stress string
	// TorqueUnit and StressUnit override the headers' units: "N m",
	// "mN m", "uN m" (or "µN m"), "N" (a sliding plate's force), "mN";
	// "Pa", "kPa", "mPa", "MPa".
	TorqueUnit, StressUnit string
	// OffsetS is added to the log's times to put them on the video's clock
	// (t = 0 at the first frame).
	OffsetS float64
	// Encoding is one of the encodings; "" is auto.
	Encoding string
}

// Log is a read log: its samples in time order on the video's clock.
type Log struct {
	TimeS []float64
	// Kind is the motion column's kind and Motion its values in that
	// kind's unit (rad, degrees, rad/s, rpm, strain as a fraction, 1/s).
	Kind   string
	Motion []float64
	// TorqueNM is the torque in N m (for sliding plates the force in N,
	// with Force set); nil without a torque column.
	TorqueNM []float64
	Force    bool
	// StressPa is the logged shear stress, Pa; nil without a stress column.
	StressPa []float64
	// Headers names the columns used, as written in the file.
	TimeHeader, MotionHeader, TorqueHeader, StressHeader string
	// How the file was written.
	Separator    string
	DecimalComma bool
	Encoding     string
}

// Limits of what Read accepts.
const (
	// maxLogBytes bounds the file read into memory: a day at 1 kHz with a
	// few columns is below 1 GiB; logs of start-ups are kilobytes.
	maxLogBytes = 1 << 30
	minSamples  = 2
)

// Read reads a log from r as spec says.
func Read(r io.Reader, spec Spec) (*Log, error) {
	if spec.Kind != "" && !isKind(spec.Kind) && spec.Kind != Angle && spec.Kind != AngularVelocity {
		return nil, fmt.Errorf("log: motion kind %q is not one of %s", spec.Kind, strings.Join(Kinds, ", "))
	}
	if math.IsNaN(spec.OffsetS) || math.IsInf(spec.OffsetS, 0) {
		return nil, fmt.Errorf("log: clock offset %g s is not a number of seconds", spec.OffsetS)
	}
	raw, err := io.ReadAll(io.LimitReader(r, maxLogBytes+1))
	if err != nil {
		return nil, fmt.Errorf("log: %w", err)
	}
	if len(raw) > maxLogBytes {
		return nil, fmt.Errorf("log: larger than %d bytes", maxLogBytes)
	}
	text, enc, err := decode(raw, spec.Encoding)
	if err != nil {
		return nil, err
	}
	t, err := parseTable(text)
	if err != nil {
		return nil, err
	}
	l := &Log{Separator: t.sep, DecimalComma: t.decimalComma, Encoding: enc}
	ti, err := t.column(spec.Time, "time", findTime)
	if err != nil {
		return nil, err
	}
	if ti < 0 {
		ti = 0 // the first column
	}
	mi, err := t.column(spec.Motion, "motion", findMotion)
	if err != nil {
		return nil, err
	}
	if mi < 0 {
		if t.named() && spec.Kind == "" {
			return nil, fmt.Errorf("log: no motion column (angle, angular velocity, speed, strain or rate) among %q; choose one", strings.Join(t.header, ", "))
		}
		mi = 1 // the second column of a log without names, or of the kind given
	}
	if mi >= t.width {
		return nil, fmt.Errorf("log: %d columns, no motion column", t.width)
	}
	kind, motionScale, err := motionKind(spec.Kind, t.nameAt(mi), t.unitAt(mi))
	if err != nil {
		return nil, err
	}
	l.Kind, l.TimeHeader, l.MotionHeader = kind, t.headerAt(ti), t.headerAt(mi)
	timeScale, err := timeUnit(t.unitAt(ti))
	if err != nil {
		return nil, err
	}
	qi, err := t.column(spec.Torque, "torque", findTorque)
	if err != nil {
		return nil, err
	}
	si, err := t.column(spec.Stress, "stress", findStress)
	if err != nil {
		return nil, err
	}
	var torqueScale, stressScale float64
	if qi >= 0 {
		u := spec.TorqueUnit
		if u == "" {
			u = t.unitAt(qi)
			if u == "" && strings.Contains(t.nameAt(qi), "force") {
				u = "N"
			}
		}
		torqueScale, l.Force, err = torqueUnit(u)
		if err != nil {
			return nil, fmt.Errorf("log: torque column %q: %w", t.headerAt(qi), err)
		}
		l.TorqueHeader = t.headerAt(qi)
	}
	if si >= 0 {
		u := spec.StressUnit
		if u == "" {
			u = t.unitAt(si)
		}
		if stressScale, err = stressUnit(u); err != nil {
			return nil, fmt.Errorf("log: stress column %q: %w", t.headerAt(si), err)
		}
		l.StressHeader = t.headerAt(si)
	}
	for _, row := range t.rows {
		num := func(c int) (float64, error) {
			if c >= len(row.fields) {
				return 0, fmt.Errorf("log: line %d has %d columns, column %d is missing", row.line, len(row.fields), c+1)
			}
			v, err := parseNumber(row.fields[c], t.decimalComma)
			if err != nil {
				return 0, fmt.Errorf("log: line %d, column %d: %q is not a number", row.line, c+1, row.fields[c])
			}
			return v, nil
		}
		tt, err := num(ti)
		if err != nil {
			return nil, err
		}
		m, err := num(mi)
		if err != nil {
			return nil, err
		}
		tt = tt*timeScale + spec.OffsetS
		if n := len(l.TimeS); n > 0 && !(tt > l.TimeS[n-1]) {
			return nil, fmt.Errorf("log: line %d: time %g s does not come after %g s", row.line, tt, l.TimeS[n-1])
		}
		l.TimeS, l.Motion = append(l.TimeS, tt), append(l.Motion, m*motionScale)
		if qi >= 0 {
			q, err := num(qi)
			if err != nil {
				return nil, err
			}
			l.TorqueNM = append(l.TorqueNM, q*torqueScale)
		}
		if si >= 0 {
			s, err := num(si)
			if err != nil {
				return nil, err
			}
			l.StressPa = append(l.StressPa, s*stressScale)
		}
	}
	if len(l.TimeS) < minSamples {
		return nil, fmt.Errorf("log: %d samples, need at least %d", len(l.TimeS), minSamples)
	}
	return l, nil
}

func isKind(k string) bool {
	for _, x := range Kinds {
		if x == k {
			return true
		}
	}
	return false
}

// decode turns the file's bytes into text.
func decode(b []byte, enc string) (string, string, error) {
	if enc == "" {
		enc = EncodingAuto
	}
	if enc == EncodingAuto {
		switch {
		case bytes.HasPrefix(b, []byte{0xEF, 0xBB, 0xBF}):
			return string(b[3:]), EncodingUTF8, nil
		case bytes.HasPrefix(b, []byte{0xFF, 0xFE}):
			return utf16Text(b[2:], false), EncodingUTF16LE, nil
		case bytes.HasPrefix(b, []byte{0xFE, 0xFF}):
			return utf16Text(b[2:], true), EncodingUTF16BE, nil
		case utf8.Valid(b):
			return string(b), EncodingUTF8, nil
		}
		return latin1(b), EncodingLatin1, nil
	}
	switch enc {
	case EncodingUTF8:
		b = bytes.TrimPrefix(b, []byte{0xEF, 0xBB, 0xBF})
		if !utf8.Valid(b) {
			return "", "", errors.New("log: not valid UTF-8 (try --log-encoding latin-1)")
		}
		return string(b), enc, nil
	case EncodingUTF16LE:
		return utf16Text(bytes.TrimPrefix(b, []byte{0xFF, 0xFE}), false), enc, nil
	case EncodingUTF16BE:
		return utf16Text(bytes.TrimPrefix(b, []byte{0xFE, 0xFF}), true), enc, nil
	case EncodingLatin1:
		return latin1(b), enc, nil
	}
	return "", "", fmt.Errorf("log: encoding %q is not auto, utf-8, utf-16le, utf-16be or latin-1", enc)
}

func utf16Text(b []byte, bigEndian bool) string {
	u := make([]uint16, len(b)/2)
	for i := range u {
		if bigEndian {
			u[i] = uint16(b[2*i])<<8 | uint16(b[2*i+1])
		} else {
			u[i] = uint16(b[2*i+1])<<8 | uint16(b[2*i])
		}
	}
	return string(utf16.Decode(u))
}

// latin1 decodes ISO 8859-1, whose bytes are the first 256 code points.
func latin1(b []byte) string {
	r := make([]rune, len(b))
	for i, c := range b {
		r[i] = rune(c)
	}
	return string(r)
}

// table is the log's text split into a header and data rows.
type table struct {
	sep          string
	decimalComma bool
	header       []string // the header's fields; nil without a header
	units        []string // a line of units under the header; nil without
	width        int
	rows         []row
}

type row struct {
	line   int
	fields []string
}

// parseTable finds the separator, the header (the last line before the
// first data line with as many fields, skipping a line of units) and the
// data: every later line of that many fields whose first field is a
// number. Lines starting with '#' and empty lines are skipped everywhere.
func parseTable(text string) (*table, error) {
	lines := strings.Split(strings.ReplaceAll(text, "\r\n", "\n"), "\n")
	t := &table{}
	type cand struct {
		line   int
		fields []string
	}
	var before []cand
	for i, raw := range lines {
		s := strings.TrimSpace(strings.TrimRight(raw, "\r"))
		if s == "" || strings.HasPrefix(s, "#") {
			continue
		}
		if t.sep == "" {
			t.sep = separatorOf(s)
		}
		f := splitFields(s, t.sep)
		if t.rows == nil {
			if len(f) >= 2 && looksNumeric(f) {
				t.width = len(f)
				t.decimalComma = t.sep != "," && hasDecimalComma(f)
				for k := len(before) - 1; k >= 0; k-- {
					if len(before[k].fields) != len(f) {
						break
					}
					if allUnits(before[k].fields) && t.units == nil && k > 0 {
						t.units = before[k].fields
						continue
					}
					t.header = before[k].fields
					break
				}
				t.rows = append(t.rows, row{line: i + 1, fields: f})
				continue
			}
			before = append(before, cand{i + 1, f})
			// A separator chosen on a line of metadata may be wrong: choose
			// again on the next line until the data starts.
			t.sep = ""
			continue
		}
		if len(f) != t.width {
			return nil, fmt.Errorf("log: line %d has %d columns, the data before it %d", i+1, len(f), t.width)
		}
		if !t.decimalComma && t.sep != "," && hasDecimalComma(f) {
			t.decimalComma = true
		}
		t.rows = append(t.rows, row{line: i + 1, fields: f})
	}
	if t.rows == nil {
		return nil, errors.New("log: no data lines (lines of at least two numbers)")
	}
	return t, nil
}

// separatorOf picks a line's separator: a tab or a semicolon when the line
// has one (a comma is then a decimal comma), else a comma.
func separatorOf(s string) string {
	switch {
	case strings.Contains(s, "\t"):
		return "\t"
	case strings.Contains(s, ";"):
		return ";"
	}
	return ","
}

func splitFields(s, sep string) []string {
	f := strings.Split(s, sep)
	for k := range f {
		f[k] = strings.Trim(strings.TrimSpace(f[k]), `"'`)
	}
	return f
}

func looksNumeric(f []string) bool {
	for _, x := range f {
		if _, err := parseNumber(x, true); err != nil {
			return false
		}
	}
	return true
}

func hasDecimalComma(f []string) bool {
	for _, x := range f {
		if strings.Contains(x, ",") {
			return true
		}
	}
	return false
}

func allUnits(f []string) bool {
	for _, x := range f {
		if x != "" && !(strings.HasPrefix(x, "[") || strings.HasPrefix(x, "(")) {
			return false
		}
	}
	return true
}

// parseNumber parses a number written with a decimal point, or with a
// decimal comma when decimalComma is set.
func parseNumber(s string, decimalComma bool) (float64, error) {
	if decimalComma && strings.Count(s, ",") == 1 && !strings.Contains(s, ".") {
		s = strings.Replace(s, ",", ".", 1)
	}
	v, err := strconv.ParseFloat(s, 64)
	if err != nil || math.IsNaN(v) || math.IsInf(v, 0) {
		return 0, fmt.Errorf("%q is not a number", s)
	}
	return v, nil
}

func (t *table) named() bool { return t.header != nil }

func (t *table) headerAt(c int) string {
	if t.header == nil || c >= len(t.header) {
		return fmt.Sprintf("column %d", c+1)
	}
	return t.header[c]
}

// nameAt and unitAt split a header into its name (lower case, without the
// unit) and its unit.
func (t *table) nameAt(c int) string {
	if t.header == nil || c >= len(t.header) {
		return ""
	}
	n, _ := splitHeader(t.header[c])
	return n
}

func (t *table) unitAt(c int) string {
	u := ""
	if t.header != nil && c < len(t.header) {
		_, u = splitHeader(t.header[c])
	}
	if u == "" && t.units != nil && c < len(t.units) {
		u = strings.Trim(t.units[c], "[]() ")
	}
	return u
}

// splitHeader splits "Torque [mN m]", "torque (mNm)", "time_s" or "Time in
// s" into a lower-case name and a unit.
func splitHeader(h string) (name, unit string) {
	h = strings.TrimSpace(h)
	for _, p := range [][2]string{{"[", "]"}, {"(", ")"}} {
		if i := strings.Index(h, p[0]); i >= 0 {
			if j := strings.LastIndex(h, p[1]); j > i {
				return normName(h[:i]), strings.TrimSpace(h[i+1 : j])
			}
		}
	}
	low := strings.ToLower(h)
	if i := strings.LastIndex(low, " in "); i >= 0 {
		return normName(h[:i]), strings.TrimSpace(h[i+4:])
	}
	if i := strings.LastIndex(h, "_"); i >= 0 {
		if u := h[i+1:]; knownUnit(u) {
			return normName(h[:i]), u
		}
	}
	if i := strings.LastIndex(h, "/"); i > 0 && !strings.Contains(low, "1/") {
		if u := h[i+1:]; knownUnit(u) {
			return normName(h[:i]), u
		}
	}
	return normName(h), ""
}

func normName(s string) string {
	s = strings.ToLower(strings.TrimSpace(s))
	s = strings.Map(func(r rune) rune {
		if r == '_' || r == '-' || r == '.' {
			return ' '
		}
		return r
	}, s)
	return strings.Join(strings.Fields(s), " ")
}

func knownUnit(u string) bool {
	if _, err := timeUnit(u); err == nil && u != "" {
		return true
	}
	if _, _, err := torqueUnit(u); err == nil && u != "" {
		return true
	}
	if _, err := stressUnit(u); err == nil && u != "" {
		return true
	}
	switch unitKey(u) {
	case "rad", "deg", "°", "rad/s", "rpm", "1/min", "min-1", "1", "%", "1/s", "s-1", "s^-1":
		return true
	}
	return false
}

// unitKey normalises a unit for comparison: lower case, no spaces, µ as u,
// middle dots and asterisks removed, ⁻¹ as -1.
func unitKey(u string) string {
	u = strings.ToLower(u)
	u = strings.NewReplacer("µ", "u", "μ", "u", "·", "", "*", "", "⋅", "", "⁻¹", "-1", "⁻", "-", "¹", "1").Replace(u)
	return strings.Map(func(r rune) rune {
		if unicode.IsSpace(r) {
			return -1
		}
		return r
	}, u)
}

// column resolves a column spec: "-" none (-1), "" found by the header's
// names with find (-1 when not found), else a number or a name.
func (t *table) column(spec, what string, find func(name, unit string) bool) (int, error) {
	switch strings.TrimSpace(spec) {
	case "-":
		return -1, nil
	case "":
		if t.header == nil {
			return -1, nil
		}
		for c := range t.header {
			n, u := splitHeader(t.header[c])
			if find(n, u) {
				return c, nil
			}
		}
		return -1, nil
	}
	if n, err := strconv.Atoi(strings.TrimSpace(spec)); err == nil {
		if n < 1 || n > t.width {
			return 0, fmt.Errorf("log: %s column %d is not among the %d columns", what, n, t.width)
		}
		return n - 1, nil
	}
	want, _ := splitHeader(spec)
	for c, h := range t.header {
		n, _ := splitHeader(h)
		if strings.EqualFold(strings.TrimSpace(h), strings.TrimSpace(spec)) || n == want {
			return c, nil
		}
	}
	if t.header == nil {
		return 0, fmt.Errorf("log: %s column %q: the log has no header line; give the column's number", what, spec)
	}
	return 0, fmt.Errorf("log: no %s column named %q in %q", what, spec, strings.Join(t.header, ", "))
}

func has(n string, words ...string) bool {
	for _, w := range words {
		if strings.Contains(n, w) {
			return true
		}
	}
	return false
}

func findTime(n, _ string) bool { return n == "time" || n == "t" || strings.HasPrefix(n, "time") }
func findMotion(n, u string) bool {
	return has(n, "angle", "deflection", "angular velocity", "angular speed", "strain", "deformation", "rate", "speed", "omega", "rotation")
}
func findTorque(n, _ string) bool { return has(n, "torque", "force") }
func findStress(n, _ string) bool { return has(n, "stress") }

// motionKind returns the motion column's kind and the factor that puts its
// values in the kind's unit: the given kind, else the header's name and
// unit.
func motionKind(kind, name, unit string) (string, float64, error) {
	u := unitKey(unit)
	switch kind {
	case Angle:
		kind = AngleRad
		if u == "deg" || u == "°" || u == "degree" || u == "degrees" {
			kind = AngleDeg
		}
	case AngularVelocity:
		kind = OmegaRadPS
		switch u {
		case "rpm", "1/min", "min-1", "min^-1", "u/min", "rev/min":
			kind = RPM
		}
	case "":
		switch {
		case has(name, "angular velocity", "angular speed", "omega"), has(name, "speed") && u != "":
			switch u {
			case "rpm", "1/min", "min-1", "min^-1", "u/min", "rev/min":
				kind = RPM
			default:
				kind = OmegaRadPS
			}
		case has(name, "angle", "deflection", "rotation"):
			kind = AngleRad
			if u == "deg" || u == "°" || u == "degree" || u == "degrees" {
				kind = AngleDeg
			}
		case has(name, "strain", "deformation"):
			kind = Strain
		case has(name, "rate"):
			kind = Rate
		default:
			if name == "" {
				return AngleRad, 1, nil // the default of a log without names
			}
			return "", 0, fmt.Errorf("log: cannot tell what the motion column %q holds; give its kind (%s)", name, strings.Join(Kinds, ", "))
		}
	}
	scale := 1.0
	switch kind {
	case AngleRad:
		if u == "mrad" {
			scale = 1e-3
		}
	case OmegaRadPS:
		if u == "mrad/s" {
			scale = 1e-3
		}
	case Strain:
		if u == "%" {
			scale = 0.01
		}
	}
	return kind, scale, nil
}

func timeUnit(u string) (float64, error) {
	switch unitKey(u) {
	case "", "s", "sec", "seconds":
		return 1, nil
	case "ms":
		return 1e-3, nil
	case "min":
		return 60, nil
	case "h":
		return 3600, nil
	}
	return 0, fmt.Errorf("log: time unit %q is not s, ms, min or h", u)
}

// torqueUnit returns the factor to N m (or N for a force) and whether the
// column is a force.
func torqueUnit(u string) (float64, bool, error) {
	switch unitKey(u) {
	case "", "nm":
		return 1, false, nil
	case "mnm":
		return 1e-3, false, nil
	case "unm":
		return 1e-6, false, nil
	case "n":
		return 1, true, nil
	case "mn":
		return 1e-3, true, nil
	}
	return 0, false, fmt.Errorf("unit %q is not N m, mN m, µN m, N or mN", u)
}

func stressUnit(u string) (float64, error) {
	switch unitKey(u) {
	case "", "pa":
		return 1, nil
	case "kpa":
		return 1e3, nil
	case "mpa":
		if strings.Contains(u, "M") {
			return 1e6, nil
		}
		return 1e-3, nil
	}
	return 0, fmt.Errorf("unit %q is not Pa, kPa, mPa or MPa", u)
}
