package detect

import (
	"math"
	"math/rand/v2"
	"sort"
	"testing"
)

// TestShapeNoise measures size and eccentricity of round spots at several
// SNRs: the size is unbiased (sqrt(2) times the pixel-integrated sd), and at
// the SNR from which the eccentricity limit applies, round spots stay well
// under it.
func TestShapeNoise(t *testing.T) {
	const sigmaPx = 1.25
	sc := scene{w: 168, h: 168, bgPhotons: 100, readNoise: 3, bitDepth: 16, gain: 16}
	bg := sc.background(t)
	defer bg.Close()
	d, err := NewDetector(Options{DiameterPx: 4 * sigmaPx, Polarity: PolarityBright, MinSNR: 3, MaxEccentricity: 1, MaxSizePx: 100})
	if err != nil {
		t.Fatal(err)
	}
	if err := d.SetBackground(bg); err != nil {
		t.Fatal(err)
	}
	defer d.Close()
	// A pixel-integrated Gaussian of sd s has variance s^2 + 1/12 per axis.
	wantSize := math.Sqrt(2 * (sigmaPx*sigmaPx + 1.0/12))
	t.Logf("%5s %6s %22s %26s", "SNR", "n", "eccentricity 50/99/99.9%", "size px 0.1/50/99.9%")
	for _, snr := range []float64{5, 10, 30} {
		rng := rand.New(rand.NewPCG(2, uint64(snr)))
		var ecc, size []float64
		for f := 0; f < 20; f++ {
			spots := gridSpots(sc.w, sc.h, 20, 14, sigmaPx, sc.photonsFor(snr, sigmaPx), rng)
			img := sc.render(t, spots, rng)
			dets, err := d.Frame(img, f, nil)
			img.Close()
			if err != nil {
				t.Fatal(err)
			}
			for _, de := range dets {
				ecc = append(ecc, de.Eccentricity)
				size = append(size, de.SizePx)
			}
		}
		sort.Float64s(ecc)
		sort.Float64s(size)
		q := func(v []float64, p float64) float64 { return v[int(p*float64(len(v)-1))] }
		t.Logf("%5.0f %6d %8.3f %6.3f %6.3f %8.3f %6.3f %6.3f", snr, len(ecc), q(ecc, .5), q(ecc, .99), q(ecc, .999), q(size, .001), q(size, .5), q(size, .999))
		if m := q(size, .5); math.Abs(m-wantSize) > 0.03*wantSize {
			t.Errorf("SNR %g: median size %.3f px, want %.3f px within 3%%", snr, m, wantSize)
		}
		if snr >= shapeMinSNR && q(ecc, .999) > DefaultMaxEccentricity {
			t.Errorf("SNR %g: 99.9%% of round spots have eccentricity up to %.3f, above the default limit %g", snr, q(ecc, .999), DefaultMaxEccentricity)
		}
		if q(size, .999) > DefaultMaxSizeRatio*wantSize {
			t.Errorf("SNR %g: 99.9%% of round spots have size up to %.3f px, above the default limit %.3f px", snr, q(size, .999), DefaultMaxSizeRatio*wantSize)
		}
	}
}

// TestRejection shows each rejection rule at work, with the rule on and
// off: a blob three times too wide, a streak (a tracer blurred by 10 px of
// motion within the exposure), each beside a normal spot that always
// stays.
func TestRejection(t *testing.T) {
	const sigmaPx = 1.25
	sc := scene{w: 120, h: 60, bgPhotons: 20, readNoise: 2, bitDepth: 8, gain: 1}
	ph := sc.photonsFor(40, sigmaPx)
	normal := spot{20.3, 30.6, sigmaPx, ph}
	var streak []spot
	for i := 0; i <= 40; i++ {
		streak = append(streak, spot{55 + 0.25*float64(i), 30.3, sigmaPx, 3 * ph / 41})
	}
	noLimits := Options{MaxSizePx: 100, MaxEccentricity: 1}
	for _, tc := range []struct {
		name     string
		spots    []spot
		centre   spot
		on, off  Options
		onLeaves bool
	}{
		{"size", []spot{{60, 30, 3 * sigmaPx, 9 * ph}}, spot{x: 60, y: 30}, Options{}, noLimits, false},
		{"eccentricity", streak, spot{x: 60, y: 30.3}, Options{MaxSizePx: 100}, noLimits, false},
	} {
		rng := rand.New(rand.NewPCG(3, 3))
		img := sc.render(t, append([]spot{normal}, tc.spots...), rng)
		bg := sc.background(t)
		for _, rule := range []struct {
			opt  Options
			on   bool
			name string
		}{{tc.on, true, "on"}, {tc.off, false, "off"}} {
			opt := rule.opt
			opt.DiameterPx, opt.Polarity = 4*sigmaPx, PolarityBright
			d, err := NewDetector(opt)
			if err != nil {
				t.Fatal(err)
			}
			if err := d.SetBackground(bg); err != nil {
				t.Fatal(err)
			}
			dets, err := d.Frame(img, 0, nil)
			d.Close()
			if err != nil {
				t.Fatal(err)
			}
			if m := match([]spot{normal}, dets, 0.2); m[0] < 0 {
				t.Errorf("%s rule %s: the normal spot is missing: %+v", tc.name, rule.name, dets)
			}
			near := 0
			for _, de := range dets {
				if math.Hypot(de.XPx-tc.centre.x, de.YPx-tc.centre.y) < 6 {
					near++
				}
			}
			if rule.on && near > 0 {
				t.Errorf("%s rule on: %d detections kept: %+v", tc.name, near, dets)
			}
			if !rule.on && near == 0 {
				t.Errorf("%s rule off: nothing detected: %+v", tc.name, dets)
			}
		}
		img.Close()
		bg.Close()
	}
}
