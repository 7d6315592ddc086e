package pipeline

import (
	"context"
	"errors"
	"fmt"

	"gaptrace/calib/experiment"
	"gaptrace/calib/rheolog"
	"gaptrace/profile"
	"gaptrace/profile/phases"
)

// Config says what to analyse and how. The zero value of each optional
// field means the default.
type Config struct {
	// Experiment is the experiment file (required).
	Experiment *experiment.Experiment
	// ExperimentDir is the folder that relative paths of the experiment
	// file (a calibration target image) are taken from; "" is the working
	// folder.
	ExperimentDir string
	// Input is the recording: a video file, or a folder or glob of still
	// frames.
	Input string
	// NoJitter skips measuring and removing the camera's frame-to-frame
	// jitter (a rigidly mounted camera).
	NoJitter bool
	// Bins is the number of layers across the gap (0: the default).
	Bins int
	// Windows are time windows whose profiles are analysed instead of the
	// default steady window of each shear phase they overlap.
	Windows []profile.Window
	// EveryS is the length of the time-resolved windows through every
	// shear phase, s (profile.Options.EveryS: 0 none, profile.EveryAuto
	// the default length).
	EveryS float64
	// Log, when not nil, is the rheometer's log: its motion replaces the
	// experiment file's motion program (phases with source "log"), and its
	// torque or stress gives each shear phase's wall stress.
	Log *rheolog.Log
	// Seed seeds the bootstrap's random numbers.
	Seed uint64
	// Progress, when not nil, is called as the stages advance, from the
	// goroutine that called the stage.
	Progress func(Progress)
	// TempDir is the folder of the temporary files that hold the
	// detections and the tracks instead of memory ("": os.TempDir). They
	// are named tracks.SpoolPrefix and removed from the folder as soon as
	// they are made, where the system allows it.
	TempDir string
	// keepStillSpots analyses the still spots as tracers, for the tests
	// that compare the profile with and without them.
	keepStillSpots bool
}

// Stages, as named in Progress.
const (
	StageCalibrate = "calibrate"
	StageMotion    = "motion"
	StageDetect    = "detect"
	StageLink      = "link"
	StageProfile   = "profile"
)

// Progress is how far a stage has come: Done of Total units (frames for
// calibrate, motion and detect; passes for link; steps for profile). Total
// is 0 when unknown.
type Progress struct {
	Stage       string
	Done, Total int
}

func (c *Config) report(stage string, done, total int) {
	if c.Progress != nil {
		c.Progress(Progress{Stage: stage, Done: done, Total: total})
	}
}

// InputError is an error caused by what the user gave: the recording, the
// experiment file, the tracks or the calibration.
type InputError struct{ Err error }

func (e *InputError) Error() string { return e.Err.Error() }

// Unwrap returns the cause.
func (e *InputError) Unwrap() error { return e.Err }

// inputErr marks err as an input error (nil stays nil; a cancellation
// stays what it is).
func inputErr(err error) error {
	if err == nil || isCancel(err) {
		return err
	}
	var ie *InputError
	if errors.As(err, &ie) {
		return err
	}
	return &InputError{err}
}

func inputErrf(format string, a ...any) error { return &InputError{fmt.Errorf(format, a...)} }

// check reports what makes c unusable.
func (c *Config) check() error {
	switch {
	case c.Experiment == nil:
		return inputErrf("no experiment file")
	case c.Bins < 0:
		return inputErrf("%d layers across the gap: must be positive", c.Bins)
	}
	if _, err := c.program(); err != nil {
		return err
	}
	return nil
}

// program returns the motion program: the log's when there is a log, else
// the experiment file's.
func (c *Config) program() (experiment.Program, error) {
	if c.Log == nil {
		return c.Experiment.Program(), nil
	}
	p, err := c.Log.Program(c.Experiment.Geometry)
	if err != nil {
		return nil, inputErr(err)
	}
	return p, nil
}

// programPhases returns the phases of the program p over durationS, with
// the log's source when p is the log's.
func (c *Config) programPhases(p experiment.Program, durationS float64) []phases.Phase {
	if c.Log != nil {
		return phases.FromLog(p, durationS)
	}
	return phases.FromProgram(p, durationS)
}

// isCancel reports whether err is a context's cancellation or deadline.
func isCancel(err error) bool {
	return errors.Is(err, context.Canceled) || errors.Is(err, context.DeadlineExceeded)
}
