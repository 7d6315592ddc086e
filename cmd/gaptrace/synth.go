package main

import (
	"context"
	"fmt"
	"io"
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
	format := fs.String("format", synth.FormatMJPEG, "output: "+strings.Join(synth.Formats, ", "))
	bits := fs.Int("bit-depth", 0, "8 or 16 (16 for png or tiff only); 0 keeps the scenario's")
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
			fmt.Fprintf(synthOut, "%-15s %s\n", n.Name, n.Description)
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
	switch *bits {
	case 0, 8, 16:
	default:
		return badInputf("--bit-depth %d: must be 8 or 16", *bits)
	}
	known := false
	for _, f := range synth.Formats {
		known = known || f == *format
	}
	if !known {
		return badInputf("--format %q: must be one of %s", *format, strings.Join(synth.Formats, ", "))
	}
	if err := s.Validate(); err != nil {
		return badInput(err)
	}
	od, err := holdOutDir(*out, false, false, stderr)
	if err != nil {
		return err
	}
	defer od.release()
	p := newProgress(stderr, *showProgress, "synth", s.Frames)
	o := synth.Output{Format: *format, BitDepth: *bits}
	if p != nil {
		o.Progress = func(done, _ int) { p.update(done) }
	}
	t, err := s.Write(*out, o)
	if err != nil {
		if strings.Contains(err.Error(), "bit depth") {
			return badInput(err)
		}
		return err
	}
	p.done()
	sum := t.Summary
	fmt.Fprintf(synthOut, "synth: %s (seed %d): %d frames of %dx%d px at %g frames/s into %s\n",
		s.Name, s.Seed, sum.Input.Frames, sum.Input.WidthPx, sum.Input.HeightPx, sum.Input.FPS, sum.Input.Path)
	fmt.Fprintf(synthOut, "synth: %s, %s, %s beside it\n", synth.ExperimentFile, synth.TruthFile, synth.TruthTracksFile)
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
