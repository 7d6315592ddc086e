package detect_test

import (
	"fmt"
	"math/rand/v2"
	"os"
	"path/filepath"

	"gaptrace/track/detect"
	"gaptrace/track/frames"
	"gaptrace/track/synth"
	"gocv.io/x/gocv"
)

// Detect two bright tracers of 5 px, moving 8 px a frame, in five frames of
// a gap between walls at rows 10 and 70, against the temporal median of the
// frames.
func ExampleRun() {
	dir, _ := os.MkdirTemp("", "detect-example")
	defer os.RemoveAll(dir)
	rng := rand.New(rand.NewPCG(1, 2))
	for f := 0; f < 5; f++ {
		img := make([]float64, 96*80)
		for i := range img {
			img[i] = 20 // background photons
		}
		synth.AddSpot(img, 96, 80, 15.25+8*float64(f), 40.5, 1.25, 2000)
		synth.AddSpot(img, 96, 80, 80.75-8*float64(f), 30.2, 1.25, 1500)
		synth.AddNoise(img, 2, rng)
		m, _ := synth.ToMat(img, 96, 80, 8, 1)
		gocv.IMWrite(filepath.Join(dir, fmt.Sprintf("f%d.png", f)), m)
		m.Close()
	}

	src, _ := frames.Open(dir, 0, frames.All)
	bg, _ := frames.Median(src, 5)
	defer bg.Close()
	src.Close()

	src, _ = frames.Open(dir, 0, frames.All)
	defer src.Close()
	opt := detect.Options{
		DiameterPx: 5,
		Mask: &detect.Mask{
			Stationary: [2][2]float64{{0, 70}, {95, 70}},
			Moving:     [2][2]float64{{0, 10}, {95, 10}},
			MarginPx:   3,
		},
	}
	err := detect.Run(src, bg, opt, func(frame int, dets []detect.Detection) error {
		for _, d := range dets {
			fmt.Printf("frame %d: (%.1f, %.1f) px, SNR %.0f\n", frame, d.XPx, d.YPx, d.SNR)
		}
		return nil
	})
	if err != nil {
		fmt.Println(err)
	}
	// Output:
	// frame 0: (80.7, 30.2) px, SNR 33
	// frame 0: (15.3, 40.5) px, SNR 47
	// frame 1: (72.8, 30.2) px, SNR 35
	// frame 1: (23.3, 40.5) px, SNR 44
	// frame 2: (64.7, 30.2) px, SNR 36
	// frame 2: (31.2, 40.5) px, SNR 48
	// frame 3: (56.7, 30.2) px, SNR 35
	// frame 3: (39.2, 40.5) px, SNR 44
	// frame 4: (48.8, 30.2) px, SNR 31
	// frame 4: (47.3, 40.5) px, SNR 46
}
