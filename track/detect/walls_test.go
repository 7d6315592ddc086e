package detect

import (
	"math"
	"testing"

	"gaptrace/calib/walls"
	"gaptrace/track/frames"
	"gaptrace/track/synth"
	"gocv.io/x/gocv"
)

// TestWallProfileSubtraction renders synth's near-wall scenario (a fifth of
// the tracers within 5 px of a wall line, from on the line inwards, where a
// bright reflection line lies on each wall) and detects with and without the
// walls' profiles measured on the median of the first frames (tracers at
// rest included, as in a recording). With the profiles, the isolated
// in-focus tracers of the wall layer are found and their centres are not
// pulled towards the wall; without, most are lost.
func TestWallProfileSubtraction(t *testing.T) {
	const (
		medianFrames = 31
		// The acceptance (issue 14): recall within 5 px of a wall
		// of at least 0.9, and a bias of the centres towards the wall of at
		// most 0.05 px.
		minRecall  = 0.9
		maxBiasPx  = 0.05
		isolatedPx = 2 * 5 // no other tracer within 2 diameters
		// maskSlackPx admits centres half a pixel beyond the wall line,
		// where localization noise puts some of the tracers touching it.
		maskSlackPx = 0.5
		// matchPx is the largest distance of a detection from its tracer.
		matchPx = 1.5
	)
	s, err := synth.Builtin("near-wall", 5)
	if err != nil {
		t.Fatal(err)
	}
	cal := s.Calibration()
	med, err := frames.Median(s.Source(1), medianFrames)
	if err != nil {
		t.Fatal(err)
	}
	defer med.Close()
	var profiles []*walls.Profile
	for _, l := range [][2][2]float64{cal.StationaryWallPx, cal.MovingWallPx} {
		line, err := walls.LineThrough(l[0], l[1])
		if err != nil {
			t.Fatal(err)
		}
		p, err := walls.MeasureProfile(med, line, WallReachPx(s.DiameterPx))
		if err != nil {
			t.Fatal(err)
		}
		profiles = append(profiles, p)
	}
	mask := &Mask{Stationary: cal.StationaryWallPx, Moving: cal.MovingWallPx, MarginPx: -maskSlackPx}
	gain := 0.8 // synth's 8-bit gain
	noise := gain * math.Sqrt(s.BackgroundPhotons+s.ReadNoise*s.ReadNoise)
	img := gocv.NewMat()
	defer img.Close()
	for _, withWalls := range []bool{false, true} {
		opt := Options{DiameterPx: s.DiameterPx, Mask: mask}
		if withWalls {
			opt.Walls = profiles
		}
		d, err := NewDetector(opt)
		if err != nil {
			t.Fatal(err)
		}
		var found, total int
		var bias float64
		for f := 60; f < s.Frames; f += 8 {
			if err := s.Render(f, &img); err != nil {
				t.Fatal(err)
			}
			dets, err := d.Frame(img, f, nil)
			if err != nil {
				t.Fatal(err)
			}
			truth := s.Positions(f)
			for i, tr := range truth {
				_, yUM := cal.ToGap(tr.XPx, tr.YPx)
				dS, dM := yUM/cal.UMPerPx, (cal.GapUM-yUM)/cal.UMPerPx
				if !tr.InFocus || min(dS, dM) < 0 || min(dS, dM) >= 5 || tr.XPx < 10 || tr.XPx > float64(s.WidthPx-10) {
					continue
				}
				if gain*tr.Photons/(2*math.Pi*tr.SigmaPx*tr.SigmaPx)/noise < 5 {
					continue
				}
				isolated := true
				for j, o := range truth {
					if j != i && math.Hypot(o.XPx-tr.XPx, o.YPx-tr.YPx) < isolatedPx {
						isolated = false
					}
				}
				if !isolated {
					continue
				}
				total++
				for _, de := range dets {
					if math.Hypot(de.XPx-tr.XPx, de.YPx-tr.YPx) < matchPx {
						found++
						_, yd := cal.ToGap(de.XPx, de.YPx)
						toWall := (yUM - yd) / cal.UMPerPx
						if dM < dS {
							toWall = -toWall
						}
						bias += toWall
						break
					}
				}
			}
		}
		d.Close()
		rec := float64(found) / float64(max(total, 1))
		b := bias / float64(max(found, 1))
		t.Logf("walls %v: %d isolated tracers within 5 px of a wall, recall %.3f, bias towards the wall %.3f px", withWalls, total, rec, b)
		if !withWalls {
			continue
		}
		if total < 50 || rec < minRecall {
			t.Errorf("recall %.3f of %d near-wall tracers, want >= %g of at least 50", rec, total, minRecall)
		}
		if math.Abs(b) > maxBiasPx {
			t.Errorf("bias towards the wall %.3f px, want within %g", b, maxBiasPx)
		}
	}
}
