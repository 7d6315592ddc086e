// Package phases divides a recording into rest, shear and after_stop
// segments: from the experiment's motion program, and from the video
// itself by the motion of the tracers next to the moving wall, and
// cross-checks the two.
//
// Times are in seconds from the first frame; frame i is at i / fps, and a
// recording of n frames covers [0, n / fps). Displacements are in pixels
// per frame along the walls, positive towards +x of the image.
package phases

import (
	"fmt"
	"math"

	"gaptrace/calib/experiment"
	"gaptrace/calib/robust"
)

// Phase kinds.
const (
	Rest      = "rest"
	Shear     = "shear"
	AfterStop = "after_stop"
)

// Phase sources: where the times of a phase come from.
const (
	SourceExperiment = "experiment" // the experiment file's motion program
	SourceLog        = "log"        // the rheometer's log
	SourceDetected   = "detected"   // the motion seen in the video
)

// Phase is one segment of the experiment's time line, in s from the first
// frame; Kind is one of the phase kinds and Source one of the sources.
type Phase struct {
	Kind   string  `json:"kind"`
	StartS float64 `json:"start_s"`
	EndS   float64 `json:"end_s"`
	Source string  `json:"source"`
}

// FromProgram returns the phases of a recording of durationS seconds under
// the motion program: rest before the first step and between steps, shear
// during each step, after_stop after the last one, each cut to the
// recording. A step of zero wall speed is rest.
func FromProgram(p experiment.Program, durationS float64) []Phase {
	var starts, ends []float64
	for _, s := range p {
		if s.RatePerS != 0 || s.WallSpeedUMPerS != 0 {
			starts, ends = append(starts, s.StartS), append(ends, s.EndS)
		}
	}
	return fromSegments(starts, ends, durationS, SourceExperiment)
}

// FromLog is FromProgram for a motion program read from the rheometer's
// log: the phases' source is "log".
func FromLog(p experiment.Program, durationS float64) []Phase {
	ph := FromProgram(p, durationS)
	for i := range ph {
		ph[i].Source = SourceLog
	}
	return ph
}

// fromSegments turns shear intervals in time order into the phase list.
func fromSegments(starts, ends []float64, durationS float64, source string) []Phase {
	ph := []Phase{}
	add := func(kind string, a, b float64) {
		b = math.Min(b, durationS)
		if b > a {
			ph = append(ph, Phase{Kind: kind, StartS: a, EndS: b, Source: source})
		}
	}
	t := 0.0
	for i := range starts {
		add(Rest, t, starts[i])
		add(Shear, starts[i], ends[i])
		t = ends[i]
	}
	if len(starts) == 0 {
		add(Rest, 0, durationS)
		return ph
	}
	add(AfterStop, t, durationS)
	return ph
}

// MaxDisagreeFrames: the program and the video may disagree on the start
// or end of a shear phase by this many frames before it is worth a
// warning (the limit: the camera and rheometer clocks are rarely
// synchronised better).
const MaxDisagreeFrames = 2

// Reconcile returns the phases to use and warnings: the program's phases
// when there are any, else the detected ones; and a warning for every shear
// phase whose start or end differs between the two by more than
// MaxDisagreeFrames frames, or when the two count different shear phases.
func Reconcile(program, detected []Phase, fps float64) ([]Phase, []string) {
	var warn []string
	if len(program) == 0 || !hasShear(program) {
		if len(program) > 0 && hasShear(detected) {
			warn = append(warn, "phases: the motion program is empty, but the video shows the moving wall moving; using the detected phases")
		}
		if len(detected) == 0 {
			return program, warn
		}
		return detected, warn
	}
	name := "motion program"
	if program[0].Source == SourceLog {
		name = "rheometer log"
	}
	ps, ds := shears(program), shears(detected)
	switch {
	case len(detected) > 0 && len(ds) == 0:
		warn = append(warn, fmt.Sprintf("phases: the moving wall's motion in the video stands too little above its noise to check the %s's %s against; the %s's times are used",
			name, plural(len(ps), "shear phase"), name))
	case len(detected) > 0 && len(ps) != len(ds):
		warn = append(warn, fmt.Sprintf("phases: the %s has %s, the video shows %d", name, plural(len(ps), "shear phase"), len(ds)))
	}
	tol := MaxDisagreeFrames / fps
	for i := 0; i < min(len(ps), len(ds)); i++ {
		for _, c := range []struct {
			what string
			p, d float64
		}{{"starts", ps[i].StartS, ds[i].StartS}, {"ends", ps[i].EndS, ds[i].EndS}} {
			if diff := c.d - c.p; math.Abs(diff) > tol {
				warn = append(warn, fmt.Sprintf("phases: shear phase %d %s at %.3f s in the %s but at %.3f s in the video (%+.1f frames)",
					i+1, c.what, c.p, name, c.d, diff*fps))
			}
		}
	}
	return program, warn
}

func hasShear(ph []Phase) bool { return len(shears(ph)) > 0 }

func shears(ph []Phase) []Phase {
	var s []Phase
	for _, p := range ph {
		if p.Kind == Shear {
			s = append(s, p)
		}
	}
	return s
}

// ClockShift returns the offset, s, to add to the times of the phases
// logged (a rheometer log's, on its own clock) to put them on the video's
// clock, when the video's detected phases show the same shear phases all
// shifted alike: as many shear phases, every start and end off by the same
// amount to within MaxDisagreeFrames frames, and that amount more than
// MaxDisagreeFrames frames. ok is false otherwise (the clocks agree, or the
// two disagree in more than a constant offset).
func ClockShift(logged, detected []Phase, fps float64) (shiftS float64, ok bool) {
	ls, ds := shears(logged), shears(detected)
	if len(ls) == 0 || len(ls) != len(ds) || !(fps > 0) {
		return 0, false
	}
	var diffs []float64
	for i := range ls {
		diffs = append(diffs, ds[i].StartS-ls[i].StartS, ds[i].EndS-ls[i].EndS)
	}
	m := robust.Median(diffs)
	tol := MaxDisagreeFrames / fps
	for _, d := range diffs {
		if math.Abs(d-m) > tol {
			return 0, false
		}
	}
	return m, math.Abs(m) > tol
}

// DisagreeFrames is the disagreement between the program's (or log's)
// times of a shear phase and the video's, in frames, beyond which the
// phase's results are inconclusive: the limit of one frame, the
// resolution of the video's own timing.
const DisagreeFrames = 1

// Disagreement is a shear phase whose start or end in the video differs
// from the program's by more than DisagreeFrames frames.
type Disagreement struct {
	Shear      int    // index among the shear phases, from 0
	What       string // "starts" or "ends"
	ProgramS   float64
	DetectedS  float64
	Source     string // the program's source: experiment or log
	DiffFrames float64
}

// Disagreements pairs the shear phases of the program and of the video
// (when they count the same) and returns those whose start or end differ
// by more than DisagreeFrames frames.
func Disagreements(program, detected []Phase, fps float64) []Disagreement {
	ps, ds := shears(program), shears(detected)
	if len(ps) == 0 || len(ps) != len(ds) || !(fps > 0) {
		return nil
	}
	var out []Disagreement
	for i := range ps {
		for _, c := range []struct {
			what string
			p, d float64
		}{{"starts", ps[i].StartS, ds[i].StartS}, {"ends", ps[i].EndS, ds[i].EndS}} {
			if diff := (c.d - c.p) * fps; math.Abs(diff) > DisagreeFrames {
				out = append(out, Disagreement{Shear: i, What: c.what, ProgramS: c.p, DetectedS: c.d, Source: ps[i].Source, DiffFrames: diff})
			}
		}
	}
	return out
}

// Advice says which of the two times to trust, and why.
func (d Disagreement) Advice() string {
	if d.Source == SourceLog {
		return fmt.Sprintf("the phase %s at %.4g s in the rheometer log but at %.4g s in the video (%+.1f frames): the log's time is used, which is right only when its clock is put on the video's; "+
			"the video sees the moving wall itself, so trust it and shift the log by --log-offset %+.3g s if every phase is off by the same, else check the log",
			d.What, d.ProgramS, d.DetectedS, d.DiffFrames, d.DetectedS-d.ProgramS)
	}
	return fmt.Sprintf("the phase %s at %.4g s in the experiment file's motion program but at %.4g s in the video (%+.1f frames): the program's time is used, but a program gives the planned times and the video the measured ones; "+
		"trust the video, and correct the motion's start_s and end_s (or give the rheometer's log with --log)",
		d.What, d.ProgramS, d.DetectedS, d.DiffFrames)
}

// plural is n and the noun, with an s when n is not 1.
func plural(n int, noun string) string {
	if n == 1 {
		return "1 " + noun
	}
	return fmt.Sprintf("%d %ss", n, noun)
}
