package main

import (
	"fmt"
	"image"
	"image/color"
	"io"
	"math"
	"os"
	"path/filepath"
	"strings"

	"gocv.io/x/gocv"

	"gaptrace/calib"
	"gaptrace/calib/experiment"
	"gaptrace/calib/phases"
	"gaptrace/profile/summary"
	"gaptrace/track/frames"
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
	src, err := c.openInput(frames.All)
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

// Overlay style: colours and sizes of calibration.png.
var (
	overlayStationary = color.RGBA{R: 60, G: 200, B: 255}  // stationary wall: light blue
	overlayMoving     = color.RGBA{R: 255, G: 150, B: 40}  // moving wall: orange
	overlayAxes       = color.RGBA{R: 120, G: 255, B: 120} // gap axes: green
	overlayText       = color.RGBA{R: 255, G: 255, B: 255}
	overlayBox        = color.RGBA{}
)

const (
	overlayLinePx   = 1
	overlayFont     = gocv.FontHersheySimplex
	overlayFontSize = 0.45
	overlayMarginPx = 12
	// overlayBarFrac: the scale bar is the round length nearest to this
	// fraction of the image width.
	overlayBarFrac = 0.2
	// overlayAxisFrac: the gap axes are drawn this fraction of the gap long.
	overlayAxisFrac = 0.3
)

// writeCalibOverlay draws the walls, the gap axes and a scale bar on the
// median image and writes it as a PNG, atomically.
func writeCalibOverlay(path string, med gocv.Mat, cal *calib.Calibration) error {
	img := gocv.NewMat()
	defer img.Close()
	grey := gocv.NewMat()
	defer grey.Close()
	if med.Type() == gocv.MatTypeCV8U {
		med.CopyTo(&grey)
	} else {
		gocv.Normalize(med, &grey, 0, 255, gocv.NormMinMax)
		grey.ConvertTo(&grey, gocv.MatTypeCV8U)
	}
	gocv.CvtColor(grey, &img, gocv.ColorGrayToBGR)
	pt := func(x, y float64) image.Point { return image.Pt(int(math.Round(x)), int(math.Round(y))) }
	// Text with a dark outline, readable on bright and dark images.
	text := func(s string, at image.Point, col color.RGBA) {
		gocv.PutText(&img, s, at, overlayFont, overlayFontSize, overlayBox, 3)
		gocv.PutText(&img, s, at, overlayFont, overlayFontSize, col, 1)
	}
	midY := func(l calib.Line) float64 { return (l[0][1] + l[1][1]) / 2 }
	// Wall lines, through the lens when there is one: drawn as short
	// segments of the undistorted line mapped back into the image. Labels
	// go on the gap side of each line.
	wall := func(l calib.Line, other calib.Line, col color.RGBA, label string) {
		const segs = 32
		var prev image.Point
		for i := 0; i <= segs; i++ {
			f := float64(i) / segs
			x := l[0][0] + f*(l[1][0]-l[0][0])
			y := l[0][1] + f*(l[1][1]-l[0][1])
			if cal.Distortion != nil {
				x, y = cal.Distortion.Distort(x, y)
			}
			p := pt(x, y)
			if i > 0 {
				gocv.Line(&img, prev, p, col, overlayLinePx)
			}
			prev = p
		}
		at := 0.6 // along the line, away from the axes and the scale bar
		p := pt(l[0][0]+at*(l[1][0]-l[0][0]), l[0][1]+at*(l[1][1]-l[0][1]))
		off := -8
		if midY(l) < midY(other) {
			off = 18
		}
		text(label, image.Pt(p.X, p.Y+off), col)
	}
	wall(cal.StationaryWallPx, cal.MovingWallPx, overlayStationary, "stationary wall, y = 0")
	wall(cal.MovingWallPx, cal.StationaryWallPx, overlayMoving, fmt.Sprintf("moving wall, y = %.0f um", cal.GapUM))
	// Gap axes from a point on the stationary wall a tenth into the image.
	axisUM := overlayAxisFrac * cal.GapUM
	x0UM := 0.1 * float64(cal.WidthPx) * cal.UMPerPx
	if cal.FlowSign < 0 {
		x0UM = -0.9 * float64(cal.WidthPx) * cal.UMPerPx
	}
	ox, oy := cal.ToImage(x0UM, 0)
	xx, xy := cal.ToImage(x0UM+axisUM, 0)
	yx, yy := cal.ToImage(x0UM, axisUM)
	// Start the axes a little inside the gap so the wall line stays visible.
	inset := 0.02 * cal.GapUM
	ox, oy = cal.ToImage(x0UM, inset)
	xx, xy = cal.ToImage(x0UM+axisUM, inset)
	gocv.ArrowedLine(&img, pt(ox, oy), pt(xx, xy), overlayAxes, overlayLinePx+1)
	gocv.ArrowedLine(&img, pt(ox, oy), pt(yx, yy), overlayAxes, overlayLinePx+1)
	text("x (flow)", pt(xx+6, xy+5), overlayAxes)
	text("y", pt(yx+6, yy+5), overlayAxes)
	// Scale bar and the numbers, bottom left, on a dark box.
	barUM := roundLength(overlayBarFrac * float64(cal.WidthPx) * cal.UMPerPx)
	barPx := int(math.Round(barUM / cal.UMPerPx))
	y := cal.HeightPx - overlayMarginPx
	label := fmt.Sprintf("%g um   %.4g um/px (%s)   tilt %.2f deg   gap %.1f px", barUM, cal.UMPerPx, cal.ScaleSource, cal.TiltDeg, cal.GapPx)
	ts := gocv.GetTextSize(label, overlayFont, overlayFontSize, 1)
	boxW := max(barPx, ts.X) + overlayMarginPx
	gocv.Rectangle(&img, image.Rect(overlayMarginPx/2, y-ts.Y-18, overlayMarginPx/2+boxW, y+6), overlayBox, -1)
	gocv.Line(&img, image.Pt(overlayMarginPx, y), image.Pt(overlayMarginPx+barPx, y), overlayText, 3)
	gocv.PutText(&img, label, image.Pt(overlayMarginPx, y-10), overlayFont, overlayFontSize, overlayText, 1)
	buf, err := gocv.IMEncode(gocv.PNGFileExt, img)
	if err != nil {
		return fmt.Errorf("calibration.png: %w", err)
	}
	defer buf.Close()
	return summary.WriteFileAtomic(path, append([]byte(nil), buf.GetBytes()...))
}

// roundLength returns 1, 2 or 5 times a power of ten, the one nearest to
// v (v > 0).
func roundLength(v float64) float64 {
	if !(v > 0) {
		return 1
	}
	p := math.Pow(10, math.Floor(math.Log10(v)))
	best := p
	for _, m := range []float64{1, 2, 5, 10} {
		if math.Abs(m*p-v) < math.Abs(best-v) {
			best = m * p
		}
	}
	return best
}
