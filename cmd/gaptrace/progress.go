package main

import (
	"fmt"
	"io"
	"os"
	"runtime/pprof"
	"time"
)

// progressInterval is how often the progress line is redrawn: often enough
// to look alive, rarely enough to cost nothing.
const progressInterval = 250 * time.Millisecond

// progress prints "stage: frames done/total, rate, time left" on one
// rewritten stderr line. A nil *progress prints nothing.
type progress struct {
	w     io.Writer
	stage string
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
	return &progress{w: w, stage: stage, total: total, start: now}
}

// update reports that done frames are finished.
func (p *progress) update(done int) {
	if p == nil {
		return
	}
	now := time.Now()
	if now.Sub(p.last) < progressInterval && done != p.total {
		return
	}
	p.last = now
	el := now.Sub(p.start).Seconds()
	rate := 0.0
	if el > 0 {
		rate = float64(done) / el
	}
	if p.total > 0 && rate > 0 {
		left := time.Duration(float64(p.total-done) / rate * float64(time.Second)).Round(time.Second)
		fmt.Fprintf(p.w, "\r%s: %d/%d frames, %.0f frames/s, %v left   ", p.stage, done, p.total, rate, left)
	} else {
		fmt.Fprintf(p.w, "\r%s: %d frames, %.0f frames/s   ", p.stage, done, rate)
	}
}

// done ends the progress line.
func (p *progress) done() {
	if p == nil {
		return
	}
	fmt.Fprintf(p.w, "\r%s: done in %v%30s\n", p.stage, time.Since(p.start).Round(10*time.Millisecond), "")
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
