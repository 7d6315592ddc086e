package detect

import (
	"math/rand/v2"
	"testing"
)

// benchFrame renders a 1024x1024 8-bit frame with about 1000 tracers of 5 px
// and SNR 5 to 30.
func benchFrame(b *testing.B) (scene, []spot) {
	sc := scene{w: 1024, h: 1024, bgPhotons: 20, readNoise: 2, bitDepth: 8, gain: 1}
	rng := rand.New(rand.NewPCG(8, 8))
	var spots []spot
	for i := 0; i < 1000; i++ {
		spots = append(spots, spot{8 + rng.Float64()*1008, 8 + rng.Float64()*1008, 1.25, sc.photonsFor(5+25*rng.Float64(), 1.25)})
	}
	return sc, spots
}

// BenchmarkFrame is the cost of Detector.Frame on one 1024x1024 frame with
// 1000 tracers, per estimator.
func BenchmarkFrame(b *testing.B) {
	sc, spots := benchFrame(b)
	img := sc.render(b, spots, rand.New(rand.NewPCG(9, 9)))
	defer img.Close()
	bg := sc.background(b)
	defer bg.Close()
	for _, e := range []Estimator{Centroid, RadialSymmetry} {
		b.Run(e.String(), func(b *testing.B) {
			d, err := NewDetector(Options{DiameterPx: 5, Polarity: PolarityBright, Estimator: e})
			if err != nil {
				b.Fatal(err)
			}
			if err := d.SetBackground(bg); err != nil {
				b.Fatal(err)
			}
			defer d.Close()
			var out []Detection
			b.ReportAllocs()
			for b.Loop() {
				out, err = d.Frame(img, 0, out[:0])
				if err != nil {
					b.Fatal(err)
				}
			}
			b.ReportMetric(float64(len(out)), "detections")
		})
	}
}
