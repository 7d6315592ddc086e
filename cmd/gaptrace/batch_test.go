package main

import (
	"bytes"
	"encoding/csv"
	"fmt"
	"os"
	"path/filepath"
	"strings"
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
	if _, err := os.Stat(filepath.Join(out, campaign.PageFile)); err != nil {
		t.Errorf("no campaign page: %v", err)
	}
}

// TestBatchKeep is a developer's look at a campaign's files: KEEP_CAMPAIGN=dir.
func TestBatchKeep(t *testing.T) {
	keep := os.Getenv("KEEP_CAMPAIGN")
	if keep == "" {
		t.Skip("KEEP_CAMPAIGN not set")
	}
	asCommand(t)
	manifest := writeCampaign(t, keep, []campaignRow{
		{name: "r0.5", ratePerS: 0.5, gapUM: 800}, {name: "r1", ratePerS: 1, gapUM: 800},
		{name: "r2", ratePerS: 2, gapUM: 800}, {name: "r1-g600", ratePerS: 1, gapUM: 600},
		{name: "r2-g600", ratePerS: 2, gapUM: 600}, {name: "r0.5-g600", ratePerS: 0.5, gapUM: 600},
	})
	code, errs := runGaptrace("batch", manifest, "-o", filepath.Join(keep, "out"), "--jobs", "2")
	t.Log(code, errs)
}
