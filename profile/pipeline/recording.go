package pipeline

import (
	"context"
	"errors"
	"fmt"
	"os"
	"strings"

	"gocv.io/x/gocv"

	"gaptrace/calib"
	"gaptrace/profile/phases"
	"gaptrace/profile/report/figure"
	"gaptrace/track/frames"
)

// MedianFrames is how many frames from the start of the recording make the
// median image the walls are found on: the walls are static, so a short
// stretch suffices, and tracers crossing a pixel in fewer than half of these
// frames vanish from it.
const MedianFrames = 31

// readAheadBytes bounds the memory of the frames decoded ahead, on a core
// otherwise idle, while the walls are found on the median: 64 MiB is 64
// frames of 1 MP at 8 bit, more than one core decodes in that time.
const readAheadBytes = 64 << 20

// Recording is an input opened and calibrated: the walls and the scale
// found on the median of its first frames. The input stays open, its first
// frames decoded, for the stage that reads every frame (Track or
// WallMotion); Close releases it.
type Recording struct {
	cfg         Config
	Info        frames.Info
	Calibration *calib.Calibration
	// Median is the median image of the first MedianFrames frames, which
	// the walls were found on; Close closes it.
	Median gocv.Mat
	head   *frames.Head
	fields *frames.FieldSource // the input's comb measurement
}

// Open opens cfg.Input, finds the walls and the scale on the median of its
// first frames (calib.Calibrate) and returns the calibrated recording.
func Open(ctx context.Context, cfg Config) (*Recording, error) {
	if err := cfg.check(); err != nil {
		return nil, err
	}
	if err := ctx.Err(); err != nil {
		return nil, err
	}
	src, fields, err := openInput(cfg, frames.All)
	if err != nil {
		return nil, err
	}
	r := &Recording{cfg: cfg, Info: src.Info(), fields: fields}
	cfg.report(StageCalibrate, 0, MedianFrames)
	head, err := frames.ReadHead(src, MedianFrames)
	if err != nil {
		src.Close()
		return nil, inputErr(err)
	}
	r.head = head
	med, err := head.Median()
	if err != nil {
		med.Close()
		r.Close()
		return nil, inputErr(err)
	}
	r.Median = med
	bytesPerFrame := r.Info.WidthPx * r.Info.HeightPx * r.Info.BitDepth / 8
	head.ReadAhead(readAheadBytes / max(1, bytesPerFrame))
	cal, err := calib.Calibrate(med, cfg.Experiment, calib.Options{BaseDir: cfg.ExperimentDir})
	if err != nil {
		r.Close()
		return nil, inputErr(err)
	}
	r.Calibration = cal
	cfg.report(StageCalibrate, MedianFrames, MedianFrames)
	return r, nil
}

// Close releases the input and the median image.
func (r *Recording) Close() {
	if r.head != nil {
		r.head.Close()
		r.head = nil
	}
	r.Median.Close()
}

// openInput opens the frames of cfg.Input in range rg at the experiment's
// frame rate, split into fields when the experiment says so (watchFields).
func openInput(cfg Config, rg frames.Range) (frames.Source, *frames.FieldSource, error) {
	if _, err := os.Stat(cfg.Input); err != nil && !hasGlob(cfg.Input) {
		return nil, nil, inputErrf("input %s: %v", cfg.Input, errors.Unwrap(err))
	}
	src, err := frames.Open(cfg.Input, cfg.Experiment.Camera.FPS, rg)
	if err != nil {
		return nil, nil, inputErr(err)
	}
	info := src.Info()
	if !(info.FPS > 0) {
		src.Close()
		return nil, nil, inputErrf("input %s: no frame rate in the file; give camera.fps in the experiment file", cfg.Input)
	}
	// The experiment file checks its steps against camera.fps; a rate
	// from the video is checked here (a step shorter than a frame).
	if err := cfg.Experiment.CheckAgainstRate(info.FPS); err != nil {
		src.Close()
		return nil, nil, inputErrf("experiment file: %v (the video's rate)", err)
	}
	return watchFields(cfg, src)
}

func hasGlob(p string) bool { return strings.ContainsAny(p, "*?[") }

// takeInput hands over the input left open by Open (its first frames
// decoded) to a stage that reads every frame and closes it; a second call
// opens the input again.
func (r *Recording) takeInput() (frames.Source, error) {
	if h := r.head; h != nil {
		r.head = nil
		return h, nil
	}
	src, fields, err := openInput(r.cfg, frames.All)
	r.fields = fields
	return src, err
}

// MotionPhases is what WallMotion found: the phases of the moving wall's
// motion in the video, reconciled with the motion program.
type MotionPhases struct {
	// Phases are the phases to use: the program's when it has shear
	// phases, else the detected ones.
	Phases []phases.Phase
	// Detected is the detection itself (nil when no motion was found).
	Detected *phases.Detected
	Warnings []string
}

// WallMotion reads every frame, measures the image motion beside the
// moving wall (phases.Measure), sets the calibration's flow sign from it,
// and returns the phases of motion reconciled with the motion program (the
// rheometer log's when the configuration has one). It serves a
// calibration without tracking; Track finds the phases from the tracks.
func (r *Recording) WallMotion(ctx context.Context) (*MotionPhases, error) {
	program, err := r.cfg.program()
	if err != nil {
		return nil, err
	}
	src, err := r.takeInput()
	if err != nil {
		return nil, err
	}
	defer src.Close()
	info := src.Info()
	signal, err := phases.Measure(ctx, src, r.Calibration, func(done int) { r.cfg.report(StageMotion, done, info.Frames) })
	if err != nil {
		return nil, inputErr(err)
	}
	m := &MotionPhases{}
	d, err := phases.Detect(signal, info.FPS)
	if err != nil {
		m.Warnings = append(m.Warnings, fmt.Sprintf("no phases detected: %v", err))
		return m, nil
	}
	m.Detected = d
	if d.FlowSign != 0 {
		r.Calibration.FlowSign = d.FlowSign
	}
	m.Phases, m.Warnings = phases.Reconcile(r.cfg.programPhases(program, float64(len(signal))/info.FPS), d.Phases, info.FPS)
	return m, nil
}

// CalibrationPNG returns calibration.png: the median image with the walls,
// the gap axes and a scale bar drawn over it (figure.OverlayPlot, the
// report's frame figure), PNG-encoded with its resolution.
func (r *Recording) CalibrationPNG() ([]byte, error) {
	grey := gocv.NewMat()
	defer grey.Close()
	if r.Median.Type() == gocv.MatTypeCV8U {
		r.Median.CopyTo(&grey)
	} else {
		gocv.Normalize(r.Median, &grey, 0, 255, gocv.NormMinMax)
		grey.ConvertTo(&grey, gocv.MatTypeCV8U)
	}
	fig, err := figure.OverlayPlot(&figure.Overlay{Frame: grey, Calibration: r.Calibration})
	if err != nil {
		return nil, fmt.Errorf("calibration.png: %w", err)
	}
	return fig.PNG, nil
}
