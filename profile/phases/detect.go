package phases

import (
	"errors"
	"fmt"
	"math"
	"sort"

	"gaptrace/calib/robust"
)

// Detection settings.
const (
	// MinMotionPxPerFrame: the moving wall's tracers must move at least this
	// far per frame to count as motion; phase correlation of still frames
	// scatters by a few hundredths of a pixel (common practice).
	MinMotionPxPerFrame = 0.1
	// noiseSigmas: motion must also stand this many robust sigmas above the
	// frame-to-frame scatter at rest.
	noiseSigmas = 6
	// minRunFrames: a run of moving frames shorter than this is a glitch
	// (a jolt of the camera), not a shear phase.
	minRunFrames = 3
	// mergeGapFrames: runs separated by at most this many still frames are
	// one phase with a dropout in the signal.
	mergeGapFrames = 1
	// fitFrames: frames on each side of an onset or a stop used to fit the
	// still and the moving parts of the cumulative displacement.
	fitFrames = 8
	// highQuantile of |displacement| is taken as the moving level; frames at
	// rest make up most of the rest.
	highQuantile = 0.95
)

// Segment is one detected interval of wall motion.
type Segment struct {
	StartS, EndS float64
	// PxPerFrame is the median displacement per frame during the segment,
	// signed along +x of the image.
	PxPerFrame float64
}

// Detected is the outcome of Detect.
type Detected struct {
	Segments []Segment
	// NoisePxPerFrame is the robust scatter of the signal at rest.
	NoisePxPerFrame float64
	// ThresholdPxPerFrame is the displacement that separated moving from
	// still frames.
	ThresholdPxPerFrame float64
	// Phases are the segments as rest, shear and after_stop phases with
	// source "detected".
	Phases []Phase
	// FlowSign is the direction of the moving wall during the first
	// segment in the image: +1 towards +x, -1 towards -x, 0 without motion.
	FlowSign float64
}

// Detect finds the phases of wall motion in signal, the displacement per
// frame of the tracers next to the moving wall (signal[i] between frames
// i-1 and i; signal[0] is ignored), at fps frames per second. Frames move
// when their displacement exceeds the midpoint between the rest level and
// the moving level; each run of moving frames is then timed to a fraction
// of a frame where straight lines fitted to the cumulative displacement
// before, during and after the run meet.
func Detect(signal []float64, fps float64) (*Detected, error) {
	if !(fps > 0) {
		return nil, fmt.Errorf("phases: frame rate %g must be positive", fps)
	}
	n := len(signal)
	if n < 2*minRunFrames {
		return nil, fmt.Errorf("phases: %d frames are too few to detect motion (need %d)", n, 2*minRunFrames)
	}
	abs := make([]float64, 0, n-1)
	for _, v := range signal[1:] {
		if math.IsNaN(v) {
			return nil, errors.New("phases: NaN in the motion signal")
		}
		abs = append(abs, math.Abs(v))
	}
	sorted := append([]float64(nil), abs...)
	sort.Float64s(sorted)
	hi := sorted[int(highQuantile*float64(len(sorted)-1))]
	var rest []float64
	for _, v := range abs {
		if v < hi/2 {
			rest = append(rest, v)
		}
	}
	lo := robust.Median(rest)
	dev := make([]float64, len(rest))
	for i, v := range rest {
		dev[i] = math.Abs(v - lo)
	}
	d := &Detected{NoisePxPerFrame: robust.MADToSigma * robust.Median(dev), Phases: []Phase{}}
	if len(rest) == 0 {
		lo, d.NoisePxPerFrame = 0, 0
	}
	durationS := float64(n) / fps
	d.ThresholdPxPerFrame = lo + (hi-lo)/2
	if hi-lo < MinMotionPxPerFrame || hi-lo < noiseSigmas*d.NoisePxPerFrame {
		d.Phases = fromSegments(nil, nil, durationS, SourceDetected)
		return d, nil
	}
	moving := make([]bool, n)
	for i := 1; i < n; i++ {
		moving[i] = math.Abs(signal[i]) > d.ThresholdPxPerFrame
	}
	runs := findRuns(moving)
	cum := make([]float64, n)
	for i := 1; i < n; i++ {
		cum[i] = cum[i-1] + signal[i]
	}
	var starts, ends []float64
	for _, r := range runs {
		seg := timeRun(cum, signal, r[0], r[1], fps)
		d.Segments = append(d.Segments, seg)
		starts = append(starts, seg.StartS)
		ends = append(ends, seg.EndS)
	}
	if len(d.Segments) > 0 {
		d.FlowSign = math.Copysign(1, d.Segments[0].PxPerFrame)
	}
	d.Phases = fromSegments(starts, ends, durationS, SourceDetected)
	return d, nil
}

// findRuns returns the [first, last] frame indices of the runs of moving
// frames, merged across short dropouts and without glitches.
func findRuns(moving []bool) [][2]int {
	var runs [][2]int
	for i := 0; i < len(moving); i++ {
		if !moving[i] {
			continue
		}
		j := i
		for j+1 < len(moving) && moving[j+1] {
			j++
		}
		if k := len(runs); k > 0 && i-runs[k-1][1]-1 <= mergeGapFrames {
			runs[k-1][1] = j
		} else {
			runs = append(runs, [2]int{i, j})
		}
		i = j
	}
	out := runs[:0]
	for _, r := range runs {
		if r[1]-r[0]+1 >= minRunFrames {
			out = append(out, r)
		}
	}
	return out
}

// timeRun times the run of moving frames first..last (signal indices: the
// motion between frames i-1 and i). The cumulative displacement cum is
// still before the onset, rises along a line during the run and is still
// again after the stop; the onset and the stop are where the lines meet.
func timeRun(cum, signal []float64, first, last int, fps float64) Segment {
	n := len(cum)
	// The moving line: frames strictly inside the run, whose displacement
	// is a whole frame of motion.
	a, b := first, last-1
	if b-a < 1 {
		a, b = first-1, last
	}
	slope, icpt := fitLine(cum, a, b)
	in := make([]float64, 0, last-first+1)
	for i := first; i <= last; i++ {
		in = append(in, signal[i])
	}
	seg := Segment{PxPerFrame: robust.Median(in)}
	// Still levels: the mean cumulative displacement over up to fitFrames
	// frames before the run and after it. Frame first-1 may already have
	// moved by up to half a frame's travel, frame last+1 not any more.
	before := meanRange(cum, max(0, first-2-fitFrames), first-2)
	after := meanRange(cum, last+1, min(n-1, last+fitFrames))
	onset, stop := float64(first-1), float64(last)
	if slope != 0 {
		if !math.IsNaN(before) {
			onset = (before - icpt) / slope
		}
		if !math.IsNaN(after) {
			stop = (after - icpt) / slope
		}
	}
	// The lines cannot move the times by more than a frame from the run.
	onset = math.Max(float64(first-1)-1, math.Min(float64(first), onset))
	stop = math.Max(float64(last-1), math.Min(float64(last)+1, stop))
	seg.StartS, seg.EndS = onset/fps, stop/fps
	return seg
}

// fitLine fits y[i] = icpt + slope*i over i in [a, b] by least squares.
func fitLine(y []float64, a, b int) (slope, icpt float64) {
	a, b = max(a, 0), min(b, len(y)-1)
	var n, sx, sy, sxx, sxy float64
	for i := a; i <= b; i++ {
		x := float64(i)
		n++
		sx += x
		sy += y[i]
		sxx += x * x
		sxy += x * y[i]
	}
	den := n*sxx - sx*sx
	if n < 2 || den == 0 {
		return 0, 0
	}
	slope = (n*sxy - sx*sy) / den
	return slope, (sy - slope*sx) / n
}

// meanRange is the mean of y[a..b], NaN when the range is empty.
func meanRange(y []float64, a, b int) float64 {
	if b < a || a < 0 || b >= len(y) {
		return math.NaN()
	}
	var s float64
	for i := a; i <= b; i++ {
		s += y[i]
	}
	return s / float64(b-a+1)
}
