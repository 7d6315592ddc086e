// Package profile turns tracer tracks into what the sample did: the phases
// of the experiment, velocity profiles across the gap per time window, the
// rheometric decomposition of each shear phase into wall slip, bulk shear
// and bands, the local strain of each layer, a space-time map of velocity
// and local rate, and the analysis of the time after the last shear phase
// (package cessation). Analyze runs it all and returns the summary.json
// parts and every series a report needs for its figures.
//
// Heights y are in um above the stationary wall, x in um along the flow,
// velocities in um/s, rates in 1/s, times in s from the first frame.
package profile

import (
	"context"
	"errors"
	"fmt"
	"math"
	"slices"
	"strings"

	"gaptrace/calib"
	"gaptrace/calib/experiment"
	"gaptrace/calib/geometry"
	"gaptrace/calib/rheolog"
	"gaptrace/profile/cessation"
	"gaptrace/profile/layers"
	"gaptrace/profile/phases"
	"gaptrace/profile/rheometry"
	"gaptrace/profile/summary"
	"gaptrace/profile/uncertainty"
	"gaptrace/profile/velocity"
	"gaptrace/track/tracks"
)

// Window is a time interval whose samples make one profile.
type Window struct {
	Name     string
	T0S, T1S float64
}

// Options tunes Analyze; the zero value means the defaults.
type Options struct {
	// Bins is the number of layers across the gap (layers.DefaultBins).
	Bins int
	// Windows, when given, replace the default steady window (the second
	// half) of the shear phase each overlaps most: each is decomposed into
	// its own entry of ShearPhases (several for a phase with several
	// windows, in the order given). A window that overlaps no shear phase
	// is an error. All are written to the profile table.
	Windows []Window
	// MapWindows is the number of windows of the space-time map over the
	// whole recording (DefaultMapWindows).
	MapWindows int
	// Replicates of the bootstrap for steady profiles (layers default).
	Replicates int
	// Phases, when not nil, is the time line to use instead of the one
	// derived from the motion program (for instance phases found in the
	// video, calib/phases). A shear phase takes the wall speed of the
	// program step it overlaps; without one the wall speed is taken as the
	// fluid's at the moving wall (with a warning), and the slip there is
	// null. The end of a shear phase whose source is neither "experiment"
	// nor "log" is placed where the tracks stop (cessation.RefineStop).
	Phases []phases.Phase
	// VelocityRel is the relative standard uncertainty of the tracks'
	// velocities that the tracker that made them leaves (a Type B
	// evaluation of its bias, component "tracking" of the budgets); 0 for
	// exact tracks.
	VelocityRel float64
	// EveryS, when positive, is the length of the time-resolved windows
	// through every shear phase, s: their profiles go to the profile table
	// and their decompositions to the phase's InTime. Zero leaves InTime
	// out; the onset of inhomogeneity is then found with windows of
	// DefaultEveryS. EveryAuto asks for the windows at the default length.
	EveryS float64
	// Program, when not nil, is the motion program to use instead of the
	// experiment file's: the one read from the rheometer log.
	Program experiment.Program
	// Log, when not nil, is the rheometer log: its torque or stress gives
	// each shear phase's wall stress and stress maximum (package
	// wallstress).
	Log *rheolog.Log
	// LinkMaxStepUM is the largest displacement per frame the linker
	// followed, um (0: unknown): a moving wall faster than that makes the
	// verdict inconclusive.
	LinkMaxStepUM float64
	// PhaseDisagreements are shear phases whose times in the video
	// disagree with the program's or the log's: their verdict is
	// inconclusive.
	PhaseDisagreements []PhaseDisagreement
	Seed               uint64
}

// EveryAuto, as Options.EveryS, asks for the time-resolved windows at the
// default length (DefaultEveryS).
const EveryAuto = -1

// DefaultMapWindows windows over the recording resolve a start-up or a
// cessation in tenths of a phase while keeping thousands of samples each.
const DefaultMapWindows = 40

// mapReplicates bootstrap replicates per map window: errors good to about
// 13%, enough to weight a fit, at a third of the cost of a steady profile.
const mapReplicates = 30

// SteadyFraction is the part of a shear phase, at its end, taken as steady
// by default: the second half, once start-up transients have died out
// (common practice).
const SteadyFraction = 0.5

// minPhaseFrames is the fewest frames of data after the last shear phase
// for an after-stop analysis.
const minPhaseFrames = 10

// WindowProfile is the layer profile of velocity in one window.
type WindowProfile struct {
	Window
	Bins []layers.Bin // values in um/s
}

// CurvePoint is a point of a fitted profile.
type CurvePoint struct {
	YUM, VUMPerS, ErrUMPerS float64
}

// SeriesPoint is the decomposition of one map window inside a shear phase.
type SeriesPoint struct {
	TS                                            float64 // window centre
	BulkRatePerS, BulkRateErrPerS                 float64
	SlipStationaryUMPerS, SlipStationaryErrUMPerS float64
	SlipMovingUMPerS, SlipMovingErrUMPerS         float64
}

// StrainPoint is the local strain of one layer over a shear phase: the
// slope, with respect to height, of the layers' accumulated displacement.
type StrainPoint struct {
	YUM, Strain, StrainErr float64
}

// Shear is everything found for one shear phase.
type Shear struct {
	Step          experiment.Step
	Steady        WindowProfile
	Decomposition *rheometry.Decomposition
	Fit           []CurvePoint // the chosen band model across the gap
	Series        []SeriesPoint
	// LocalStrain per layer over the whole phase, against NominalStrain
	// (the step's strain).
	LocalStrain   []StrainPoint
	NominalStrain float64
	// InTime holds the time-resolved windows (Options.EveryS, or the
	// default length), EveryS their length, s, and Onset the first
	// departure from the affine no-slip profile (nil when none).
	InTime  []InTime
	EveryS  float64
	Onset   *Onset
	Summary summary.ShearPhase
}

// SpaceTime is the velocity and local rate in map windows (rows) and
// layers (columns); NaN where a layer has too few samples.
type SpaceTime struct {
	TS       []float64 // window centres, s
	YUM      []float64 // layer centres, um
	VUMPerS  [][]float64
	RatePerS [][]float64 // central differences of V between layers
	N        [][]int
}

// Result is the outcome of Analyze.
type Result struct {
	Phases      []phases.Phase
	ShearPhases []summary.ShearPhase
	AfterStop   *summary.AfterStop // nil without time after a shear phase
	SlipLaw     *summary.SlipLaws  // nil without wall stresses
	Warnings    []string

	NoiseUM        float64 // localization noise per coordinate
	FrameIntervalS float64
	Lag            velocity.LagRule
	Shear          []Shear
	Profiles       []WindowProfile // every window: steady, user, map
	Map            SpaceTime
	Cessation      *cessation.Result

	cal *calib.Calibration // the calibration analysed with, for the budgets
}

// Analyze analyses the tracks of src, of experiment e with calibration
// c. It stops with ctx's error when ctx is done.
func Analyze(ctx context.Context, src tracks.Source, e *experiment.Experiment, c *calib.Calibration, o Options) (*Result, error) {
	if err := ctx.Err(); err != nil {
		return nil, err
	}
	if o.Bins <= 0 {
		o.Bins = layers.DefaultBins
	}
	if o.MapWindows <= 0 {
		o.MapWindows = DefaultMapWindows
	}
	o.Windows = slices.Clone(o.Windows) // names are filled in below
	for i, w := range o.Windows {
		if !(w.T1S > w.T0S) {
			return nil, fmt.Errorf("profile: window %q from %g s to %g s is empty", w.Name, w.T0S, w.T1S)
		}
		if w.Name == "" {
			o.Windows[i].Name = fmt.Sprintf("user%d", i+1)
		}
	}
	// The moving wall lies at y = the calibration's gap: between plates
	// that is the gap used; a curved geometry keeps its own, with a warning
	// when the two disagree.
	geom := e.Geometry
	gap := geom.Gap()
	var warn []string
	if c != nil && c.GapUM > 0 && math.Abs(c.GapUM-gap) > gapAgreement*gap {
		switch geom.Kind {
		case geometry.Plates, geometry.ParallelPlate:
			warn = append(warn, fmt.Sprintf("the calibration's gap %.1f um differs from the experiment's %.1f um; the calibration's is used", c.GapUM, gap))
			geom.GapUM, gap = c.GapUM, c.GapUM
		default:
			warn = append(warn, fmt.Sprintf("the calibration's gap %.1f um differs from the %s's %.1f um; heights beyond %.1f um are left out", c.GapUM, geom.Kind, gap, gap))
		}
	}
	if c != nil && c.WallSource == calib.WallsExperiment && c.StationaryWallErrPx == nil {
		warn = append(warn, "the wall lines are given by hand without an uncertainty: the uncertainty budgets count them exact")
	}

	src, err := groupSlice(src)
	if err != nil {
		return nil, err
	}
	// First pass: the recording-wide statistics (stream.go).
	rs, err := firstPass(ctx, src)
	if err != nil {
		return nil, err
	}
	if rs.tracks == 0 {
		return nil, errors.New("profile: no tracks (every detection is unlinked)")
	}
	dt, sigma, err := rs.intervalAndNoise()
	if err != nil {
		return nil, err
	}
	t0, t1 := rs.t0S, rs.t1S
	r := &Result{cal: c, NoiseUM: sigma, FrameIntervalS: dt, Warnings: append([]string{}, warn...)}
	prog := e.Program()
	if o.Program != nil {
		prog = o.Program
	}
	// The recording ends one frame interval after its last point.
	r.Phases = phases.FromProgram(prog, t1+dt)
	steps := shearSteps(prog)
	if o.Phases != nil {
		r.Phases = slices.Clone(o.Phases)
		steps = stepsOf(o.Phases, prog)
	}
	if len(steps) == 0 {
		r.Warnings = append(r.Warnings, "no shear phase: the experiment file has no motion program with a moving wall")
	}
	// Cut mislinks and wrap-arounds out of the tracks, allowing for a wall
	// that starts or stops between two frames: the wall's travel in a
	// frame, or the fastest tracer's typical step when the wall speed is
	// unknown.
	maxChange, lastStop := rs.fastestStepUM, math.Inf(-1)
	for _, st := range steps {
		if v := math.Abs(st.WallSpeedUMPerS) * dt; v > maxChange {
			maxChange = v
		}
		lastStop = st.EndS
	}
	ids := pieceIDs{stride: rs.maxID + 1}
	var cutter velocity.Cutter
	var pieces []velocity.Track
	// pass calls fn with every piece of every track, cut as Split cuts.
	pass := func(fn func(velocity.Track)) error {
		return each(ctx, src, func(t velocity.Track) error {
			pieces = cutter.Cut(pieces[:0], t, sigma, maxChange, lastStop+dt/2, func(k int) int { return ids.of(t.ID, k) })
			for _, p := range pieces {
				fn(p)
			}
			return nil
		}, nil)
	}

	// Second pass: the points around the stops to be placed from the
	// tracks, and the tracers' excursions across the gap for the lag.
	var stopWins [][2]float64
	for _, ph := range r.Phases {
		if ph.Kind == phases.Shear && ph.Source != phases.SourceExperiment && ph.Source != phases.SourceLog {
			a, b := cessation.StopWindowS(ph.EndS, dt)
			stopWins = append(stopWins, [2]float64{a, b})
		}
	}
	var nearStops []velocity.Track
	lagSums := reservoir[velocity.LagSums]{k: StatTracks}
	err = pass(func(t velocity.Track) {
		if lagSums.wants(t.ID) {
			lagSums.offer(t.ID, velocity.LagSumsOf(t, t0, t1))
		}
		var near []tracks.Point
		for _, q := range t.Points {
			for _, w := range stopWins {
				if q.TS >= w[0] && q.TS <= w[1] {
					near = append(near, q)
					break
				}
			}
		}
		if len(near) > 0 {
			nearStops = append(nearStops, velocity.Track{ID: t.ID, Points: near})
		}
	})
	if err != nil {
		return nil, err
	}
	slices.SortFunc(nearStops, func(a, b velocity.Track) int { return ids.order(a.ID, b.ID) })
	r.refineStops(nearStops, steps, dt, sigma)
	nearStops = nil
	layer := gap / float64(o.Bins)
	var per []velocity.LagSums
	for _, e := range lagSums.byTrack(ids.order) {
		per = append(per, e.v)
	}
	r.Lag = velocity.LagRule{SNR: velocity.DefaultSNR, MaxLag: velocity.MaxLagFrom(per, sigma, layer)}

	// Third pass: the samples of every window. A profile window (a whole
	// phase, its steady part, a user's) takes the samples of its phase,
	// so that no step straddles a change of motion; each map window takes
	// its samples from its own points (split at the phases' edges), never
	// from the phases' samples: a slow or resting layer asks for a lag
	// longer than a map window, and the phase's samples of such a layer
	// would bunch at the middle of the phase, leaving the other windows
	// empty.
	var scratch [][]sample
	userAcc := make([]*windowAcc, len(o.Windows))
	userWins := make([]WindowProfile, len(o.Windows))
	for i, w := range o.Windows {
		userAcc[i], userWins[i] = newWindowAcc(w, gap, o.Bins, ProfileLayerSamples, &scratch), WindowProfile{Window: w}
	}
	byStep, err := assignWindows(userWins, steps)
	if err != nil {
		return nil, err
	}
	wholeAcc := make([]*windowAcc, len(steps))
	steadyAcc := make([]*windowAcc, len(steps))
	for k, st := range steps {
		n := k + 1
		wholeAcc[k] = newWindowAcc(Window{Name: fmt.Sprintf("whole%d", n), T0S: st.StartS, T1S: st.EndS}, gap, o.Bins, ProfileLayerSamples, &scratch)
		if !slices.Contains(byStep.step, k) {
			steadyAcc[k] = newWindowAcc(Window{Name: fmt.Sprintf("shear%d", n), T0S: st.EndS - SteadyFraction*st.DurationS(), T1S: st.EndS}, gap, o.Bins, ProfileLayerSamples, &scratch)
		}
	}
	var phaseAcc []*windowAcc
	for _, a := range slices.Concat(userAcc, wholeAcc, steadyAcc) {
		if a != nil {
			phaseAcc = append(phaseAcc, a)
		}
	}
	mapW, mapT0, mapN := mapGrid(t0, t1, o, steps)
	mapAcc := make([]*windowAcc, mapN)
	for k := range mapN {
		mapAcc[k] = newWindowAcc(Window{Name: fmt.Sprintf("map%02d", k+1), T0S: mapT0 + float64(k)*mapW, T1S: mapT0 + float64(k+1)*mapW}, gap, o.Bins, layerBudget(MapBudget, mapN, o.Bins), &scratch)
	}
	var after *afterKeep
	if len(steps) > 0 && t1-steps[len(steps)-1].EndS >= minPhaseFrames*dt {
		after = newAfterKeep(steps[len(steps)-1].EndS, t1, dt, restOf(r.Phases))
	}
	// Only the phases that a profile window overlaps need their samples.
	var sampled []phases.Phase
	for _, ph := range r.Phases {
		if slices.ContainsFunc(phaseAcc, func(a *windowAcc) bool { return a.w.T0S < ph.EndS && a.w.T1S > ph.StartS }) {
			sampled = append(sampled, ph)
		}
	}
	var ss, own []velocity.Sample
	err = pass(func(t velocity.Track) {
		one := []velocity.Track{t}
		for _, ph := range sampled {
			ss = velocity.Samples(one, r.Lag, sigma, dt, ph.StartS, ph.EndS)
			if len(ss) == 0 {
				continue
			}
			for _, a := range phaseAcc {
				if a.w.T1S > ss[0].TS && a.w.T0S <= ss[len(ss)-1].TS {
					a.add(t.ID, ss)
				}
			}
		}
		lo, hi := spanWindows(mapAcc, t.Points[0].TS, t.Points[len(t.Points)-1].TS)
		for _, a := range mapAcc[lo:hi] {
			own = own[:0]
			for _, ph := range r.Phases {
				if x, y := math.Max(a.w.T0S, ph.StartS), math.Min(a.w.T1S, ph.EndS); y > x {
					own = append(own, velocity.Samples(one, r.Lag, sigma, dt, x, y)...)
				}
			}
			a.add(t.ID, own)
		}
		if after != nil {
			after.add(t)
		}
	})
	if err != nil {
		return nil, err
	}

	// profOf is the profile of the samples of a window.
	profOf := func(a *windowAcc, reps int, seed uint64) (WindowProfile, error) {
		if err := ctx.Err(); err != nil {
			return WindowProfile{}, err
		}
		obs := obsOf(a.samples())
		b, err := layers.Profile(obs, layers.Options{GapUM: gap, Bins: o.Bins, MinSamples: layers.DefaultMinSamples,
			MinGroups: layers.DefaultMinGroups, Replicates: reps, Seed: seed})
		return WindowProfile{Window: a.w, Bins: b}, err
	}
	var mapProfiles []WindowProfile
	for k, a := range mapAcc {
		p, err := profOf(a, mapReplicates, o.Seed+1000+uint64(k))
		if err != nil {
			return nil, err
		}
		mapProfiles = append(mapProfiles, p)
	}
	mapAcc = nil
	r.Map = spaceTime(mapProfiles, gap, o.Bins)
	var userProfiles []WindowProfile
	for i, a := range userAcc {
		p, err := profOf(a, o.Replicates, o.Seed+500+uint64(i))
		if err != nil {
			return nil, err
		}
		userProfiles = append(userProfiles, p)
	}

	// Fourth pass: the time-resolved windows of every shear phase, whose
	// default length follows from the samples of the whole phase.
	wholes := make([]WindowProfile, len(steps))
	everyS := make([]float64, len(steps))
	var inAcc []*windowAcc
	inFirst := make([]int, len(steps)+1)
	for k, st := range steps {
		if wholes[k], err = profOf(wholeAcc[k], o.Replicates, o.Seed+2000+uint64(k+1)); err != nil {
			return nil, err
		}
		everyS[k] = o.EveryS
		if !(everyS[k] > 0) {
			everyS[k] = DefaultEveryS(wholeAcc[k].perSecond(), dt, st.DurationS())
		}
		// As many windows as MaxMapWindows at most, as the map.
		everyS[k] = math.Max(everyS[k], st.DurationS()/MaxMapWindows)
	}
	var inWins []Window
	for k, st := range steps {
		inFirst[k] = len(inWins)
		inWins = append(inWins, inTimeWindows(st, everyS[k], k+1)...)
	}
	inFirst[len(steps)] = len(inWins)
	for _, w := range inWins {
		inAcc = append(inAcc, newWindowAcc(w, gap, o.Bins, layerBudget(TimeBudget, len(inWins), o.Bins), &scratch))
	}
	if len(inAcc) > 0 {
		err = pass(func(t velocity.Track) {
			one := []velocity.Track{t}
			lo, hi := spanWindows(inAcc, t.Points[0].TS, t.Points[len(t.Points)-1].TS)
			for _, a := range inAcc[lo:hi] {
				a.add(t.ID, velocity.Samples(one, r.Lag, sigma, dt, a.w.T0S, a.w.T1S))
			}
		})
		if err != nil {
			return nil, err
		}
	}

	for i, u := range userProfiles {
		if k := byStep.step[i]; byStep.straddles[i] {
			r.Warnings = append(r.Warnings, fmt.Sprintf("window %q (%.4g-%.4g s) straddles more than one phase; it is analysed with shear phase %d (%.4g-%.4g s), which it overlaps most",
				u.Name, u.T0S, u.T1S, k+1, steps[k].StartS, steps[k].EndS))
		}
	}
	// The shift the tracks share, measured over each whole phase, which
	// holds more of a slow wander of the camera's correction than a
	// window of it (velocity.MeasureShift).
	wholeShift := make([]*velocity.Shift, len(steps))
	for k, st := range steps {
		wd, err := rheometry.Decompose(wholes[k].Bins, geom, st.WallSpeedUMPerS, rheometry.Options{})
		if err != nil {
			continue
		}
		if sh, ok := velocity.MeasureShift(wholeAcc[k].samples(), wholes[k].T0S, wholes[k].T1S, dt, func(y float64) float64 { v, _ := wd.FitAt(y); return v }); ok {
			wholeShift[k] = &sh
		}
	}
	n := 0
	for k, st := range steps {
		n++
		base := Shear{Step: st, NominalStrain: st.Strain}
		bsp := summary.ShearPhase{StartS: st.StartS, EndS: st.EndS,
			WallSpeedUMPerS: summary.Num(st.WallSpeedUMPerS), NominalRatePerS: summary.Num(st.RatePerS),
			BulkRatePerS: summary.Null, BulkRateErrPerS: summary.Null, SlipStationaryUMPerS: summary.Null,
			SlipStationaryErrUMPerS: summary.Null, SlipMovingUMPerS: summary.Null, SlipMovingErrUMPerS: summary.Null,
			SlipLengthStationaryUM: summary.Null, SlipLengthStationaryErrUM: summary.Null,
			SlipLengthMovingUM: summary.Null, SlipLengthMovingErrUM: summary.Null, SlipFraction: summary.Null,
			SlipFractionErr: summary.Null, Bands: []summary.Band{}, InTimeWindowS: summary.Null,
			InhomogeneityOnsetS: summary.Null, InhomogeneityOnsetErrS: summary.Null, InhomogeneityOnsetStrain: summary.Null,
			PhaseStress: summary.NoStress, Budget: summary.Budget{}}
		for _, mp := range mapProfiles {
			if mp.T0S < st.StartS || mp.T1S > st.EndS {
				continue
			}
			md, err := rheometry.Decompose(mp.Bins, geom, st.WallSpeedUMPerS, rheometry.Options{})
			if err != nil {
				continue
			}
			base.Series = append(base.Series, SeriesPoint{TS: (mp.T0S + mp.T1S) / 2,
				BulkRatePerS: md.BulkRatePerS, BulkRateErrPerS: md.BulkRateErrPerS,
				SlipStationaryUMPerS: md.SlipStationaryUMPerS, SlipStationaryErrUMPerS: md.SlipStationaryErrUMPerS,
				SlipMovingUMPerS: md.SlipMovingUMPerS, SlipMovingErrUMPerS: md.SlipMovingErrUMPerS})
		}
		base.LocalStrain = localStrain(wholes[k].Bins, geom, st.DurationS())
		if err := r.inTime(ctx, &base, &bsp, inAcc[inFirst[k]:inFirst[k+1]], everyS[k], geom, o, n, sharedErrors(c, gap)); err != nil {
			return nil, err
		}

		// The phase's windows: the user's that fall in it, each its own
		// entry, else the default steady window.
		var wins []*WindowProfile
		var winSamples [][]velocity.Sample
		for i := range userProfiles {
			if byStep.step[i] == k {
				wins = append(wins, &userProfiles[i])
				winSamples = append(winSamples, userAcc[i].samples())
			}
		}
		if len(wins) == 0 {
			p, err := profOf(steadyAcc[k], o.Replicates, o.Seed+uint64(n))
			if err != nil {
				return nil, err
			}
			r.Profiles = append(r.Profiles, p)
			wins = append(wins, &p)
			winSamples = append(winSamples, steadyAcc[k].samples())
		}
		for wi, steady := range wins {
			sh, sp := base, bsp
			sp.Bands = []summary.Band{}
			sh.Steady = *steady
			sp.WindowS = [2]float64{steady.T0S, steady.T1S}
			label := fmt.Sprintf("shear phase %d (%g-%g s)", n, st.StartS, st.EndS)
			if len(wins) > 1 {
				label += fmt.Sprintf(", window %q (%g-%g s)", steady.Name, steady.T0S, steady.T1S)
			}
			d, err := rheometry.Decompose(steady.Bins, geom, st.WallSpeedUMPerS, rheometry.Options{})
			if err != nil {
				r.Warnings = append(r.Warnings, fmt.Sprintf("%s: %v", label, err))
			} else {
				sh.Decomposition = d
				shared := sharedErrors(c, gap)
				shared.VelocityRel = o.VelocityRel
				shared.CommonUMPerS = commonOffsetErr(winSamples[wi], steady, wholeShift[k], dt, d)
				if math.IsNaN(shared.CommonUMPerS) {
					shared.CommonUMPerS = 0
					r.Warnings = append(r.Warnings, fmt.Sprintf("%s: too few tracers to measure the motion they share; the budget leaves it out", label))
				}
				if b, err := d.Budget(steady.Bins, shared); err != nil {
					r.Warnings = append(r.Warnings, fmt.Sprintf("%s: %v; the errors are the statistical ones alone", label, err))
				} else {
					d.ApplyBudget(b)
					sp.Budget = budgetOf(b)
				}
				fillShear(&sp, d)
				if math.IsNaN(st.WallSpeedUMPerS) {
					r.Warnings = append(r.Warnings, wallFromFluid(&sp, &sh, d, geom, n))
				}
				for k := 0; k <= curvePoints; k++ {
					y := gap * float64(k) / curvePoints
					v, ve := d.FitAt(y)
					sh.Fit = append(sh.Fit, CurvePoint{YUM: y, VUMPerS: v, ErrUMPerS: ve})
				}
			}
			sh.Summary = sp
			r.Shear = append(r.Shear, sh)
			r.ShearPhases = append(r.ShearPhases, sp)
		}
	}
	r.Profiles = append(r.Profiles, userProfiles...)
	r.Profiles = append(r.Profiles, mapProfiles...)
	r.wallStress(o, geom)
	r.plausibility(e, o)

	var afterTracks []velocity.Track
	if after != nil {
		afterTracks = after.kept
		slices.SortFunc(afterTracks, func(a, b velocity.Track) int { return ids.order(a.ID, b.ID) })
	}
	if err := r.afterStop(afterTracks, steps, o, gap, dt, sigma, t1); err != nil {
		return nil, err
	}
	if r.ShearPhases == nil {
		r.ShearPhases = []summary.ShearPhase{}
	}
	return r, nil
}

// MaxMapWindows bounds the columns of the space-time map when they follow
// --every: a map wider than a page's pixels shows nothing more.
const MaxMapWindows = 2000

// mapGrid returns the map's window length, s, its first window's start and
// the number of windows over the recording [t0S, t1S]: o.MapWindows equal
// windows, or, with o.EveryS, windows of that length aligned with the
// start of the first shear step, so that the map's columns are the
// time-resolved windows (as many as MaxMapWindows allows).
func mapGrid(t0S, t1S float64, o Options, steps []experiment.Step) (lenS, startS float64, n int) {
	if !(o.EveryS > 0) || len(steps) == 0 {
		return (t1S - t0S) / float64(o.MapWindows), t0S, o.MapWindows
	}
	lenS = math.Max(o.EveryS, (t1S-t0S)/MaxMapWindows)
	a := steps[0].StartS
	startS = a - math.Ceil((a-t0S)/lenS-windowEdgeTol)*lenS
	n = int(math.Ceil((t1S-startS)/lenS - windowEdgeTol))
	return lenS, startS, max(n, 1)
}

// windowEdgeTol is the fraction of a window by which times may miss a
// window edge and still count as on it (rounding of frame times).
const windowEdgeTol = 1e-9

// FrameRateRel is the relative standard uncertainty taken for the frame
// rate, stated or read from the video: camera clocks are quartz-timed to
// better than 1e-4 (common practice).
const FrameRateRel = 1e-4

// commonOffsetErr returns the standard uncertainty of the velocity offset
// the tracers of window w (its samples ss, its decomposition d) share: the
// shift measured on the window itself or, when larger, on its whole phase
// (whole, nil when not measured), carried to the window's mean velocity;
// NaN when neither is measured.
func commonOffsetErr(ss []velocity.Sample, w *WindowProfile, whole *velocity.Shift, dt float64, d *rheometry.Decomposition) float64 {
	sh, ok := velocity.MeasureShift(ss, w.T0S, w.T1S, dt, func(y float64) float64 { v, _ := d.FitAt(y); return v })
	if whole != nil && (!ok || whole.VarUM2 > sh.VarUM2) {
		sh, ok = *whole, true
	}
	if !ok {
		return math.NaN()
	}
	return sh.OffsetErr(ss, w.T0S, w.T1S, dt)
}

// sharedErrors returns the shared errors of the calibration c for a gap
// of gapUM: unknown wall errors (walls given by hand) count as exact.
func sharedErrors(c *calib.Calibration, gapUM float64) rheometry.Shared {
	sh := rheometry.Shared{FrameRateRel: FrameRateRel}
	if c == nil {
		return sh
	}
	if u, ok := calib.Known(c.StationaryWallErrPx); ok {
		sh.StationaryWallUM = u * c.UMPerPx
	}
	if u, ok := calib.Known(c.MovingWallErrPx); ok {
		sh.MovingWallUM = u * c.UMPerPx
	}
	if u, ok := calib.Known(c.GapErrUM); ok {
		sh.GapUM = u
	}
	sh.GapScale = c.ScaleSource == calib.ScaleGap
	if u, ok := calib.Known(c.UMPerPxErr); ok && !sh.GapScale && c.UMPerPx > 0 {
		sh.ScaleRel = u / c.UMPerPx
	}
	return sh
}

// budgetOf converts a budget to the summary's form.
func budgetOf(b map[string]uncertainty.Contributions) summary.Budget {
	out := summary.Budget{}
	for q, c := range b {
		m := map[string]summary.Num{}
		for k, u := range c {
			m[k] = summary.Num(u)
		}
		out[q] = m
	}
	return out
}

// shearSteps returns the program's steps with a moving wall.
func shearSteps(p experiment.Program) []experiment.Step {
	var out []experiment.Step
	for _, s := range p {
		if s.WallSpeedUMPerS != 0 {
			out = append(out, s)
		}
	}
	return out
}

// stepsOf returns a step for each shear phase of ph: its times, with the
// speeds of the program step it overlaps most, or unknown (NaN) speeds.
func stepsOf(ph []phases.Phase, p experiment.Program) []experiment.Step {
	var out []experiment.Step
	for _, f := range ph {
		if f.Kind != phases.Shear {
			continue
		}
		st := experiment.Step{StartS: f.StartS, EndS: f.EndS, WallSpeedUMPerS: math.NaN(), RatePerS: math.NaN(), Strain: math.NaN()}
		best := 0.0
		for _, s := range shearSteps(p) {
			if ov := math.Min(s.EndS, f.EndS) - math.Max(s.StartS, f.StartS); ov > best {
				best = ov
				st.WallSpeedUMPerS, st.RatePerS = s.WallSpeedUMPerS, s.RatePerS
				st.Strain = s.RatePerS * st.DurationS()
			}
		}
		out = append(out, st)
	}
	return out
}

// gapAgreement is the relative difference between the calibration's and
// the experiment's gap tolerated silently: a thousandth is a pixel in a
// gap of a thousand.
const gapAgreement = 1e-3

// curvePoints is the number of intervals at which a fitted profile is
// tabulated for plotting.
const curvePoints = 100

func fillShear(sp *summary.ShearPhase, d *rheometry.Decomposition) {
	sp.BulkRatePerS, sp.BulkRateErrPerS = summary.Num(d.BulkRatePerS), summary.Num(d.BulkRateErrPerS)
	sp.SlipStationaryUMPerS, sp.SlipStationaryErrUMPerS = summary.Num(d.SlipStationaryUMPerS), summary.Num(d.SlipStationaryErrUMPerS)
	sp.SlipMovingUMPerS, sp.SlipMovingErrUMPerS = summary.Num(d.SlipMovingUMPerS), summary.Num(d.SlipMovingErrUMPerS)
	sp.SlipLengthStationaryUM, sp.SlipLengthStationaryErrUM = summary.Num(d.SlipLengthStationaryUM), summary.Num(d.SlipLengthStationaryErrUM)
	sp.SlipLengthMovingUM, sp.SlipLengthMovingErrUM = summary.Num(d.SlipLengthMovingUM), summary.Num(d.SlipLengthMovingErrUM)
	sp.SlipFraction, sp.SlipFractionErr = summary.Num(d.SlipFraction), summary.Num(d.SlipFractionErr)
	sp.WallSlip, sp.Bands, sp.Banded, sp.Verdict = d.WallSlip, summaryBands(d.Bands), d.Banded, d.Verdict
}

// summaryBands returns bands bs as summary.json writes them.
func summaryBands(bs []rheometry.Band) []summary.Band {
	out := make([]summary.Band, 0, len(bs))
	for _, b := range bs {
		out = append(out, summary.Band{FromUM: summary.Num(b.FromUM), ToUM: summary.Num(b.ToUM),
			RatePerS: summary.Num(b.RatePerS), RateErrPerS: summary.Num(b.RateErrPerS), ToErrUM: summary.Num(b.ToErrUM)})
	}
	return out
}

// refineStops places the end of each shear phase not taken from the
// experiment file (one found in the video, to about a frame) where the
// tracks show the stop (cessation.RefineStop), moving the start of the
// phase after it along, and says so in a warning.
func (r *Result) refineStops(ts []velocity.Track, steps []experiment.Step, dt, sigma float64) {
	k := 0
	for i, ph := range r.Phases {
		if ph.Kind != phases.Shear || k >= len(steps) {
			continue
		}
		st := &steps[k]
		k++
		if ph.Source == phases.SourceExperiment || ph.Source == phases.SourceLog {
			continue
		}
		stop, err := cessation.RefineStop(ts, ph.EndS, dt, sigma)
		if err != nil {
			r.Warnings = append(r.Warnings, fmt.Sprintf("the stop at %.4g s is kept as given: %v", ph.EndS, err))
			continue
		}
		if math.Abs(stop-ph.EndS) > stopNoteFrames*dt {
			r.Warnings = append(r.Warnings, fmt.Sprintf("the stop given at %.4g s (%s) is placed at %.4f s, where the tracks stop", ph.EndS, ph.Source, stop))
		}
		r.Phases[i].EndS, st.EndS = stop, stop
		if !math.IsNaN(st.RatePerS) {
			st.Strain = st.RatePerS * st.DurationS()
		}
		if i+1 < len(r.Phases) {
			r.Phases[i+1].StartS = stop
		}
	}
}

// StopTimingFrames is the standard uncertainty, in frames, of a stop
// that the experiment file gives: a Type B evaluation (GUM 4.3) from the
// coverage sweep (profile/pipeline BenchmarkCoverage), where the recovered
// strain of quiescent renders, which an error of the stop's time turns
// into rate x error, gives an error of 0.0143 frame in rms and 0.053 at
// most (27 renders, tracks of 105064d; 0.05 before, measured before the
// detection of bcc8997, gave a median |z| of the recovered strain of 0.14).
const StopTimingFrames = 0.015

// stopNoteFrames is the least move of a stop, in frames, worth a warning:
// less is within what a detection in the video promises.
const stopNoteFrames = 0.25

// wallFromFluid fills in the wall speed of a shear phase that no motion
// program gives: the fluid's speed at the moving wall, extrapolated from the
// tracers next to it, which is the wall's speed if the fluid does not slip
// there. The nominal rate and strain follow from it, the slip fraction
// counts the stationary wall alone (a lower bound), and the moving wall's
// slip stays unknown. It returns the warning that says so.
func wallFromFluid(sp *summary.ShearPhase, sh *Shear, d *rheometry.Decomposition, g geometry.Geometry, n int) string {
	v, ve := d.FluidMovingUMPerS, d.FluidMovingErrUMPerS
	sp.WallSpeedUMPerS = summary.Num(v)
	sp.NominalRatePerS = summary.Num(g.NominalRate(v))
	sh.NominalStrain = g.NominalRate(v) * sh.Step.DurationS()
	// f = s / v for the fluid's speeds s at the stationary wall and v at
	// the moving one, correlated through the fit: first-order propagation
	// with the fit's covariance.
	s, se := d.FluidStationaryUMPerS, d.FluidStationaryErrUMPerS
	if v != 0 {
		c := d.Model.Cov(0, d.GapUM)
		f := s / v
		fe := math.Sqrt(math.Max(0, (se*se-2*f*c+f*f*ve*ve)/(v*v)))
		sp.SlipFraction, sp.SlipFractionErr = summary.Num(f), summary.Num(fe)
	}
	return fmt.Sprintf("shear phase %d (%.4g-%.4g s): no motion program gives the wall speed, so it is taken as the fluid's speed at the moving wall, "+
		"%.4g ± %.2g um/s from the tracers next to it: slip at the moving wall is not measured and the slip fraction counts the stationary wall only",
		n, sp.StartS, sp.EndS, v, ve)
}

// localStrainHalfWidth is the half-width, in layers, of the local linear
// fit that differentiates the accumulated displacement: five layers smooth
// the noise of single layers while keeping a band edge sharp to 2.5 layers.
const localStrainHalfWidth = 2

// localStrain returns each layer's strain over a phase of durS seconds: the
// accumulated displacement X(y) = v(y) durS, differentiated with respect to
// the Newtonian coordinate u (y between plates; see rheometry) by a
// weighted local line through 2*localStrainHalfWidth+1 layers.
func localStrain(bins []layers.Bin, g geometry.Geometry, durS float64) []StrainPoint {
	var out []StrainPoint
	for j, b := range bins {
		if !b.Known() {
			continue
		}
		var sw, su, sx, suu, sux float64
		n := 0
		for k := max(0, j-localStrainHalfWidth); k <= min(len(bins)-1, j+localStrainHalfWidth); k++ {
			q := bins[k]
			if !q.Known() || !(q.Err > 0) {
				continue
			}
			u := rheometry.NewtonianU(g, q.YUM)
			x := q.Value * durS
			w := 1 / (q.Err * q.Err * durS * durS)
			sw += w
			su += w * u
			sx += w * x
			suu += w * u * u
			sux += w * u * x
			n++
		}
		den := sw*suu - su*su
		if n < 3 || !(den > 0) {
			continue
		}
		out = append(out, StrainPoint{YUM: b.YUM, Strain: (sw*sux - su*sx) / den, StrainErr: math.Sqrt(sw / den)})
	}
	return out
}

func spaceTime(ps []WindowProfile, gap float64, bins int) SpaceTime {
	m := SpaceTime{}
	for k := range bins {
		m.YUM = append(m.YUM, (float64(k)+0.5)*gap/float64(bins))
	}
	for _, p := range ps {
		m.TS = append(m.TS, (p.T0S+p.T1S)/2)
		v := make([]float64, bins)
		n := make([]int, bins)
		rate := make([]float64, bins)
		for k, b := range p.Bins {
			v[k], n[k] = b.Value, b.N
		}
		for k := range bins {
			lo, hi := max(0, k-1), min(bins-1, k+1)
			rate[k] = (v[hi] - v[lo]) / (m.YUM[hi] - m.YUM[lo])
		}
		m.VUMPerS = append(m.VUMPerS, v)
		m.RatePerS = append(m.RatePerS, rate)
		m.N = append(m.N, n)
	}
	return m
}

// afterStop analyses the time after the last shear phase from the tracks
// ts, the points of the tracks that it reads (afterKeep).
func (r *Result) afterStop(ts []velocity.Track, steps []experiment.Step, o Options, gap, dt, sigma, t1 float64) error {
	if len(steps) == 0 || t1-steps[len(steps)-1].EndS < minPhaseFrames*dt {
		return nil
	}
	st := steps[len(steps)-1]
	sense := math.Copysign(1, st.WallSpeedUMPerS)
	if math.IsNaN(st.WallSpeedUMPerS) && len(r.Shear) > 0 && r.Shear[len(r.Shear)-1].Decomposition != nil {
		sense = math.Copysign(1, r.Shear[len(r.Shear)-1].Decomposition.BulkRatePerS)
	}
	co := cessation.Options{StopS: st.EndS, ShearStartS: st.StartS, EndS: t1, ShearSense: sense,
		GapUM: gap, DtS: dt, SigmaUM: sigma, Bins: o.Bins, Seed: o.Seed + 3000}
	co.RestS = restOf(r.Phases)
	// The shared errors of the after-stop analysis: the stationary wall
	// (heights are measured from it), the scale, the tracker's bias and
	// the stop's time: to StopTimingFrames of a frame when the experiment
	// file gives it, else to a quarter frame as found in the tracks.
	sh := sharedErrors(r.cal, gap)
	co.WallUM, co.VelocityRel = sh.StationaryWallUM, o.VelocityRel
	if sh.GapScale {
		co.ScaleRel = math.Hypot(sh.StationaryWallUM, sh.MovingWallUM) / gap
	} else {
		co.ScaleRel = sh.ScaleRel
	}
	co.StopErrS = StopTimingFrames * dt
	for _, ph := range r.Phases {
		if ph.Kind == phases.Shear && ph.EndS == st.EndS && ph.Source != phases.SourceExperiment {
			co.StopErrS = stopNoteFrames * dt
		}
	}
	co.RatePerS = st.RatePerS
	if len(r.Shear) > 0 && r.Shear[len(r.Shear)-1].Decomposition != nil {
		co.RatePerS = r.Shear[len(r.Shear)-1].Decomposition.BulkRatePerS
	}
	if math.IsNaN(co.RatePerS) {
		co.RatePerS = 0
	}
	c, err := cessation.Analyze(ts, co)
	if err != nil {
		r.Warnings = append(r.Warnings, fmt.Sprintf("after the stop at %g s: %v", st.EndS, err))
		return nil
	}
	r.Cessation = c
	a := &summary.AfterStop{StopS: c.StopS, ObservedS: c.ObservedS, NoiseFloorUM: summary.Num(c.FloorUM),
		MaxDisplacementUM: summary.Num(c.MaxDisplacementUM), RecoveredStrain: summary.Num(c.RecoveredStrain),
		Verdict: c.Verdict(), PlaneUM: summary.Null, OnsetAfterStopS: summary.Null,
		PlaneErrUM: summary.Null, OnsetAfterStopErrS: summary.Null, RecoveredStrainErr: summary.Num(c.RecoveredStrainErr),
		Budget: summary.Budget{}}
	for q, comp := range c.Budget {
		m := map[string]summary.Num{}
		for k, u := range comp {
			m[k] = summary.Num(u)
		}
		a.Budget[q] = m
	}
	if c.Moving {
		mode := c.Mode
		a.Mode = &mode
		a.OnsetAfterStopS, a.OnsetAfterStopErrS = summary.Num(c.OnsetAfterStopS), summary.Num(c.OnsetAfterStopErrS)
		if c.Mode == cessation.ModeBulk {
			a.PlaneUM, a.PlaneErrUM = summary.Num(c.Picture.PlaneUM), summary.Num(c.PlaneErrUM)
		}
	}
	if !c.Moving && c.WallSigma > cessation.FloorSigma {
		r.Warnings = append(r.Warnings, fmt.Sprintf("after the stop: the displacement at a wall reaches %.1f standard uncertainties, "+
			"above the noise floor but short of the %d needed to call it motion: the data cannot decide; the verdict stays quiescent", c.WallSigma, cessation.MovingSigma))
	}
	r.AfterStop = a
	return nil
}

// restOf returns the rest before the first phase, whose tracers give the
// noise floor after the stop (none when the recording starts otherwise).
func restOf(ph []phases.Phase) [2]float64 {
	if len(ph) > 0 && ph[0].Kind == phases.Rest {
		return [2]float64{ph[0].StartS, ph[0].EndS}
	}
	return [2]float64{}
}

// obsOf returns the samples ss as layer observations of velocity.
func obsOf(ss []velocity.Sample) []layers.Obs {
	obs := make([]layers.Obs, 0, len(ss))
	for _, s := range ss {
		obs = append(obs, layers.Obs{Group: s.Track, YUM: s.YUM, Value: s.VXUMPerS})
	}
	return obs
}

// windowSteps says which step each user window belongs to.
type windowSteps struct {
	step      []int  // the step each window overlaps most
	straddles []bool // the window overlaps more than one phase
}

// assignWindows gives each user window the shear step it overlaps most;
// a window that overlaps none is an error naming it.
func assignWindows(ws []WindowProfile, steps []experiment.Step) (windowSteps, error) {
	out := windowSteps{step: make([]int, len(ws)), straddles: make([]bool, len(ws))}
	for i, w := range ws {
		best, bestOv := -1, 0.0
		for k, st := range steps {
			ov := math.Min(w.T1S, st.EndS) - math.Max(w.T0S, st.StartS)
			if ov > bestOv {
				best, bestOv = k, ov
			}
		}
		if best < 0 {
			var ph []string
			for _, st := range steps {
				ph = append(ph, fmt.Sprintf("%.4g-%.4g s", st.StartS, st.EndS))
			}
			if len(ph) == 0 {
				ph = append(ph, "none")
			}
			return out, fmt.Errorf("window %q (%g-%g s) overlaps no shear phase (shear phases: %s); every window is analysed as part of one",
				w.Name, w.T0S, w.T1S, strings.Join(ph, ", "))
		}
		out.step[i] = best
		out.straddles[i] = bestOv < (w.T1S-w.T0S)*(1-windowStraddleFrac)
	}
	return out, nil
}

// windowStraddleFrac: a window of which more than this fraction lies
// outside its shear phase straddles phases (a frame's rounding at its
// ends does not count).
const windowStraddleFrac = 0.02
