package main

import (
	"fmt"
	"io"
	"os"
	"runtime/pprof"
	"time"

	"gaptrace/profile/pipeline"
)

// progressInterval is how often the progress line is redrawn: often enough
// to look alive, rarely enough to cost nothing.
const progressInterval = 250 * time.Millisecond

// progressOpen is set while a progress line is drawn and not ended, so
// that a final message starts on a line of its own (endProgressLine).
var progressOpen bool

// endProgressLine ends a progress line left open, as when a run stops
// early.
func endProgressLine(w io.Writer) {
	if progressOpen {
		fmt.Fprintln(w)
		progressOpen = false
	}
}

// progress prints "stage: done/total units, rate, time left" on one
// rewritten stderr line. A nil *progress prints nothing.
type progress struct {
	w     io.Writer
	stage string
	unit  string
	total int
	start time.Time
	last  time.Time
}

// isTerminal reports whether w is a character device (a terminal).
func isTerminal(w io.Writer) bool {
	f, ok := w.(*os.File)
	if !ok {
		return false
	}
	fi, err := f.Stat()
	return err == nil && fi.Mode()&os.ModeCharDevice != 0
}

// newProgress returns a progress line for a stage of total frames (total <=
// 0 when unknown), or nil when progress is not wanted: it is shown when
// stderr is a terminal, or always with --progress.
func newProgress(w io.Writer, forced bool, stage string, total int) *progress {
	if !forced && !isTerminal(w) {
		return nil
	}
	now := time.Now()
	return &progress{w: w, stage: stage, unit: "frames", total: total, start: now}
}

// update reports that done units are finished.
func (p *progress) update(done int) {
	if p == nil {
		return
	}
	now := time.Now()
	if now.Sub(p.last) < progressInterval && done != p.total {
		return
	}
	p.last = now
	progressOpen = true
	el := now.Sub(p.start).Seconds()
	rate := 0.0
	if el > 0 {
		rate = float64(done) / el
	}
	if p.total > 0 && rate > 0 {
		left := time.Duration(float64(p.total-done) / rate * float64(time.Second)).Round(time.Second)
		fmt.Fprintf(p.w, "\r%s: %d/%d %s, %.0f %s/s, %v left   ", p.stage, done, p.total, p.unit, rate, p.unit, left)
	} else {
		fmt.Fprintf(p.w, "\r%s: %d %s, %.0f %s/s   ", p.stage, done, p.unit, rate, p.unit)
	}
}

// done ends the progress line.
func (p *progress) done() {
	if p == nil {
		return
	}
	fmt.Fprintf(p.w, "\r%s: done in %v%30s\n", p.stage, time.Since(p.start).Round(10*time.Millisecond), "")
	progressOpen = false
}

// stageUnits names what each stage of the pipeline counts.
var stageUnits = map[string]string{
	pipeline.StageCalibrate: "frames", pipeline.StageMotion: "frames", pipeline.StageDetect: "frames",
	pipeline.StageLink: "passes", pipeline.StageProfile: "steps",
}

// newStageProgress returns a pipeline progress callback that shows one
// progress line per stage, or nil when progress is not wanted.
func newStageProgress(w io.Writer, forced bool) func(pipeline.Progress) {
	if !forced && !isTerminal(w) {
		return nil
	}
	var cur *progress
	return func(p pipeline.Progress) {
		if cur == nil || cur.stage != p.Stage {
			cur.done()
			cur = newProgress(w, true, p.Stage, p.Total)
			if u := stageUnits[p.Stage]; u != "" {
				cur.unit = u
			}
		}
		cur.total = p.Total
		cur.update(p.Done)
		if p.Total > 0 && p.Done >= p.Total {
			cur.done()
			cur = nil
		}
	}
}

// startCPUProfile writes a CPU profile to path until the returned function
// is called.
func startCPUProfile(path string) (func(), error) {
	f, err := os.Create(path)
	if err != nil {
		return nil, badInputf("--cpuprofile: %v", err)
	}
	if err := pprof.StartCPUProfile(f); err != nil {
		f.Close()
		return nil, fmt.Errorf("--cpuprofile: %w", err)
	}
	return func() { pprof.StopCPUProfile(); f.Close() }, nil
}
