package report_test

import (
	"context"
	"gaptrace/track/tracks"
	"os"
	"path/filepath"
	"strings"
	"testing"

	"gaptrace/calib/experiment"
	"gaptrace/profile"
	"gaptrace/profile/report"
	"gaptrace/profile/summary"
	"gaptrace/track/synth"
)

// analysed runs the profile stage on the tracks of a built-in synth
// scenario, observed with a little noise, and returns the report data of
// FromAnalysis with the scenario's experiment and the stage's result.
func analysed(t *testing.T, name string, seed int64) (*report.Data, *experiment.Experiment, *profile.Result) {
	t.Helper()
	s, err := synth.Builtin(name, seed)
	if err != nil {
		t.Fatal(err)
	}
	e, c := s.Experiment(), s.Calibration()
	r, err := profile.Analyze(context.Background(), tracks.Slice(s.Observe(0.1, 0.02, 3)), e, c, profile.Options{Seed: 3})
	if err != nil {
		t.Fatal(err)
	}
	summ := summary.New()
	summ.Experiment, summ.Calibration = e.Name, c
	r.Fill(summ)
	return report.FromAnalysis(summ, e, r), e, r
}

// TestFromAnalysis runs the profile stage on the tracks of a rendered
// scenario (the synth package's step strain followed by a failure plane)
// and checks that FromAnalysis hands every series to the figures.
func TestFromAnalysis(t *testing.T) {
	d, _, r := analysed(t, "step-plane", 3)
	summ := d.Summary
	if len(d.Profiles) != len(summ.ShearPhases) || len(d.Profiles) == 0 || d.Profiles[0] == nil {
		t.Fatalf("%d profiles for %d shear phases", len(d.Profiles), len(summ.ShearPhases))
	}
	known := 0
	for _, b := range r.Shear[0].Steady.Bins {
		if b.Known() {
			known++
		}
	}
	if got := len(d.Profiles[0].Points); got != known {
		t.Errorf("profile has %d points, the steady profile %d known layers", got, known)
	}
	if d.SpaceTime == nil || d.RateMap == nil || len(d.SpaceTime.TS) != len(r.Map.TS) {
		t.Errorf("space-time maps missing or short")
	}
	if d.AfterStop == nil || len(d.AfterStop.Profiles) < 2 {
		t.Fatalf("after-stop data missing")
	}
	if ts := d.AfterStop.Profiles; ts[len(ts)-1].TAfterStopS <= ts[0].TAfterStopS {
		t.Errorf("after-stop times not increasing: %g then %g", ts[0].TAfterStopS, ts[len(ts)-1].TAfterStopS)
	}
	dir := t.TempDir()
	names, err := report.Write(dir, d)
	if err != nil {
		t.Fatal(err)
	}
	for _, want := range []string{"figure_profile_1.png", "figure_slip.png", "figure_after_stop.png",
		"figure_space_time.png", "figure_rate_map.png", "report.html"} {
		if _, err := os.Stat(filepath.Join(dir, want)); err != nil {
			t.Errorf("%s not written (wrote %v)", want, names)
		}
	}
	html, _ := os.ReadFile(filepath.Join(dir, report.FileName))
	if strings.Contains(string(html), "Figure not drawn") {
		i := strings.Index(string(html), "Figure not drawn")
		t.Errorf("a figure of the analysis could not be drawn: %s", string(html)[i:min(len(html), i+200)])
	}
	if os.Getenv("ANALYSIS_REPORT_DIR") != "" {
		report.Write(os.Getenv("ANALYSIS_REPORT_DIR"), d)
	}
}
