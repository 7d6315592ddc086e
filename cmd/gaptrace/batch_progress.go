package main

import (
	"fmt"
	"io"
	"strings"
	"sync"
	"time"
)

// batchProgress prints each row's result on its own line and, when shown
// (stderr a terminal, or --progress), a rewritten line under them: rows
// done, failed, running, and the time left at the mean time per row.
type batchProgress struct {
	mu                    sync.Mutex
	w                     io.Writer
	show                  bool
	total, jobs           int
	done, failed, running int
	spent                 time.Duration // summed time of finished rows
	drawn                 int           // length of the progress line on screen
}

func newBatchProgress(w io.Writer, forced bool, total, jobs int) *batchProgress {
	return &batchProgress{w: w, show: forced || isTerminal(w), total: total, jobs: jobs}
}

// clear removes the progress line; call with mu held.
func (p *batchProgress) clear() {
	if p.drawn > 0 {
		fmt.Fprintf(p.w, "\r%s\r", strings.Repeat(" ", p.drawn))
		p.drawn = 0
	}
}

// draw writes the progress line; call with mu held.
func (p *batchProgress) draw() {
	if !p.show || p.total == 0 {
		return
	}
	s := fmt.Sprintf("batch: %d/%d rows done, %d failed, %d running", p.done, p.total, p.failed, p.running)
	if p.done > 0 {
		perRow := p.spent / time.Duration(p.done)
		left := perRow * time.Duration(p.total-p.done) / time.Duration(min(p.jobs, max(p.total-p.done, 1)))
		s += fmt.Sprintf(", about %v left", left.Round(time.Second))
	}
	p.clear()
	fmt.Fprint(p.w, s)
	p.drawn = len(s)
}

// line prints a message above the progress line.
func (p *batchProgress) line(msg string) {
	p.mu.Lock()
	defer p.mu.Unlock()
	p.clear()
	fmt.Fprintln(p.w, msg)
	p.draw()
}

// started counts a row that began.
func (p *batchProgress) started() {
	p.mu.Lock()
	defer p.mu.Unlock()
	p.running++
	p.draw()
}

// finished prints a row's result and counts it; el is 0 for a row that
// did not run.
func (p *batchProgress) finished(msg string, el time.Duration, failed bool) {
	p.mu.Lock()
	defer p.mu.Unlock()
	if el > 0 {
		p.running--
		p.spent += el
	}
	p.done++
	if failed {
		p.failed++
	}
	p.clear()
	fmt.Fprintln(p.w, msg)
	p.draw()
}

// end removes the progress line.
func (p *batchProgress) end() {
	p.mu.Lock()
	defer p.mu.Unlock()
	p.clear()
}
