package main

import (
	"context"
	"fmt"
	"io"
	"path/filepath"
	"strings"

	"gaptrace/calib/atomicfile"
	"gaptrace/profile/phases"
)

func init() {
	commands["calib"] = command{
		summary: "find the walls, tilt and scale: calibration.json and calibration.png",
		run:     runCalib,
	}
}

func runCalib(ctx context.Context, args []string, stderr io.Writer) error {
	fs := newFlags("calib", "INPUT", stderr)
	var o stageOptions
	fs.StringVar(&o.expPath, "e", "", "experiment file (YAML)")
	outDir := fs.String("o", "", "output folder")
	motion := fs.Bool("motion", true, "also read every frame for the moving wall's direction and the phases of motion")
	fs.BoolVar(&o.progress, "progress", false, "show progress even when stderr is not a terminal")
	o.log.add(fs)
	if err := parseFlags(fs, args); err != nil {
		return err
	}
	if fs.NArg() != 1 {
		return badInputf("calib needs one INPUT (video, folder or glob of frames), got %d", fs.NArg())
	}
	o.input = fs.Arg(0)
	sr, err := o.openStage(ctx, *outDir, stderr, calibrationName, calibrationPNGName)
	if err != nil {
		return err
	}
	defer sr.close()
	exp, rec := sr.exp, sr.rec
	if o.rheoLog != nil {
		fmt.Fprintf(stderr, "calib: log %s: %s\n", o.log.path, describeLog(o.rheoLog))
	}
	var ph []phases.Phase
	if *motion {
		m, err := rec.WallMotion(ctx)
		if err != nil {
			return stageErr(err)
		}
		ph = m.Phases
		if len(m.Phases) > 0 {
			var parts []string
			for _, p := range m.Phases {
				parts = append(parts, fmt.Sprintf("%s %.3f-%.3f s", p.Kind, p.StartS, p.EndS))
			}
			fmt.Fprintf(stderr, "calib: phases (%s): %s\n", m.Phases[0].Source, strings.Join(parts, ", "))
		}
		for _, w := range m.Warnings {
			fmt.Fprintf(stderr, "calib: warning: %s\n", w)
		}
	}
	cal := rec.Calibration
	if err := writeCalibJSON(filepath.Join(*outDir, calibrationName), cal, ph); err != nil {
		return err
	}
	png, err := rec.CalibrationPNG()
	if err != nil {
		return err
	}
	if err := atomicfile.WriteBytes(filepath.Join(*outDir, calibrationPNGName), png); err != nil {
		return err
	}
	fmt.Fprintf(stderr, "calib: walls %s, gap %.2f px = %.1f um, tilt %.3f deg, %.5g um/px (%s), moving wall %s\n",
		cal.WallSource, cal.GapPx, cal.GapPx*cal.UMPerPx, cal.TiltDeg, cal.UMPerPx, cal.ScaleSource, exp.MovingSide())
	for _, w := range cal.Warnings {
		fmt.Fprintf(stderr, "calib: warning: %s\n", w)
	}
	return nil
}

// calibrationPNGName is the calibration figure of the calib stage.
const calibrationPNGName = "calibration.png"
