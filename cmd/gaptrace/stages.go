package main

import (
	"context"
	"encoding/json"
	"errors"
	"io"
	"path/filepath"

	"gaptrace/calib"
	"gaptrace/calib/atomicfile"
	"gaptrace/calib/experiment"
	"gaptrace/calib/rheolog"
	"gaptrace/profile/phases"
	"gaptrace/profile/pipeline"
)

// loadExperiment reads the experiment file; every problem is bad input.
func loadExperiment(path string) (*experiment.Experiment, error) {
	if path == "" {
		return nil, badInputf("no experiment file: give -e EXPERIMENT.yaml")
	}
	e, err := experiment.Load(path)
	if err != nil {
		return nil, badInput(err)
	}
	return e, nil
}

// stageOptions are the flags every stage that reads the recording shares.
type stageOptions struct {
	expPath, input string
	progress       bool // show progress even when stderr is not a terminal
	noJitter       bool
	log            logFlags
	// rheoLog is the log read from the log flags (nil without --log).
	rheoLog *rheolog.Log
}

// loadLog reads the rheometer log of the log flags into o.rheoLog.
func (o *stageOptions) loadLog(exp *experiment.Experiment) error {
	l, err := o.log.load(exp)
	o.rheoLog = l
	return err
}

// config returns the pipeline's configuration for exp, with progress shown
// on stderr when it is a terminal or forced.
func (o stageOptions) config(exp *experiment.Experiment, stderr io.Writer) pipeline.Config {
	return pipeline.Config{Experiment: exp, ExperimentDir: filepath.Dir(o.expPath), Input: o.input,
		NoJitter: o.noJitter, Log: o.rheoLog, Progress: newStageProgress(stderr, o.progress)}
}

// openStage is the common start of the stages that read the recording:
// the experiment file and the log, the output folder held (its lock) with
// the stage's own earlier files names removed, and the recording opened.
// The caller releases the folder and closes the recording.
func (o *stageOptions) openStage(ctx context.Context, dir string, stderr io.Writer, names ...string) (*stageRun, error) {
	exp, err := loadExperiment(o.expPath)
	if err != nil {
		return nil, err
	}
	if err := o.loadLog(exp); err != nil {
		return nil, err
	}
	r := &stageRun{exp: exp, cfg: o.config(exp, stderr)}
	if r.od, err = holdOutDir(dir, false, false, stderr); err != nil {
		return nil, err
	}
	removeStale(dir, names...)
	if r.rec, err = pipeline.Open(ctx, r.cfg); err != nil {
		r.od.release()
		return nil, stageErr(err)
	}
	return r, nil
}

// stageRun is what openStage opened.
type stageRun struct {
	exp *experiment.Experiment
	cfg pipeline.Config
	od  *outDir
	rec *pipeline.Recording
}

// close closes the recording and releases the output folder.
func (r *stageRun) close() {
	r.rec.Close()
	r.od.release()
}

// stageErr maps an error of the pipeline to the command's: an input error
// is bad input (exit status 2); a cancellation stays one, for main to
// report as an interruption.
func stageErr(err error) error {
	var ie *pipeline.InputError
	switch {
	case err == nil:
		return nil
	case errors.Is(err, context.Canceled):
		return err
	case errors.As(err, &ie):
		return badInput(ie.Err)
	}
	return err
}

// writeCalibJSON writes calibration.json atomically, with the phases when
// they are known (their source says where they come from: the experiment
// file, the rheometer log or the video).
func writeCalibJSON(path string, cal *calib.Calibration, ph []phases.Phase) error {
	b, err := json.MarshalIndent(struct {
		*calib.Calibration
		Phases []phases.Phase `json:"phases,omitempty"`
	}{cal, ph}, "", "  ")
	if err != nil {
		return err
	}
	return atomicfile.WriteBytes(path, append(b, '\n'))
}
