package main

import (
	"context"
	"fmt"
	"io"
	"path/filepath"

	"gaptrace/calib/atomicfile"
)

func init() {
	commands["track"] = command{
		summary: "find the walls, detect the tracers and link them into tracks.csv",
		run:     runTrack,
	}
}

func runTrack(ctx context.Context, args []string, stderr io.Writer) error {
	fs := newFlags("track", "INPUT", stderr)
	var o stageOptions
	fs.StringVar(&o.expPath, "e", "", "experiment file (YAML)")
	outDir := fs.String("o", "", "output folder")
	fs.BoolVar(&o.progress, "progress", false, "show progress even when stderr is not a terminal")
	fs.BoolVar(&o.noJitter, "no-jitter", false, "do not measure and remove the camera's frame-to-frame jitter (a rigidly mounted camera)")
	o.log.add(fs)
	cpuProfile := fs.String("cpuprofile", "", "write a CPU profile of the stage to this file (for developers)")
	if err := parseFlags(fs, args); err != nil {
		return err
	}
	if fs.NArg() != 1 {
		return badInputf("track needs one INPUT (video, folder or glob of frames), got %d", fs.NArg())
	}
	o.input = fs.Arg(0)
	if *cpuProfile != "" {
		stop, err := startCPUProfile(*cpuProfile)
		if err != nil {
			return err
		}
		defer stop()
	}
	sr, err := o.openStage(ctx, *outDir, stderr, tracksName, calibrationName)
	if err != nil {
		return err
	}
	defer sr.close()
	cfg := sr.cfg
	t, err := sr.rec.Track(ctx)
	if err != nil {
		return stageErr(err)
	}
	defer t.Close()
	for _, w := range t.Warnings {
		fmt.Fprintf(stderr, "track: warning: %s\n", w)
	}
	if err := writeCalibJSON(filepath.Join(*outDir, calibrationName), t.Calibration, t.PhasesFor(cfg)); err != nil {
		return err
	}
	if err := atomicfile.Write(filepath.Join(*outDir, tracksName), t.WriteTracks); err != nil {
		return err
	}
	_, tr, med := t.Tracks.Count()
	st := t.Link
	fmt.Fprintf(stderr, "track: %d detections, %d tracks (median %d frames), %d links, %d unlinked\n",
		t.Detections, tr, med, st.Links+st.GapLinks, st.Unlinked)
	return nil
}
