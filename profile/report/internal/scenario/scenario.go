// Package scenario is the made-up experiment of the report's tests and
// examples: invented numbers for a demonstration, not measurements.
package scenario

import (
	"math"
	"math/rand/v2"
	"strings"

	"gocv.io/x/gocv"

	"gaptrace/calib"
	"gaptrace/calib/experiment"
	"gaptrace/profile/cessation"
	"gaptrace/profile/phases"
	"gaptrace/profile/report/figure"
	"gaptrace/profile/rheometry"
	"gaptrace/profile/summary"
)

// The made-up scenario of these tests: a soft gel ("sample K-3" of an
// invented teaching lab) sheared between sliding plates 800 um apart at a
// wall speed of 1200 um/s. It slips at both walls and splits into a fast
// band near the stationary wall and a slow one above; after the stop it
// recoils a little and then fails along a plane at 520 um. All numbers are
// invented for the demonstration.
const (
	demoGapUM      = 800.0
	demoWallUMPerS = 1200.0
	demoSlipStatUM = 50.0  // fluid speed at the stationary wall, um/s
	demoSlipMovUM  = 300.0 // wall speed minus fluid speed at the moving wall, um/s
	demoBandUM     = 300.0 // band boundary
	demoRate1PerS  = 2.5   // lower band
	demoPlaneUM    = 520.0
)

// V is the scenario's velocity profile, um/s.
func V(yUM float64) float64 {
	vb := demoSlipStatUM + demoRate1PerS*demoBandUM
	if yUM <= demoBandUM {
		return demoSlipStatUM + demoRate1PerS*yUM
	}
	rate2 := (demoWallUMPerS - demoSlipMovUM - vb) / (demoGapUM - demoBandUM)
	return vb + rate2*(yUM-demoBandUM)
}

// Profile is the shear phase's velocity profile.
func Profile() *figure.PhaseProfile {
	r := rand.New(rand.NewPCG(1, 2))
	p := &figure.PhaseProfile{GapUM: demoGapUM, WallSpeedUMPerS: demoWallUMPerS}
	for i := range 20 {
		y := (float64(i) + 0.5) * demoGapUM / 20
		p.Points = append(p.Points, figure.ProfilePoint{YUM: y, VUMPerS: V(y) + 8*r.NormFloat64(), ErrUMPerS: 8, N: 200})
	}
	for i := 0; i <= 40; i++ {
		y := float64(i) * demoGapUM / 40
		p.Fit = append(p.Fit, figure.VelocityPoint{YUM: y, VUMPerS: V(y)})
	}
	rate2 := (demoWallUMPerS - demoSlipMovUM - V(demoBandUM)) / (demoGapUM - demoBandUM)
	p.Bands = []figure.Band{{FromUM: 0, ToUM: demoBandUM, RatePerS: demoRate1PerS},
		{FromUM: demoBandUM, ToUM: demoGapUM, RatePerS: rate2}}
	return p
}

// SpaceTime is the local velocity over the run.
func SpaceTime() *figure.SpaceTime {
	s := &figure.SpaceTime{GapUM: demoGapUM, Quantity: figure.LocalVelocity, PhaseBoundariesS: []float64{0.5, 2.5}}
	for i := range 60 {
		s.TS = append(s.TS, 0.05+0.1*float64(i))
	}
	for j := range 20 {
		s.YUM = append(s.YUM, (float64(j)+0.5)*demoGapUM/20)
	}
	for _, t := range s.TS {
		row := make([]float64, len(s.YUM))
		for j, y := range s.YUM {
			switch {
			case t < 0.5:
				row[j] = 0
			case t < 2.5:
				row[j] = V(y) * (1 - math.Exp(-(t-0.5)/0.2))
			default:
				row[j] = 0
				if y > demoPlaneUM {
					row[j] = 40 * math.Exp(-(t-2.5)/0.8)
				}
			}
		}
		if t > 4.0 && t < 4.3 {
			row[3] = math.NaN() // a window without tracers in one bin
		}
		s.Values = append(s.Values, row)
	}
	return s
}

// Slip is the slip and bulk rate over the run.
func Slip() *figure.SlipSeries {
	s := &figure.SlipSeries{PhaseBoundariesS: []float64{0.5, 2.5}, Nominal: []figure.RateStep{{StartS: 0.5, EndS: 2.5, RatePerS: demoWallUMPerS / demoGapUM}}}
	for i := range 24 {
		t := 0.125 + 0.25*float64(i)
		q := figure.SlipPoint{TS: t, SlipStationaryUMPerS: math.NaN(), SlipStationaryErrUMPerS: math.NaN(),
			SlipMovingUMPerS: math.NaN(), SlipMovingErrUMPerS: math.NaN(), BulkRatePerS: math.NaN(), BulkRateErrPerS: math.NaN()}
		if t > 0.5 && t < 2.5 {
			f := 1 - math.Exp(-(t-0.5)/0.2)
			q.SlipStationaryUMPerS, q.SlipStationaryErrUMPerS = demoSlipStatUM*f, 6
			q.SlipMovingUMPerS, q.SlipMovingErrUMPerS = demoSlipMovUM*f+demoWallUMPerS*(1-f)*0.3, 9
			q.BulkRatePerS, q.BulkRateErrPerS = (demoWallUMPerS-demoSlipMovUM-demoSlipStatUM)/demoGapUM*f, 0.03
		}
		s.Points = append(s.Points, q)
	}
	return s
}

// AfterStop is the displacement after the stop.
func AfterStop() *figure.AfterStop {
	a := &figure.AfterStop{GapUM: demoGapUM, NoiseFloorUM: 0.6, PlaneUM: demoPlaneUM}
	for _, t := range []float64{0.2, 0.5, 1, 2} {
		pr := figure.DisplacementProfile{TAfterStopS: t}
		recoil := -3 * (1 - math.Exp(-t/0.3)) // um per gap, elastic recoil
		jump := 12 * (1 - math.Exp(-t/0.8))
		dx := func(y float64) float64 {
			v := recoil * y / demoGapUM
			if y > demoPlaneUM {
				v += jump
			}
			return v
		}
		for i := range 16 {
			y := (float64(i) + 0.5) * demoGapUM / 16
			pr.Points = append(pr.Points, figure.DisplacementPoint{YUM: y, DxUM: dx(y) + 0.2*math.Sin(7*y), ErrUM: 0.4, N: 60})
		}
		for _, y := range []float64{0, demoPlaneUM, demoPlaneUM, demoGapUM} {
			v := recoil * y / demoGapUM
			if y == demoPlaneUM && len(pr.Fit) == 2 || y > demoPlaneUM {
				v += jump
			}
			pr.Fit = append(pr.Fit, figure.DisplacementCurvePoint{YUM: y, DxUM: v})
		}
		a.Profiles = append(a.Profiles, pr)
	}
	return a
}

// Detection is the detection diagnostics.
func Detection() *figure.Detection {
	r := rand.New(rand.NewPCG(3, 4))
	d := &figure.Detection{SNRThreshold: 4}
	for range 3000 {
		d.SNR = append(d.SNR, 4+math.Abs(12+5*r.NormFloat64()))
		// Slight pixel locking in x: one position in six pulled to within
		// 0.1 px of a pixel centre (a whole-pixel coordinate).
		f := r.Float64()
		if r.IntN(6) == 0 {
			f = math.Mod(0.9+0.2*f, 1)
		}
		d.FracXPx = append(d.FracXPx, f)
		d.FracYPx = append(d.FracYPx, r.Float64())
	}
	return d
}

// Calibration has walls 400 px apart, slightly tilted, 2 um/px.
func Calibration() *calib.Calibration {
	return &calib.Calibration{UMPerPx: 2, GapUM: demoGapUM, TiltDeg: 0.23, ScaleSource: calib.ScaleGap,
		StationaryWallPx: calib.Line{{10, 452.5}, {630, 455}}, MovingWallPx: calib.Line{{10, 52}, {630, 54.5}},
		FlowSign: 1, GapPx: 400.5, WidthPx: 640, HeightPx: 480}
}

// Frame renders a grey frame with bright Gaussian tracers between dark
// walls; the caller closes it.
func Frame() (gocv.Mat, [][]figure.PointPx) {
	const w, h = 640, 480
	r := rand.New(rand.NewPCG(5, 6))
	pix := make([]byte, w*h)
	for y := range h {
		for x := range w {
			v := 70 + 6*r.NormFloat64()
			if y < 50 || y > 456 {
				v = 25
			}
			pix[y*w+x] = byte(math.Max(0, math.Min(255, v)))
		}
	}
	var tracks [][]figure.PointPx
	for i := range 30 {
		x0, y0 := 20+r.Float64()*500, 60+r.Float64()*385
		var tr []figure.PointPx
		for k := range 12 {
			yUM := (453.5 - y0) * 2
			tr = append(tr, figure.PointPx{XPx: x0 + float64(k)*V(yUM)/2*0.01, YPx: y0})
		}
		if i%3 == 0 {
			tracks = append(tracks, tr)
		}
		cx, cy := tr[len(tr)-1].XPx, tr[len(tr)-1].YPx
		for y := int(cy) - 4; y <= int(cy)+4; y++ {
			for x := int(cx) - 4; x <= int(cx)+4; x++ {
				if x < 0 || x >= w || y < 0 || y >= h {
					continue
				}
				d2 := (float64(x)-cx)*(float64(x)-cx) + (float64(y)-cy)*(float64(y)-cy)
				v := float64(pix[y*w+x]) + 150*math.Exp(-d2/3)
				pix[y*w+x] = byte(math.Min(255, v))
			}
		}
	}
	m, err := gocv.NewMatFromBytes(h, w, gocv.MatTypeCV8UC1, pix)
	if err != nil {
		panic(err)
	}
	return m, tracks
}

// Summary is the run's summary, consistent with the figures' data.
func Summary() *summary.Summary {
	s := summary.New()
	s.Experiment = "Sample K-3, soft gel between sliding plates (made-up teaching run)"
	s.Input = summary.Input{Path: "runs/k3-slide-04.avi", Frames: 1200, FPS: 200, WidthPx: 640, HeightPx: 480}
	s.Calibration = Calibration()
	s.Calibration.WallSource = "detected"
	s.Tracking = summary.Tracking{Detections: 48210, Tracks: 1312, MedianTrackFrames: 31}
	s.Phases = []phases.Phase{
		{Kind: phases.Rest, StartS: 0, EndS: 0.5, Source: "experiment"},
		{Kind: phases.Shear, StartS: 0.5, EndS: 2.5, Source: "experiment"},
		{Kind: phases.AfterStop, StartS: 2.5, EndS: 6, Source: "experiment"},
	}
	rate2 := (demoWallUMPerS - demoSlipMovUM - V(demoBandUM)) / (demoGapUM - demoBandUM)
	bulk := (demoWallUMPerS - demoSlipMovUM - demoSlipStatUM) / demoGapUM
	s.ShearPhases = []summary.ShearPhase{{
		StartS: 0.5, EndS: 2.5, WindowS: [2]float64{1.5, 2.5},
		WallSpeedUMPerS: demoWallUMPerS, NominalRatePerS: demoWallUMPerS / demoGapUM,
		BulkRatePerS: summary.Num(bulk), BulkRateErrPerS: 0.012,
		SlipStationaryUMPerS: demoSlipStatUM, SlipStationaryErrUMPerS: 6.1,
		SlipMovingUMPerS: demoSlipMovUM, SlipMovingErrUMPerS: 9.4,
		SlipLengthStationaryUM: summary.Num(demoSlipStatUM / demoRate1PerS), SlipLengthStationaryErrUM: 3.4,
		PhaseStress:        summary.NoStress,
		SlipLengthMovingUM: summary.Num(demoSlipMovUM / rate2), SlipLengthMovingErrUM: 21,
		SlipFraction:    summary.Num((demoWallUMPerS - bulk*demoGapUM) / demoWallUMPerS),
		SlipFractionErr: 0.009,
		WallSlip:        true,
		Bands: []summary.Band{
			{FromUM: 0, ToUM: demoBandUM, RatePerS: demoRate1PerS, RateErrPerS: 0.04, ToErrUM: 11},
			{FromUM: demoBandUM, ToUM: demoGapUM, RatePerS: summary.Num(rate2), RateErrPerS: 0.02, ToErrUM: summary.Null},
		},
		Banded:  true,
		Verdict: rheometry.WallSlipBanded,
	}}
	mode := cessation.ModeBulk
	s.AfterStop = &summary.AfterStop{StopS: 2.5, ObservedS: 3.5, NoiseFloorUM: 0.6, MaxDisplacementUM: 11.2,
		RecoveredStrain: 0.0036, Verdict: cessation.Moving, Mode: &mode, PlaneUM: demoPlaneUM, OnsetAfterStopS: 0.15}
	s.Warnings = []string{"12 tracks crossed the moving wall line and were cut there."}
	return s
}

// YAML is the run's experiment file.
const YAML = `name: Sample K-3, soft gel between sliding plates (made-up teaching run)
sample: K-3 soft gel, batch 2 (made up)
operator: course demonstrator
temperature_c: 23.5
notes: |
  Loaded with a spatula, trimmed flush with the plates.
  Light sheet at low power.
geometry:
  kind: plates
  gap_um: 800
camera:
  fps: 200
walls:
  moving: top
motion:
  - start_s: 0.5
    end_s: 2.5
    wall_speed_um_per_s: 1200
tracers:
  diameter_px: 4
  polarity: bright
`

// Experiment is YAML read back.
func Experiment() *experiment.Experiment {
	e, err := experiment.Parse(strings.NewReader(YAML))
	if err != nil {
		panic(err)
	}
	return e
}

// RateMap is the local shear rate over the run: the height derivative of
// SpaceTime by central differences.
func RateMap() *figure.SpaceTime {
	v := SpaceTime()
	r := &figure.SpaceTime{TS: v.TS, YUM: v.YUM, GapUM: v.GapUM, Quantity: figure.LocalRate,
		PhaseBoundariesS: v.PhaseBoundariesS}
	for _, row := range v.Values {
		out := make([]float64, len(row))
		for j := range row {
			lo, hi := max(0, j-1), min(len(row)-1, j+1)
			out[j] = (row[hi] - row[lo]) / (v.YUM[hi] - v.YUM[lo])
		}
		r.Values = append(r.Values, out)
	}
	return r
}

// StartUp is a start-up of shear phase 1 in windows of 0.2 s: affine at
// first, two bands forming 0.6 s after the start (time constant 0.25 s),
// the onset found at 0.7 ± 0.06 s and the stress maximum at 1.1 s.
func StartUp() *figure.StartUp {
	rate := demoWallUMPerS / demoGapUM
	s := &figure.StartUp{Phase: 1, WindowS: 0.2, NominalRatePerS: rate, GapUM: demoGapUM,
		OnsetS: 0.7, OnsetErrS: 0.06, StressPeakS: 1.1}
	for i := range 15 {
		t := 0.1 + 0.2*float64(i)
		f := 0.0
		if t > 0.6 {
			f = 1 - math.Exp(-(t-0.6)/0.25)
		}
		w := figure.StartUpWindow{AfterStartS: t, BoundaryUM: math.NaN(), BoundaryErrUM: math.NaN(),
			LowerRatePerS: rate, LowerRateErrPerS: 0.01, UpperRatePerS: rate, UpperRateErrPerS: 0.01}
		if f > 0.2 {
			w.BoundaryUM, w.BoundaryErrUM = 0.35*demoGapUM, 4
			w.LowerRatePerS, w.LowerRateErrPerS = rate*(1+1.2*f), 0.04
			w.UpperRatePerS, w.UpperRateErrPerS = rate*(1-0.65*f), 0.02
		}
		s.Windows = append(s.Windows, w)
	}
	return s
}
