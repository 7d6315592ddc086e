package synth

import (
	"bufio"
	"bytes"
	"encoding/json"
	"fmt"
	"io"
	"math"
	"os"
	"strconv"

	"gaptrace/calib"
	"gaptrace/calib/geometry"
	"gaptrace/calib/jsonnum"
	"gaptrace/track/tracks"
)

// Truth is truth.json: the true value of the summary.json fields that
// describe the recording and the sample, and the camera jitter of every
// frame.
//
// The summary's true values (Summary) bear summary.json's names; error
// fields and those that describe a measurement rather than the sample (the
// after-stop noise floor) are left out. Definitions, for a shear step with moving-wall speed V, gap H
// and true fluid velocity v(y):
//
//   - slip_stationary_um_per_s = v(0), slip_moving_um_per_s = V - v(H);
//   - bulk_rate_per_s = (v(H) - v(0)) / H, the mean shear rate of the
//     sample, also for a banded profile (then it is the width-weighted mean
//     of the band rates);
//   - slip_length_*_um = the slip speed at that wall / bulk rate (Navier
//     slip length measured with the bulk rate), null when the rate is 0;
//   - slip_fraction = (V - bulk_rate*H) / V;
//   - bands: the layers of the Profile (adjacent layers of equal rate
//     merged), or one band over the gap; wall_slip is true when either slip
//     is not zero.
//
// Times: the recording lasts Frames/FPS, where the last phase ends;
// observed_s is that end minus the stop. After the stop, recovered_strain and
// max_displacement_um are the values reached at the last frame's time
// ((Frames-1)/FPS), onset_after_stop_s the Cessation's onset.
//
// Beyond the summary: each shear step's start-up truth and stress maximum
// (Steps), and for each fault of the camera that is switched on, what it
// did (the other fields are left out when it is off).
type Truth struct {
	Scenario    string        `json:"scenario"`
	Description string        `json:"description"`
	Seed        int64         `json:"seed"`
	Summary     *SummaryTruth `json:"summary"`
	// JitterPx holds the camera's common-mode shift [dx, dy] of each frame
	// (jitter and sway), px.
	JitterPx [][2]float64 `json:"jitter_px"`

	// Steps holds, per shear step, the start-up transient and the stress
	// maximum (see StepTruth).
	Steps []StepTruth `json:"steps"`
	// FrameTimesS is the true time of each frame, s, when the frame rate
	// varies (VariableRate); truth_tracks.csv's t_s uses it.
	FrameTimesS []float64 `json:"frame_times_s,omitempty"`
	// ExposureS is the exposure time, s, with motion blur; PositionsAt
	// then says which instant the positions are of.
	ExposureS   float64 `json:"exposure_s,omitempty"`
	PositionsAt string  `json:"positions_at,omitempty"`
	// FieldOffsetsS are the times of an interlaced frame's even-row and
	// odd-row fields relative to the frame's time, s.
	FieldOffsetsS []float64 `json:"field_offsets_s,omitempty"`
	// Illumination is the lamp's factor of each frame with Flicker.
	Illumination []float64 `json:"illumination,omitempty"`
	// Dust lists the dust on the window.
	Dust []DustSpot `json:"dust,omitempty"`
	// Colour is the colour camera, when there is one.
	Colour *ColourTruth `json:"colour,omitempty"`
	// StoredRotationDeg is how the video file stores the frames rotated,
	// undone by its display-rotation tag.
	StoredRotationDeg int `json:"stored_rotation_deg,omitempty"`
	// Log describes rheometer_log.csv, when Write makes one.
	Log *LogTruth `json:"log,omitempty"`
}

// SummaryTruth holds the true values of summary.json's fields of a scenario,
// under the same JSON names (see the interface contract for their
// meaning). Unknown or undefined numbers are null.
type SummaryTruth struct {
	Experiment  string             `json:"experiment,omitempty"`
	Input       InputTruth         `json:"input"`
	Calibration *calib.Calibration `json:"calibration"`
	Tracking    TrackingTruth      `json:"tracking"`
	Phases      []PhaseTruth       `json:"phases"`
	ShearPhases []ShearTruth       `json:"shear_phases"`
	AfterStop   *AfterStopTruth    `json:"after_stop"` // nil without time after a shear step
}

// InputTruth is the video: its path (set by Write), frames, rate and size.
type InputTruth struct {
	Path     string  `json:"path"`
	Frames   int     `json:"frames"`
	FPS      float64 `json:"fps"`
	WidthPx  int     `json:"width_px"`
	HeightPx int     `json:"height_px"`
}

// TrackingTruth counts each tracer whose centre is in the image, in each frame,
// as a detection, and each tracer as one track.
type TrackingTruth struct {
	Detections        int `json:"detections"`
	Tracks            int `json:"tracks"`
	MedianTrackFrames int `json:"median_track_frames"`
}

// PhaseTruth is one phase of the motion program: Kind is PhaseRest, PhaseShear
// or PhaseAfterStop, from StartS to EndS (s); Source is "experiment".
type PhaseTruth struct {
	Kind   string  `json:"kind"`
	StartS float64 `json:"start_s"`
	EndS   float64 `json:"end_s"`
	Source string  `json:"source"`
}

// Phase kinds, in the interface contract's words.
const (
	PhaseRest      = "rest"
	PhaseShear     = "shear"
	PhaseAfterStop = "after_stop"
)

// ShearTruth is the true decomposition of one shear step (definitions
// above); speeds in um/s, rates in 1/s, lengths in um, signed along gap +x.
type ShearTruth struct {
	StartS                 float64     `json:"start_s"`
	EndS                   float64     `json:"end_s"`
	WindowS                [2]float64  `json:"window_s"` // the whole step
	WallSpeedUMPerS        jsonnum.Num `json:"wall_speed_um_per_s"`
	NominalRatePerS        jsonnum.Num `json:"nominal_rate_per_s"`
	BulkRatePerS           jsonnum.Num `json:"bulk_rate_per_s"`
	SlipStationaryUMPerS   jsonnum.Num `json:"slip_stationary_um_per_s"`
	SlipMovingUMPerS       jsonnum.Num `json:"slip_moving_um_per_s"`
	SlipLengthStationaryUM jsonnum.Num `json:"slip_length_stationary_um"`
	SlipLengthMovingUM     jsonnum.Num `json:"slip_length_moving_um"`
	SlipFraction           jsonnum.Num `json:"slip_fraction"`
	WallSlip               bool        `json:"wall_slip"`
	Bands                  []BandTruth `json:"bands"`
	Banded                 bool        `json:"banded"`
	// Verdict is the interface contract's word for WallSlip and Banded.
	Verdict string `json:"verdict"`
}

// BandTruth is one layer of uniform shear rate, from FromUM to ToUM above the
// stationary wall (um), at RatePerS (1/s).
type BandTruth struct {
	FromUM   jsonnum.Num `json:"from_um"`
	ToUM     jsonnum.Num `json:"to_um"`
	RatePerS jsonnum.Num `json:"rate_per_s"`
}

// AfterStopTruth is the truth of the time after the last shear step: Verdict is
// "moving" or "quiescent" and Mode "wall" or "bulk" (nil when quiescent),
// in the interface contract's words.
type AfterStopTruth struct {
	StopS             float64     `json:"stop_s"`
	ObservedS         float64     `json:"observed_s"`
	MaxDisplacementUM jsonnum.Num `json:"max_displacement_um"`
	RecoveredStrain   jsonnum.Num `json:"recovered_strain"`
	Verdict           string      `json:"verdict"`
	Mode              *string     `json:"mode"`
	PlaneUM           jsonnum.Num `json:"plane_um"`
	OnsetAfterStopS   jsonnum.Num `json:"onset_after_stop_s"`
}

// verdict is the interface contract's verdict of a shear phase with or
// without wall slip and more than one band. It is written here from the
// contract, not taken from the analysis, so that the truth checks it.
func verdict(wallSlip, banded bool) string {
	words := [2][2]string{{"homogeneous", "banded"}, {"wall_slip", "wall_slip+banded"}}
	return words[boolInt(wallSlip)][boolInt(banded)]
}

// ColourTruth is the colour camera of truth.json.
type ColourTruth struct {
	TintBGR [3]float64 `json:"tint_bgr"` // the channels' responses, blue, green, red
	Mosaic  string     `json:"mosaic"`   // "RGGB" for a Bayer sensor (demosaiced bilinearly), "" for three full channels
}

// LogTruth is what truth.json says about rheometer_log.csv: its layout and
// clock, and the stress model behind its torque column.
type LogTruth struct {
	File         string   `json:"file"`
	RateHz       float64  `json:"rate_hz"`
	LeadS        float64  `json:"lead_s"`
	ClockOffsetS float64  `json:"clock_offset_s"` // the log's clock reads the video's time plus this
	Columns      []string `json:"columns"`        // the kinds of column, in order (see RheometerLog)
	Headers      []string `json:"headers"`        // the header line's fields
	Separator    string   `json:"separator"`
	DecimalComma bool     `json:"decimal_comma"`
	// TorquePerPa is the torque column's value per Pa of stress: N m (mN m
	// with units in the headers), or N of force for sliding plates.
	TorquePerPa  float64 `json:"torque_per_pa"`
	ViscosityPaS float64 `json:"viscosity_pa_s"`
	PeakStrain   float64 `json:"peak_strain"`
	Overshoot    float64 `json:"overshoot"`
}

// Truth returns the scenario's truth. Tracking counts tracers whose centre is
// in the image as detections and each tracer as one track.
func (s *Scenario) Truth() *Truth {
	t := &Truth{Scenario: s.Name, Description: s.Description, Seed: s.Seed, Summary: &SummaryTruth{Phases: []PhaseTruth{}, ShearPhases: []ShearTruth{}},
		JitterPx: make([][2]float64, s.Frames)}
	for f := range s.Frames {
		x, y := s.JitterAt(f)
		t.JitterPx[f] = [2]float64{x, y}
	}
	sum := t.Summary
	sum.Experiment = s.Experiment().Name
	sum.Input = InputTruth{Frames: s.Frames, FPS: s.FPS, WidthPx: s.WidthPx, HeightPx: s.HeightPx}
	sum.Calibration = s.Calibration()
	if s.OmitScale {
		sum.Calibration.ScaleSource = calib.ScaleGap
	}
	sum.Tracking = s.trackingTruth()
	sum.Phases = s.phases()
	sense := flowSense(s.Program())
	for _, st := range s.Program() {
		sum.ShearPhases = append(sum.ShearPhases, s.shearTruth(st.StartS, st.EndS, sense*st.WallSpeedUMPerS, sense*st.RatePerS))
	}
	sum.AfterStop = s.afterStopTruth()
	t.Steps = s.Steps()
	s.faultsTruth(t)
	return t
}

// faultsTruth fills the truth of the camera's faults that are on.
func (s *Scenario) faultsTruth(t *Truth) {
	if s.VariableRate.on() {
		t.FrameTimesS = s.FrameTimes()
	}
	if s.ExposureFraction > 0 || s.Interlaced {
		t.ExposureS = s.exposureS()
		t.PositionsAt = "the frame's time: the middle of its exposure (of a motion-blurred streak), midway between the fields of an interlaced frame"
	}
	if s.Interlaced {
		q := s.fieldOffsetS()
		t.FieldOffsetsS = []float64{-q, q}
	}
	if s.Flicker.on() {
		t.Illumination = s.Illumination()
	}
	t.Dust = s.DustSpots()
	if s.Colour.on() {
		t.Colour = &ColourTruth{TintBGR: s.Colour.Tint}
		if s.Colour.Bayer {
			t.Colour.Mosaic = "RGGB"
		}
	}
	t.StoredRotationDeg = s.StoredRotationDeg
	if l := s.Log; l.on() {
		lt := &LogTruth{File: LogFile, RateHz: l.RateHz, LeadS: l.LeadS, ClockOffsetS: l.ClockOffsetS,
			Columns: l.columns(s.Geometry, s.Stress.on()), Separator: l.Separator, DecimalComma: l.DecimalComma}
		if lt.Separator == "" {
			lt.Separator = ","
		}
		for _, c := range lt.Columns {
			lt.Headers = append(lt.Headers, s.logHeader(c))
		}
		if m := s.Stress; m.on() {
			lt.TorquePerPa = s.torquePerPa()
			if l.Units && s.Geometry.Kind != geometry.Plates {
				lt.TorquePerPa *= 1e3
			}
			lt.ViscosityPaS = m.ViscosityPaS
			lt.PeakStrain = orDefault(m.PeakStrain, defaultPeakStrain)
			lt.Overshoot = orDefault(m.Overshoot, defaultOvershoot)
		}
		t.Log = lt
	}
}

// lastFrameS is the time of the last frame.
func (s *Scenario) lastFrameS() float64 {
	if s.VariableRate.on() {
		return s.FrameTimeS(s.Frames - 1)
	}
	return float64(s.Frames-1) / s.FPS
}

func (s *Scenario) phases() []PhaseTruth {
	ph := []PhaseTruth{}
	add := func(kind string, a, b float64) {
		if b > a {
			ph = append(ph, PhaseTruth{Kind: kind, StartS: a, EndS: b, Source: "experiment"})
		}
	}
	end := s.DurationS()
	t := 0.0
	p := s.Program()
	for i, st := range p {
		add(PhaseRest, t, min(st.StartS, end))
		add(PhaseShear, st.StartS, min(st.EndS, end))
		t = st.EndS
		if i == len(p)-1 {
			add(PhaseAfterStop, t, end)
			return ph
		}
	}
	add(PhaseRest, t, end)
	return ph
}

// shearTruth is the decomposition of one shear step with wall speed v
// (signed along gap x) and nominal rate.
func (s *Scenario) shearTruth(startS, endS, vUMPerS, nominalPerS float64) ShearTruth {
	return s.shearTruthOf(s.Profile, startS, endS, vUMPerS, nominalPerS)
}

// shearTruthOf is shearTruth for the profile prof in place of the
// scenario's (a window's mean profile during a start-up).
func (s *Scenario) shearTruthOf(prof Profile, startS, endS, vUMPerS, nominalPerS float64) ShearTruth {
	h := s.GapUM()
	couette := s.Geometry.Kind == geometry.Couette && prof.IsDefault()
	vf := func(yUM float64) float64 {
		if couette {
			return s.Geometry.Reference(yUM, 1)
		}
		return prof.Velocity(yUM / h)
	}
	f0, f1 := vf(0), vf(h)
	bulk := vUMPerS * (f1 - f0) / h
	slipS, slipM := vUMPerS*f0, vUMPerS*(1-f1)
	sp := ShearTruth{
		StartS: startS, EndS: endS, WindowS: [2]float64{startS, endS},
		WallSpeedUMPerS: jsonnum.Num(vUMPerS), NominalRatePerS: jsonnum.Num(nominalPerS),
		BulkRatePerS: jsonnum.Num(bulk), SlipStationaryUMPerS: jsonnum.Num(slipS), SlipMovingUMPerS: jsonnum.Num(slipM),
		SlipLengthStationaryUM: jsonnum.Null, SlipLengthMovingUM: jsonnum.Null,
		SlipFraction: jsonnum.Null,
		WallSlip:     slipS != 0 || slipM != 0,
	}
	if bulk != 0 {
		sp.SlipLengthStationaryUM, sp.SlipLengthMovingUM = jsonnum.Num(slipS/bulk), jsonnum.Num(slipM/bulk)
	}
	if vUMPerS != 0 {
		sp.SlipFraction = jsonnum.Num((vUMPerS - bulk*h) / vUMPerS)
	}
	if couette {
		sp.Bands = []BandTruth{{FromUM: 0, ToUM: jsonnum.Num(h), RatePerS: jsonnum.Num(bulk)}}
	} else {
		sp.Bands = s.bandsTruth(prof, vUMPerS)
	}
	// Navier slip lengths: each slip over the shear rate of the band at
	// its wall (dv/dy between plates; in a Couette cell, whose true rate
	// at a wall is r d(v/r)/dr, the mean rate stands in).
	if n := len(sp.Bands); n > 0 && s.Geometry.Kind != geometry.Couette {
		if r0 := float64(sp.Bands[0].RatePerS); r0 != 0 {
			sp.SlipLengthStationaryUM = jsonnum.Num(slipS / r0)
		}
		if r1 := float64(sp.Bands[n-1].RatePerS); r1 != 0 {
			sp.SlipLengthMovingUM = jsonnum.Num(slipM / r1)
		}
	}
	sp.Banded = len(sp.Bands) > 1
	sp.Verdict = verdict(sp.WallSlip, sp.Banded)
	return sp
}

func (s *Scenario) bandsTruth(prof Profile, vUMPerS float64) []BandTruth {
	h := s.GapUM()
	rates := prof.BandRates()
	tops := []float64{1}
	if len(prof.Bands) > 0 {
		tops = tops[:0]
		for _, b := range prof.Bands {
			tops = append(tops, b.ToFrac)
		}
	}
	var out []BandTruth
	from := 0.0
	for i, r := range rates {
		rate := vUMPerS * r / h
		if n := len(out); n > 0 && float64(out[n-1].RatePerS) == rate {
			out[n-1].ToUM = jsonnum.Num(tops[i] * h)
		} else {
			out = append(out, BandTruth{FromUM: jsonnum.Num(from * h), ToUM: jsonnum.Num(tops[i] * h), RatePerS: jsonnum.Num(rate)})
		}
		from = tops[i]
	}
	return out
}

func (s *Scenario) afterStopTruth() *AfterStopTruth {
	stop := s.StopS()
	if math.IsNaN(stop) || s.lastFrameS() <= stop {
		return nil
	}
	h := s.GapUM()
	obs := s.lastFrameS() - stop // the displacement is seen up to the last frame
	a := &AfterStopTruth{StopS: stop, ObservedS: s.DurationS() - stop,
		MaxDisplacementUM: 0, RecoveredStrain: 0, Verdict: "quiescent",
		PlaneUM: jsonnum.Null, OnsetAfterStopS: jsonnum.Null}
	c := s.Cessation
	g := c.Strain(h) * c.Progress(obs)
	if !c.Moves(h) || g == 0 {
		return a
	}
	a.Verdict = "moving"
	a.RecoveredStrain = jsonnum.Num(g)
	a.OnsetAfterStopS = jsonnum.Num(c.OnsetS)
	mode := "wall" // a jump at a wall
	maxD := math.Abs(g) * h
	if c.Kind == CessationPlane {
		mode = "bulk" // a jump inside the sample
		a.PlaneUM = jsonnum.Num(c.PlaneFrac * h)
		maxD = math.Abs(g) * h * max(c.PlaneFrac, 1-c.PlaneFrac)
	}
	a.Mode = &mode
	a.MaxDisplacementUM = jsonnum.Num(maxD)
	return a
}

func (s *Scenario) trackingTruth() TrackingTruth {
	n, tr, med := tracks.Count(s.TrackPoints())
	return TrackingTruth{Detections: n, Tracks: tr, MedianTrackFrames: med}
}

// TrackPoints returns the true positions of every frame as tracks.csv rows:
// track = tracer ID; t_s = the frame's true time; brightness = the spot's
// integrated grey levels (photons x gain x the vignetting at its place);
// size_px = its radius of gyration, sqrt(2) sigma.
func (s *Scenario) TrackPoints() []tracks.Point {
	var pts []tracks.Point
	s.eachPosition(func(f int, tS float64, t *Tracer) {
		pts = append(pts, s.trackPoint(f, tS, t))
	})
	return pts
}

func (s *Scenario) trackPoint(f int, tS float64, t *Tracer) tracks.Point {
	return tracks.Point{Track: t.ID, Frame: f, TS: tS,
		XPx: t.XPx, YPx: t.YPx, XUM: t.XUM, YUM: t.YUM,
		Brightness: t.Photons * s.gain() * s.vignettingAt(t.XPx, t.YPx),
		SizePx:     math.Sqrt2 * t.SigmaPx}
}

// eachPosition calls fn with the tracers of Positions for every frame, in
// frame order, drawing the population and the frame times once.
func (s *Scenario) eachPosition(fn func(frame int, tS float64, t *Tracer)) {
	g := s.geom()
	pop := s.population(g)
	prog := s.Program()
	cal := s.Calibration()
	times := s.frameTimes()
	var buf []Tracer
	for f := range s.Frames {
		tS := s.frameTime(times, f)
		buf = s.positionsAt(g, pop, prog, f, tS, cal, true, buf)
		for i := range buf {
			fn(f, tS, &buf[i])
		}
	}
}

// TruthRow is one row of truth_tracks.csv: the tracks.csv columns, then
// what the truth adds about the tracer in that frame.
type TruthRow struct {
	tracks.Point
	// PeakSNR is the expected contrast of the spot's brightest pixel (with
	// its blur, the vignetting and the lamp's factor) over the noise sd of
	// the background there, sqrt(background photons + ReadNoise^2), in the
	// grey camera's photons (before a colour camera's tint); at the frame's
	// time for an interlaced frame.
	PeakSNR float64
	InFocus bool
	// Stuck is 0 for a tracer in the sample, 1 for one stuck to the
	// stationary wall, 2 for one stuck to the moving wall.
	Stuck int
	// DistStationaryPx and DistMovingPx are the centre's distances from the
	// stationary and the moving wall line, px (perpendicular, without the
	// camera's shake; positive inside the gap).
	DistStationaryPx, DistMovingPx float64
	// DistEdgePx is the centre's distance from the nearer of the image's
	// left and right edges (the outer side of its first or last column), px.
	DistEdgePx float64
}

// TruthTracksExtra is the list of columns truth_tracks.csv holds after
// those of tracks.csv.
var TruthTracksExtra = []string{"peak_snr", "in_focus", "stuck", "dist_stationary_px", "dist_moving_px", "dist_edge_px"}

// TruthRows returns every row of truth_tracks.csv, in frame order.
func (s *Scenario) TruthRows() []TruthRow {
	r, err := NewRenderer(s)
	if err != nil {
		return nil
	}
	w := float64(s.WidthPx)
	var rows []TruthRow
	s.eachPosition(func(f int, tS float64, t *Tracer) {
		row := TruthRow{Point: s.trackPoint(f, tS, t), InFocus: t.InFocus,
			DistStationaryPx: t.YUM / s.UMPerPx, DistMovingPx: (s.GapUM() - t.YUM) / s.UMPerPx,
			DistEdgePx: min(t.XPx+0.5, w-0.5-t.XPx)}
		row.Point.NearWall = min(row.DistStationaryPx, row.DistMovingPx) < tracks.NearWallRadii*s.DiameterPx/2
		switch t.Stuck {
		case WallStationary:
			row.Stuck = 1
		case WallMoving:
			row.Stuck = 2
		}
		row.PeakSNR = r.peakSNR(f, tS, t)
		rows = append(rows, row)
	})
	return rows
}

// peakSNR computes TruthRow.PeakSNR of tracer t in frame f.
func (r *Renderer) peakSNR(f int, tS float64, t *Tracer) float64 {
	s := &r.s
	jx, jy := s.shiftAt(f, tS)
	light := s.vignettingAt(t.XPx, t.YPx) * s.illumination(f, tS, r.flickerPh)
	bg := r.backgroundAt(t.XPx, t.YPx, jx, jy, tS) * light
	noise := math.Sqrt(max(bg, 0) + s.ReadNoise*s.ReadNoise)
	if noise == 0 {
		return math.Inf(1)
	}
	return t.Photons * r.peakFraction(t, tS) * light / noise
}

// peakFraction is the largest share of a tracer's photons that one pixel
// receives: the pixel under its centre for a still spot, the best pixel
// near the streak for a moving one.
func (r *Renderer) peakFraction(t *Tracer, tS float64) float64 {
	px := func(p int, c float64) float64 {
		k := 1 / (math.Sqrt2 * t.SigmaPx)
		return 0.5 * (math.Erf((float64(p)+0.5-c)*k) - math.Erf((float64(p)-0.5-c)*k))
	}
	if r.s.ExposureFraction == 0 {
		return px(int(math.Round(t.XPx)), t.XPx) * px(int(math.Round(t.YPx)), t.YPx)
	}
	type sub struct{ x, y, w float64 }
	var subs []sub
	x0, x1, y0, y1 := math.Inf(1), math.Inf(-1), math.Inf(1), math.Inf(-1)
	r.streak(t, tS, 1, func(x, y, w float64) {
		subs = append(subs, sub{x, y, w})
		x0, x1, y0, y1 = min(x0, x), max(x1, x), min(y0, y), max(y1, y)
	})
	best := 0.0
	for j := int(math.Round(y0)) - 1; j <= int(math.Round(y1))+1; j++ {
		for i := int(math.Round(x0)) - 1; i <= int(math.Round(x1))+1; i++ {
			v := 0.0
			for _, q := range subs {
				v += q.w * px(i, q.x) * px(j, q.y)
			}
			best = max(best, v)
		}
	}
	return best
}

// WriteTruthTracks writes rows as truth_tracks.csv: the columns of
// tracks.csv (formatted by tracks.WriteCSV), then TruthTracksExtra.
func WriteTruthTracks(w io.Writer, rows []TruthRow) error {
	pts := make([]tracks.Point, len(rows))
	for i := range rows {
		pts[i] = rows[i].Point
	}
	var base bytes.Buffer
	if err := tracks.WriteCSV(&base, pts); err != nil {
		return err
	}
	bw := bufio.NewWriter(w)
	lines := bytes.SplitAfter(base.Bytes(), []byte("\n"))
	var b []byte
	for i, l := range lines {
		if len(l) == 0 {
			continue
		}
		b = append(b[:0], bytes.TrimSuffix(l, []byte("\n"))...)
		if i == 0 {
			for _, c := range TruthTracksExtra {
				b = append(append(b, ','), c...)
			}
		} else {
			if i-1 >= len(rows) {
				return fmt.Errorf("synth: tracks.csv has more lines than rows")
			}
			row := &rows[i-1]
			b = append(b, ',')
			b = strconv.AppendFloat(b, row.PeakSNR, 'f', 3, 64)
			b = append(b, ',')
			b = strconv.AppendInt(b, int64(boolInt(row.InFocus)), 10)
			b = append(b, ',')
			b = strconv.AppendInt(b, int64(row.Stuck), 10)
			for _, v := range []float64{row.DistStationaryPx, row.DistMovingPx, row.DistEdgePx} {
				b = append(b, ',')
				b = strconv.AppendFloat(b, v, 'f', 4, 64)
			}
		}
		b = append(b, '\n')
		if _, err := bw.Write(b); err != nil {
			return err
		}
	}
	return bw.Flush()
}

func boolInt(b bool) int {
	if b {
		return 1
	}
	return 0
}

// vignettingAt is the illumination factor at an image position: 1 at the
// centre, 1 - Vignetting at the corners, quadratic in the distance.
func (s *Scenario) vignettingAt(xPx, yPx float64) float64 {
	cx, cy := float64(s.WidthPx-1)/2, float64(s.HeightPx-1)/2
	dx, dy := xPx-cx, yPx-cy
	return 1 - s.Vignetting*(dx*dx+dy*dy)/(cx*cx+cy*cy)
}

// ReadTruth reads a truth.json file.
func ReadTruth(path string) (*Truth, error) {
	b, err := os.ReadFile(path)
	if err != nil {
		return nil, err
	}
	var t Truth
	if err := json.Unmarshal(b, &t); err != nil {
		return nil, fmt.Errorf("%s: %w", path, err)
	}
	return &t, nil
}
