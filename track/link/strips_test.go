package link

import (
	"testing"

	"gocv.io/x/gocv"

	"gaptrace/track/flowprior"
	"gaptrace/track/synth/acceptance"
)

// TestLinkWithStripPrior renders the homogeneous scenario of package synth
// with the wall travelling 0.8 of the mean tracer spacing per frame, measures
// the prior from the frames by phase correlation of strips, and links once
// with it, without the detections' histogram or a second pass.
func TestLinkWithStripPrior(t *testing.T) {
	const ratio = 0.8
	s := shear(t, "homogeneous", ratio, 20, tableDrop, 700)
	sm := detect(t, s, 70)
	e, err := flowprior.NewStripEstimator(sm.cal, s.WidthPx, s.HeightPx, flowprior.StripOptions{})
	if err != nil {
		t.Fatal(err)
	}
	defer e.Close()
	a, b := gocv.NewMat(), gocv.NewMat()
	defer func() { a.Close(); b.Close() }()
	const pairs = 8 // enough for the median over pairs
	if err := s.Render(0, &a); err != nil {
		t.Fatal(err)
	}
	for f := 1; f <= pairs; f++ {
		if err := s.Render(f, &b); err != nil {
			t.Fatal(err)
		}
		if err := e.Add(a, b); err != nil {
			t.Fatal(err)
		}
		a, b = b, a
	}
	prior, _, err := e.Result()
	if err != nil {
		t.Fatal(err)
	}
	opt := sm.options()
	opt.Prior = prior
	pts, _, err := Link(sm.frames, sm.cal, opt)
	if err != nil {
		t.Fatal(err)
	}
	sc := sm.score(pts)
	t.Logf("strip prior, ratio %.1f: %.4f correct, %.4f wrong of %d links", ratio, sc.fracCorrect(), sc.fracWrong(), sc.trueLinks)
	const aim = acceptance.CorrectLinksAtEightTenths // at a ratio of 0.8
	if sc.fracCorrect() < aim {
		t.Errorf("%.4f of links correct with the strip prior, aim %.2f", sc.fracCorrect(), aim)
	}
}
