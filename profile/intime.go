package profile

import (
	"context"
	"fmt"
	"math"
	"slices"

	"gaptrace/calib/experiment"
	"gaptrace/calib/geometry"
	"gaptrace/profile/bands"
	"gaptrace/profile/layers"
	"gaptrace/profile/rheometry"
	"gaptrace/profile/summary"
	"gaptrace/profile/velocity"
)

// Tunings of the time-resolved windows of a shear phase.
const (
	// InTimeSamplesPerLayer is the number of velocity samples the median
	// layer must hold for the default window length: four times the
	// fewest a layer needs for a value (layers.DefaultMinSamples), so that
	// the layers near the walls, which hold fewer tracers, still mostly
	// get one, and the statistical error of a layer is about half the
	// scatter of one sample over sqrt(10).
	InTimeSamplesPerLayer = 4 * layers.DefaultMinSamples
	// minInTimeFrames is the shortest window, in frame intervals: a
	// velocity sample spans at least one interval, and the window must
	// hold several so that a layer's samples come from more than one step.
	minInTimeFrames = 5
	// inTimeReplicates bootstrap replicates per window: errors good to
	// about 10 % (1/sqrt(2 x 50)), enough for a 3-sigma test.
	inTimeReplicates = 50
	// minWindowFraction is the least part of a full window the last,
	// shorter window of a phase must span to be kept.
	minWindowFraction = 0.5
	// uniformSD is the standard deviation of a uniform distribution of
	// unit width, 1/sqrt(12) (GUM, JCGM 100:2008, 4.3.7).
	uniformSD = 0.28867513459481287
)

// Departures from the affine, no-slip profile.
const (
	FirstSlip  = "slip"
	FirstBands = "bands"
)

// InTime is the decomposition of one time-resolved window of a shear
// phase.
type InTime struct {
	Profile       WindowProfile
	Decomposition *rheometry.Decomposition
	// StrainAtMiddle is the nominal strain at the window's middle.
	StrainAtMiddle float64
}

// Onset is when the profile of a shear phase first departs from the affine
// no-slip profile by the verdict rules (rheometry: 3 combined standard
// uncertainties and the practical thresholds), and stays departed in the
// next window.
type Onset struct {
	AfterStartS, ErrS float64 // time after the phase's start, s
	Strain            float64 // nominal strain at that time (NaN without a rate)
	First             string  // FirstSlip or FirstBands
}

// DefaultEveryS returns the default window length of a shear phase, s:
// the time in which the phase's median layer collects
// InTimeSamplesPerLayer velocity samples (perSecond: samples per second in
// each layer over the phase), at least minInTimeFrames frame intervals dt,
// and at most the phase's duration.
func DefaultEveryS(perSecond []float64, dtS, durationS float64) float64 {
	var rates []float64
	for _, r := range perSecond {
		if r > 0 {
			rates = append(rates, r)
		}
	}
	if len(rates) == 0 {
		return durationS
	}
	slices.Sort(rates)
	med := rates[len(rates)/2]
	l := InTimeSamplesPerLayer / med
	return math.Min(math.Max(l, minInTimeFrames*dtS), durationS)
}

// inTimeWindows cuts the step st into consecutive windows of everyS.
func inTimeWindows(st experiment.Step, everyS float64, n int) []Window {
	var ws []Window
	for k := 0; ; k++ {
		a := st.StartS + float64(k)*everyS
		b := math.Min(a+everyS, st.EndS)
		if b-a < minWindowFraction*everyS || a >= st.EndS {
			break
		}
		ws = append(ws, Window{Name: fmt.Sprintf("phase%d-t%02d", n, k+1), T0S: a, T1S: b})
	}
	return ws
}

// timeResolved decomposes the time-resolved windows ws of the shear step
// st (phase n), each from its own samples.
func (r *Result) timeResolved(ctx context.Context, ws []*windowAcc, st experiment.Step, g geometry.Geometry, o Options, n int, shared rheometry.Shared) ([]InTime, error) {
	gap := g.Gap()
	var out []InTime
	for k, a := range ws {
		if err := ctx.Err(); err != nil {
			return nil, err
		}
		w := a.w
		own := a.samples()
		bins, err := layers.Profile(obsOf(own), layers.Options{GapUM: gap, Bins: o.Bins, MinSamples: layers.DefaultMinSamples,
			MinGroups: layers.DefaultMinGroups, Replicates: inTimeReplicates, Seed: o.Seed + 3000 + uint64(100*n+k)})
		if err != nil {
			continue
		}
		it := InTime{Profile: WindowProfile{Window: w, Bins: bins}, StrainAtMiddle: st.RatePerS * ((w.T0S+w.T1S)/2 - st.StartS)}
		d, err := rheometry.Decompose(bins, g, st.WallSpeedUMPerS, rheometry.Options{})
		if err != nil {
			r.Warnings = append(r.Warnings, fmt.Sprintf("shear phase %d: the window %.3f-%.3f s has no profile to fit (%v); it is left out", n, w.T0S, w.T1S, err))
			continue
		}
		sw := shared
		sw.CommonUMPerS = velocity.CommonOffsetErr(own, w.T0S, w.T1S, r.FrameIntervalS, func(y float64) float64 { v, _ := d.FitAt(y); return v })
		if math.IsNaN(sw.CommonUMPerS) {
			sw.CommonUMPerS = 0
		}
		if b, err := d.Budget(bins, sw); err == nil {
			d.ApplyBudget(b)
		}
		it.Decomposition = d
		out = append(out, it)
	}
	return out, nil
}

// departs reports whether window it departs from the affine no-slip
// profile, and how: slip, bands, and the margin of each over its
// threshold (the larger decides which came first when both do).
func departs(it InTime) (slip, banded bool, slipMargin, bandMargin float64) {
	d := it.Decomposition
	v := math.Abs(d.WallSpeedUMPerS)
	if math.IsNaN(v) {
		v = math.Abs(d.FluidMovingUMPerS)
	}
	for _, s := range [][2]float64{{d.SlipStationaryUMPerS, d.SlipStationaryErrUMPerS}, {d.SlipMovingUMPerS, d.SlipMovingErrUMPerS}} {
		if th := math.Max(rheometry.SlipSigma*s[1], rheometry.MinSlipFraction*v); th > 0 && !math.IsNaN(s[0]) {
			slipMargin = math.Max(slipMargin, math.Abs(s[0])/th)
		}
	}
	if d.Banded {
		for j := 1; j < len(d.Bands); j++ {
			a, b := d.Bands[j-1], d.Bands[j]
			diff := math.Abs(float64(a.RatePerS - b.RatePerS))
			e := math.Hypot(float64(a.RateErrPerS), float64(b.RateErrPerS))
			big := math.Max(math.Abs(float64(a.RatePerS)), math.Abs(float64(b.RatePerS)))
			bandMargin = math.Max(bandMargin, math.Min(diff/(bands.DefaultMinSigma*e), diff/(bands.DefaultMinContrast*big)))
		}
	}
	return d.WallSlip, d.Banded, slipMargin, bandMargin
}

// onsetOf finds the first window that departs and whose successor (if
// any) departs too, so that one window's false alarm does not set the
// onset. The onset lies between the middles of the last window that did
// not depart and the first that did: the estimate is the middle of that
// interval, with the standard deviation of a uniform distribution over it,
// combined with the frame interval of the time base. Nil when the profile
// never departs.
func onsetOf(its []InTime, st experiment.Step, dtS float64) *Onset {
	dep := make([]bool, len(its))
	for k, it := range its {
		s, b, _, _ := departs(it)
		dep[k] = s || b
	}
	for k := range its {
		if !dep[k] || (k+1 < len(its) && !dep[k+1]) {
			continue
		}
		w := its[k].Profile.Window
		mid := (w.T0S + w.T1S) / 2
		lo := st.StartS
		if k > 0 {
			p := its[k-1].Profile.Window
			lo = (p.T0S + p.T1S) / 2
		}
		o := &Onset{AfterStartS: (lo+mid)/2 - st.StartS, ErrS: math.Hypot((mid-lo)*uniformSD, dtS)}
		o.Strain = st.RatePerS * o.AfterStartS
		s, b, sm, bm := departs(its[k])
		switch {
		case s && b && bm > sm, b && !s:
			o.First = FirstBands
		default:
			o.First = FirstSlip
		}
		return o
	}
	return nil
}

// inTimeSummary returns the summary entries of the windows its.
func inTimeSummary(its []InTime) []summary.InTime {
	out := make([]summary.InTime, 0, len(its))
	for _, it := range its {
		w := it.Profile.Window
		e := summary.InTime{TStartS: w.T0S, TEndS: w.T1S, Strain: summary.Num(it.StrainAtMiddle)}
		d := it.Decomposition
		e.BulkRatePerS, e.BulkRateErrPerS = summary.Num(d.BulkRatePerS), summary.Num(d.BulkRateErrPerS)
		e.SlipStationaryUMPerS, e.SlipStationaryErrUMPerS = summary.Num(d.SlipStationaryUMPerS), summary.Num(d.SlipStationaryErrUMPerS)
		e.SlipMovingUMPerS, e.SlipMovingErrUMPerS = summary.Num(d.SlipMovingUMPerS), summary.Num(d.SlipMovingErrUMPerS)
		e.Bands, e.Verdict = summaryBands(d.Bands), d.Verdict
		out = append(out, e)
	}
	return out
}

// inTime runs the time-resolved windows ws, of everyS, of shear phase n
// (sh, sp) and fills in the onset; the windows go to the profile table
// and the summary only when asked for (o.EveryS).
//
// Each window's errors combine, like the steady window's, the statistical
// scatter with the errors every track shares (shared: the calibration's;
// the motion the tracks share is measured in each window).
func (r *Result) inTime(ctx context.Context, sh *Shear, sp *summary.ShearPhase, ws []*windowAcc, everyS float64, g geometry.Geometry, o Options, n int, shared rheometry.Shared) error {
	st := sh.Step
	sh.EveryS = everyS
	sp.InTimeWindowS = summary.Num(sh.EveryS)
	shared.VelocityRel = o.VelocityRel
	var err error
	if sh.InTime, err = r.timeResolved(ctx, ws, st, g, o, n, shared); err != nil {
		return err
	}
	if sh.Onset = onsetOf(sh.InTime, st, r.FrameIntervalS); sh.Onset != nil {
		sp.InhomogeneityOnsetS, sp.InhomogeneityOnsetErrS = summary.Num(sh.Onset.AfterStartS), summary.Num(sh.Onset.ErrS)
		sp.InhomogeneityOnsetStrain = summary.Num(sh.Onset.Strain)
		first := sh.Onset.First
		sp.InhomogeneityFirst = &first
	}
	if o.EveryS > 0 || o.EveryS == EveryAuto {
		sp.InTime = inTimeSummary(sh.InTime)
		for _, it := range sh.InTime {
			r.Profiles = append(r.Profiles, it.Profile)
		}
	}
	return nil
}
