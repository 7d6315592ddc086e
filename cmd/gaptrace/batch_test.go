package main

import (
	"bytes"
	"encoding/csv"
	"fmt"
	"os"
	"os/exec"
	"path/filepath"
	"strings"
	"syscall"
	"testing"
	"time"

	"gaptrace/calib/experiment"
	"gaptrace/calib/geometry"
	"gaptrace/profile/campaign"
	"gaptrace/track/synth"
)

// asCommandEnv makes this test binary act as gaptrace itself when a batch
// started by a test runs a row (the batch runs its own executable, which
// under "go test" is the test binary). runLogEnv names a file to which each
// such run appends its output folder: the count of runs per row.
const (
	asCommandEnv = "GAPTRACE_TEST_AS_COMMAND"
	runLogEnv    = "GAPTRACE_TEST_RUN_LOG"
)

func init() {
	if os.Getenv(asCommandEnv) != "1" {
		return
	}
	args := os.Args[1:]
	if p := os.Getenv(runLogEnv); p != "" && len(args) > 0 && args[0] == "run" {
		for i, a := range args {
			if a == "-o" && i+1 < len(args) {
				f, err := os.OpenFile(p, os.O_APPEND|os.O_CREATE|os.O_WRONLY, 0o644)
				if err == nil {
					fmt.Fprintln(f, filepath.Base(args[i+1]))
					f.Close()
				}
			}
		}
	}
	os.Exit(mainArgs(args, os.Stderr))
}

// tinyRecording renders a small, fast recording of the slip scenario at
// the given nominal rate and gap: 320x240 px, 120 frames at 100 frames/s,
// rest to 0.2 s, shear to 0.9 s, then 0.3 s after the stop. It returns the
// experiment file and the video.
func tinyRecording(t testing.TB, dir string, seed int64, ratePerS, gapUM float64) (expPath, video string) {
	t.Helper()
	sc, err := synth.Builtin("slip", seed)
	if err != nil {
		t.Fatal(err)
	}
	sc.Geometry = geometry.Geometry{Kind: geometry.Plates, GapUM: gapUM}
	sc.Resize(320, 240)
	sc.Frames = 120
	sc.Motion = []experiment.Segment{{StartS: 0.2, EndS: 0.9, RatePerS: &ratePerS}}
	if _, err := sc.Write(dir, synth.Output{Format: synth.FormatMJPEG}); err != nil {
		t.Fatal(err)
	}
	return filepath.Join(dir, synth.ExperimentFile), filepath.Join(dir, "video.avi")
}

// campaignRow is one recording of a test campaign.
type campaignRow struct {
	name          string
	ratePerS      float64
	gapUM         float64
	brokenVideo   bool // a file that is not a video: the row must fail
	seed          int64
	rendered, exp string
}

// writeCampaign renders the rows' recordings under dir/data and writes
// dir/manifest.csv with relative paths and the free columns gap_um and
// repeat.
func writeCampaign(t testing.TB, dir string, rows []campaignRow) string {
	t.Helper()
	var b strings.Builder
	b.WriteString("name,input,experiment,gap_um,repeat\n")
	for i, r := range rows {
		rd := filepath.Join(dir, "data", r.name)
		exp, video := tinyRecording(t, rd, r.seed+int64(i), r.ratePerS, r.gapUM)
		if r.brokenVideo {
			video = filepath.Join(rd, "broken.avi")
			if err := os.WriteFile(video, bytes.Repeat([]byte("not a video "), 500), 0o644); err != nil {
				t.Fatal(err)
			}
		}
		rel := func(p string) string { s, _ := filepath.Rel(dir, p); return s }
		fmt.Fprintf(&b, "%s,%s,%s,%g,%d\n", r.name, rel(video), rel(exp), r.gapUM, i%2+1)
	}
	path := filepath.Join(dir, "manifest.csv")
	if err := os.WriteFile(path, []byte(b.String()), 0o644); err != nil {
		t.Fatal(err)
	}
	return path
}

// readTable reads a campaign.csv.
func readTable(t testing.TB, path string) [][]string {
	t.Helper()
	f, err := os.Open(path)
	if err != nil {
		t.Fatal(err)
	}
	defer f.Close()
	recs, err := csv.NewReader(f).ReadAll()
	if err != nil {
		t.Fatal(err)
	}
	return recs
}

// tableByName maps each table record's name and phase to the record, as
// column -> value.
func tableByName(recs [][]string) map[string]map[string]string {
	out := map[string]map[string]string{}
	for _, r := range recs[1:] {
		m := map[string]string{}
		for j, c := range recs[0] {
			m[c] = r[j]
		}
		out[m["name"]+"#"+m["phase"]] = m
	}
	return out
}

// asCommand makes rows run by batches of this test run as gaptrace.
func asCommand(t *testing.T) {
	t.Setenv(asCommandEnv, "1")
}

// TestBatchFailingRow runs a campaign of four rows of which one has a
// file that is not a video: the three others must be analysed, the
// failure listed in campaign.csv with its reason, the page written, and
// the exit status 1.
func TestBatchFailingRow(t *testing.T) {
	asCommand(t)
	dir := t.TempDir()
	manifest := writeCampaign(t, dir, []campaignRow{
		{name: "r0.5", ratePerS: 0.5, gapUM: 800},
		{name: "r1", ratePerS: 1, gapUM: 800},
		{name: "broken", ratePerS: 1, gapUM: 800, brokenVideo: true},
		{name: "r1-g600", ratePerS: 1, gapUM: 600},
	})
	out := filepath.Join(dir, "out")
	start := time.Now()
	code, errs := runGaptrace("batch", manifest, "-o", out, "--jobs", "2")
	t.Logf("batch of 4 rows, --jobs 2: %v\n%s", time.Since(start).Round(10*time.Millisecond), errs)
	if code != 1 {
		t.Errorf("exit %d, want 1 (a row failed)", code)
	}
	lastLine := strings.Split(strings.TrimSpace(errs), "\n")
	if l := lastLine[len(lastLine)-1]; !strings.HasPrefix(l, "gaptrace: 1 of 4 rows failed") {
		t.Errorf("last line %q, want gaptrace: 1 of 4 rows failed ...", l)
	}
	recs := readTable(t, filepath.Join(out, campaign.TableFile))
	byName := tableByName(recs)
	for _, name := range []string{"r0.5", "r1", "r1-g600"} {
		r, ok := byName[name+"#1"]
		if !ok {
			t.Errorf("no phase 1 of %s in campaign.csv", name)
			continue
		}
		if r["status"] != "ok" || r["bulk_rate_per_s"] == "" || r["verdict"] == "" {
			t.Errorf("%s: status %q, bulk rate %q, verdict %q", name, r["status"], r["bulk_rate_per_s"], r["verdict"])
		}
		if _, err := os.Stat(filepath.Join(out, name, "summary.json")); err != nil {
			t.Errorf("%s: no summary.json", name)
		}
	}
	b, ok := byName["broken#"]
	if !ok {
		t.Fatalf("the failed row is not in campaign.csv: %v", recs)
	}
	if !strings.HasPrefix(b["status"], "failed: ") || !strings.Contains(b["status"], "broken.avi") {
		t.Errorf("status of the failed row %q: want failed: and the reason naming the video", b["status"])
	}
	if b["gap_um"] != "800" || b["repeat"] != "1" {
		t.Errorf("free columns of the failed row: gap_um %q repeat %q", b["gap_um"], b["repeat"])
	}
	if _, err := os.Stat(filepath.Join(out, "broken", "summary.json")); err == nil {
		t.Error("the failed row has a summary.json")
	}
	page, err := os.ReadFile(filepath.Join(out, campaign.PageFile))
	if err != nil {
		t.Fatalf("no campaign page: %v", err)
	}
	for _, want := range []string{`href="r1/report.html"`, "<b>broken</b>: failed: "} {
		if !strings.Contains(string(page), want) {
			t.Errorf("the campaign page lacks %s", want)
		}
	}
}

// runCounts reads the run log: how many times each row's run started.
func runCounts(t testing.TB, path string) map[string]int {
	t.Helper()
	b, err := os.ReadFile(path)
	if err != nil && !os.IsNotExist(err) {
		t.Fatal(err)
	}
	n := map[string]int{}
	for _, l := range strings.Fields(string(b)) {
		n[l]++
	}
	return n
}

// batchCommand is a batch run as a process of its own (this test binary
// acting as gaptrace), so that a test can kill it.
func batchCommand(runLog string, args ...string) *exec.Cmd {
	cmd := exec.Command(os.Args[0], append([]string{"batch"}, args...)...)
	cmd.Env = append(os.Environ(), asCommandEnv+"=1", runLogEnv+"="+runLog)
	return cmd
}

// waitFor polls cond every resumePoll until it holds or timeout passes.
func waitFor(t *testing.T, timeout time.Duration, what string, cond func() bool) {
	t.Helper()
	// resumePoll: a run of a tiny recording takes about a second.
	const resumePoll = 20 * time.Millisecond
	for end := time.Now().Add(timeout); time.Now().Before(end); time.Sleep(resumePoll) {
		if cond() {
			return
		}
	}
	t.Fatalf("timed out after %v waiting for %s", timeout, what)
}

// TestBatchResume kills a batch with SIGKILL while it analyses its second
// row, then runs it again: the row finished before the kill is not run
// again (same summary.json, modification time included), the interrupted
// row's half-written folder is not taken as complete, is cleared (said on
// stderr) and analysed again, as is a half-written folder planted for a
// row not yet run; every row ends analysed exactly once, once in the table.
func TestBatchResume(t *testing.T) {
	dir := t.TempDir()
	rows := []campaignRow{
		{name: "a", ratePerS: 1, gapUM: 800}, {name: "b", ratePerS: 0.5, gapUM: 800},
		{name: "c", ratePerS: 1, gapUM: 600}, {name: "d", ratePerS: 2, gapUM: 800},
	}
	manifest := writeCampaign(t, dir, rows)
	out := filepath.Join(dir, "out")
	runLog := filepath.Join(dir, "runs.log")
	l := campaign.Layout{Root: out}
	summaryOf := func(name string) string { return filepath.Join(l.RowDir(name), campaign.SummaryFile) }
	exists := func(p string) bool { _, err := os.Stat(p); return err == nil }

	start := time.Now()
	batch := batchCommand(runLog, manifest, "-o", out, "--jobs", "1")
	var errb bytes.Buffer
	batch.Stderr = &errb
	if err := batch.Start(); err != nil {
		t.Fatal(err)
	}
	// resumeTimeout: four tiny runs take a few seconds; a loaded 2-core
	// machine may take ten times longer.
	const resumeTimeout = 2 * time.Minute
	waitFor(t, resumeTimeout, "row a complete and row b started", func() bool {
		return exists(summaryOf("a")) && exists(l.RowDir("b"))
	})
	if err := batch.Process.Signal(syscall.SIGKILL); err != nil {
		t.Fatal(err)
	}
	batch.Wait()
	t.Logf("killed the batch after %v:\n%s", time.Since(start).Round(10*time.Millisecond), errb.String())
	aInfo, err := os.Stat(summaryOf("a"))
	if err != nil {
		t.Fatal(err)
	}
	aBytes, _ := os.ReadFile(summaryOf("a"))
	// The run of b died with the batch: give an orphan the time to finish
	// (a run takes about a second here) and check it did not.
	time.Sleep(3 * time.Second)
	if exists(summaryOf("b")) {
		t.Fatal("row b's run went on after its batch was killed and finished")
	}
	// A half-written folder for a row not yet run, as a crash mid-row leaves.
	if err := os.MkdirAll(l.RowDir("d"), 0o755); err != nil {
		t.Fatal(err)
	}
	os.WriteFile(filepath.Join(l.RowDir("d"), "tracks.csv"), []byte("track,frame\n1,"), 0o644)

	// Before the rerun, the table lists b and d as incomplete, not ok.
	code, errs := runGaptrace("batch", "--collect", out)
	if code != 1 {
		t.Errorf("--collect on the killed campaign: exit %d, want 1 (rows missing)\n%s", code, errs)
	}
	byName := tableByName(readTable(t, filepath.Join(out, campaign.TableFile)))
	for _, n := range []string{"b", "d"} {
		if st := byName[n+"#"]["status"]; !strings.HasPrefix(st, "incomplete") {
			t.Errorf("row %s after the kill: status %q, want incomplete", n, st)
		}
	}

	asCommand(t)
	t.Setenv(runLogEnv, runLog)
	rerun := time.Now()
	code, errs = runGaptrace("batch", manifest, "-o", out, "--jobs", "1")
	t.Logf("rerun in %v:\n%s", time.Since(rerun).Round(10*time.Millisecond), errs)
	if code != 0 {
		t.Fatalf("rerun: exit %d", code)
	}
	for _, n := range []string{"b", "d"} {
		if !strings.Contains(errs, "batch: "+n+": clearing the incomplete folder") {
			t.Errorf("the rerun did not say it cleared row %s's incomplete folder", n)
		}
	}
	if !strings.Contains(errs, "1 complete already") {
		t.Errorf("the rerun did not keep row a")
	}
	runs := runCounts(t, runLog)
	want := map[string]int{"a": 1, "b": 2, "c": 1, "d": 1} // b: the killed run and the rerun
	for n, w := range want {
		if runs[n] != w {
			t.Errorf("row %s was run %d times, want %d (runs: %v)", n, runs[n], w, runs)
		}
	}
	if st, _ := os.Stat(summaryOf("a")); !st.ModTime().Equal(aInfo.ModTime()) {
		t.Errorf("row a's summary.json was rewritten by the rerun")
	}
	if b, _ := os.ReadFile(summaryOf("a")); !bytes.Equal(b, aBytes) {
		t.Errorf("row a's summary.json changed")
	}
	recs := readTable(t, filepath.Join(out, campaign.TableFile))
	if len(recs) != 1+len(rows) {
		t.Errorf("campaign.csv has %d records, want %d (one shear phase per row)", len(recs)-1, len(rows))
	}
	for n, r := range tableByName(recs) {
		if r["status"] != "ok" {
			t.Errorf("%s: status %q after the rerun", n, r["status"])
		}
	}
	if ents, _ := filepath.Glob(filepath.Join(out, "*", ".*partial*")); len(ents) > 0 {
		t.Errorf("temporary files left: %v", ents)
	}
}

// TestBatchRowLocked holds a row's lock as another batch would: the batch
// must leave the row alone, say why, and run nothing.
func TestBatchRowLocked(t *testing.T) {
	asCommand(t)
	dir := t.TempDir()
	manifest := writeCampaign(t, dir, []campaignRow{{name: "held", ratePerS: 1, gapUM: 800}})
	out := filepath.Join(dir, "out")
	runLog := filepath.Join(dir, "runs.log")
	t.Setenv(runLogEnv, runLog)
	l := campaign.Layout{Root: out}
	if err := l.Prepare(); err != nil {
		t.Fatal(err)
	}
	lock, err := l.Lock("held")
	if err != nil {
		t.Fatal(err)
	}
	defer lock.Close()
	code, errs := runGaptrace("batch", manifest, "-o", out)
	if !strings.Contains(errs, "held: skipped: being analysed by another process") {
		t.Errorf("stderr does not say the row is held:\n%s", errs)
	}
	if n := runCounts(t, runLog)["held"]; n != 0 {
		t.Errorf("the held row was run %d times", n)
	}
	if _, err := os.Stat(l.RowDir("held")); err == nil {
		t.Error("the batch made the held row's folder")
	}
	t.Logf("exit %d", code)
}

// TestBatchBadManifest checks that every wrong manifest and wrong use is
// refused before anything runs: exit 2, one line on stderr naming the
// problem, and no row folder made.
func TestBatchBadManifest(t *testing.T) {
	dir := t.TempDir()
	exp, video := tinyRecording(t, filepath.Join(dir, "data"), 1, 1, 800)
	rel := func(p string) string { s, _ := filepath.Rel(dir, p); return s }
	good := rel(video) + "," + rel(exp)
	cases := []struct {
		name, manifest string
		args           []string
		want           string
	}{
		{"empty file", "", nil, "empty"},
		{"no rows", "name,input,experiment\n", nil, "no rows"},
		{"no name column", "input,experiment\n" + good + "\n", nil, `"name"`},
		{"no experiment column", "name,input\nr1," + rel(video) + "\n", nil, `"experiment"`},
		{"column twice", "name,input,experiment,gap_um,gap_um\nr1," + good + ",800,800\n", nil, `"gap_um" appears twice`},
		{"free column named like a result", "name,input,experiment,verdict\nr1," + good + ",x\n", nil, `"verdict"`},
		{"short row", "name,input,experiment,gap_um\nr1," + good + "\n", nil, "line 2"},
		{"duplicate name", "name,input,experiment\nr1," + good + "\nr1," + good + "\n", nil, "line 3: name \"r1\" is already the name of line 2"},
		{"parent folder name", "name,input,experiment\n..," + good + "\n", nil, `".."`},
		{"slash in name", "name,input,experiment\na/b," + good + "\n", nil, `"a/b"`},
		{"hidden name", "name,input,experiment\n.r1," + good + "\n", nil, `".r1"`},
		{"reserved name", "name,input,experiment\nslurm," + good + "\n", nil, `"slurm"`},
		{"no name", "name,input,experiment\n," + good + "\n", nil, "line 2: no name"},
		{"no input", "name,input,experiment\nr1,," + rel(exp) + "\n", nil, "no input"},
		{"missing input", "name,input,experiment\nr1,nope.avi," + rel(exp) + "\n", nil, "nope.avi"},
		{"missing experiment", "name,input,experiment\nr1," + rel(video) + ",nope.yaml\n", nil, "nope.yaml"},
		{"wrong experiment", "name,input,experiment\nr1," + rel(video) + ",bad.yaml\n", nil, "camera.shutter"},
		{"missing log", "name,input,experiment,log\nr1," + good + ",nope.csv\n", nil, "nope.csv"},
		{"log column without log", "name,input,experiment,log_kind\nr1," + good + ",rate\n", nil, `"log_kind" without`},
		{"log offset not a number", "name,input,experiment,log,log_offset_s\nr1," + good + "," + rel(exp) + ",soon\n", nil, "soon"},
		{"unbalanced quote", "name,input,experiment\n\"r1," + good + "\n", nil, "line"},
		{"bad shard", "name,input,experiment\nr1," + good + "\n", []string{"--shard", "2/2"}, "2/2"},
		{"shard not a fraction", "name,input,experiment\nr1," + good + "\n", []string{"--shard", "1"}, `"1"`},
		{"no jobs", "name,input,experiment\nr1," + good + "\n", []string{"--jobs", "0"}, "--jobs"},
		{"submit without slurm", "name,input,experiment\nr1," + good + "\n", []string{"--submit"}, "--slurm"},
		{"slurm and shard", "name,input,experiment\nr1," + good + "\n", []string{"--slurm", "--shard", "0/2"}, "--shard"},
		{"slurm option not an option", "name,input,experiment\nr1," + good + "\n", []string{"--slurm", "--slurm-opt", "partition=short"}, "partition=short"},
		{"slurm option of our own", "name,input,experiment\nr1," + good + "\n", []string{"--slurm", "--slurm-opt", "--array=0-9"}, "--array"},
		{"more shards than rows", "name,input,experiment\nr1," + good + "\n", []string{"--slurm", "--shards", "4"}, "--shards 4"},
	}
	os.WriteFile(filepath.Join(dir, "bad.yaml"), []byte("geometry: {kind: plates, gap_um: 800}\ncamera: {fps: 100, shutter: 2}\n"), 0o644)
	for i, c := range cases {
		t.Run(c.name, func(t *testing.T) {
			path := filepath.Join(dir, fmt.Sprintf("manifest%d.csv", i))
			if err := os.WriteFile(path, []byte(c.manifest), 0o644); err != nil {
				t.Fatal(err)
			}
			out := filepath.Join(dir, fmt.Sprintf("out%d", i))
			code, errs := runGaptrace(append([]string{"batch", path, "-o", out}, c.args...)...)
			checkBadInput(t, code, errs, c.want)
			if _, err := os.Stat(filepath.Join(out, "r1")); err == nil {
				t.Error("a row folder was made")
			}
		})
	}
	t.Run("no manifest", func(t *testing.T) {
		code, errs := runGaptrace("batch", "-o", filepath.Join(dir, "o"))
		checkBadInput(t, code, errs, "MANIFEST")
	})
	t.Run("no outroot", func(t *testing.T) {
		code, errs := runGaptrace("batch", filepath.Join(dir, "manifest0.csv"))
		checkBadInput(t, code, errs, "-o OUTROOT")
	})
	t.Run("collect without a campaign", func(t *testing.T) {
		code, errs := runGaptrace("batch", "--collect", filepath.Join(dir, "nothing"))
		checkBadInput(t, code, errs, "manifest.csv")
	})
}

// TestBatchShardsAndCollect runs a campaign of five rows as three shards,
// one after the other, then --collect: every row must have been run by
// exactly one shard, no shard writes the table, --collect lists them all,
// and a second --collect rebuilds byte-identical campaign.csv and
// campaign.html. The manifest's copy under OUTROOT serves --collect OUTROOT.
func TestBatchShardsAndCollect(t *testing.T) {
	asCommand(t)
	dir := t.TempDir()
	rows := []campaignRow{
		{name: "s0", ratePerS: 0.5, gapUM: 800}, {name: "s1", ratePerS: 1, gapUM: 800},
		{name: "s2", ratePerS: 2, gapUM: 800}, {name: "s3", ratePerS: 1, gapUM: 600},
		{name: "s4", ratePerS: 2, gapUM: 600},
	}
	manifest := writeCampaign(t, dir, rows)
	out := filepath.Join(dir, "out")
	runLog := filepath.Join(dir, "runs.log")
	t.Setenv(runLogEnv, runLog)
	start := time.Now()
	for k := 0; k < 3; k++ {
		before := runCounts(t, runLog)
		code, errs := runGaptrace("batch", manifest, "-o", out, "--shard", fmt.Sprintf("%d/3", k))
		if code != 0 {
			t.Fatalf("shard %d/3: exit %d\n%s", k, code, errs)
		}
		after := runCounts(t, runLog)
		for i, r := range rows {
			ran := after[r.name] - before[r.name]
			if want := map[bool]int{true: 1, false: 0}[i%3 == k]; ran != want {
				t.Errorf("shard %d/3 ran row %d (%s) %d times, want %d", k, i, r.name, ran, want)
			}
		}
	}
	t.Logf("three shards of five rows: %v", time.Since(start).Round(10*time.Millisecond))
	if _, err := os.Stat(filepath.Join(out, campaign.TableFile)); err == nil {
		t.Error("a shard wrote campaign.csv")
	}
	for _, r := range rows {
		if n := runCounts(t, runLog)[r.name]; n != 1 {
			t.Errorf("row %s run %d times over the shards", r.name, n)
		}
	}
	if code, errs := runGaptrace("batch", "--collect", out); code != 0 {
		t.Fatalf("--collect: exit %d\n%s", code, errs)
	}
	files := []string{campaign.TableFile, campaign.PageFile}
	first := map[string][]byte{}
	for _, f := range files {
		first[f], _ = os.ReadFile(filepath.Join(out, f))
		os.Remove(filepath.Join(out, f))
	}
	recs := readTable(t, filepath.Join(dir, "out", "manifest.csv")) // the copy: absolute paths
	if len(recs) != 1+len(rows) || !filepath.IsAbs(recs[1][1]) {
		t.Errorf("manifest copy: %d rows, input %q", len(recs)-1, recs[1][1])
	}
	if code, errs := runGaptrace("batch", manifest, "-o", out, "--collect"); code != 0 {
		t.Fatalf("second --collect: exit %d\n%s", code, errs)
	}
	for _, f := range files {
		b, _ := os.ReadFile(filepath.Join(out, f))
		if len(b) == 0 || !bytes.Equal(b, first[f]) {
			t.Errorf("%s rebuilt by a second --collect differs from the first (%d and %d bytes)", f, len(b), len(first[f]))
		}
	}
	byName := tableByName(readTable(t, filepath.Join(out, campaign.TableFile)))
	for _, r := range rows {
		if byName[r.name+"#1"]["status"] != "ok" {
			t.Errorf("%s not ok in the collected table", r.name)
		}
	}
	if n := runCounts(t, runLog); len(n) != len(rows) {
		t.Errorf("--collect ran rows: %v", n)
	}
}
