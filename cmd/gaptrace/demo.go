package main

import (
	"context"
	"fmt"
	"io"
	"path/filepath"

	"gaptrace/profile/report"
	"gaptrace/profile/summary"
	"gaptrace/track/synth"
)

func init() {
	commands["demo"] = command{
		summary: "render the built-in demo experiment, analyse it and compare with its truth",
		run:     runDemo,
	}
}

// demoInputDir is the sub-folder of the demo's output that holds the
// rendered experiment: video, experiment file and truth.
const demoInputDir = "experiment"

func runDemo(ctx context.Context, args []string, stderr io.Writer) error {
	fs := newFlags("demo", "", stderr)
	var o runOptions
	fs.StringVar(&o.outDir, "o", "", "output folder (must be empty unless --force)")
	fs.BoolVar(&o.force, "force", false, "write into a folder that is not empty, replacing earlier results")
	fs.BoolVar(&o.progress, "progress", false, "show progress even when stderr is not a terminal")
	scenario := fs.String("scenario", "demo", "built-in scenario to render (see gaptrace synth --list)")
	seed := fs.Int64("seed", 1, "seed of the rendered scenario")
	if err := parseFlags(fs, args); err != nil {
		return err
	}
	if fs.NArg() != 0 {
		return badInputf("demo takes no INPUT, got %q", fs.Arg(0))
	}
	od, err := holdOutDir(o.outDir, true, o.force, stderr)
	if err != nil {
		return err
	}
	defer od.release()
	sc, err := synth.Builtin(*scenario, *seed)
	if err != nil {
		return badInput(err)
	}
	in := filepath.Join(o.outDir, demoInputDir)
	fmt.Fprintf(stderr, "demo: rendering %q (seed %d): %s\n", sc.Name, *seed, sc.Description)
	pr := newProgress(stderr, o.progress, "render", sc.Frames)
	truth, err := sc.Write(in, synth.Output{Format: synth.FormatMJPEG, Progress: func(done, _ int) { pr.update(done) }})
	pr.done()
	if err != nil {
		return err
	}
	o.expPath = filepath.Join(in, synth.ExperimentFile)
	o.input = filepath.Join(in, "video.avi")
	o.commandLine = append([]string{argv0, "demo"}, args...)
	// The output folder now holds the rendered experiment: that is expected.
	o.force, o.holding = true, true
	s, err := runChain(ctx, o, stderr)
	if err != nil {
		return err
	}
	printComparison(stderr, s, truth.Summary)
	fmt.Println(filepath.Join(o.outDir, report.FileName))
	return nil
}

// printComparison prints the main results beside the truth of the rendering.
func printComparison(w io.Writer, got *summary.Summary, want *synth.SummaryTruth) {
	row := func(name string, g, t summary.Num, unit string) {
		fmt.Fprintf(w, "  %-28s %12s %12s  %s\n", name, fmtNum(g), fmtNum(t), unit)
	}
	fmt.Fprintf(w, "demo: %-28s %12s %12s\n", "", "measured", "true")
	for i, sp := range got.ShearPhases {
		if i >= len(want.ShearPhases) {
			break
		}
		tp := want.ShearPhases[i]
		fmt.Fprintf(w, "  shear phase %d (%g-%g s): %s (true: %s)\n", i+1, sp.StartS, sp.EndS, sp.Verdict, tp.Verdict)
		row("bulk rate", sp.BulkRatePerS, tp.BulkRatePerS, "1/s")
		row("slip at stationary wall", sp.SlipStationaryUMPerS, tp.SlipStationaryUMPerS, "um/s")
		row("slip at moving wall", sp.SlipMovingUMPerS, tp.SlipMovingUMPerS, "um/s")
		row("slip fraction", sp.SlipFraction, tp.SlipFraction, "")
		fmt.Fprintf(w, "  %-28s %12d %12d\n", "bands", len(sp.Bands), len(tp.Bands))
	}
	if got.AfterStop != nil && want.AfterStop != nil {
		g, t := got.AfterStop, want.AfterStop
		fmt.Fprintf(w, "  after the stop: %s (true: %s)\n", g.Verdict, t.Verdict)
		row("failure plane height", g.PlaneUM, t.PlaneUM, "um")
		row("onset after stop", g.OnsetAfterStopS, t.OnsetAfterStopS, "s")
		row("recovered strain", g.RecoveredStrain, t.RecoveredStrain, "")
	}
}

func fmtNum(n summary.Num) string {
	if !n.Known() {
		return "-"
	}
	return fmt.Sprintf("%.4g", float64(n))
}
