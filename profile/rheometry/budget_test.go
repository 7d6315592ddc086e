package rheometry

import (
	"math"
	"testing"

	"gaptrace/calib/geometry"
	"gaptrace/profile/uncertainty"
)

// sharedForTest are shared errors of the size the walls and the camera of
// a rendered recording give: a tenth of a pixel at 2 um/px per wall, a
// gap-based scale, and a shared velocity offset of 0.5 um/s.
var sharedForTest = Shared{StationaryWallUM: 0.4, MovingWallUM: 0.3, GapScale: true, GapUM: 2, FrameRateRel: 1e-4, CommonUMPerS: 0.5}

// The law of propagation (GUM, JCGM 100:2008, eq. 10) against a Monte
// Carlo propagation of the same inputs (JCGM 101:2008, Supplement 1, 7.2
// and 7.6) for the slip velocities and the band boundary of a banded
// profile with slip: within 10 %, the criterion.
func TestBudgetGUMvsMonteCarlo(t *testing.T) {
	const h, v = 800.0, 1200.0
	plates := geometry.Geometry{Kind: geometry.Plates, GapUM: h}
	// Fast band below 300 um at 2.5/s, slow above it at 0.6/s, slip 60 um/s
	// at the stationary wall.
	prof := func(y float64) float64 {
		if y < 300 {
			return 60 + 2.5*y
		}
		return 60 + 2.5*300 + 0.6*(y-300)
	}
	b := bins(h, prof)
	d, err := Decompose(b, plates, v, Options{})
	if err != nil {
		t.Fatal(err)
	}
	if len(d.Bands) != 2 {
		t.Fatalf("%d bands, want 2", len(d.Bands))
	}
	bud, err := d.Budget(b, sharedForTest)
	if err != nil {
		t.Fatal(err)
	}
	f, in, names := d.BudgetModel(b, sharedForTest)
	const draws = 1000 // sampling error of a standard deviation 1/sqrt(2000) = 2 %
	_, sd := uncertainty.MonteCarlo(f, in, draws, 11)
	const agreement = 0.10
	checked := 0
	for j, q := range names {
		if q != QSlipStationary && q != QSlipMoving && q != BandTo(0) {
			continue
		}
		c := bud[q]
		gum := math.Sqrt(math.Pow(c.Combined(), 2) - math.Pow(c[uncertainty.Statistical], 2))
		t.Logf("%s: GUM %.4g, Monte Carlo %.4g (shared components)", q, gum, sd[j])
		if !(math.Abs(gum/sd[j]-1) <= agreement) {
			t.Errorf("%s: law of propagation %.4g, Monte Carlo %.4g: differ by more than %.0f%%", q, gum, sd[j], 100*agreement)
		}
		checked++
	}
	if checked != 3 {
		t.Errorf("checked %d quantities, want 3", checked)
	}
}

// The measurement model moves what it should: an error of the stationary
// wall's height shifts the slip there by the rate at the wall times the
// error (dv/dy u(a), GUM eq. 10 with sensitivity dv/dy) and moves the band
// boundary by the error itself; a shared velocity offset goes into both
// slips in full and leaves the rates alone.
func TestBudgetSensitivities(t *testing.T) {
	const h, v = 800.0, 1200.0
	plates := geometry.Geometry{Kind: geometry.Plates, GapUM: h}
	b := bins(h, func(y float64) float64 { return 30 + 1.4*y })
	d, err := Decompose(b, plates, v, Options{})
	if err != nil {
		t.Fatal(err)
	}
	bud, err := d.Budget(b, Shared{StationaryWallUM: 2, CommonUMPerS: 0.7})
	if err != nil {
		t.Fatal(err)
	}
	const tol = 1e-3 // relative: the fit's rate is exact to rounding for exact layers
	near := func(a, b float64) bool { return math.Abs(a-b) <= tol*math.Abs(b) }
	if w := 1.4 * 2; !near(bud[QSlipStationary][uncertainty.WallPosition], w) {
		t.Errorf("wall position gives %g um/s of slip, want %g", bud[QSlipStationary][uncertainty.WallPosition], w)
	}
	for _, q := range []string{QSlipStationary, QSlipMoving} {
		if !near(bud[q][uncertainty.SharedMotion], 0.7) {
			t.Errorf("%s: shared motion gives %g, want 0.7", q, bud[q][uncertainty.SharedMotion])
		}
	}
	if u := bud[QBulkRate][uncertainty.SharedMotion]; u > 1e-9 {
		t.Errorf("a shared offset changes the bulk rate by %g 1/s", u)
	}
}
