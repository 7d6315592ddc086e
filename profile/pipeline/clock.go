package pipeline

import (
	"fmt"
	"math"
	"slices"

	"gaptrace/track/frames"
)

// Settings of frameClock.
const (
	// steadyRelTol: an interval within 2 % of the median interval is a
	// steady camera's (containers store times in ticks: 1/90000 s in
	// MPEG-4 files, whose rounding of 1/29.97 s is far below this).
	steadyRelTol = 0.02
	// steadyAbsTolS: and within 1.5 ms, since Matroska's default time
	// stamps are whole milliseconds, which round each interval by up to
	// 1 ms (1/60 s is stored as 16 or 17 ms).
	steadyAbsTolS = 1.5e-3
	// maxRateMismatch: a camera that skips frames has a mean rate below
	// its nominal one, by up to a factor of two when it skips every other
	// frame; beyond that the nominal rate given is more likely another
	// time base (a high-speed camera's file played back slower).
	maxRateMismatch = 2.0
)

// slowDriftWarnPx: a slow common motion of the whole image along the flow
// above a fifth of a pixel RMS is worth a warning: four times the jitter
// the linker removes at all (link.JitterMinRMSPx), well above the
// localization noise of a tracer.
const slowDriftWarnPx = 0.2

// frameClock reads the frame times of src after n frames were read. It
// returns them when the camera's frame rate varies (else nil: frame/FPS
// holds, with the experiment's camera.fps when given), the nominal rate to
// use when info has none, and warnings: the variable rate, a camera.fps far
// from the times' mean rate, and frames past the end of the times. A
// variable rate's times are the container's: no override can say what each
// interval was.
func frameClock(src frames.Source, info frames.Info, n int) (timesS []float64, fps float64, warn []string) {
	fps = info.FPS
	tm, ok := src.(frames.Timed)
	if !ok {
		return nil, fps, nil
	}
	ts := tm.FrameTimesS()
	if len(ts) > n {
		ts = ts[:n]
	}
	if len(ts) < 3 {
		return nil, fps, nil
	}
	d := make([]float64, len(ts)-1)
	for i := range d {
		d[i] = ts[i+1] - ts[i]
	}
	s := slices.Clone(d)
	slices.Sort(s)
	med := s[len(s)/2]
	tol := math.Max(steadyRelTol*med, steadyAbsTolS)
	off := 0
	for _, x := range d {
		if math.Abs(x-med) > tol {
			off++
		}
	}
	if off == 0 {
		return nil, fps, nil
	}
	mean := float64(len(ts)-1) / (ts[len(ts)-1] - ts[0])
	if !(fps > 0) {
		fps = mean
	}
	if r := fps / mean; r > maxRateMismatch || r < 1/maxRateMismatch {
		warn = append(warn, fmt.Sprintf("the frame rate %.4g frames/s is %.2f times the mean rate of the container's frame times (%.4g frames/s); the container's times are used", fps, r, mean))
	}
	warn = append(warn, fmt.Sprintf("variable frame rate: %d of %d frame intervals differ from the median %.2f ms by more than %.2f ms (from %.2f to %.2f ms); the frames' own times from the container are used, with %.4g frames/s as the nominal rate",
		off, len(d), 1e3*med, 1e3*tol, 1e3*s[0], 1e3*s[len(s)-1], fps))
	if len(ts) < n {
		warn = append(warn, fmt.Sprintf("frames %d to %d have no time stamp: they are taken at the nominal interval after frame %d", len(ts), n-1, len(ts)-1))
	}
	return ts, fps, warn
}

// inputNotes returns the warnings about the input itself once it was read
// to the end: frames the container announces beyond the last one read (a
// file cut short), and a display rotation that was applied.
func inputNotes(src frames.Source, info frames.Info, n int) []string {
	var warn []string
	if c, ok := src.(frames.Counted); ok {
		if k := c.Short(); k > 0 {
			warn = append(warn, fmt.Sprintf("the video ends after %d frames, but its container announces %d: the last %d are lost (file truncated or damaged)", n, n+k, k))
		}
	}
	switch r := info.RotationDeg; {
	case r > 0:
		warn = append(warn, fmt.Sprintf("the video asks to be turned by %d degrees for display: its frames were turned before the analysis", r))
	case r < 0:
		warn = append(warn, "the video's display matrix is not a rotation by a multiple of 90 degrees: it was not applied")
	}
	return warn
}
