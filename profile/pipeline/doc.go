// Package pipeline runs a recording through the whole chain of gaptrace:
// calibration (walls, tilt, scale), detection of the tracers in every
// frame, linking into tracks, the phases of the experiment, the profiles
// and verdicts of package profile, and the data of the report. It is what
// the gaptrace command calls, and what a Go program calls to analyse a
// recording without the command.
//
// The stages return typed results, each the input of the next:
//
//	rec, err := pipeline.Open(ctx, cfg)   // *Recording: input opened, calibrated
//	tr, err := rec.Track(ctx)             // *Tracked: tracks in gap coordinates
//	an, err := pipeline.Analyze(ctx, cfg, tr) // *Analysis: profiles, verdicts, summary
//
// Run does all three. FromTracks starts from a tracks table and a
// calibration instead of a video. Every stage takes a context.Context: a
// cancelled context stops the work at the next frame or step and returns
// the context's error. Progress is reported through Config.Progress.
//
// Errors caused by the input (an unreadable video, a wrong experiment, no
// tracers) are *InputError; any other error is the tool's own.
package pipeline
