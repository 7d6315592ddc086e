package cessation

// StopWindowS returns the span of time, s, whose points RefineStop reads
// for a stop near stopS with frame interval dtS: a caller that streams
// its tracks need keep only these points of each for it.
func StopWindowS(stopS, dtS float64) (t0S, t1S float64) {
	return stopS - float64(StopSearchFrames+stopBeforeFrames)*dtS - dtS/2,
		stopS + float64(StopSearchFrames+stopAfterFrames)*dtS + dtS/2
}

// ReachBeforeStopS is how far before the stop, s, Analyze reads a
// tracer's points to place it at the stop, for frame interval dtS: a
// caller that streams its tracks need keep no earlier points of a track
// (besides those of the rest interval, Options.RestS).
func ReachBeforeStopS(dtS float64) float64 { return float64(RefFrames+1) * dtS }

// StitchPoints is the number of points at the end of a track after the
// stop that the joining of broken tracks reads (they give the velocity
// that predicts where the tracer reappears), besides its first point.
const StitchPoints = stitchVelocityPoints
