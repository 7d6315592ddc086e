package report_test

import (
	"bytes"
	"cmp"
	"encoding/csv"
	"os"
	"path/filepath"
	"slices"
	"strconv"
	"strings"
	"testing"

	"gaptrace/calib/experiment"
	"gaptrace/profile/report"
	"gaptrace/profile/report/figure"
	"gaptrace/profile/report/internal/scenario"
)

// A Couette cell's figures are drawn against the radial position from the
// inner cylinder. With the inner cylinder rotating, the Newtonian flow runs
// from the wall speed at r = R_i to rest at R_o (Bird, Stewart & Lightfoot,
// Transport Phenomena, 2nd ed. 2002, example 3.6-3): the profile figure's
// data must fall along its drawn coordinate.
func TestCouetteFiguresRadial(t *testing.T) {
	d, e, _ := analysed(t, "couette", 2)
	if len(d.Profiles) == 0 || d.Profiles[0] == nil {
		t.Fatal("no profile")
	}
	want := figure.GapAxis{Radial: true, InnerMoving: true}
	if d.Profiles[0].Axis != want || d.SpaceTime == nil || d.SpaceTime.Axis != want {
		t.Fatalf("axes %+v and %+v, want %+v", d.Profiles[0].Axis, d.SpaceTime, want)
	}
	fig, err := figure.ProfilePlot(d.Profiles[0])
	if err != nil {
		t.Fatal(err)
	}
	rows, err := csv.NewReader(bytes.NewReader(fig.CSV)).ReadAll()
	if err != nil {
		t.Fatal(err)
	}
	col := map[string]int{}
	for i, h := range rows[0] {
		col[h] = i
	}
	type pt struct{ r, v float64 }
	var pts []pt
	for _, row := range rows[1:] {
		if row[0] != "measured" {
			continue
		}
		rr, _ := strconv.ParseFloat(row[col["r_minus_ri_um"]], 64)
		y, _ := strconv.ParseFloat(row[col["y_um"]], 64)
		v, _ := strconv.ParseFloat(row[col["v_over_wall_speed"]], 64)
		if diff := rr - (e.Geometry.Gap() - y); diff > 1e-9 || diff < -1e-9 {
			t.Errorf("r − R_i = %g um for y = %g um in a gap of %g um", rr, y, e.Geometry.Gap())
		}
		pts = append(pts, pt{rr, v})
	}
	slices.SortFunc(pts, func(a, b pt) int { return cmp.Compare(a.r, b.r) })
	// nearWall: the outermost layers lie within a tenth of the gap of the
	// walls, where the Newtonian profile is within 0.15 V of the wall's speed.
	const nearWall = 0.15
	if len(pts) < 4 || pts[0].v < 1-nearWall || pts[len(pts)-1].v > nearWall {
		t.Errorf("v/V from %v at the inner cylinder to %v at the outer, want about 1 to 0", pts[0], pts[len(pts)-1])
	}
	for _, txt := range []string{">radial position (r − R<", ">i<", ">o<"} {
		if !strings.Contains(string(fig.SVG), txt) {
			t.Errorf("Couette profile SVG lacks %q", txt)
		}
	}
	dir := t.TempDir()
	if _, err := report.Write(dir, d); err != nil {
		t.Fatal(err)
	}
	html := string(must(os.ReadFile(filepath.Join(dir, report.FileName))))
	for _, w := range []string{"the radial position r − R_i from the inner cylinder",
		"the rotating inner cylinder at 0, the stationary outer one at the gap",
		"the representative rate of a Couette cell (DIN 53019-1 / ISO 3219)", "which over the gap is a mean rate of",
		"The rotating cylinder (bob or cup) winds up hair"} {
		if !strings.Contains(html, w) {
			t.Errorf("Couette report lacks %q", w)
		}
	}
	if strings.Contains(html, "Sliding-plate drives") {
		t.Errorf("Couette report carries the sliding plates' caution")
	}
}

// The words follow the geometry and the temperature: the convention of
// the nominal rate, the tools' dangers, the heat.
func TestGeometryWords(t *testing.T) {
	cases := []struct {
		name, yaml string
		want, not  []string
	}{
		{"parallel plates at room temperature",
			"geometry: {kind: parallel-plate, gap_um: 800, radius_mm: 12.5}\ntemperature_c: 22\nmotion:\n  - {start_s: 0.5, end_s: 2.5, rate_per_s: 1.5}\n",
			[]string{"the rim rate, the largest of the rates along the radius", "which the camera sees, has the largest rate",
				"The rotating plate&#39;s rim moves fastest", "<td class=\"num\">rate_per_s: 1.5</td>"},
			[]string{"shimmers", "Hot polymer melts", "mean rate of"}},
		{"cone and plate in an oven",
			"geometry: {kind: cone-plate, radius_mm: 12.5, cone_angle_deg: 3.66}\ntemperature_c: 180\nmotion:\n  - {start_s: 0.5, end_s: 2.5, strain: 3}\n",
			[]string{"the cone&#39;s rate, the same at every radius", "The cone turns with large torque",
				"The sample was at 180 °C. Hot air in front of an oven window shimmers", "The sample was at 180 °C. Heated shrouds and ovens",
				"Hot polymer melts", "<td class=\"num\">strain: 3</td>"},
			[]string{"If the tool is heated"}},
		{"sliding plates, temperature not given",
			"geometry: {kind: plates, gap_um: 800}\nmotion:\n  - {start_s: 0.5, end_s: 2.5, wall_speed_um_per_s: 1200}\n",
			[]string{"Sliding-plate drives", "When the sample is filmed through the window of an oven", "If the tool is heated",
				"Sliding plates shear uniformly only away from the plates&#39; ends"},
			[]string{"The sample was at"}},
	}
	for _, c := range cases {
		t.Run(c.name, func(t *testing.T) {
			e, err := experiment.Parse(strings.NewReader(c.yaml))
			if err != nil {
				t.Fatal(err)
			}
			_, html := writeReport(t, &report.Data{Summary: scenario.Summary(), Experiment: e})
			for _, w := range c.want {
				if !strings.Contains(html, w) {
					t.Errorf("report lacks %q", w)
				}
			}
			for _, w := range c.not {
				if strings.Contains(html, w) {
					t.Errorf("report has %q", w)
				}
			}
		})
	}
}
