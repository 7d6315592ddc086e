package profile

import (
	"fmt"
	"math"
	"strings"

	"gaptrace/calib/experiment"
	"gaptrace/profile/layers"
	"gaptrace/profile/rheometry"
)

// Plausibility: results that cannot be right make a shear phase's verdict
// "inconclusive" with a warning saying what to check.
const (
	// implausibleSigma: a value must lie this many standard uncertainties
	// beyond a physical limit to count as beyond it (the verdict rules'
	// threshold, rheometry.SlipSigma).
	implausibleSigma = rheometry.SlipSigma
	// minKnownLayers: a profile of fewer layers with a value than this
	// cannot show slip at both walls and a bulk rate at once (a line
	// through two points leaves nothing to test it); with fewer than
	// sparseLayerFrac of the layers known, a warning says the profile is
	// sparse (the verdict stands: sparse layers that reach both walls
	// still measure slip and rate).
	minKnownLayers  = 3
	sparseLayerFrac = 0.5
	// wallLayerFrac: the layers within this fraction of the gap of a wall
	// carry the extrapolation to it; a wall without any of them known has
	// no measured slip.
	wallLayerFrac = 0.15
	// linkLimitFrac: a layer whose mean step per frame reaches this
	// fraction of the linker's largest step has tracers beyond it.
	linkLimitFrac = 0.9
)

// PhaseDisagreement is a shear phase whose times in the video disagree
// with the program's or log's by more than a frame (see phases.Compare).
type PhaseDisagreement struct {
	Shear   int    // index of the shear phase among the shear phases
	Message string // what disagrees, and which to trust
}

// plausibility checks each shear phase's results against the physics and
// the measurement's own limits and makes the verdict inconclusive, with a
// warning, where they cannot be right.
func (r *Result) plausibility(e *experiment.Experiment, o Options) {
	step := -1
	prev := math.NaN()
	for i := range r.Shear {
		sh := &r.Shear[i]
		if sh.Step.StartS != prev {
			step++
			prev = sh.Step.StartS
		}
		var why []string
		why = append(why, implausibleSlip(sh, e)...)
		sparse, note := sparseLayers(sh.Steady.Bins)
		why = append(why, sparse...)
		if o.LinkMaxStepUM > 0 && r.FrameIntervalS > 0 {
			fastest := 0.0
			for _, b := range sh.Steady.Bins {
				if b.Known() {
					fastest = math.Max(fastest, math.Abs(b.Value))
				}
			}
			switch {
			case sh.Decomposition != nil && math.Abs(sh.Decomposition.WallSpeedUMPerS)*r.FrameIntervalS > o.LinkMaxStepUM:
				why = append(why, fmt.Sprintf("the moving wall travels %.3g um per frame, beyond the %.3g um per frame the linker followed: tracks by the moving wall are cut short or missing (check the motion program's rate, or film at a higher frame rate)",
					math.Abs(sh.Decomposition.WallSpeedUMPerS)*r.FrameIntervalS, o.LinkMaxStepUM))
			case fastest*r.FrameIntervalS > linkLimitFrac*o.LinkMaxStepUM:
				why = append(why, fmt.Sprintf("the fastest layer moves %.3g um per frame, at the limit of the %.3g um per frame the linker followed: faster tracers were not followed (check the motion program's rate, or film at a higher frame rate)",
					fastest*r.FrameIntervalS, o.LinkMaxStepUM))
			}
		}
		for _, pd := range o.PhaseDisagreements {
			if pd.Shear == step {
				why = append(why, pd.Message)
			}
		}
		label := fmt.Sprintf("shear phase %d (%.4g-%.4g s, window %.4g-%.4g s)", step+1, sh.Step.StartS, sh.Step.EndS, sh.Steady.T0S, sh.Steady.T1S)
		if note != "" {
			r.Warnings = append(r.Warnings, fmt.Sprintf("%s: %s", label, note))
		}
		if len(why) == 0 {
			continue
		}
		sh.Summary.Verdict = rheometry.Inconclusive
		r.ShearPhases[i].Verdict = rheometry.Inconclusive
		for _, w := range why {
			r.Warnings = append(r.Warnings, fmt.Sprintf("%s: inconclusive: %s", label, w))
		}
	}
}

// implausibleSlip returns what cannot be right in a decomposition: slip
// beyond the wall speed, slip against the wall beyond its uncertainty, a
// bulk rate against the wall's motion, and the moving wall on the other
// side of the image than the tracks show.
func implausibleSlip(sh *Shear, e *experiment.Experiment) []string {
	d := sh.Decomposition
	if d == nil {
		return nil
	}
	v := d.WallSpeedUMPerS
	if math.IsNaN(v) || v == 0 {
		return nil
	}
	av := math.Abs(v)
	sense := math.Copysign(1, v)
	var why []string
	// The moving wall on the other side: the fluid by the wall called
	// stationary moves with the wall's speed, the fluid by the wall called
	// moving hardly at all.
	fs, fm := math.Abs(d.FluidStationaryUMPerS), math.Abs(d.FluidMovingUMPerS)
	fe := math.Hypot(d.FluidStationaryErrUMPerS, d.FluidMovingErrUMPerS)
	wrongSide := fs-fm > implausibleSigma*fe && fs-fm > rheometry.MinSlipFraction*av
	if wrongSide {
		side, other := e.MovingSide(), experiment.Bottom
		if side == experiment.Bottom {
			other = experiment.Top
		}
		why = append(why, fmt.Sprintf("the tracks move faster by the %s wall of the image (%.3g um/s) than by the %s wall (%.3g um/s), which the experiment file names as the moving one: "+
			"the moving wall is probably the %s one; set walls.moving: %s in the experiment file (and swap walls.moving_px and walls.stationary_px if given)",
			other, fs, side, fm, other, other))
	}
	if b := sense * d.BulkRatePerS; b < -implausibleSigma*d.BulkRateErrPerS && !wrongSide {
		why = append(why, fmt.Sprintf("the bulk shear rate %.3g ± %.2g 1/s runs against the moving wall's motion (check walls.moving and the sign of the motion program)", d.BulkRatePerS, d.BulkRateErrPerS))
	}
	if wrongSide {
		return why // the slips follow from the wrong side
	}
	for _, w := range []struct {
		name     string
		slip, se float64
	}{{"stationary", d.SlipStationaryUMPerS, d.SlipStationaryErrUMPerS}, {"moving", d.SlipMovingUMPerS, d.SlipMovingErrUMPerS}} {
		if math.IsNaN(w.slip) {
			continue
		}
		s := sense * w.slip
		switch {
		case s-av > implausibleSigma*w.se:
			why = append(why, fmt.Sprintf("slip at the %s wall of %.0f %% of the wall speed (%.3g ± %.2g um/s), more than the wall moves (check the motion program's rate or speed, the scale and the frame rate)",
				w.name, 100*s/av, w.slip, w.se))
		case s < -implausibleSigma*w.se && -s > rheometry.MinSlipFraction*av:
			why = append(why, fmt.Sprintf("negative slip at the %s wall (%.3g ± %.2g um/s, %.0f %% of the wall speed): the fluid there outruns the wall that drags it (check the wall lines, the scale and the motion program)",
				w.name, w.slip, w.se, 100*s/av))
		}
	}
	if f, fe := d.SlipFraction, d.SlipFractionErr; !math.IsNaN(f) && f-1 > implausibleSigma*orZeroErr(fe) && len(why) == 0 {
		why = append(why, fmt.Sprintf("slip takes %.0f %% of the wall speed, more than all of it (check the motion program's rate or speed, the scale and the frame rate)", 100*f))
	}
	return why
}

func orZeroErr(e float64) float64 {
	if math.IsNaN(e) || math.IsInf(e, 0) {
		return 0
	}
	return e
}

// sparseLayers says when too few layers hold a value, or none next to a
// wall (reasons for inconclusive), and when the profile is merely sparse
// (a note).
func sparseLayers(bins []layers.Bin) (why []string, note string) {
	if len(bins) == 0 {
		return nil, ""
	}
	known := 0
	for _, b := range bins {
		if b.Known() {
			known++
		}
	}
	if known < minKnownLayers {
		why = append(why, fmt.Sprintf("only %d of %d layers across the gap hold enough tracers for a value (at least %d samples from %d tracks): too few for slip at both walls and a bulk rate (seed more tracers or analyse a longer window)",
			known, len(bins), layers.DefaultMinSamples, layers.DefaultMinGroups))
		return why, ""
	}
	if float64(known) < sparseLayerFrac*float64(len(bins)) {
		note = fmt.Sprintf("only %d of %d layers across the gap hold enough tracers for a value: a sparse profile, whose bands are coarse (seed more tracers or analyse a longer window)", known, len(bins))
	}
	edge := max(1, int(math.Round(wallLayerFrac*float64(len(bins)))))
	var empty []string
	for _, w := range []struct {
		name string
		bs   []layers.Bin
	}{{"stationary", bins[:edge]}, {"moving", bins[len(bins)-edge:]}} {
		any := false
		for _, b := range w.bs {
			any = any || b.Known()
		}
		if !any {
			empty = append(empty, w.name)
		}
	}
	if len(empty) > 0 {
		why = append(why, fmt.Sprintf("no layer within %.0f %% of the gap of the %s wall holds enough tracers for a value: the slip there is an extrapolation over too far",
			100*wallLayerFrac, strings.Join(empty, " and the ")))
	}
	return why, note
}
