package main

import (
	"fmt"
	"io"
	"os"
	"path/filepath"
	"strings"

	"gocv.io/x/gocv"

	"gaptrace/calib"
	"gaptrace/calib/atomicfile"
	"gaptrace/calib/experiment"
	"gaptrace/profile/phases"
	"gaptrace/profile/report/figure"
)

func init() {
	commands["calib"] = command{
		summary: "find the walls, tilt and scale: calibration.json and calibration.png",
		run:     runCalib,
	}
}

func runCalib(args []string, stderr io.Writer) error {
	fs := newFlags("calib", "INPUT", stderr)
	expPath := fs.String("e", "", "experiment file (YAML)")
	outDir := fs.String("o", "", "output folder")
	motion := fs.Bool("motion", true, "also read every frame for the moving wall's direction and the phases of motion")
	prog := fs.Bool("progress", false, "show progress even when stderr is not a terminal")
	logPath := fs.String("log", "", "rheometer log (CSV) to use as the motion program for the phases, instead of the experiment file's motion")
	logTime := fs.String("log-time", "1", "the log's time column (s): header name or 1-based number")
	logValue := fs.String("log-value", "2", "the log's motion column: header name or 1-based number")
	logKind := fs.String("log-kind", experiment.LogAngleRad, "what the motion column holds: angle_rad, angle_deg, strain or rate")
	logOffset := fs.Float64("log-offset", 0, "seconds added to the log's times to put them on the video's clock")
	if err := parseFlags(fs, args); err != nil {
		return err
	}
	if fs.NArg() != 1 {
		return badInputf("calib needs one INPUT (video, folder or glob of frames), got %d", fs.NArg())
	}
	exp, err := loadExperiment(*expPath)
	if err != nil {
		return err
	}
	var program experiment.Program
	if *logPath != "" {
		f, err := os.Open(*logPath)
		if err != nil {
			return badInputf("--log: %v", err)
		}
		program, err = experiment.ReadLog(f, experiment.LogColumns{Time: *logTime, Value: *logValue, Kind: *logKind, OffsetS: *logOffset}, exp.Geometry)
		f.Close()
		if err != nil {
			return badInputf("--log %s: %v", *logPath, err)
		}
	} else {
		program = exp.Program()
	}
	if err := ensureDir(*outDir); err != nil {
		return err
	}
	removeStale(*outDir, "calibration.json", "calibration.png")
	c := &chain{expPath: *expPath, exp: exp, input: fs.Arg(0), progress: *prog, stderr: stderr}
	defer c.close()
	med, err := c.calibrate()
	if err != nil {
		return err
	}
	defer med.Close()
	if *motion {
		if err := c.wallMotion(program); err != nil {
			return err
		}
	}
	if err := writeCalibJSON(filepath.Join(*outDir, "calibration.json"), c.cal); err != nil {
		return err
	}
	if err := writeCalibOverlay(filepath.Join(*outDir, "calibration.png"), med, c.cal); err != nil {
		return err
	}
	cal := c.cal
	fmt.Fprintf(stderr, "calib: walls %s, gap %.2f px = %.1f um, tilt %.3f deg, %.5g um/px (%s), moving wall %s\n",
		cal.WallSource, cal.GapPx, cal.GapPx*cal.UMPerPx, cal.TiltDeg, cal.UMPerPx, cal.ScaleSource, exp.MovingSide())
	for _, w := range cal.Warnings {
		fmt.Fprintf(stderr, "calib: warning: %s\n", w)
	}
	return nil
}

// wallMotion reads every frame, measures the motion beside the moving wall,
// sets the calibration's flow sign from it and reports the detected phases
// and their agreement with the motion program on stderr.
func (c *chain) wallMotion(program experiment.Program) error {
	src, err := c.takeInput()
	if err != nil {
		return err
	}
	defer src.Close()
	info := src.Info()
	pr := newProgress(c.stderr, c.progress, "motion", info.Frames)
	signal, err := phases.Measure(src, c.cal, pr.update)
	if err != nil {
		return badInput(err)
	}
	pr.done()
	n := len(signal)
	d, err := phases.Detect(signal, info.FPS)
	if err != nil {
		fmt.Fprintf(c.stderr, "calib: no phases detected: %v\n", err)
		return nil
	}
	if d.FlowSign != 0 {
		c.cal.FlowSign = d.FlowSign
	}
	durS := float64(n) / info.FPS
	ph, warn := phases.Reconcile(phases.FromProgram(program, durS), d.Phases, info.FPS)
	var parts []string
	for _, p := range ph {
		parts = append(parts, fmt.Sprintf("%s %.3f-%.3f s", p.Kind, p.StartS, p.EndS))
	}
	fmt.Fprintf(c.stderr, "calib: phases (%s): %s\n", ph[0].Source, strings.Join(parts, ", "))
	for _, w := range warn {
		fmt.Fprintf(c.stderr, "calib: warning: %s\n", w)
	}
	return nil
}

// writeCalibOverlay draws the walls, the gap axes and a scale bar on the
// median image (figure.DrawOverlay, as in the report's frame figure) and
// writes it as calibration.png, atomically.
func writeCalibOverlay(path string, med gocv.Mat, cal *calib.Calibration) error {
	grey := gocv.NewMat()
	defer grey.Close()
	if med.Type() == gocv.MatTypeCV8U {
		med.CopyTo(&grey)
	} else {
		gocv.Normalize(med, &grey, 0, 255, gocv.NormMinMax)
		grey.ConvertTo(&grey, gocv.MatTypeCV8U)
	}
	img, err := figure.DrawOverlay(&figure.Overlay{Frame: grey, Calibration: cal})
	if err != nil {
		return fmt.Errorf("calibration.png: %w", err)
	}
	defer img.Close()
	buf, err := gocv.IMEncode(gocv.PNGFileExt, img)
	if err != nil {
		return fmt.Errorf("calibration.png: %w", err)
	}
	defer buf.Close()
	return atomicfile.WriteBytes(path, append([]byte(nil), buf.GetBytes()...))
}
