// Package experiment reads and checks the experiment file: the YAML
// description of one filmed rheometer run (tool geometry, camera, walls, the
// imposed motion program and the tracers), as fixed by the project's
// interface contract. Reading is strict: an unknown key, a missing gap or an
// inconsistent motion program is an error naming the key and its value.
//
// Times are in seconds from the first frame, lengths in um (or px and mm
// where the name says so), speeds in um/s and rates in 1/s.
package experiment

import (
	"bytes"
	"errors"
	"fmt"
	"io"
	"math"
	"os"
	"regexp"
	"strings"

	"go.yaml.in/yaml/v3"

	"gaptrace/calib/geometry"
)

// Experiment is one experiment file.
type Experiment struct {
	Name string `yaml:"name,omitempty"`
	// Sample, Operator and Notes are free text for the lab record, copied
	// into the report (extensions of the contract's file; optional).
	Sample   string `yaml:"sample,omitempty"`
	Operator string `yaml:"operator,omitempty"`
	Notes    string `yaml:"notes,omitempty"`
	// TemperatureC is the sample's temperature during the run, °C (nil:
	// not given; an extension of the contract's file).
	TemperatureC *float64          `yaml:"temperature_c,omitempty"`
	Geometry     geometry.Geometry `yaml:"geometry"`
	Camera       Camera            `yaml:"camera,omitempty"`
	Walls        Walls             `yaml:"walls,omitempty"`
	Motion       []Segment         `yaml:"motion,omitempty"`
	Tracers      Tracers           `yaml:"tracers,omitempty"`
}

// absoluteZeroC is absolute zero in degrees Celsius (the definition of the
// Celsius scale: 0 K = -273.15 °C, SI Brochure, 9th ed., 2019, 2.3.1).
const absoluteZeroC = -273.15

// Camera describes the recording.
type Camera struct {
	// FPS overrides the frame rate stored in the video; 0 means use the video's.
	FPS float64 `yaml:"fps,omitempty"`
	// UMPerPx is the image scale; 0 means derive it (from Target, or from
	// the gap over the detected wall distance).
	UMPerPx float64 `yaml:"um_per_px,omitempty"`
	// UMPerPxErr is the standard uncertainty of UMPerPx; 0 means not
	// stated.
	UMPerPxErr float64 `yaml:"um_per_px_err,omitempty"`
	// Target, when given, is a calibration image of a known pattern.
	Target *Target `yaml:"target,omitempty"`
	// Fields, for an interlaced camera, is the field exposed first:
	// FieldsTopFirst or FieldsBottomFirst. Each frame is then analysed as
	// its two fields, frames of their own at twice FPS; "" analyses whole
	// frames.
	Fields string `yaml:"fields,omitempty"`
}

// Field orders of an interlaced camera (Camera.Fields): the even image
// rows (0, 2, ...) exposed first, or the odd ones.
const (
	FieldsTopFirst    = "top-first"
	FieldsBottomFirst = "bottom-first"
)

// FieldRate returns the rate of the images analysed, frames or fields
// per second, for a recording at fps frames per second.
func (c Camera) FieldRate(fps float64) float64 {
	if c.Fields != "" {
		return 2 * fps
	}
	return fps
}

// Target kinds.
const (
	Checkerboard = "checkerboard"
	Ruler        = "ruler"
)

// Target is a calibration image of a checkerboard or a ruler, filmed with
// the same optics as the experiment.
type Target struct {
	// Image is the path of the target image, relative to the experiment file.
	Image string `yaml:"image"`
	// Kind is "checkerboard" or "ruler".
	Kind string `yaml:"kind"`
	// PitchUM is the checkerboard's square size or the ruler's line pitch.
	PitchUM float64 `yaml:"pitch_um"`
	// Corners is the checkerboard's inner-corner count [columns, rows].
	Corners [2]int `yaml:"corners,omitempty,flow"`
}

// Wall sides in the image.
const (
	Top    = "top"
	Bottom = "bottom"
)

// Walls says which image side holds the moving wall and, optionally, where
// both walls are (two points on each line, in image pixels).
type Walls struct {
	Moving       string       `yaml:"moving,omitempty"`
	StationaryPx [][2]float64 `yaml:"stationary_px,omitempty,flow"`
	MovingPx     [][2]float64 `yaml:"moving_px,omitempty,flow"`
}

// Segment is one step of the imposed wall program: between StartS and EndS
// the moving wall travels at a constant speed, given by exactly one of
// RatePerS (the nominal rate), WallSpeedUMPerS, Strain (the nominal
// strain, rate = strain / duration), or in a rotational instrument's units
// (instrument.go): AngularVelocityRadPerS or RPM of the rotating tool, or
// AngleRad, the tool's deflection over the step.
type Segment struct {
	StartS                 float64  `yaml:"start_s"`
	EndS                   float64  `yaml:"end_s"`
	RatePerS               *float64 `yaml:"rate_per_s,omitempty"`
	WallSpeedUMPerS        *float64 `yaml:"wall_speed_um_per_s,omitempty"`
	Strain                 *float64 `yaml:"strain,omitempty"`
	AngularVelocityRadPerS *float64 `yaml:"angular_velocity_rad_per_s,omitempty"`
	RPM                    *float64 `yaml:"rpm,omitempty"`
	AngleRad               *float64 `yaml:"angle_rad,omitempty"`
}

// Polarities of the tracers.
const (
	Auto   = "auto"
	Bright = "bright"
	Dark   = "dark"
)

// Tracers carries detection hints.
type Tracers struct {
	DiameterPx float64 `yaml:"diameter_px,omitempty"`
	Polarity   string  `yaml:"polarity,omitempty"`
}

// Load reads and checks the experiment file at path.
func Load(path string) (*Experiment, error) {
	f, err := os.Open(path)
	if err != nil {
		return nil, fmt.Errorf("experiment file: %w", err)
	}
	defer f.Close()
	e, err := Parse(f)
	if err != nil {
		return nil, fmt.Errorf("experiment file %s: %w", path, err)
	}
	return e, nil
}

var unknownField = regexp.MustCompile(`line (\d+): field (\S+) not found in type experiment\.(\w+)`)

// sectionKey maps the Go type named in a yaml.v3 unknown-field error to its
// place in the file, so the message names the key as the user wrote it.
var sectionKey = map[string]string{
	"Experiment": "", "Camera": "camera.", "Target": "camera.target.",
	"Walls": "walls.", "Segment": "motion[].", "Tracers": "tracers.",
}

// Parse reads and checks an experiment file from r.
func Parse(r io.Reader) (*Experiment, error) {
	b, err := readBounded(r)
	if err != nil {
		return nil, err
	}
	dec := yaml.NewDecoder(bytes.NewReader(b))
	dec.KnownFields(true)
	var e Experiment
	if err := dec.Decode(&e); err != nil {
		if errors.Is(err, io.EOF) {
			return nil, errors.New("empty file")
		}
		return nil, tidyYAMLError(err)
	}
	if err := checkExplicitZeros(b); err != nil {
		return nil, err
	}
	if err := e.Validate(); err != nil {
		return nil, err
	}
	return &e, nil
}

func tidyYAMLError(err error) error {
	msg := err.Error()
	var te *yaml.TypeError
	if errors.As(err, &te) && len(te.Errors) > 0 {
		msg = te.Errors[0]
	}
	if m := unknownField.FindStringSubmatch(msg); m != nil {
		return fmt.Errorf("line %s: unknown key %s%s", m[1], sectionKey[m[3]], m[2])
	}
	msg = strings.ReplaceAll(msg, "in type geometry.Geometry", "in geometry")
	if m := regexp.MustCompile(`line (\d+): field (\S+) not found in geometry`).FindStringSubmatch(msg); m != nil {
		return fmt.Errorf("line %s: unknown key geometry.%s", m[1], m[2])
	}
	if m := cannotUnmarshal.FindStringSubmatch(msg); m != nil {
		v := m[3]
		if len(v) > maxQuoted {
			v = v[:maxQuoted] + "…"
		}
		if m[3] == "" {
			return fmt.Errorf("line %s: %s where %s is expected", m[1], yamlKind(m[2]), goKind(m[4]))
		}
		return fmt.Errorf("line %s: %s %q where %s is expected", m[1], yamlKind(m[2]), v, goKind(m[4]))
	}
	// Whatever else the YAML reader says, on one line.
	return errors.New(strings.ReplaceAll(strings.TrimPrefix(msg, "yaml: "), "\n", `\n`))
}

// cannotUnmarshal matches the YAML reader's type errors, whose value may
// span lines.
var cannotUnmarshal = regexp.MustCompile("(?s)line (\\d+): cannot unmarshal !!(\\w+)(?: `(.*)`)? into (\\S+)")

// maxQuoted bounds the part of a wrong value quoted in an error.
const maxQuoted = 40

// yamlKind names a YAML tag for the user.
func yamlKind(tag string) string {
	switch tag {
	case "str":
		return "the text"
	case "int", "float":
		return "the number"
	case "bool":
		return "the yes/no value"
	case "seq":
		return "a list"
	case "map":
		return "a mapping"
	}
	return "the value"
}

// goKind names what a Go type of the file's structure holds, for the user.
func goKind(t string) string {
	switch {
	case strings.HasPrefix(t, "[]"):
		return "a list"
	case strings.HasPrefix(t, "["):
		return "a list of fixed length"
	case t == "string" || strings.HasSuffix(t, ".Kind"):
		return "text"
	case t == "float64" || t == "*float64" || strings.HasPrefix(t, "int"):
		return "a number"
	case t == "bool":
		return "yes or no"
	}
	return "a mapping of keys"
}

// Validate checks the whole file and returns the first problem, naming the
// key and its value.
func (e *Experiment) Validate() error {
	if err := e.Geometry.Validate(); err != nil {
		return err
	}
	if t := e.TemperatureC; t != nil && !(*t >= absoluteZeroC && !math.IsInf(*t, 0)) {
		return fmt.Errorf("temperature_c: %g is not a temperature in °C (must be finite and above %g)", *t, absoluteZeroC)
	}
	c := e.Camera
	if c.FPS < 0 || math.IsNaN(c.FPS) {
		return fmt.Errorf("camera.fps: must be positive, got %g", c.FPS)
	}
	if c.UMPerPx < 0 || math.IsNaN(c.UMPerPx) {
		return fmt.Errorf("camera.um_per_px: must be positive, got %g", c.UMPerPx)
	}
	if c.UMPerPxErr < 0 || math.IsNaN(c.UMPerPxErr) || math.IsInf(c.UMPerPxErr, 0) {
		return fmt.Errorf("camera.um_per_px_err: must be a finite standard uncertainty of at least 0, got %g", c.UMPerPxErr)
	}
	if c.UMPerPxErr > 0 && c.UMPerPx == 0 {
		return fmt.Errorf("camera.um_per_px_err: %g is given without camera.um_per_px", c.UMPerPxErr)
	}
	if t := c.Target; t != nil {
		if t.Image == "" {
			return errors.New("camera.target.image: missing")
		}
		switch t.Kind {
		case Checkerboard:
			if t.Corners[0] < 2 || t.Corners[1] < 2 {
				return fmt.Errorf("camera.target.corners: need at least [2, 2] inner corners, got %v", t.Corners)
			}
		case Ruler:
		default:
			return fmt.Errorf("camera.target.kind: %q is not checkerboard or ruler", t.Kind)
		}
		if !(t.PitchUM > 0) {
			return fmt.Errorf("camera.target.pitch_um: must be positive, got %g", t.PitchUM)
		}
	}
	switch c.Fields {
	case "", FieldsTopFirst, FieldsBottomFirst:
	default:
		return fmt.Errorf("camera.fields: %q is not %s or %s", c.Fields, FieldsTopFirst, FieldsBottomFirst)
	}
	switch e.Walls.Moving {
	case "", Top, Bottom:
	default:
		return fmt.Errorf("walls.moving: %q is not top or bottom", e.Walls.Moving)
	}
	for _, l := range []struct {
		key string
		pts [][2]float64
	}{{"walls.stationary_px", e.Walls.StationaryPx}, {"walls.moving_px", e.Walls.MovingPx}} {
		if l.pts == nil {
			continue
		}
		if len(l.pts) != 2 {
			return fmt.Errorf("%s: need two points [[x, y], [x, y]], got %d", l.key, len(l.pts))
		}
		if l.pts[0] == l.pts[1] {
			return fmt.Errorf("%s: the two points %v are the same", l.key, l.pts[0])
		}
		for _, p := range l.pts {
			if p[0] < 0 || p[1] < 0 {
				return fmt.Errorf("%s: negative pixel coordinate in %v", l.key, p)
			}
		}
	}
	if (e.Walls.StationaryPx == nil) != (e.Walls.MovingPx == nil) {
		return errors.New("walls: give both stationary_px and moving_px, or neither")
	}
	for i, s := range e.Motion {
		key := fmt.Sprintf("motion[%d]", i)
		if s.StartS < 0 {
			return fmt.Errorf("%s.start_s: must not be negative, got %g", key, s.StartS)
		}
		if !(s.EndS > s.StartS) {
			return fmt.Errorf("%s.end_s: %g does not come after start_s %g", key, s.EndS, s.StartS)
		}
		n := 0
		for _, p := range s.speeds() {
			if p != nil {
				n++
				if math.IsNaN(*p) || math.IsInf(*p, 0) {
					return fmt.Errorf("%s: a rate, speed or strain of %g", key, *p)
				}
			}
		}
		switch {
		case n == 0:
			return fmt.Errorf("%s: give one of %s", key, speedKeys)
		case n > 1:
			return fmt.Errorf("%s: give only one of %s (%s)", key, speedKeys, s.given())
		}
		if err := s.checkRotation(key, e.Geometry); err != nil {
			return err
		}
		if i > 0 && s.StartS < e.Motion[i-1].EndS {
			return fmt.Errorf("%s.start_s: %g overlaps motion[%d], which ends at %g", key, s.StartS, i-1, e.Motion[i-1].EndS)
		}
	}
	t := e.Tracers
	if t.DiameterPx < 0 || math.IsNaN(t.DiameterPx) {
		return fmt.Errorf("tracers.diameter_px: must be positive, got %g", t.DiameterPx)
	}
	switch t.Polarity {
	case "", Auto, Bright, Dark:
	default:
		return fmt.Errorf("tracers.polarity: %q is not auto, bright or dark", t.Polarity)
	}
	return e.checkBounds() // bounds.go
}

func (s Segment) given() string {
	var k []string
	if s.RatePerS != nil {
		k = append(k, fmt.Sprintf("rate_per_s=%g", *s.RatePerS))
	}
	if s.WallSpeedUMPerS != nil {
		k = append(k, fmt.Sprintf("wall_speed_um_per_s=%g", *s.WallSpeedUMPerS))
	}
	if s.Strain != nil {
		k = append(k, fmt.Sprintf("strain=%g", *s.Strain))
	}
	k = append(k, s.givenRotation()...)
	return strings.Join(k, ", ")
}

// MovingSide returns the image side of the moving wall, "top" by default.
func (e *Experiment) MovingSide() string {
	if e.Walls.Moving == "" {
		return Top
	}
	return e.Walls.Moving
}

// PolarityHint returns the tracer polarity, "auto" by default.
func (e *Experiment) PolarityHint() string {
	if e.Tracers.Polarity == "" {
		return Auto
	}
	return e.Tracers.Polarity
}

// Write encodes e as YAML to w.
func (e *Experiment) Write(w io.Writer) error {
	enc := yaml.NewEncoder(w)
	enc.SetIndent(2)
	if err := enc.Encode(e); err != nil {
		return err
	}
	return enc.Close()
}
