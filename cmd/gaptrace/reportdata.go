package main

import (
	"math"
	"sort"

	"gaptrace/calib/experiment"
	"gaptrace/profile"
	"gaptrace/profile/report"
	"gaptrace/profile/report/figure"
	"gaptrace/profile/summary"
	"gaptrace/track/tracks"
)

// overlayTrackWindowS is how long a stretch of the tracks the frame overlay
// draws: long enough to show the flow's direction and shape, short enough
// that the paths stay apart.
const overlayTrackWindowS = 0.25

// reportData converts the analysis into the report's figure inputs.
func reportData(s *summary.Summary, e *experiment.Experiment, yaml string, r *profile.Result) *report.Data {
	d := &report.Data{Summary: s, Experiment: e, ExperimentYAML: yaml}
	gap := s.Calibration.GapUM
	var bounds []float64
	for _, p := range s.Phases {
		if p.StartS > 0 {
			bounds = append(bounds, p.StartS)
		}
	}
	for _, sh := range r.Shear {
		pp := &figure.PhaseProfile{GapUM: gap, WallSpeedUMPerS: sh.Step.WallSpeedUMPerS}
		for _, b := range sh.Steady.Bins {
			if b.Known() {
				pp.Points = append(pp.Points, figure.ProfilePoint{YUM: b.YUM, VUMPerS: b.Value, ErrUMPerS: b.Err, N: b.N})
			}
		}
		for _, c := range sh.Fit {
			pp.Fit = append(pp.Fit, figure.VelocityPoint{YUM: c.YUM, VUMPerS: c.VUMPerS})
		}
		for _, b := range sh.Summary.Bands {
			pp.Bands = append(pp.Bands, figure.Band{FromUM: float64(b.FromUM), ToUM: float64(b.ToUM), RatePerS: float64(b.RatePerS)})
		}
		if e.Geometry.Kind == "couette" {
			const noSlipPoints = 50
			for i := 0; i <= noSlipPoints; i++ {
				y := gap * float64(i) / noSlipPoints
				pp.NoSlip = append(pp.NoSlip, figure.VelocityPoint{YUM: y, VUMPerS: e.Geometry.Reference(y, sh.Step.WallSpeedUMPerS)})
			}
		}
		if pp.Check() == nil {
			d.Profiles = append(d.Profiles, pp)
		} else {
			d.Profiles = append(d.Profiles, nil)
		}
	}
	if m := r.Map; len(m.TS) >= 2 && len(m.YUM) >= 2 {
		st := &figure.SpaceTime{TS: m.TS, YUM: m.YUM, Values: m.VUMPerS, Quantity: figure.LocalVelocity,
			GapUM: gap, PhaseBoundariesS: bounds}
		if st.Check() == nil {
			d.SpaceTime = st
		}
	}
	ss := &figure.SlipSeries{PhaseBoundariesS: bounds}
	for _, sh := range r.Shear {
		for _, p := range sh.Series {
			ss.Points = append(ss.Points, figure.SlipPoint{TS: p.TS,
				SlipStationaryUMPerS: p.SlipStationaryUMPerS, SlipStationaryErrUMPerS: p.SlipStationaryErrUMPerS,
				SlipMovingUMPerS: p.SlipMovingUMPerS, SlipMovingErrUMPerS: p.SlipMovingErrUMPerS,
				BulkRatePerS: p.BulkRatePerS, BulkRateErrPerS: p.BulkRateErrPerS})
		}
		ss.Nominal = append(ss.Nominal, figure.RateStep{StartS: sh.Step.StartS, EndS: sh.Step.EndS, RatePerS: sh.Step.RatePerS})
	}
	if ss.Check() == nil {
		d.Slip = ss
	}
	if c := r.Cessation; c != nil {
		as := &figure.AfterStop{GapUM: gap, NoiseFloorUM: c.NoiseFloorUM, PlaneUM: math.NaN()}
		if c.Mode == summary.ModeBulk {
			as.PlaneUM = c.Picture.PlaneUM
		}
		for _, tp := range c.Profiles {
			dp := figure.DisplacementProfile{TAfterStopS: tp.TAfterS}
			for _, b := range tp.Bins {
				if b.Known() {
					dp.Points = append(dp.Points, figure.DisplacementPoint{YUM: b.YUM, DxUM: b.Value, ErrUM: b.Err, N: b.N})
				}
			}
			for _, cp := range c.Curve(tp.TAfterS) {
				dp.Fit = append(dp.Fit, figure.DisplacementCurvePoint{YUM: cp.YUM, DxUM: cp.DXUM})
			}
			if len(dp.Points) > 0 {
				as.Profiles = append(as.Profiles, dp)
			}
		}
		if as.Check() == nil {
			d.AfterStop = as
		}
	}
	return d
}

// overlayWindow picks the time window whose tracks the overlay draws: the
// end of the steady window of the first shear phase, else the start.
func overlayWindow(s *summary.Summary) (t0S, t1S float64) {
	if len(s.ShearPhases) > 0 {
		w := s.ShearPhases[0].WindowS
		mid := (w[0] + w[1]) / 2
		return mid - overlayTrackWindowS/2, mid + overlayTrackWindowS/2
	}
	return 0, overlayTrackWindowS
}

// trackPaths returns the tracks of [t0S, t1S] as polylines in px.
func trackPaths(pts []tracks.Point, t0S, t1S float64) [][]figure.PointPx {
	by := map[int][]tracks.Point{}
	for _, p := range pts {
		if p.Track != tracks.Unlinked && p.TS >= t0S && p.TS <= t1S {
			by[p.Track] = append(by[p.Track], p)
		}
	}
	ids := make([]int, 0, len(by))
	for id := range by {
		ids = append(ids, id)
	}
	sort.Ints(ids)
	var out [][]figure.PointPx
	for _, id := range ids {
		tr := by[id]
		if len(tr) < 2 {
			continue
		}
		sort.Slice(tr, func(i, j int) bool { return tr[i].Frame < tr[j].Frame })
		line := make([]figure.PointPx, len(tr))
		for i, p := range tr {
			line[i] = figure.PointPx{XPx: p.XPx, YPx: p.YPx}
		}
		out = append(out, line)
	}
	return out
}
