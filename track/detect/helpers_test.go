package detect

import (
	"fmt"
	"gaptrace/track/matleak"
	"io"
	"math"
	"math/rand/v2"
	"testing"

	"gaptrace/track/frames"
	"gaptrace/track/synth"
	"gocv.io/x/gocv"
)

// TestMain fails the package when a test leaves an OpenCV Mat open.
func TestMain(m *testing.M) { matleak.Main(m) }

// spot is a true tracer of a test frame.
type spot struct {
	x, y, sigma, photons float64
}

// scene is the recipe of a test frame, in photons: a uniform background,
// read noise, and the camera's depth and gain (grey levels per photon).
type scene struct {
	w, h       int
	bgPhotons  float64
	readNoise  float64
	bitDepth   int
	gain       float64
	static     func(img []float64) // static features (walls, stuck particles), or nil
	darkTracer bool                // spots absorb light instead of emitting it
}

// noiseGrey is the per-pixel noise sd of the scene's background in grey
// levels: shot noise of the background and read noise, times the gain.
func (s scene) noiseGrey() float64 {
	return s.gain * math.Sqrt(s.bgPhotons+s.readNoise*s.readNoise)
}

// amplitudeGrey is the amplitude, in grey levels, of a spot's Gaussian
// density at its centre: gain * photons / (2 pi sigma^2), as in the
// package's SNR definition.
func (s scene) amplitudeGrey(sp spot) float64 {
	return s.gain * sp.photons / (2 * math.Pi * sp.sigma * sp.sigma)
}

// photonsFor returns the photon count that gives a spot of sd sigma the SNR
// snr in this scene.
func (s scene) photonsFor(snr, sigma float64) float64 {
	return snr * s.noiseGrey() / s.gain * 2 * math.Pi * sigma * sigma
}

// render draws the spots into a new frame with the synth renderer.
func (s scene) render(t testing.TB, spots []spot, rng *rand.Rand) gocv.Mat {
	t.Helper()
	img := make([]float64, s.w*s.h)
	for i := range img {
		img[i] = s.bgPhotons
	}
	if s.static != nil {
		s.static(img)
	}
	for _, sp := range spots {
		p := sp.photons
		if s.darkTracer {
			p = -p
		}
		synth.AddSpot(img, s.w, s.h, sp.x, sp.y, sp.sigma, p)
	}
	synth.AddNoise(img, s.readNoise, rng)
	m, err := synth.ToMat(img, s.w, s.h, s.bitDepth, s.gain)
	if err != nil {
		t.Fatal(err)
	}
	return m
}

// background returns the scene's noiseless expected background in grey
// levels, as CV_32F.
func (s scene) background(t testing.TB) gocv.Mat {
	t.Helper()
	img := make([]float64, s.w*s.h)
	for i := range img {
		img[i] = s.bgPhotons
	}
	if s.static != nil {
		s.static(img)
	}
	m := gocv.NewMatWithSize(s.h, s.w, gocv.MatTypeCV32F)
	f, _ := m.DataPtrFloat32()
	for i, v := range img {
		f[i] = float32(v * s.gain)
	}
	return m
}

// memSource is a frames.Source over Mats held in memory.
type memSource struct {
	info   Info
	frames []gocv.Mat
	next   int
	failAt int // frame at which Next fails, -1 for never
}

// Info aliases frames.Info for brevity in the tests.
type Info = frames.Info

func newMemSource(ms []gocv.Mat) *memSource {
	depth := 8
	if ms[0].Type() == gocv.MatTypeCV16U {
		depth = 16
	}
	return &memSource{info: Info{Path: "memory", Frames: len(ms), FPS: 100, WidthPx: ms[0].Cols(), HeightPx: ms[0].Rows(), BitDepth: depth}, frames: ms, failAt: -1}
}

func (m *memSource) Info() Info { return m.info }
func (m *memSource) Next(dst *gocv.Mat) (int, error) {
	if m.next >= len(m.frames) {
		return 0, io.EOF
	}
	if m.next == m.failAt {
		return 0, fmt.Errorf("memory: cannot read frame %d", m.next)
	}
	m.frames[m.next].CopyTo(dst)
	m.next++
	return m.next - 1, nil
}
func (m *memSource) Close() error { return nil }

func closeAll(ms []gocv.Mat) {
	for i := range ms {
		ms[i].Close()
	}
}

// gridSpots places spots of sd sigma on a grid of the given pitch, each at a
// uniformly random sub-pixel offset, keeping margin px from the border.
func gridSpots(w, h int, pitch, margin, sigma, photons float64, rng *rand.Rand) []spot {
	var out []spot
	for y := margin; y <= float64(h)-margin; y += pitch {
		for x := margin; x <= float64(w)-margin; x += pitch {
			out = append(out, spot{x + rng.Float64() - 0.5, y + rng.Float64() - 0.5, sigma, photons})
		}
	}
	return out
}

// match pairs each true spot with the nearest unused detection within
// radiusPx (the spots of the tests are far apart, so greedy nearest is
// unambiguous) and returns, per spot, the detection index or -1.
func match(spots []spot, dets []Detection, radiusPx float64) []int {
	out := make([]int, len(spots))
	used := make([]bool, len(dets))
	for i, s := range spots {
		out[i] = -1
		best := radiusPx * radiusPx
		for j, d := range dets {
			d2 := (d.XPx-s.x)*(d.XPx-s.x) + (d.YPx-s.y)*(d.YPx-s.y)
			if !used[j] && d2 <= best {
				best, out[i] = d2, j
			}
		}
		if out[i] >= 0 {
			used[out[i]] = true
		}
	}
	return out
}

// synthAddSpot draws s into the photon image img.
func synthAddSpot(img []float64, w, h int, s spot) {
	synth.AddSpot(img, w, h, s.x, s.y, s.sigma, s.photons)
}

func formatG(v float64) string { return fmt.Sprintf("%g", v) }

func padf(format string, a ...any) string { return fmt.Sprintf(format, a...) }
