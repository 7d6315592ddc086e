package main

import (
	"context"
	"fmt"
	"io"
	"math"
	"os"
	"strconv"
	"strings"

	"gaptrace/track/synth"
)

// synthOut receives the synth command's results (the list, the written
// files); tests replace it.
var synthOut io.Writer = os.Stdout

func init() {
	commands["synth"] = command{
		summary: "render a synthetic experiment with known truth (video, experiment file, truth)",
		run:     runSynth,
	}
}

func runSynth(ctx context.Context, args []string, stderr io.Writer) error {
	fs := newFlags("synth", "", stderr)
	list := fs.Bool("list", false, "list the built-in scenarios and exit")
	name := fs.String("scenario", "demo", "built-in scenario to render (see --list)")
	seed := fs.Int64("seed", 1, "random seed: the same scenario and seed give the same experiment")
	out := fs.String("o", "", "output folder (made if missing; its synth files are replaced)")
	format := fs.String("format", "", "output: "+strings.Join(synth.Formats, ", ")+"; default: the scenario's own (avi-mjpeg for most)")
	crf := fs.Int("crf", 0, "H.264 constant rate factor for mp4-h264, 1-51 (lower is better); 0 keeps the scenario's, else 23")
	quality := fs.Int("quality", 0, "JPEG quality scale for avi-mjpeg through ffmpeg, 2-31 (lower is better; 3 decodes fast); 0 keeps the scenario's, else OpenCV's writer")
	preset := fs.String("preset", "", "libx264 speed preset for mp4-h264 (ultrafast ... veryslow); default medium")
	noB := fs.Bool("no-bframes", false, "mp4-h264 without B-frames (every frame's time then reaches OpenCV's reader)")
	bits := fs.Int("bit-depth", 0, "8 or 16 (16 for png or tiff only); 0 keeps the scenario's")
	exposure := fs.Float64("exposure", -1, "exposure over the frame interval, 0-1 (motion blur); -1 keeps the scenario's")
	jitter := fs.Float64("jitter", -1, "camera jitter per frame and axis, sd in px; -1 keeps the scenario's")
	sway := fs.Float64("sway", -1, "amplitude of a slow camera sway per axis, px; -1 keeps the scenario's")
	interlaced := fs.Bool("interlaced", false, "interlaced camera: two fields half a frame interval apart")
	dust := fs.Int("dust", -1, "dust spots on the window over the gap (and a third as many on the plates); -1 keeps the scenario's")
	rotate := fs.Int("rotate", -1, "0 or 180: store the frames rotated with a display-rotation tag (mp4-h264); -1 keeps the scenario's")
	logHz := fs.Float64("log-hz", -1, "write rheometer_log.csv at this sample rate, Hz (0: none); -1 keeps the scenario's")
	logSep := fs.String("log-sep", "", "separator of the log: comma, semicolon or tab; default the scenario's")
	logComma := fs.Bool("log-decimal-comma", false, "write the log's numbers with decimal commas (needs --log-sep semicolon or tab)")
	logUnits := fs.Bool("log-units", false, "write units in the log's headers")
	logOffset := fs.Float64("log-offset", math.NaN(), "the log's clock minus the video's, s; default the scenario's")
	frames := fs.Int("frames", 0, "number of frames; 0 keeps the scenario's")
	size := fs.String("size", "", "image size WxH in px, e.g. 800x600 (the gap keeps its share of the height)")
	tracers := fs.Int("tracers", -1, "number of tracers in the field; -1 keeps the scenario's")
	showProgress := fs.Bool("progress", false, "show progress on stderr even when it is not a terminal")
	if err := parseFlags(fs, args); err != nil {
		return err
	}
	if fs.NArg() > 0 {
		return badInputf("synth takes no input file, got %q", fs.Arg(0))
	}
	if *list {
		for _, n := range synth.List() {
			fmt.Fprintf(synthOut, "%-21s %s\n", n.Name, n.Description)
		}
		return nil
	}
	if *out == "" {
		return badInputf("no output folder: give -o DIR")
	}
	s, err := synth.Builtin(*name, *seed)
	if err != nil {
		return badInput(err)
	}
	if *size != "" {
		w, h, err := parseSize(*size)
		if err != nil {
			return err
		}
		s.Resize(w, h)
	}
	if *frames != 0 {
		if *frames < 0 {
			return badInputf("--frames %d: must be positive", *frames)
		}
		s.Frames = *frames
	}
	if *tracers >= 0 {
		s.Tracers = *tracers
	}
	if err := synthFaults(s, *exposure, *jitter, *sway, *interlaced, *dust, *rotate); err != nil {
		return err
	}
	if err := synthLog(s, *logHz, *logSep, *logComma, *logUnits, *logOffset); err != nil {
		return err
	}
	switch *bits {
	case 0, 8, 16:
	default:
		return badInputf("--bit-depth %d: must be 8 or 16", *bits)
	}
	o, err := synth.BuiltinOutput(*name)
	if err != nil {
		return badInput(err)
	}
	if *format != "" {
		known := false
		for _, f := range synth.Formats {
			known = known || f == *format
		}
		if !known {
			return badInputf("--format %q: must be one of %s", *format, strings.Join(synth.Formats, ", "))
		}
		if *format != o.Format {
			o = synth.Output{Format: *format}
		}
	}
	switch {
	case *crf < 0 || *crf > synth.MaxCRF:
		return badInputf("--crf %d: must be in [1, %d]", *crf, synth.MaxCRF)
	case *quality != 0 && (*quality < synth.MinQuality || *quality > synth.MaxQuality):
		return badInputf("--quality %d: must be in [%d, %d]", *quality, synth.MinQuality, synth.MaxQuality)
	case *crf != 0 && o.Format != synth.FormatH264:
		return badInputf("--crf %d: only for --format %s", *crf, synth.FormatH264)
	case *quality != 0 && o.Format != "" && o.Format != synth.FormatMJPEG:
		return badInputf("--quality %d: only for --format %s", *quality, synth.FormatMJPEG)
	}
	if *crf != 0 {
		o.CRF = *crf
	}
	if *quality != 0 {
		o.Quality = *quality
	}
	if *preset != "" {
		o.Preset = *preset
	}
	o.NoBFrames = o.NoBFrames || *noB
	o.BitDepth = *bits
	if err := s.Validate(); err != nil {
		return badInput(err)
	}
	od, err := holdOutDir(*out, false, false, stderr)
	if err != nil {
		return err
	}
	defer od.release()
	p := newProgress(stderr, *showProgress, "synth", s.Frames)
	if p != nil {
		o.Progress = func(done, _ int) { p.update(done) }
	}
	t, err := s.Write(*out, o)
	if err != nil {
		if strings.Contains(err.Error(), "bit depth") || strings.Contains(err.Error(), "rotation") {
			return badInput(err)
		}
		return err
	}
	p.done()
	sum := t.Summary
	fmt.Fprintf(synthOut, "synth: %s (seed %d): %d frames of %dx%d px at %g frames/s into %s\n",
		s.Name, s.Seed, sum.Input.Frames, sum.Input.WidthPx, sum.Input.HeightPx, sum.Input.FPS, sum.Input.Path)
	side := []string{synth.ExperimentFile, synth.TruthFile, synth.TruthTracksFile}
	if t.Log != nil {
		side = append(side, synth.LogFile)
	}
	fmt.Fprintf(synthOut, "synth: %s beside it\n", strings.Join(side, ", "))
	return nil
}

// synthFaults applies the camera-fault flags that were given (negative:
// keep the scenario's).
func synthFaults(s *synth.Scenario, exposure, jitter, sway float64, interlaced bool, dust, rotate int) error {
	if exposure >= 0 {
		s.ExposureFraction = exposure
	}
	if jitter >= 0 {
		s.JitterPx = jitter
	}
	if sway >= 0 {
		s.SwayPx = sway
	}
	if interlaced {
		s.Interlaced = true
	}
	if dust >= 0 {
		s.Dust.InGap, s.Dust.OnPlates = dust, dust/3
	}
	switch rotate {
	case -1:
	case 0, 180:
		s.StoredRotationDeg = rotate
	default:
		return badInputf("--rotate %d: must be 0 or 180", rotate)
	}
	return nil
}

// synthLog applies the rheometer-log flags that were given.
func synthLog(s *synth.Scenario, hz float64, sep string, comma, units bool, offsetS float64) error {
	if hz >= 0 {
		s.Log.RateHz = hz
	}
	switch sep {
	case "":
	case "comma":
		s.Log.Separator = ","
	case "semicolon":
		s.Log.Separator = ";"
	case "tab":
		s.Log.Separator = "\t"
	default:
		return badInputf("--log-sep %q: must be comma, semicolon or tab", sep)
	}
	if comma {
		s.Log.DecimalComma = true
	}
	if units {
		s.Log.Units = true
	}
	if !math.IsNaN(offsetS) {
		s.Log.ClockOffsetS = offsetS
	}
	return nil
}

// parseSize reads "WxH" in px.
func parseSize(v string) (w, h int, err error) {
	a, b, ok := strings.Cut(strings.ToLower(v), "x")
	if ok {
		w, err = strconv.Atoi(a)
		if err == nil {
			h, err = strconv.Atoi(b)
		}
	}
	if !ok || err != nil || w <= 0 || h <= 0 {
		return 0, 0, badInputf("--size %q: want WIDTHxHEIGHT in px, e.g. 640x480", v)
	}
	return w, h, nil
}
