package campaign

import (
	"bufio"
	"errors"
	"fmt"
	"io/fs"
	"os"
	"path/filepath"
	"strings"

	"gaptrace/calib/atomicfile"
)

// Names under OUTROOT.
const (
	// SummaryFile in a row's folder marks the row complete: run writes it
	// last, atomically.
	SummaryFile = "summary.json"
	// TableFile is the campaign table, PageFile its page.
	TableFile = "campaign.csv"
	PageFile  = "campaign.html"
	// ManifestCopy is the manifest with its paths made absolute.
	ManifestCopy = "manifest.csv"
	// LogDir holds each row's log (NAME.log: what run wrote on stderr),
	// its failure record (NAME.failed) and its lock (NAME.lock).
	LogDir = "logs"
	// SlurmDir holds the sbatch scripts and the jobs' output.
	SlurmDir = "slurm"
	// FigureDir holds the campaign's figures as PNG and SVG files.
	FigureDir = "figures"
)

// Layout is the folder of a campaign's results, OUTROOT.
type Layout struct{ Root string }

// RowDir is the folder of a row's analysis, exactly as run writes it.
func (l Layout) RowDir(name string) string { return filepath.Join(l.Root, name) }

// LogPath is the file that receives what run writes on stderr for a row.
func (l Layout) LogPath(name string) string { return filepath.Join(l.Root, LogDir, name+".log") }

// FailurePath holds the one-line reason of a row's last failed run.
func (l Layout) FailurePath(name string) string {
	return filepath.Join(l.Root, LogDir, name+".failed")
}

// LockPath is the lock a row's run holds while it runs.
func (l Layout) LockPath(name string) string { return filepath.Join(l.Root, LogDir, name+".lock") }

// State is where a row of the campaign stands.
type State int

// The states of a row.
const (
	NotRun     State = iota // no folder and no record
	Complete                // summary.json is there
	Failed                  // its last run failed; Status.Reason says why
	Incomplete              // a folder without summary.json: interrupted, or running now
)

// Status is a row's state and, for a failed row, the reason.
type Status struct {
	State  State
	Reason string
}

// String is the status column of the campaign table: "ok" or why the row
// has no numbers.
func (s Status) String() string {
	switch s.State {
	case Complete:
		return "ok"
	case Failed:
		return "failed: " + s.Reason
	case Incomplete:
		return "incomplete: no " + SummaryFile + " (interrupted, or running now)"
	}
	return "not run"
}

// StatusOf reads the state of a row from what is under OUTROOT.
func (l Layout) StatusOf(name string) Status {
	if _, err := os.Stat(filepath.Join(l.RowDir(name), SummaryFile)); err == nil {
		return Status{State: Complete}
	}
	if b, err := os.ReadFile(l.FailurePath(name)); err == nil {
		return Status{State: Failed, Reason: strings.TrimSpace(string(b))}
	}
	if _, err := os.Stat(l.RowDir(name)); err == nil {
		return Status{State: Incomplete}
	}
	return Status{State: NotRun}
}

// Prepare makes OUTROOT and its log folder.
func (l Layout) Prepare() error {
	if err := os.MkdirAll(filepath.Join(l.Root, LogDir), 0o755); err != nil {
		return fmt.Errorf("output folder: %w", err)
	}
	return nil
}

// Clear removes what an earlier run of the row left: its folder (complete,
// or half-written by a run that was killed), its log and its failure
// record. It reports whether there was a folder to remove.
func (l Layout) Clear(name string) (bool, error) {
	dir := l.RowDir(name)
	_, err := os.Lstat(dir)
	had := err == nil
	if err := os.RemoveAll(dir); err != nil {
		return had, fmt.Errorf("clearing %s: %w", dir, err)
	}
	for _, p := range []string{l.LogPath(name), l.FailurePath(name)} {
		if err := os.Remove(p); err != nil && !errors.Is(err, fs.ErrNotExist) {
			return had, err
		}
	}
	return had, nil
}

// RecordFailure writes the reason of a failed run, one line.
func (l Layout) RecordFailure(name, reason string) error {
	reason = strings.Join(strings.Fields(reason), " ")
	return atomicfile.WriteBytes(l.FailurePath(name), []byte(reason+"\n"))
}

// FailureReason is the reason of a failed run from its log: the last line
// that starts "gaptrace: " (the command's one-line error), else the last
// line of the log, else fallback.
func FailureReason(logPath, fallback string) string {
	f, err := os.Open(logPath)
	if err != nil {
		return fallback
	}
	defer f.Close()
	var last, lastErr string
	sc := bufio.NewScanner(f)
	sc.Buffer(make([]byte, 64<<10), 1<<20)
	for sc.Scan() {
		// Progress lines rewrite themselves with carriage returns.
		line := sc.Text()
		if i := strings.LastIndexByte(line, '\r'); i >= 0 {
			line = line[i+1:]
		}
		line = strings.TrimSpace(line)
		if line == "" {
			continue
		}
		last = line
		if strings.HasPrefix(line, "gaptrace: ") {
			lastErr = strings.TrimPrefix(line, "gaptrace: ")
		}
	}
	switch {
	case lastErr != "":
		return lastErr
	case last != "":
		return last + " (" + fallback + ")"
	}
	return fallback
}

// ErrBusy is returned by Lock when another process holds the row's lock.
var ErrBusy = errors.New("being analysed by another process (its lock is held)")
