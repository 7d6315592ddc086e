package experiment

import (
	"bytes"
	"fmt"
	"math"
	"os"
	"path/filepath"
	"strings"
	"testing"
)

const contractExample = `name: free text, copied into the report
geometry:
  kind: plates
  gap_um: 800
camera:
  fps: 200
  um_per_px: 2.0
walls:
  moving: top
  stationary_px: [[10, 452.5], [630, 455.0]]
  moving_px:     [[10, 52.0],  [630, 54.5]]
motion:
  - start_s: 0.5
    end_s: 2.0
    rate_per_s: 1.5
tracers:
  diameter_px: 5
  polarity: auto
`

func TestParseContractExample(t *testing.T) {
	e, err := Parse(strings.NewReader(contractExample))
	if err != nil {
		t.Fatal(err)
	}
	if e.Geometry.Gap() != 800 || e.Camera.FPS != 200 || e.Camera.UMPerPx != 2 {
		t.Errorf("read %+v", e)
	}
	if e.Walls.StationaryPx[1] != [2]float64{630, 455} {
		t.Errorf("stationary_px = %v", e.Walls.StationaryPx)
	}
	p := e.Program()
	// The contract's example: rate 1.5/s over an 800 um gap is a wall speed of 1200 um/s.
	if len(p) != 1 || p[0].WallSpeedUMPerS != 1200 || p[0].Strain != 2.25 {
		t.Errorf("program = %+v", p)
	}
}

// TestParseErrors gives one case per kind of bad experiment file; each
// message must name the key (and, where there is one, the value).
func TestParseErrors(t *testing.T) {
	base := "geometry:\n  kind: plates\n  gap_um: 800\n"
	cases := []struct {
		name, yaml string
		want       []string // substrings of the error
	}{
		{"unknown top-level key", base + "colour: red\n", []string{"unknown key", "colour"}},
		{"unknown nested key", base + "camera:\n  fps: 100\n  shutter: 3\n", []string{"camera.shutter"}},
		{"unknown motion key", base + "motion:\n  - start_s: 0\n    end_s: 1\n    rate: 2\n", []string{"motion[].rate"}},
		{"unknown geometry key", "geometry:\n  kind: plates\n  gap_um: 800\n  gap: 3\n", []string{"geometry.gap"}},
		{"missing gap", "geometry:\n  kind: plates\n", []string{"geometry.gap_um", "missing"}},
		{"zero gap", "geometry:\n  kind: plates\n  gap_um: 0\n", []string{"geometry.gap_um"}},
		{"negative gap", "geometry:\n  kind: plates\n  gap_um: -5\n", []string{"geometry.gap_um", "-5"}},
		{"missing geometry", "name: x\n", []string{"geometry.kind", "missing"}},
		{"unknown kind", "geometry:\n  kind: sphere\n  gap_um: 1\n", []string{"geometry.kind", "sphere"}},
		{"negative radius", "geometry:\n  kind: cone-plate\n  radius_mm: -25\n  cone_angle_deg: 4\n", []string{"geometry.radius_mm", "-25"}},
		{"cone without angle", "geometry:\n  kind: cone-plate\n  radius_mm: 25\n", []string{"geometry.cone_angle_deg"}},
		{"couette radii swapped", "geometry:\n  kind: couette\n  inner_radius_mm: 13\n  outer_radius_mm: 12\n", []string{"geometry.outer_radius_mm", "12", "13"}},
		{"negative fps", base + "camera:\n  fps: -200\n", []string{"camera.fps", "-200"}},
		{"negative scale", base + "camera:\n  um_per_px: -2\n", []string{"camera.um_per_px", "-2"}},
		{"negative diameter", base + "tracers:\n  diameter_px: -5\n", []string{"tracers.diameter_px", "-5"}},
		{"bad polarity", base + "tracers:\n  polarity: grey\n", []string{"tracers.polarity", "grey"}},
		{"bad moving side", base + "walls:\n  moving: left\n", []string{"walls.moving", "left"}},
		{"one wall line only", base + "walls:\n  moving_px: [[0, 1], [5, 1]]\n", []string{"stationary_px"}},
		{"wall line of three points", base + "walls:\n  moving_px: [[0, 1], [5, 1], [6, 1]]\n  stationary_px: [[0, 9], [5, 9]]\n", []string{"walls.moving_px", "3"}},
		{"segment ends before start", base + "motion:\n  - start_s: 2\n    end_s: 1\n    rate_per_s: 1\n", []string{"motion[0].end_s", "1", "2"}},
		{"segment negative start", base + "motion:\n  - start_s: -1\n    end_s: 1\n    rate_per_s: 1\n", []string{"motion[0].start_s", "-1"}},
		{"overlapping segments", base + "motion:\n  - start_s: 0\n    end_s: 2\n    rate_per_s: 1\n  - start_s: 1.5\n    end_s: 3\n    rate_per_s: 2\n", []string{"motion[1].start_s", "1.5", "motion[0]"}},
		{"rate and speed together", base + "motion:\n  - start_s: 0\n    end_s: 1\n    rate_per_s: 1\n    wall_speed_um_per_s: 800\n", []string{"motion[0]", "rate_per_s=1", "wall_speed_um_per_s=800"}},
		{"no rate at all", base + "motion:\n  - start_s: 0\n    end_s: 1\n", []string{"motion[0]", "rate_per_s"}},
		{"bad target kind", base + "camera:\n  target: {image: t.png, kind: dots, pitch_um: 100}\n", []string{"camera.target.kind", "dots"}},
		{"temperature below absolute zero", base + "temperature_c: -300\n", []string{"temperature_c", "-300", "-273.15"}},
		{"temperature not a number", base + "temperature_c: warm\n", []string{"line 4", "warm"}},
		{"operator not text", base + "operator: [a, b]\n", []string{"line 4"}},
		{"not yaml", "geometry: [\n", []string{"line"}},
		{"empty", "", []string{"empty"}},
	}
	for _, c := range cases {
		t.Run(c.name, func(t *testing.T) {
			_, err := Parse(strings.NewReader(c.yaml))
			if err == nil {
				t.Fatalf("no error for:\n%s", c.yaml)
			}
			for _, w := range c.want {
				if !strings.Contains(err.Error(), w) {
					t.Errorf("error %q does not mention %q", err, w)
				}
			}
			if strings.Contains(err.Error(), "\n") {
				t.Errorf("error is not one line: %q", err)
			}
		})
	}
}

// The lab-record keys are optional, read as written and kept for the
// report; notes may span lines.
func TestLabRecordKeys(t *testing.T) {
	e, err := Parse(strings.NewReader(`name: run 7
sample: PIB-12 batch C
operator: A. N. Other
temperature_c: 0
notes: |
  Filled at 09:40.
  Laser at 20 mW.
geometry: {kind: plates, gap_um: 500}
`))
	if err != nil {
		t.Fatal(err)
	}
	if e.Sample != "PIB-12 batch C" || e.Operator != "A. N. Other" || e.Notes != "Filled at 09:40.\nLaser at 20 mW.\n" {
		t.Errorf("read sample %q, operator %q, notes %q", e.Sample, e.Operator, e.Notes)
	}
	if e.TemperatureC == nil || *e.TemperatureC != 0 {
		t.Errorf("temperature_c 0 read as %v, want a given 0 °C", e.TemperatureC)
	}
	e, err = Parse(strings.NewReader("geometry: {kind: plates, gap_um: 500}\n"))
	if err != nil {
		t.Fatal(err)
	}
	if e.TemperatureC != nil || e.Sample != "" {
		t.Errorf("absent keys read as temperature %v, sample %q", e.TemperatureC, e.Sample)
	}
}

func TestProgramGivenThreeWays(t *testing.T) {
	yaml := `geometry: {kind: plates, gap_um: 500}
motion:
  - {start_s: 1, end_s: 3, rate_per_s: 2}
  - {start_s: 4, end_s: 4.5, strain: 1}
  - {start_s: 5, end_s: 6, wall_speed_um_per_s: 250}
`
	e, err := Parse(strings.NewReader(yaml))
	if err != nil {
		t.Fatal(err)
	}
	p := e.Program()
	want := []Step{
		{StartS: 1, EndS: 3, WallSpeedUMPerS: 1000, RatePerS: 2, Strain: 4},
		{StartS: 4, EndS: 4.5, WallSpeedUMPerS: 1000, RatePerS: 2, Strain: 1},
		{StartS: 5, EndS: 6, WallSpeedUMPerS: 250, RatePerS: 0.5, Strain: 0.5},
	}
	for i := range want {
		if p[i] != want[i] {
			t.Errorf("step %d = %+v, want %+v", i, p[i], want[i])
		}
	}
	checks := []struct {
		tS, speed, rate, strain, travelUM float64
	}{
		{0.5, 0, 0, 0, 0},
		{2, 1000, 2, 2, 1000},
		{3.5, 0, 0, 4, 2000},
		{4.25, 1000, 2, 4.5, 2250},
		{10, 0, 0, 5.5, 2750},
	}
	for _, c := range checks {
		if got := p.WallSpeedAt(c.tS); got != c.speed {
			t.Errorf("WallSpeedAt(%g) = %g, want %g", c.tS, got, c.speed)
		}
		if got := p.RateAt(c.tS); got != c.rate {
			t.Errorf("RateAt(%g) = %g, want %g", c.tS, got, c.rate)
		}
		if got := p.StrainAt(c.tS); math.Abs(got-c.strain) > 1e-12 {
			t.Errorf("StrainAt(%g) = %g, want %g", c.tS, got, c.strain)
		}
		if got := p.WallDisplacementAt(c.tS); math.Abs(got-c.travelUM) > 1e-9 {
			t.Errorf("WallDisplacementAt(%g) = %g, want %g", c.tS, got, c.travelUM)
		}
	}
}

func TestWriteRoundTrip(t *testing.T) {
	e, err := Parse(strings.NewReader(contractExample))
	if err != nil {
		t.Fatal(err)
	}
	var buf bytes.Buffer
	if err := e.Write(&buf); err != nil {
		t.Fatal(err)
	}
	path := filepath.Join(t.TempDir(), "experiment.yaml")
	if err := os.WriteFile(path, buf.Bytes(), 0o644); err != nil {
		t.Fatal(err)
	}
	e2, err := Load(path)
	if err != nil {
		t.Fatalf("re-reading what Write wrote: %v\n%s", err, buf.String())
	}
	if e2.Geometry != e.Geometry || e2.Camera != e.Camera || len(e2.Motion) != 1 || *e2.Motion[0].RatePerS != 1.5 {
		t.Errorf("round trip changed the file:\n%s", buf.String())
	}
}

func TestLoadMissingFile(t *testing.T) {
	_, err := Load(filepath.Join(t.TempDir(), "nope.yaml"))
	if err == nil || !strings.Contains(err.Error(), "nope.yaml") {
		t.Errorf("error %v does not name the file", err)
	}
}

func ExampleExperiment_Program() {
	e, _ := Parse(strings.NewReader("geometry: {kind: cone-plate, radius_mm: 25, cone_angle_deg: 4}\nmotion:\n  - {start_s: 0.5, end_s: 2, rate_per_s: 1.5}\n"))
	s := e.Program()[0]
	fmt.Printf("gap %.1f um, wall speed %.1f um/s, strain %.2f\n", e.Geometry.Gap(), s.WallSpeedUMPerS, s.Strain)
	// Output: gap 1748.2 um, wall speed 2622.3 um/s, strain 2.25
}
