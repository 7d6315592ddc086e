package campaign

import (
	"bytes"
	"encoding/csv"
	"errors"
	"fmt"
	"io"
	"os"
	"path/filepath"
	"strconv"
	"strings"

	"gaptrace/calib/experiment"
)

// Limits of a manifest. The manifest is read whole and validated before
// anything runs, every row becomes a process, a folder and some lines of
// the campaign table and page, so the bounds keep a wrong file (a tracks.csv
// given by mistake holds millions of lines) from being taken as a campaign
// of millions of recordings, and keep the page's table of a few hundred MB
// at most. A flow curve with slip is 10–20 rates × 2–3 gaps × repeats, a
// few hundred rows; MaxRows allows a hundred times that.
const (
	// MaxRows is the largest number of rows a manifest may hold.
	MaxRows = 50000
	// MaxManifestBytes is the largest manifest file, bytes: MaxRows rows of
	// about 600 characters of paths and free columns.
	MaxManifestBytes = 32 << 20
	// MaxNameLen is the longest row name, bytes: well within every file
	// system's limit on a folder name (255) and readable in a table.
	MaxNameLen = 128
)

// Columns of the manifest with a meaning of their own; every other column
// is free and copied into the campaign table.
const (
	ColName       = "name"       // the row's folder under OUTROOT
	ColInput      = "input"      // the recording: video, folder or glob of frames
	ColExperiment = "experiment" // the experiment file (YAML)
	ColLog        = "log"        // optional: the rheometer log (CSV)
	// Optional columns for the log, the values of run's --log-time,
	// --log-value, --log-kind and --log-offset flags.
	ColLogTime    = "log_time"
	ColLogValue   = "log_value"
	ColLogKind    = "log_kind"
	ColLogOffsetS = "log_offset_s"
)

var logOptionColumns = []string{ColLogTime, ColLogValue, ColLogKind, ColLogOffsetS}

// Reserved are the names under OUTROOT that the campaign itself uses; no
// row may be named so.
var Reserved = []string{SlurmDir, LogDir, FigureDir, TableFile, PageFile, ManifestCopy}

// Manifest is a campaign: one row per recording.
type Manifest struct {
	// Path is the manifest file as given; Dir is its folder, absolute, to
	// which relative paths in the rows are relative.
	Path, Dir string
	// Free are the names of the free columns, in the manifest's order.
	Free []string
	// Rows in the manifest's order; Row.Index counts from 0.
	Rows []Row
}

// Row is one recording of the campaign.
type Row struct {
	Index int // position among the rows, from 0
	Line  int // line of the manifest, from 1 (the header is line 1)
	Name  string
	// Input, Experiment and Log are absolute paths (Log empty when not
	// given). An input that is a glob keeps its pattern.
	Input, Experiment, Log string
	// LogTime, LogValue, LogKind and LogOffsetS are the log columns' values
	// as written (empty: run's defaults).
	LogTime, LogValue, LogKind, LogOffsetS string
	// Free holds the values of Manifest.Free, in that order.
	Free []string
}

// Options say how much of the manifest ReadManifest checks.
type Options struct {
	// CheckFiles makes ReadManifest check that every row's input,
	// experiment file and log exist and that the experiment files are
	// valid, so that a typo in row 180 is found before row 1 runs.
	CheckFiles bool
}

// ReadManifest reads and validates a manifest. Its error, one line, names
// the file, the line and the value that is wrong.
func ReadManifest(path string, o Options) (*Manifest, error) {
	f, err := os.Open(path)
	if err != nil {
		return nil, fmt.Errorf("manifest: %w", err)
	}
	defer f.Close()
	st, err := f.Stat()
	if err != nil {
		return nil, fmt.Errorf("manifest: %w", err)
	}
	if st.IsDir() {
		return nil, fmt.Errorf("manifest %s is a folder, not a CSV file", path)
	}
	b, err := io.ReadAll(io.LimitReader(f, MaxManifestBytes+1))
	if err != nil {
		return nil, fmt.Errorf("manifest %s: %w", path, err)
	}
	if len(b) > MaxManifestBytes {
		return nil, fmt.Errorf("manifest %s: larger than %d MiB: not a campaign manifest?", path, MaxManifestBytes>>20)
	}
	abs, err := filepath.Abs(path)
	if err != nil {
		return nil, fmt.Errorf("manifest: %w", err)
	}
	m, err := Parse(bytes.NewReader(b), filepath.Dir(abs), o)
	if err != nil {
		return nil, fmt.Errorf("manifest %s: %w", path, err)
	}
	m.Path = path
	return m, nil
}

// Parse reads a manifest from r; relative paths are taken relative to
// dir, which must be absolute. Errors name the line.
func Parse(r io.Reader, dir string, o Options) (*Manifest, error) {
	cr := csv.NewReader(r)
	cr.FieldsPerRecord = 0 // every row as long as the header
	cr.Comment = '#'
	header, err := cr.Read()
	if errors.Is(err, io.EOF) {
		return nil, fmt.Errorf("empty: want a header line with %s,%s,%s", ColName, ColInput, ColExperiment)
	}
	if err != nil {
		return nil, csvError(err)
	}
	if len(header) > 0 {
		header[0] = strings.TrimPrefix(header[0], "\ufeff") // a spreadsheet's byte-order mark
	}
	col := map[string]int{}
	m := &Manifest{Dir: dir}
	var freeIdx []int
	reservedCol := map[string]bool{ColName: true, ColInput: true, ColExperiment: true, ColLog: true}
	for _, c := range logOptionColumns {
		reservedCol[c] = true
	}
	for i, h := range header {
		h = strings.TrimSpace(h)
		if h == "" {
			return nil, fmt.Errorf("line 1: column %d has no name", i+1)
		}
		if _, dup := col[h]; dup {
			return nil, fmt.Errorf("line 1: column %q appears twice", h)
		}
		col[h] = i
		if reservedCol[h] {
			continue
		}
		if TableColumn(h) {
			return nil, fmt.Errorf("line 1: free column %q has the name of a column of the campaign table; rename it", h)
		}
		m.Free = append(m.Free, h)
		freeIdx = append(freeIdx, i)
	}
	for _, c := range []string{ColName, ColInput, ColExperiment} {
		if _, ok := col[c]; !ok {
			return nil, fmt.Errorf("line 1: no %q column (the header needs %s,%s,%s)", c, ColName, ColInput, ColExperiment)
		}
	}
	if _, ok := col[ColLog]; !ok {
		for _, c := range logOptionColumns {
			if _, ok := col[c]; ok {
				return nil, fmt.Errorf("line 1: column %q without a %q column", c, ColLog)
			}
		}
	}
	get := func(rec []string, c string) string {
		if i, ok := col[c]; ok {
			return strings.TrimSpace(rec[i])
		}
		return ""
	}
	names := map[string]int{}
	for {
		rec, err := cr.Read()
		if errors.Is(err, io.EOF) {
			break
		}
		if err != nil {
			return nil, csvError(err)
		}
		line, _ := cr.FieldPos(0)
		if blank(rec) {
			continue
		}
		if len(m.Rows) == MaxRows {
			return nil, fmt.Errorf("line %d: more than %d rows: not a campaign manifest?", line, MaxRows)
		}
		row := Row{Index: len(m.Rows), Line: line, Name: get(rec, ColName),
			LogTime: get(rec, ColLogTime), LogValue: get(rec, ColLogValue),
			LogKind: get(rec, ColLogKind), LogOffsetS: get(rec, ColLogOffsetS)}
		if err := CheckName(row.Name); err != nil {
			return nil, fmt.Errorf("line %d: %w", line, err)
		}
		if first, dup := names[row.Name]; dup {
			return nil, fmt.Errorf("line %d: name %q is already the name of line %d", line, row.Name, first)
		}
		names[row.Name] = line
		for _, p := range []struct {
			col string
			dst *string
			opt bool
		}{{ColInput, &row.Input, false}, {ColExperiment, &row.Experiment, false}, {ColLog, &row.Log, true}} {
			v := get(rec, p.col)
			if v == "" {
				if p.opt {
					continue
				}
				return nil, fmt.Errorf("line %d (%s): no %s", line, row.Name, p.col)
			}
			if !filepath.IsAbs(v) {
				v = filepath.Join(dir, v)
			}
			*p.dst = filepath.Clean(v)
		}
		if row.Log == "" && (row.LogTime != "" || row.LogValue != "" || row.LogKind != "" || row.LogOffsetS != "") {
			return nil, fmt.Errorf("line %d (%s): log columns set but no log", line, row.Name)
		}
		if row.LogOffsetS != "" {
			if v, err := strconv.ParseFloat(row.LogOffsetS, 64); err != nil || !finite(v) {
				return nil, fmt.Errorf("line %d (%s): %s %q is not a number of seconds", line, row.Name, ColLogOffsetS, row.LogOffsetS)
			}
		}
		for _, i := range freeIdx {
			row.Free = append(row.Free, strings.TrimSpace(rec[i]))
		}
		if o.CheckFiles {
			if err := row.checkFiles(); err != nil {
				return nil, fmt.Errorf("line %d (%s): %w", line, row.Name, err)
			}
		}
		m.Rows = append(m.Rows, row)
	}
	if len(m.Rows) == 0 {
		return nil, errors.New("no rows below the header")
	}
	return m, nil
}

// csvError makes a CSV parse error one line naming the line.
func csvError(err error) error {
	var pe *csv.ParseError
	if errors.As(err, &pe) {
		return fmt.Errorf("line %d: %v", pe.Line, pe.Err)
	}
	return err
}

func blank(rec []string) bool {
	for _, v := range rec {
		if strings.TrimSpace(v) != "" {
			return false
		}
	}
	return true
}

// checkFiles checks that the row's files exist and its experiment file is
// valid.
func (r *Row) checkFiles() error {
	if hasGlob(r.Input) {
		if ms, err := filepath.Glob(r.Input); err != nil || len(ms) == 0 {
			return fmt.Errorf("input %s matches no file", r.Input)
		}
	} else if _, err := os.Stat(r.Input); err != nil {
		return fmt.Errorf("input: %w", err)
	}
	if _, err := experiment.Load(r.Experiment); err != nil {
		return fmt.Errorf("experiment: %w", err)
	}
	if r.Log != "" {
		if st, err := os.Stat(r.Log); err != nil {
			return fmt.Errorf("log: %w", err)
		} else if st.IsDir() {
			return fmt.Errorf("log %s is a folder", r.Log)
		}
	}
	return nil
}

func hasGlob(p string) bool { return strings.ContainsAny(p, "*?[") }

// CheckName reports why name cannot be a row's folder under OUTROOT: it
// must be 1 to MaxNameLen letters, digits, '.', '_', '+' and '-' (safe in
// every file system and shell), not start with '.' or '-' (hidden files,
// and names a command would take for a flag), and not be one of Reserved.
func CheckName(name string) error {
	if name == "" {
		return errors.New("no name")
	}
	if len(name) > MaxNameLen {
		return fmt.Errorf("name %q is longer than %d characters", name, MaxNameLen)
	}
	for _, c := range name {
		ok := c >= 'a' && c <= 'z' || c >= 'A' && c <= 'Z' || c >= '0' && c <= '9' || c == '.' || c == '_' || c == '+' || c == '-'
		if !ok {
			return fmt.Errorf("name %q holds %q: a name is a folder, use only letters, digits and . _ + -", name, c)
		}
	}
	if name[0] == '.' || name[0] == '-' {
		return fmt.Errorf("name %q starts with %q: a name is a folder and may not", name, name[0])
	}
	for _, r := range Reserved {
		if name == r {
			return fmt.Errorf("name %q is taken by the campaign's own files under OUTROOT", name)
		}
	}
	return nil
}

// InShard reports whether the row is in shard k of n: its index is k
// modulo n.
func (r *Row) InShard(k, n int) bool { return r.Index%n == k }

// ParseShard reads "K/N" with 0 <= K < N.
func ParseShard(s string) (k, n int, err error) {
	a, b, ok := strings.Cut(s, "/")
	if ok {
		k, err = strconv.Atoi(a)
		if err == nil {
			n, err = strconv.Atoi(b)
		}
	}
	if !ok || err != nil || n < 1 || k < 0 || k >= n {
		return 0, 0, fmt.Errorf("shard %q: want K/N with 0 <= K < N, e.g. 0/4", s)
	}
	return k, n, nil
}

// RunArgs are the arguments of "gaptrace run" for the row, writing into
// outDir: the log flags in the shape calib takes them.
func (r *Row) RunArgs(outDir string) []string {
	args := []string{"run", "-e", r.Experiment, "-o", outDir}
	if r.Log != "" {
		args = append(args, "--log", r.Log)
		for _, f := range []struct{ flag, v string }{
			{"--log-time", r.LogTime}, {"--log-value", r.LogValue}, {"--log-kind", r.LogKind}, {"--log-offset", r.LogOffsetS},
		} {
			if f.v != "" {
				args = append(args, f.flag, f.v)
			}
		}
	}
	// "--" keeps an input whose name starts with '-' from being a flag.
	return append(args, "--", r.Input)
}

// WriteResolved writes the manifest with every path absolute, as
// OUTROOT/manifest.csv: the record of what the campaign ran, from which
// "batch --collect OUTROOT" takes the names and free columns.
func (m *Manifest) WriteResolved(w io.Writer) error {
	cw := csv.NewWriter(w)
	head := []string{ColName, ColInput, ColExperiment, ColLog}
	head = append(append(head, logOptionColumns...), m.Free...)
	if err := cw.Write(head); err != nil {
		return err
	}
	for _, r := range m.Rows {
		rec := []string{r.Name, r.Input, r.Experiment, r.Log, r.LogTime, r.LogValue, r.LogKind, r.LogOffsetS}
		if err := cw.Write(append(rec, r.Free...)); err != nil {
			return err
		}
	}
	cw.Flush()
	return cw.Error()
}
