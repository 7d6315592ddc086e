package figure

import (
	"image"
	"math"
	"math/rand/v2"

	"gocv.io/x/gocv"

	"gaptrace/calib"
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

// demoV is the scenario's velocity profile, um/s.
func demoV(yUM float64) float64 {
	vb := demoSlipStatUM + demoRate1PerS*demoBandUM
	if yUM <= demoBandUM {
		return demoSlipStatUM + demoRate1PerS*yUM
	}
	rate2 := (demoWallUMPerS - demoSlipMovUM - vb) / (demoGapUM - demoBandUM)
	return vb + rate2*(yUM-demoBandUM)
}

func demoProfile() *PhaseProfile {
	r := rand.New(rand.NewPCG(1, 2))
	p := &PhaseProfile{GapUM: demoGapUM, WallSpeedUMPerS: demoWallUMPerS}
	for i := range 20 {
		y := (float64(i) + 0.5) * demoGapUM / 20
		p.Points = append(p.Points, ProfilePoint{YUM: y, VUMPerS: demoV(y) + 8*r.NormFloat64(), ErrUMPerS: 8, N: 200})
	}
	for i := 0; i <= 40; i++ {
		y := float64(i) * demoGapUM / 40
		p.Fit = append(p.Fit, VelocityPoint{YUM: y, VUMPerS: demoV(y)})
	}
	rate2 := (demoWallUMPerS - demoSlipMovUM - demoV(demoBandUM)) / (demoGapUM - demoBandUM)
	p.Bands = []Band{{0, demoBandUM, demoRate1PerS}, {demoBandUM, demoGapUM, rate2}}
	return p
}

func demoSpaceTime() *SpaceTime {
	s := &SpaceTime{GapUM: demoGapUM, Quantity: LocalVelocity, PhaseBoundariesS: []float64{0.5, 2.5}}
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
				row[j] = demoV(y) * (1 - math.Exp(-(t-0.5)/0.2))
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

func demoSlip() *SlipSeries {
	s := &SlipSeries{PhaseBoundariesS: []float64{0.5, 2.5}, Nominal: []RateStep{{0.5, 2.5, demoWallUMPerS / demoGapUM}}}
	for i := range 24 {
		t := 0.125 + 0.25*float64(i)
		q := SlipPoint{TS: t, SlipStationaryUMPerS: math.NaN(), SlipStationaryErrUMPerS: math.NaN(),
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

func demoAfterStop() *AfterStop {
	a := &AfterStop{GapUM: demoGapUM, NoiseFloorUM: 0.6, PlaneUM: demoPlaneUM}
	for _, t := range []float64{0.2, 0.5, 1, 2} {
		pr := DisplacementProfile{TAfterStopS: t}
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
			pr.Points = append(pr.Points, DisplacementPoint{YUM: y, DxUM: dx(y) + 0.2*math.Sin(7*y), ErrUM: 0.4, N: 60})
		}
		for _, y := range []float64{0, demoPlaneUM, demoPlaneUM, demoGapUM} {
			v := recoil * y / demoGapUM
			if y == demoPlaneUM && len(pr.Fit) == 2 || y > demoPlaneUM {
				v += jump
			}
			pr.Fit = append(pr.Fit, DisplacementCurvePoint{YUM: y, DxUM: v})
		}
		a.Profiles = append(a.Profiles, pr)
	}
	return a
}

func demoDetection() *Detection {
	r := rand.New(rand.NewPCG(3, 4))
	d := &Detection{SNRThreshold: 4}
	for range 3000 {
		d.SNR = append(d.SNR, 4+math.Abs(12+5*r.NormFloat64()))
		// Slight pixel locking: fractions pulled towards the pixel centre.
		f := r.Float64()
		f = 0.5 + 0.85*(f-0.5)
		d.FracXPx = append(d.FracXPx, f)
		d.FracYPx = append(d.FracYPx, r.Float64())
	}
	return d
}

// demoCalibration: walls 400 px apart, slightly tilted, 2 um/px.
func demoCalibration() *calib.Calibration {
	return &calib.Calibration{UMPerPx: 2, GapUM: demoGapUM, TiltDeg: 0.23, ScaleSource: calib.ScaleGap,
		StationaryWallPx: calib.Line{{10, 452.5}, {630, 455}}, MovingWallPx: calib.Line{{10, 52}, {630, 54.5}},
		FlowSign: 1, GapPx: 400.5, WidthPx: 640, HeightPx: 480}
}

// demoFrame renders a grey frame with bright Gaussian tracers between dark
// walls; the caller closes it.
func demoFrame() (gocv.Mat, [][]PointPx) {
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
	var tracks [][]PointPx
	for i := range 30 {
		x0, y0 := 20+r.Float64()*500, 60+r.Float64()*385
		var tr []PointPx
		for k := range 12 {
			yUM := (453.5 - y0) * 2
			tr = append(tr, PointPx{x0 + float64(k)*demoV(yUM)/2*0.01, y0})
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

// frameSize is the demo frame's size.
var frameSize = image.Pt(640, 480)
