package figure_test

import (
	"math"
	"strconv"
	"strings"
	"testing"

	"gaptrace/profile/report/figure"
)

// campaignPoints is a made-up flow curve with slip on two gaps over two
// decades of rate, with a wall stress from the log when stress is true.
func campaignPoints(stress bool) []figure.CampaignPoint {
	var pts []figure.CampaignPoint
	for _, gap := range []float64{600, 800} {
		for _, rate := range []float64{0.1, 0.3, 1, 3, 10} {
			v := rate * gap
			f := 0.3 / (1 + rate) // slip takes less at higher rates
			p := figure.CampaignPoint{Group: "gap " + strconv.FormatFloat(gap, 'g', -1, 64) + " µm",
				NominalRatePerS: rate,
				WallStressPa:    math.NaN(), WallStressErrPa: math.NaN(),
				SlipStationaryUMPerS: f * v / 2, SlipStationaryErrUMPerS: 0.02*v + 0.3,
				SlipMovingUMPerS: f * v / 2, SlipMovingErrUMPerS: 0.03*v + 0.3,
				SlipFraction: f, SlipFractionErr: 0.01,
				BulkRatePerS: rate * (1 - f), BulkRateErrPerS: 0.02 * rate}
			if stress {
				p.WallStressPa, p.WallStressErrPa = 800*math.Pow(rate*(1-f), 0.4), 5
			}
			pts = append(pts, p)
		}
	}
	return pts
}

// The campaign figures join the journal-ready checks of figure_test.go.
func init() {
	figures = append(figures,
		draw{"campaign_slip_rate", figure.SingleColumnCM, func(*testing.T) (*figure.Figure, error) {
			return figure.CampaignSlipPlot(campaignPoints(false), false)
		}},
		draw{"campaign_slip_stress", figure.SingleColumnCM, func(*testing.T) (*figure.Figure, error) {
			return figure.CampaignSlipPlot(campaignPoints(true), true)
		}},
		draw{"campaign_slip_fraction", figure.SingleColumnCM, func(*testing.T) (*figure.Figure, error) {
			return figure.CampaignSlipFractionPlot(campaignPoints(false))
		}},
		draw{"campaign_bulk_rate", figure.SingleColumnCM, func(*testing.T) (*figure.Figure, error) {
			return figure.CampaignBulkRatePlot(campaignPoints(false))
		}},
	)
}

// TestCampaignFigureText checks the axis labels and legends of the
// campaign figures, and that every group is named.
func TestCampaignFigureText(t *testing.T) {
	// Rates are in s⁻¹, whose superscript comes out as a piece of its own.
	want := map[string][]string{
		"campaign_slip_rate":     {"slip, stationary wall (µm/s)", "slip, moving wall (µm/s)", "nominal shear rate (s", "−1", "gap 600 µm", "gap 800 µm", "a", "b"},
		"campaign_slip_stress":   {"wall shear stress (Pa)", "gap 800 µm"},
		"campaign_slip_fraction": {"slip fraction", "nominal shear rate (s", "gap 600 µm"},
		"campaign_bulk_rate":     {"bulk shear rate (s", "nominal shear rate (s", "no slip", "gap 800 µm"},
	}
	for _, f := range figures {
		ws, ok := want[f.name]
		if !ok {
			continue
		}
		fig, err := f.render(t)
		if err != nil {
			t.Fatalf("%s: %v", f.name, err)
		}
		for _, s := range ws {
			if !strings.Contains(string(fig.SVG), ">"+htmlEscape(s)+"<") {
				t.Errorf("%s figure has no text %q", f.name, s)
			}
		}
	}
}

// TestCampaignFigureData checks the figures' handling of missing data: no
// point with numbers is an error naming what is missing, unknown values
// are left out, and stress is used only when every slip point has one.
func TestCampaignFigureData(t *testing.T) {
	nan := math.NaN()
	empty := []figure.CampaignPoint{{Group: "gap 800 µm", NominalRatePerS: 1, WallStressPa: nan, WallStressErrPa: nan,
		SlipStationaryUMPerS: nan, SlipStationaryErrUMPerS: nan, SlipMovingUMPerS: nan, SlipMovingErrUMPerS: nan,
		SlipFraction: nan, SlipFractionErr: nan, BulkRatePerS: nan, BulkRateErrPerS: nan}}
	if _, err := figure.CampaignSlipPlot(empty, false); err == nil || !strings.Contains(err.Error(), "slip velocity") {
		t.Errorf("slip figure without slip: %v", err)
	}
	if _, err := figure.CampaignSlipFractionPlot(empty); err == nil || !strings.Contains(err.Error(), "slip fraction") {
		t.Errorf("fraction figure without fractions: %v", err)
	}
	if _, err := figure.CampaignBulkRatePlot(empty); err == nil || !strings.Contains(err.Error(), "bulk rate") {
		t.Errorf("bulk figure without bulk rates: %v", err)
	}
	// One point unknown among known ones: drawn without it.
	pts := append(campaignPoints(false), empty...)
	for name, draw := range map[string]func() (*figure.Figure, error){
		"slip":     func() (*figure.Figure, error) { return figure.CampaignSlipPlot(pts, false) },
		"fraction": func() (*figure.Figure, error) { return figure.CampaignSlipFractionPlot(pts) },
		"bulk":     func() (*figure.Figure, error) { return figure.CampaignBulkRatePlot(pts) },
	} {
		if _, err := draw(); err != nil {
			t.Errorf("%s with an unknown point: %v", name, err)
		}
	}
	if figure.UseStress(campaignPoints(false)) || !figure.UseStress(campaignPoints(true)) {
		t.Error("UseStress: want stress exactly when the points have it")
	}
	mixed := campaignPoints(true)
	mixed[3].WallStressPa = nan
	if figure.UseStress(mixed) {
		t.Error("UseStress with one slip point lacking a stress")
	}
	// A negative bulk rate (a wrong-sign result) falls back to linear axes.
	neg := campaignPoints(false)
	neg[0].BulkRatePerS = -0.05
	if _, err := figure.CampaignBulkRatePlot(neg); err != nil {
		t.Errorf("bulk figure with a negative rate: %v", err)
	}
}
