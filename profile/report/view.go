package report

import (
	"fmt"
	"math"
	"strconv"

	"gaptrace/calib/geometry"
	"gaptrace/profile/cessation"
	"gaptrace/profile/phases"
	"gaptrace/profile/report/figure"
	"gaptrace/profile/rheometry"
)

// view is what the page template shows, every number already in words.
type view struct {
	Name, Tool, YAML string
	// Record is the lab record (sample, operator, input digest, command);
	// Notes the experiment file's notes, kept as written.
	Record         [][2]string
	Notes          string
	Input          [][2]string
	Calibration    [][2]string
	Geometry       [][2]string
	Program        [][]string
	Convention     string
	Tracking       [][2]string
	Findings       []finding
	Phases         [][]string
	ShearHead      []string
	Shear          [][]string
	Bands          [][]string
	AfterStop      [][2]string
	Figures        []numberedFigure
	NotShown       []string
	Failed         []string
	Warnings       []string
	Limits, Safety []string
	DPI            int
}

type finding struct {
	Headline string
	Lines    []string
	Plain    bool // homogeneous or quiescent: nothing to flag
}

type numberedFigure struct {
	shownFigure
	Number int
}

func newView(d *Data, figs []shownFigure, notShown []string) *view {
	s := d.Summary
	v := &view{
		Name:     d.name(),
		Tool:     s.Tool.Name + " " + s.Tool.Version,
		YAML:     d.ExperimentYAML,
		NotShown: notShown,
		Warnings: s.Warnings,
		Limits:   append(append([]string{}, d.Cautions...), measurementCautions(d.Experiment)...),
		Safety:   safetyCautions(d.Experiment),
		DPI:      figure.DPI,
	}
	v.Record, v.Notes = labRecord(d)
	in := s.Input
	v.Input = [][2]string{
		{"input", orUnknown(in.Path)},
		{"frames", strconv.Itoa(in.Frames)},
		{"frame rate", formatValue(in.FPS, "frames/s")},
		{"image size", fmt.Sprintf("%d × %d px", in.WidthPx, in.HeightPx)},
	}
	if c := s.Calibration; c != nil {
		v.Calibration = [][2]string{
			{"scale", formatValue(c.UMPerPx, "µm/px") + " (from the " + scaleSource(c.ScaleSource) + ")"},
			{"gap", formatValue(c.GapUM, unitLen) + " (" + formatValue(c.GapPx, "px") + " between the walls)"},
			{"tilt of the walls", formatValue(c.TiltDeg, "°")},
			{"walls", orUnknown(c.WallSource)},
			{"stationary wall", linePx(c.StationaryWallPx)},
			{"moving wall", linePx(c.MovingWallPx)},
		}
	}
	if e := d.Experiment; e != nil {
		g := e.Geometry
		v.Geometry = [][2]string{{"kind", string(g.Kind)}, {"gap at the observed position", formatValue(g.Gap(), unitLen)}}
		switch g.Kind {
		case geometry.ConePlate:
			v.Geometry = append(v.Geometry, [2]string{"rim radius", formatValue(g.RadiusMM, "mm")},
				[2]string{"cone angle", formatValue(g.ConeAngleRadians()*180/math.Pi, "°")})
		case geometry.ParallelPlate:
			v.Geometry = append(v.Geometry, [2]string{"rim radius", formatValue(g.RadiusMM, "mm")})
		case geometry.Couette:
			rot := g.Rotating
			if rot == "" {
				rot = geometry.InnerRotates
			}
			v.Geometry = append(v.Geometry, [2]string{"inner radius", formatValue(g.InnerRadiusMM, "mm")},
				[2]string{"outer radius", formatValue(g.OuterRadiusMM, "mm")}, [2]string{"rotating cylinder", rot})
		}
		for i, st := range e.Program() {
			as := ""
			if i < len(e.Motion) {
				as = givenAs(e.Motion[i])
			}
			v.Program = append(v.Program, []string{strconv.Itoa(i + 1), formatSpan(st.StartS, st.EndS), orUnknown(as),
				formatValue(st.WallSpeedUMPerS, ""), formatValue(st.RatePerS, ""), formatValue(st.Strain, "")})
		}
		v.Convention = rateConventionNote(g)
	}
	v.Tracking = [][2]string{
		{"detections", strconv.Itoa(s.Tracking.Detections)},
		{"tracks", strconv.Itoa(s.Tracking.Tracks)},
		{"median track length", strconv.Itoa(s.Tracking.MedianTrackFrames) + " frames"},
	}
	for i := range s.ShearPhases {
		sp := &s.ShearPhases[i]
		conv, mean := "", nan
		if e := d.Experiment; e != nil {
			conv, mean = rateConvention(e.Geometry), meanRate(e.Geometry, num(sp.WallSpeedUMPerS))
		}
		h, ls := phaseFindings(i, sp, conv, mean)
		v.Findings = append(v.Findings, finding{h, ls, sp.Verdict == rheometry.Homogeneous})
	}
	if a := s.AfterStop; a != nil {
		h, ls := afterStopFindings(a)
		v.Findings = append(v.Findings, finding{h, ls, a.Verdict == cessation.Quiescent})
	}
	for _, p := range s.Phases {
		v.Phases = append(v.Phases, []string{phaseKind(p.Kind), formatTime(p.StartS), formatTime(p.EndS), p.Source})
	}
	v.ShearHead = []string{"phase", "time", "analysed", "wall speed (µm/s)", "nominal rate (s⁻¹)", "bulk rate (s⁻¹)",
		"slip, stationary wall (µm/s)", "slip, moving wall (µm/s)", "slip length, stationary / moving (µm)",
		"slip share of the motion", "verdict"}
	for i, sp := range s.ShearPhases {
		v.Shear = append(v.Shear, []string{
			strconv.Itoa(i + 1), formatSpan(sp.StartS, sp.EndS), formatSpan(sp.WindowS[0], sp.WindowS[1]),
			formatValue(num(sp.WallSpeedUMPerS), ""), formatValue(num(sp.NominalRatePerS), ""),
			formatPM(num(sp.BulkRatePerS), num(sp.BulkRateErrPerS), ""),
			formatPM(num(sp.SlipStationaryUMPerS), num(sp.SlipStationaryErrUMPerS), ""),
			formatPM(num(sp.SlipMovingUMPerS), num(sp.SlipMovingErrUMPerS), ""),
			formatPM(num(sp.SlipLengthStationaryUM), num(sp.SlipLengthStationaryErrUM), "") + " / " +
				formatPM(num(sp.SlipLengthMovingUM), num(sp.SlipLengthMovingErrUM), ""),
			formatPercent(num(sp.SlipFraction), num(sp.SlipFractionErr)),
			verdictWords(sp.Verdict),
		})
		for j, b := range sp.Bands {
			v.Bands = append(v.Bands, []string{strconv.Itoa(i + 1), strconv.Itoa(j + 1),
				formatValue(num(b.FromUM), ""), formatPM(num(b.ToUM), num(b.ToErrUM), ""),
				formatPM(num(b.RatePerS), num(b.RateErrPerS), "")})
		}
	}
	if a := s.AfterStop; a != nil {
		mode := "none"
		if a.Mode != nil {
			mode = map[string]string{cessation.ModeWall: "slip at a wall", cessation.ModeBulk: "failure plane in the sample"}[*a.Mode]
			if mode == "" {
				mode = *a.Mode
			}
		}
		v.AfterStop = [][2]string{
			{"stop", formatTime(a.StopS)},
			{"observed for", formatTime(a.ObservedS)},
			{"verdict", a.Verdict},
			{"kind of motion", mode},
			{"failure plane height", formatValue(num(a.PlaneUM), unitLen)},
			{"onset after the stop", formatTime(num(a.OnsetAfterStopS))},
			{"largest displacement", formatValue(num(a.MaxDisplacementUM), unitLen)},
			{"noise floor", formatValue(num(a.NoiseFloorUM), unitLen)},
			{"recovered strain", formatValue(num(a.RecoveredStrain), "")},
		}
	}
	for i, f := range figs {
		v.Figures = append(v.Figures, numberedFigure{f, i + 1})
	}
	return v
}

// labRecord is the lab record's rows and the experiment's notes.
func labRecord(d *Data) ([][2]string, string) {
	var rows [][2]string
	add := func(k, v string) {
		if v != "" {
			rows = append(rows, [2]string{k, v})
		}
	}
	notes := ""
	if e := d.Experiment; e != nil {
		add("sample", e.Sample)
		if e.TemperatureC != nil {
			add("temperature", formatValue(*e.TemperatureC, "°C"))
		}
		add("operator", e.Operator)
		notes = e.Notes
	}
	s := d.Summary
	add("input", s.Input.Path)
	if r := d.Record; r != nil {
		if in := r.Input; in != nil {
			size := byteSize(in.Bytes)
			if in.Files > 1 {
				size += fmt.Sprintf(" in %d frame files", in.Files)
			}
			add("input size", size)
			sha := in.SHA256
			if in.Files > 1 {
				sha += " (of the list of the frame files' SHA-256 digests in name order, as sha256sum prints it)"
			}
			add("input SHA-256", sha)
		}
		if len(r.CommandLine) > 0 {
			add("command", commandLine(r.CommandLine))
		}
		add("working folder", r.WorkDir)
		if !r.AnalysedAt.IsZero() {
			add("analysed", r.AnalysedAt.Format("2006-01-02 15:04:05 MST"))
		}
	}
	add("tool", s.Tool.Name+" "+s.Tool.Version)
	return rows, notes
}

func orUnknown(s string) string {
	if s == "" {
		return Unknown
	}
	return s
}

func linePx(l [2][2]float64) string {
	return fmt.Sprintf("(%.1f, %.1f) to (%.1f, %.1f) px", l[0][0], l[0][1], l[1][0], l[1][1])
}

func scaleSource(s string) string {
	switch s {
	case "experiment":
		return "experiment file"
	case "gap":
		return "gap over the wall distance in pixels"
	case "target":
		return "calibration target"
	}
	return orUnknown(s) + " source"
}

func phaseKind(k string) string {
	switch k {
	case phases.Rest:
		return "rest"
	case phases.Shear:
		return "shear"
	case phases.AfterStop:
		return "after the stop"
	}
	return k
}

func verdictWords(v string) string {
	switch v {
	case rheometry.Homogeneous:
		return "homogeneous"
	case rheometry.WallSlip:
		return "wall slip"
	case rheometry.Banded:
		return "shear bands"
	case rheometry.WallSlipBanded:
		return "wall slip and shear bands"
	case inconclusive:
		return "inconclusive"
	}
	return orUnknown(v)
}
