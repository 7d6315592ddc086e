package campaign

import (
	"os"
	"path/filepath"
	"strings"
	"testing"

	"gaptrace/calib"
	"gaptrace/profile/cessation"
	"gaptrace/profile/internal/headless"
	"gaptrace/profile/rheometry"
	"gaptrace/profile/summary"
)

// phase is a made-up shear phase of a sliding-plate test at ratePerS on a
// gap of gapUM with slip fraction f at both walls (half each).
func phase(ratePerS, gapUM, f float64) summary.ShearPhase {
	v := ratePerS * gapUM
	return summary.ShearPhase{StartS: 0.5, EndS: 2, WindowS: [2]float64{1.25, 2},
		WallSpeedUMPerS: summary.Num(v), NominalRatePerS: summary.Num(ratePerS),
		BulkRatePerS: summary.Num(ratePerS * (1 - f)), BulkRateErrPerS: summary.Num(0.01 * ratePerS),
		SlipStationaryUMPerS: summary.Num(f * v / 2), SlipStationaryErrUMPerS: 0.5,
		SlipMovingUMPerS: summary.Num(f * v / 2), SlipMovingErrUMPerS: 0.7,
		SlipLengthStationaryUM: summary.Null, SlipLengthStationaryErrUM: summary.Null,
		SlipLengthMovingUM: 12.5, SlipLengthMovingErrUM: summary.Null,
		SlipFraction: summary.Num(f), SlipFractionErr: 0.004, WallSlip: f > 0.02,
		Bands:         []summary.Band{{FromUM: 0, ToUM: summary.Num(gapUM), RatePerS: summary.Num(ratePerS * (1 - f)), RateErrPerS: 0.01, ToErrUM: summary.Null}},
		Verdict:       rheometry.VerdictOf(f > 0.02, false),
		InTimeWindowS: summary.Null, InhomogeneityOnsetS: summary.Null, InhomogeneityOnsetErrS: summary.Null,
		InhomogeneityOnsetStrain: summary.Null, PhaseStress: summary.NoStress}
}

// writeSummary writes a made-up summary.json for a row.
func writeSummary(t *testing.T, l Layout, name string, gapUM float64, phases []summary.ShearPhase, as *summary.AfterStop) {
	t.Helper()
	s := summary.New()
	s.Calibration = &calib.Calibration{GapUM: gapUM, UMPerPx: 2}
	s.ShearPhases = phases
	s.AfterStop = as
	s.Warnings = []string{"a made-up warning"}
	if err := os.MkdirAll(l.RowDir(name), 0o755); err != nil {
		t.Fatal(err)
	}
	if err := s.Write(filepath.Join(l.RowDir(name), SummaryFile)); err != nil {
		t.Fatal(err)
	}
}

// madeUpCampaign lays out a campaign of the imaginary Larkspur Fen
// rheology bench on PEO-8, a made-up entangled solution: four analysed
// rows at rates spanning two decades on two gaps, one failed, one
// interrupted and one never run.
func madeUpCampaign(t *testing.T) (*Manifest, Layout) {
	t.Helper()
	dir := t.TempDir()
	l := Layout{Root: filepath.Join(dir, "out")}
	if keep := os.Getenv("KEEP_PAGE"); keep != "" {
		l.Root = keep // for a look at the page
	}
	if err := l.Prepare(); err != nil {
		t.Fatal(err)
	}
	in := "name,input,experiment,gap_um,repeat\n" +
		"a,a.avi,e.yaml,800,1\nb,b.avi,e.yaml,800,1\nc,c.avi,e.yaml,600,1\nd,d.avi,e.yaml,600,2\n" +
		"failed,f.avi,e.yaml,800,1\nhalf,h.avi,e.yaml,800,2\nnever,n.avi,e.yaml,600,1\n"
	m, err := Parse(strings.NewReader(in), dir, Options{})
	if err != nil {
		t.Fatal(err)
	}
	mode := cessation.ModeBulk
	writeSummary(t, l, "a", 800, []summary.ShearPhase{phase(0.1, 800, 0.3), phase(0.2, 800, 0.25)},
		&summary.AfterStop{StopS: 2, ObservedS: 1, NoiseFloorUM: 0.4, MaxDisplacementUM: 9, RecoveredStrain: 0.04,
			Verdict: cessation.Moving, Mode: &mode, PlaneUM: 350, OnsetAfterStopS: 0.15})
	writeSummary(t, l, "b", 800, []summary.ShearPhase{phase(10, 800, 0.1)}, nil)
	writeSummary(t, l, "c", 600, []summary.ShearPhase{phase(1, 600, 0.2)}, nil)
	failing := phase(3, 600, 0.15)
	failing.BulkRatePerS, failing.BulkRateErrPerS, failing.Bands, failing.Verdict = summary.Null, summary.Null, nil, ""
	writeSummary(t, l, "d", 600, []summary.ShearPhase{failing}, nil)
	if err := l.RecordFailure("failed", "frames: f.avi: cannot open\nas a video"); err != nil {
		t.Fatal(err)
	}
	os.MkdirAll(l.RowDir("half"), 0o755)
	return m, l
}

// TestCollect checks the campaign table against the summaries it was
// made from: one record per shear phase, free columns copied, numbers as
// summary.json writes them, null as empty, the after-stop numbers on the
// last phase's record only, and a status for each row without numbers.
func TestCollect(t *testing.T) {
	m, l := madeUpCampaign(t)
	tab := Collect(m, l)
	get := func(i int, col string) string {
		j := tab.Column(col)
		if j < 0 {
			t.Fatalf("no column %q", col)
		}
		return tab.Records[i][j]
	}
	if len(tab.Records) != 2+1+1+1+3 {
		t.Fatalf("%d records, want 8", len(tab.Records))
	}
	if strings.Join(tab.Columns[:5], ",") != "name,gap_um,repeat,phase,status" {
		t.Errorf("leading columns %v", tab.Columns[:5])
	}
	cases := []struct {
		rec       int
		col, want string
	}{
		{0, "name", "a"}, {0, "phase", "1"}, {0, "status", "ok"}, {0, "gap_um", "800"},
		{0, "nominal_rate_per_s", "0.1"}, {0, "wall_speed_um_per_s", "80"}, {0, "bulk_rate_per_s", "0.07"},
		{0, "slip_stationary_um_per_s", "12"}, {0, "slip_moving_err_um_per_s", "0.7"},
		{0, "slip_length_stationary_um", ""}, {0, "slip_length_moving_um", "12.5"},
		{0, "slip_fraction", "0.3"}, {0, "slip_fraction_err", "0.004"}, {0, "wall_slip", "true"},
		{0, "n_bands", "1"}, {0, "verdict", "wall_slip"}, {0, "window_start_s", "1.25"}, {0, "window_end_s", "2"},
		{0, "wall_stress_pa", ""}, {0, "inhomogeneity_onset_s", ""},
		{0, "after_stop_verdict", ""}, {0, "plane_um", ""}, // the first phase: its cessation is not analysed
		{1, "phase", "2"}, {1, "nominal_rate_per_s", "0.2"},
		{1, "after_stop_verdict", "moving"}, {1, "after_stop_mode", "bulk"}, {1, "plane_um", "350"},
		{1, "onset_after_stop_s", "0.15"}, {1, "recovered_strain", "0.04"}, {1, "noise_floor_um", "0.4"},
		{1, "n_warnings", "1"},
		{2, "name", "b"}, {2, "after_stop_verdict", ""},
		{4, "name", "d"}, {4, "bulk_rate_per_s", ""}, {4, "n_bands", ""}, {4, "verdict", ""}, {4, "slip_fraction", "0.15"},
		{5, "name", "failed"}, {5, "phase", ""}, {5, "status", "failed: frames: f.avi: cannot open as a video"},
		{5, "repeat", "1"}, {5, "nominal_rate_per_s", ""}, {5, "n_warnings", ""},
		{6, "status", "incomplete: no summary.json (interrupted, or running now)"},
		{7, "name", "never"}, {7, "status", "not run"}, {7, "gap_um", "600"},
	}
	for _, c := range cases {
		if got := get(c.rec, c.col); got != c.want {
			t.Errorf("record %d (%s), %s = %q, want %q", c.rec, get(c.rec, "name"), c.col, got, c.want)
		}
	}
	if ok, failed, inc, not := tab.Counts(); ok != 4 || failed != 1 || inc != 1 || not != 1 {
		t.Errorf("counts %d ok, %d failed, %d incomplete, %d not run", ok, failed, inc, not)
	}
	for _, c := range tab.Columns {
		if c != ColName && !TableColumn(c) && c != "gap_um" && c != "repeat" {
			t.Errorf("column %q is not reserved against free columns", c)
		}
	}
}

// TestWritePage writes the campaign's table, figures and page and opens
// the page in headless Chromium: every figure must decode, and the page
// must list the rows without numbers with their reasons.
func TestWritePage(t *testing.T) {
	m, l := madeUpCampaign(t)
	if _, err := Write(m, l); err != nil {
		t.Fatal(err)
	}
	stems := []string{SlipFigure, SlipFractionFigure, BulkRateFigure}
	for _, s := range stems {
		for _, ext := range []string{".png", ".svg"} {
			if st, err := os.Stat(filepath.Join(l.Root, FigureDir, s+ext)); err != nil || st.Size() == 0 {
				t.Errorf("figure %s%s: %v", s, ext, err)
			}
		}
	}
	page, _ := filepath.Abs(filepath.Join(l.Root, PageFile))
	html, err := os.ReadFile(page)
	if err != nil {
		t.Fatal(err)
	}
	for _, want := range []string{"failed: frames: f.avi: cannot open as a video", "not run", "incomplete",
		"Wall slip across the campaign", "against the nominal shear rate"} {
		if !strings.Contains(string(html), want) {
			t.Errorf("the page does not say %q", want)
		}
	}
	if n := strings.Count(string(html), "data:image/png;base64,"); n != len(stems) {
		t.Errorf("the page embeds %d figures, want %d", n, len(stems))
	}
	headless.SkipWithout(t)
	ok, all, ran := headless.FiguresLoaded(t, page)
	if !ran {
		t.Fatal("the page's load script did not run")
	}
	if ok != len(stems) || all != len(stems) {
		t.Errorf("Chromium decoded %d of %d figures, want %d of %d", ok, all, len(stems), len(stems))
	}
}

// TestWritePageEmpty writes the page of a campaign with no row analysed:
// no figure, and the page says why.
func TestWritePageEmpty(t *testing.T) {
	dir := t.TempDir()
	m, err := Parse(strings.NewReader("name,input,experiment\nr1,a,b\n"), dir, Options{})
	if err != nil {
		t.Fatal(err)
	}
	l := Layout{Root: filepath.Join(dir, "out")}
	l.Prepare()
	if _, err := Write(m, l); err != nil {
		t.Fatal(err)
	}
	html, _ := os.ReadFile(filepath.Join(l.Root, PageFile))
	if strings.Contains(string(html), "data:image/png") || strings.Count(string(html), "no row analysed yet") != 3 {
		t.Errorf("the empty campaign's page draws figures or does not say why not")
	}
}
