package pipeline

import (
	"bytes"
	"context"
	"fmt"
	"math"
	"strings"
	"testing"

	"gaptrace/track/synth"
	"gaptrace/track/tracks"
)

// Limits of TestStillSpotsDust.
const (
	// stillMatchPx is how far a detection may lie from a true centre to be
	// that tracer or that dust spot: half the diameter of a 5 px tracer,
	// as detectscore matches.
	stillMatchPx = 2.5
	// stillMinPrecision is issue 14's precision on a recording with 30
	// dust spots in the gap, for the detections the profile analyses.
	stillMinPrecision = 0.99
	// stillSeenShare: a dust spot in the gap that the detector reports in
	// at least this share of the frames must be found (a dark spot is not
	// detected at all and need not be).
	stillSeenShare = 0.5
)

// TestStillSpotsDust renders synth's dust scenario (30 dust spots in the
// gap, 10 on the plates, 8 tracers stuck to the walls) and checks against
// its truth (synth.Scenario.DustSpots and TruthRows) that the profile's
// detections reach issue 14's precision, that no spot is a true tracer,
// that summary.json counts the spots (also when the tracks come from
// tracks.csv, as `gaptrace profile` reads them), and that the slip
// velocities and the bulk rate lie no farther from the truth than with the
// spots kept.
func TestStillSpotsDust(t *testing.T) {
	sc, err := synth.Builtin("dust", 7)
	if err != nil {
		t.Fatal(err)
	}
	cfg, truth := render(t, sc, synth.Output{Format: synth.FormatMJPEG})
	cfg.Seed = 7
	ctx := context.Background()
	rec, err := Open(ctx, cfg)
	if err != nil {
		t.Fatal(err)
	}
	tr, err := rec.Track(ctx)
	rec.Close()
	if err != nil {
		t.Fatal(err)
	}
	defer tr.Close()
	a, err := Analyze(ctx, cfg, tr)
	if err != nil {
		t.Fatal(err)
	}
	keep := cfg
	keep.keepStillSpots = true
	b, err := Analyze(ctx, keep, tr)
	if err != nil {
		t.Fatal(err)
	}

	all, err := tracks.Collect(tr.Tracks)
	if err != nil {
		t.Fatal(err)
	}
	rows := sc.TruthRows()
	onTracer := matchTruth(rows)

	// Every spot found is dust, and every dust spot in the gap that the
	// detector sees in most frames is found.
	dust := sc.DustSpots()
	seen, found := 0, 0
	for _, d := range dust {
		if d.Region != synth.RegionGap {
			continue
		}
		frames := map[int]bool{}
		for _, p := range all {
			if _, ok := onTracer(p); !ok && math.Hypot(p.XPx-d.XPx, p.YPx-d.YPx) < stillMatchPx {
				frames[p.Frame] = true
			}
		}
		if float64(len(frames)) < stillSeenShare*float64(sc.Frames) {
			continue
		}
		seen++
		hit := false
		for _, s := range a.StillSpots.Spots {
			if math.Hypot(s.XPx-d.XPx, s.YPx-d.YPx) < stillMatchPx {
				hit = true
				break
			}
		}
		if hit {
			found++
		} else {
			t.Errorf("%s dust spot at (%.1f, %.1f) px, seen in %d frames: not found", d.Kind, d.XPx, d.YPx, len(frames))
		}
	}
	for _, s := range a.StillSpots.Spots {
		near := math.Inf(1)
		for _, d := range dust {
			near = math.Min(near, math.Hypot(s.XPx-d.XPx, s.YPx-d.YPx))
		}
		if near > stillMatchPx {
			t.Errorf("spot at (%.1f, %.1f) px, height %.1f um, %d still points: no dust within %g px (nearest %.1f px)",
				s.XPx, s.YPx, s.YUM, s.StillPoints, stillMatchPx, near)
		}
	}
	t.Logf("%d spots found; %d of the %d dust spots in the gap that the detector sees", a.StillSpots.Len(), found, seen)

	// Precision of what the profile analyses, and the true tracers lost.
	kept, err := tracks.Collect(a.StillSpots.Source(tr.Tracks))
	if err != nil {
		t.Fatal(err)
	}
	var hitAll, hitKept, stuckAll, stuckKept int
	for _, p := range all {
		if r, ok := onTracer(p); ok {
			hitAll++
			if r.Stuck != 0 {
				stuckAll++
			}
		}
	}
	for _, p := range kept {
		if r, ok := onTracer(p); ok {
			hitKept++
			if r.Stuck != 0 {
				stuckKept++
			}
		}
	}
	precAll, precKept := float64(hitAll)/float64(len(all)), float64(hitKept)/float64(len(kept))
	t.Logf("precision: all detections %.4f (%d), analysed %.4f (%d); true tracers' detections left out %d of %d; stuck %d of %d kept",
		precAll, len(all), precKept, len(kept), hitAll-hitKept, hitAll, stuckKept, stuckAll)
	if precKept < stillMinPrecision {
		t.Errorf("precision of the analysed detections %.4f, want at least %g", precKept, stillMinPrecision)
	}
	if lost := hitAll - hitKept; float64(lost) > (1-stillMinPrecision)*float64(hitAll) {
		t.Errorf("%d of %d detections of true tracers left out, want at most %.0f %%", lost, hitAll, 100*(1-stillMinPrecision))
	}
	if stuckKept < stuckAll {
		t.Errorf("%d of %d detections of tracers stuck to a wall left out, want none", stuckAll-stuckKept, stuckAll)
	}

	// The count in summary.json.
	want := fmt.Sprintf("%d static spots left out", a.StillSpots.Len())
	if !strings.Contains(strings.Join(a.Summary.Warnings, "\n"), want) {
		t.Errorf("summary warnings %q do not say %q", a.Summary.Warnings, want)
	}
	if strings.Contains(strings.Join(b.Summary.Warnings, "\n"), "static spots") {
		t.Errorf("summary with the spots kept warns of them: %q", b.Summary.Warnings)
	}

	// The same spots from tracks.csv alone, as `gaptrace profile` reads it.
	var csv bytes.Buffer
	if err := tr.WriteTracks(&csv); err != nil {
		t.Fatal(err)
	}
	fromCSV, err := FromTracks(cfg, "tracks.csv", &csv, tr.Calibration)
	if err != nil {
		t.Fatal(err)
	}
	defer fromCSV.Close()
	c, err := Analyze(ctx, cfg, fromCSV)
	if err != nil {
		t.Fatal(err)
	}
	if c.StillSpots.Len() != a.StillSpots.Len() || !strings.Contains(strings.Join(c.Summary.Warnings, "\n"), want) {
		t.Errorf("from tracks.csv: %d spots, warnings %q; from the video %d", c.StillSpots.Len(), c.Summary.Warnings, a.StillSpots.Len())
	}

	// Slip and rate: no farther from the truth than with the spots kept
	// (within a quarter of the reported uncertainty, for the bootstrap's
	// own scatter).
	st := truth.Summary.ShearPhases[0]
	sa, sb := a.Summary.ShearPhases[0], b.Summary.ShearPhases[0]
	for _, q := range []struct {
		name        string
		truth, a, b float64
		errA        float64
	}{
		{"slip at the stationary wall, um/s", float64(st.SlipStationaryUMPerS), float64(sa.SlipStationaryUMPerS), float64(sb.SlipStationaryUMPerS), float64(sa.SlipStationaryErrUMPerS)},
		{"slip at the moving wall, um/s", float64(st.SlipMovingUMPerS), float64(sa.SlipMovingUMPerS), float64(sb.SlipMovingUMPerS), float64(sa.SlipMovingErrUMPerS)},
		{"bulk rate, 1/s", float64(st.BulkRatePerS), float64(sa.BulkRatePerS), float64(sb.BulkRatePerS), float64(sa.BulkRateErrPerS)},
	} {
		t.Logf("%s: truth %.4f, spots left out %.4f ± %.4f, kept %.4f", q.name, q.truth, q.a, q.errA, q.b)
		if math.Abs(q.a-q.truth) > math.Abs(q.b-q.truth)+stillBootstrapShare*q.errA {
			t.Errorf("%s %.4g with the spots left out, %.4g with them: farther from the truth %.4g", q.name, q.a, q.b, q.truth)
		}
	}
}

// stillBootstrapShare is the share of a reported standard uncertainty by
// which two analyses of the same tracks may differ for the bootstrap's
// own scatter alone.
const stillBootstrapShare = 0.25

// matchTruth returns a function telling whether a detection lies within
// stillMatchPx of a true tracer of its frame, and which.
func matchTruth(rows []synth.TruthRow) func(tracks.Point) (synth.TruthRow, bool) {
	byFrame := map[int][]int{}
	for i, r := range rows {
		byFrame[r.Point.Frame] = append(byFrame[r.Point.Frame], i)
	}
	return func(p tracks.Point) (synth.TruthRow, bool) {
		for _, i := range byFrame[p.Frame] {
			if math.Hypot(p.XPx-rows[i].Point.XPx, p.YPx-rows[i].Point.YPx) < stillMatchPx {
				return rows[i], true
			}
		}
		return synth.TruthRow{}, false
	}
}
