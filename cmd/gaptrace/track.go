package main

import (
	"fmt"
	"gaptrace/profile"
	"io"
	"path/filepath"
)

func init() {
	commands["track"] = command{
		summary: "find the walls, detect the tracers and link them into tracks.csv",
		run:     runTrack,
	}
}

func runTrack(args []string, stderr io.Writer) error {
	fs := newFlags("track", "INPUT", stderr)
	expPath := fs.String("e", "", "experiment file (YAML)")
	outDir := fs.String("o", "", "output folder")
	prog := fs.Bool("progress", false, "show progress even when stderr is not a terminal")
	cpuProfile := fs.String("cpuprofile", "", "write a CPU profile of the stage to this file (for developers)")
	if err := parseFlags(fs, args); err != nil {
		return err
	}
	if fs.NArg() != 1 {
		return badInputf("track needs one INPUT (video, folder or glob of frames), got %d", fs.NArg())
	}
	if *cpuProfile != "" {
		stop, err := startCPUProfile(*cpuProfile)
		if err != nil {
			return err
		}
		defer stop()
	}
	exp, err := loadExperiment(*expPath)
	if err != nil {
		return err
	}
	if err := ensureDir(*outDir); err != nil {
		return err
	}
	removeStale(*outDir, "tracks.csv", "calibration.json")
	c := &chain{expPath: *expPath, exp: exp, input: fs.Arg(0), progress: *prog, stderr: stderr}
	defer c.close()
	med, err := c.calibrate()
	if err != nil {
		return err
	}
	med.Close()
	dets, err := c.detectAll()
	if err != nil {
		return err
	}
	pts, st, err := c.linkAll(dets)
	if err != nil {
		return err
	}
	// The direction of the flow comes from the tracks by the moving wall.
	_, warnings := c.detectPhases(pts, len(dets))
	for _, w := range append(c.cal.Warnings, warnings...) {
		fmt.Fprintf(stderr, "track: warning: %s\n", w)
	}
	if err := writeCalibJSON(filepath.Join(*outDir, "calibration.json"), c.cal); err != nil {
		return err
	}
	if err := writeTracks(filepath.Join(*outDir, "tracks.csv"), pts); err != nil {
		return err
	}
	ts := profile.TrackingCounts(pts)
	ts.Detections = c.detections
	fmt.Fprintf(stderr, "track: %d detections, %d tracks (median %d frames), %d links, %d unlinked\n",
		ts.Detections, ts.Tracks, ts.MedianTrackFrames, st.Links+st.GapLinks, st.Unlinked)
	return nil
}
