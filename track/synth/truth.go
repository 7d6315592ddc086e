package synth

import (
	"encoding/json"
	"fmt"
	"math"
	"os"

	"gaptrace/calib"
	"gaptrace/calib/geometry"
	"gaptrace/profile/phases"
	"gaptrace/profile/summary"
	"gaptrace/track/tracks"
)

// Truth is truth.json: the true value of every summary.json field of a
// scenario, and the camera jitter of every frame.
//
// In the summary, the error fields are 0 (the truth is exact) and fields that
// describe a measurement rather than the sample (the after-stop noise floor)
// are null. Definitions, for a shear step with moving-wall speed V, gap H
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
type Truth struct {
	Scenario    string           `json:"scenario"`
	Description string           `json:"description"`
	Seed        int64            `json:"seed"`
	Summary     *summary.Summary `json:"summary"`
	// JitterPx holds the camera's common-mode shift [dx, dy] of each frame, px.
	JitterPx [][2]float64 `json:"jitter_px"`
}

// Truth returns the scenario's truth. Tracking counts tracers whose centre is
// in the image as detections and each tracer as one track.
func (s *Scenario) Truth() *Truth {
	t := &Truth{Scenario: s.Name, Description: s.Description, Seed: s.Seed, Summary: summary.New(),
		JitterPx: make([][2]float64, s.Frames)}
	for f := range s.Frames {
		x, y := s.JitterAt(f)
		t.JitterPx[f] = [2]float64{x, y}
	}
	sum := t.Summary
	sum.Experiment = s.Experiment().Name
	sum.Input = summary.Input{Frames: s.Frames, FPS: s.FPS, WidthPx: s.WidthPx, HeightPx: s.HeightPx}
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
	return t
}

// lastFrameS is the time of the last frame.
func (s *Scenario) lastFrameS() float64 { return float64(s.Frames-1) / s.FPS }

func (s *Scenario) phases() []phases.Phase {
	ph := []phases.Phase{}
	add := func(kind string, a, b float64) {
		if b > a {
			ph = append(ph, phases.Phase{Kind: kind, StartS: a, EndS: b, Source: "experiment"})
		}
	}
	end := s.DurationS()
	t := 0.0
	p := s.Program()
	for i, st := range p {
		add(phases.Rest, t, min(st.StartS, end))
		add(phases.Shear, st.StartS, min(st.EndS, end))
		t = st.EndS
		if i == len(p)-1 {
			add(phases.AfterStop, t, end)
			return ph
		}
	}
	add(phases.Rest, t, end)
	return ph
}

// shearTruth is the decomposition of one shear step with wall speed v
// (signed along gap x) and nominal rate.
func (s *Scenario) shearTruth(startS, endS, vUMPerS, nominalPerS float64) summary.ShearPhase {
	h := s.GapUM()
	f0, f1 := s.VelocityFraction(0), s.VelocityFraction(h)
	bulk := vUMPerS * (f1 - f0) / h
	slipS, slipM := vUMPerS*f0, vUMPerS*(1-f1)
	sp := summary.ShearPhase{
		StartS: startS, EndS: endS, WindowS: [2]float64{startS, endS},
		WallSpeedUMPerS: summary.Num(vUMPerS), NominalRatePerS: summary.Num(nominalPerS),
		BulkRatePerS: summary.Num(bulk), SlipStationaryUMPerS: summary.Num(slipS), SlipMovingUMPerS: summary.Num(slipM),
		SlipLengthStationaryUM: summary.Null, SlipLengthMovingUM: summary.Null,
		SlipFraction: summary.Null,
		WallSlip:     slipS != 0 || slipM != 0,
	}
	if bulk != 0 {
		sp.SlipLengthStationaryUM, sp.SlipLengthMovingUM = summary.Num(slipS/bulk), summary.Num(slipM/bulk)
	}
	if vUMPerS != 0 {
		sp.SlipFraction = summary.Num((vUMPerS - bulk*h) / vUMPerS)
	}
	if s.Geometry.Kind == geometry.Couette && s.Profile.IsDefault() {
		sp.Bands = []summary.Band{{FromUM: 0, ToUM: summary.Num(h), RatePerS: summary.Num(bulk), ToErrUM: summary.Null}}
	} else {
		sp.Bands = s.bandsTruth(vUMPerS)
	}
	// Navier slip lengths: each slip over the shear rate of the band at
	// its wall (dv/dy between plates; in a Couette cell, whose true rate
	// at a wall is r d(v/r)/dr, the mean rate stands in).
	if n := len(sp.Bands); n > 0 && s.Geometry.Kind != geometry.Couette {
		if r0 := float64(sp.Bands[0].RatePerS); r0 != 0 {
			sp.SlipLengthStationaryUM = summary.Num(slipS / r0)
		}
		if r1 := float64(sp.Bands[n-1].RatePerS); r1 != 0 {
			sp.SlipLengthMovingUM = summary.Num(slipM / r1)
		}
	}
	sp.Banded = len(sp.Bands) > 1
	sp.Verdict = summary.VerdictOf(sp.WallSlip, sp.Banded)
	return sp
}

func (s *Scenario) bandsTruth(vUMPerS float64) []summary.Band {
	h := s.GapUM()
	rates := s.Profile.BandRates()
	tops := []float64{1}
	if len(s.Profile.Bands) > 0 {
		tops = tops[:0]
		for _, b := range s.Profile.Bands {
			tops = append(tops, b.ToFrac)
		}
	}
	var out []summary.Band
	from := 0.0
	for i, r := range rates {
		rate := vUMPerS * r / h
		if n := len(out); n > 0 && float64(out[n-1].RatePerS) == rate {
			out[n-1].ToUM = summary.Num(tops[i] * h)
		} else {
			out = append(out, summary.Band{FromUM: summary.Num(from * h), ToUM: summary.Num(tops[i] * h), RatePerS: summary.Num(rate)})
		}
		from = tops[i]
	}
	for i := range out {
		out[i].ToErrUM = 0
	}
	out[len(out)-1].ToErrUM = summary.Null
	return out
}

func (s *Scenario) afterStopTruth() *summary.AfterStop {
	stop := s.StopS()
	if math.IsNaN(stop) || s.lastFrameS() <= stop {
		return nil
	}
	h := s.GapUM()
	obs := s.lastFrameS() - stop // the displacement is seen up to the last frame
	a := &summary.AfterStop{StopS: stop, ObservedS: s.DurationS() - stop, NoiseFloorUM: summary.Null,
		MaxDisplacementUM: 0, RecoveredStrain: 0, Verdict: summary.Quiescent,
		PlaneUM: summary.Null, OnsetAfterStopS: summary.Null}
	c := s.Cessation
	g := c.Strain(h) * c.Progress(obs)
	if !c.Moves(h) || g == 0 {
		return a
	}
	a.Verdict = summary.Moving
	a.RecoveredStrain = summary.Num(g)
	a.OnsetAfterStopS = summary.Num(c.OnsetS)
	mode := summary.ModeWall
	maxD := math.Abs(g) * h
	if c.Kind == CessationPlane {
		mode = summary.ModeBulk
		a.PlaneUM = summary.Num(c.PlaneFrac * h)
		maxD = math.Abs(g) * h * max(c.PlaneFrac, 1-c.PlaneFrac)
	}
	a.Mode = &mode
	a.MaxDisplacementUM = summary.Num(maxD)
	return a
}

func (s *Scenario) trackingTruth() summary.Tracking {
	n, tr, med := tracks.Count(s.TrackPoints())
	return summary.Tracking{Detections: n, Tracks: tr, MedianTrackFrames: med}
}

// TrackPoints returns the true positions of every frame as tracks.csv rows:
// track = tracer ID; brightness = the spot's integrated grey levels (photons
// x gain x the vignetting at its place); size_px = its radius of gyration,
// sqrt(2) sigma.
func (s *Scenario) TrackPoints() []tracks.Point {
	var pts []tracks.Point
	for f := range s.Frames {
		for _, t := range s.Positions(f) {
			pts = append(pts, tracks.Point{Track: t.ID, Frame: f, TS: float64(f) / s.FPS,
				XPx: t.XPx, YPx: t.YPx, XUM: t.XUM, YUM: t.YUM,
				Brightness: t.Photons * s.gain() * s.vignettingAt(t.XPx, t.YPx),
				SizePx:     math.Sqrt2 * t.SigmaPx})
		}
	}
	return pts
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
