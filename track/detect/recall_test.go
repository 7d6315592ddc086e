package detect

import (
	"math"
	"math/rand/v2"
	"strings"
	"testing"

	"gaptrace/track/frames"
	"gocv.io/x/gocv"
)

// recallScene is a small gap between two bright walls, with a faint
// reflection band and tracers stuck to the walls' vicinity: all static, so
// the temporal median must remove them, while free tracers of SNR 1 to 16
// appear at new random places in every frame.
type recallScene struct {
	scene
	stuck        []spot
	wallTop      float64 // moving wall's row, px
	wallBottom   float64 // stationary wall's row, px
	tracersFrame int
}

func newRecallScene() recallScene {
	rs := recallScene{
		scene:        scene{w: 256, h: 256, bgPhotons: 20, readNoise: 2, bitDepth: 8, gain: 1},
		wallTop:      24,
		wallBottom:   232,
		tracersFrame: 120,
	}
	ph := rs.photonsFor(20, 1.25)
	for i := 0; i < 6; i++ {
		rs.stuck = append(rs.stuck, spot{30 + 40*float64(i) + 0.3, 40 + 30*float64(i%3), 1.25, ph})
	}
	rs.static = func(img []float64) {
		for y := 0; y < rs.h; y++ {
			row := img[y*rs.w : y*rs.w+rs.w]
			add := 0.0
			if float64(y) < rs.wallTop || float64(y) > rs.wallBottom {
				add = 150
			}
			// A reflection band along the flow.
			add += 15 * math.Exp(-math.Pow(float64(y)-70, 2)/8)
			for x := range row {
				row[x] += add
			}
		}
		for _, s := range rs.stuck {
			synthAddSpot(img, rs.w, rs.h, s)
		}
	}
	return rs
}

// tracers returns the free tracers of one frame: uniform in the gap at least
// 14 px apart, SNR uniform in [1, 16].
func (rs recallScene) tracers(rng *rand.Rand) []spot {
	var out []spot
	const sepPx = 14
	for tries := 0; len(out) < rs.tracersFrame && tries < 20*rs.tracersFrame; tries++ {
		x := 8 + rng.Float64()*float64(rs.w-16)
		y := rs.wallTop + 8 + rng.Float64()*(rs.wallBottom-rs.wallTop-16)
		ok := true
		for _, o := range append(out, rs.stuck...) {
			if math.Hypot(o.x-x, o.y-y) < sepPx {
				ok = false
				break
			}
		}
		if ok {
			snr := 1 + 15*rng.Float64()
			out = append(out, spot{x, y, 1.25, rs.photonsFor(snr, 1.25)})
		}
	}
	return out
}

// TestRecallPrecision measures detection recall against the true SNR and
// precision against the measured SNR, with the background taken as the
// temporal median of the frames themselves, and without a background image
// (the box-mean band-pass). SNR is amplitude over per-pixel
// noise: for the truth gain*photons/(2 pi s^2) over the background's noise
// sd gain*sqrt(background + read^2); for a detection as defined in the
// package documentation.
func TestRecallPrecision(t *testing.T) {
	const nFrames = 40
	rs := newRecallScene()
	rng := rand.New(rand.NewPCG(4, 4))
	var imgs []gocv.Mat
	var truth [][]spot
	for f := 0; f < nFrames; f++ {
		sp := rs.tracers(rng)
		truth = append(truth, sp)
		imgs = append(imgs, rs.render(t, sp, rng))
	}
	defer closeAll(imgs)
	for _, mode := range []string{"median", "none"} {
		t.Run("background="+mode, func(t *testing.T) {
			bg := gocv.NewMat()
			defer bg.Close()
			if mode == "median" {
				m, err := frames.Median(newMemSource(imgs), nFrames)
				if err != nil {
					t.Fatal(err)
				}
				bg.Close()
				bg = m
			}
			recallPrecision(t, rs, imgs, truth, bg)
		})
	}
}

// recallPrecision runs Run over imgs against bg (empty for none) and
// reports and checks recall and precision against truth.
func recallPrecision(t *testing.T, rs recallScene, imgs []gocv.Mat, truth [][]spot, bg gocv.Mat) {
	const (
		// acceptSNR and acceptRate are the acceptance of issue 3: recall
		// and precision of at least 99% from SNR 5.
		acceptSNR  = 5
		acceptRate = 0.99
		matchPx    = 2
	)
	nFrames := len(imgs)
	withBg := !bg.Empty()
	mask := &Mask{
		Stationary: [2][2]float64{{0, rs.wallBottom}, {float64(rs.w - 1), rs.wallBottom}},
		Moving:     [2][2]float64{{0, rs.wallTop}, {float64(rs.w - 1), rs.wallTop}},
		MarginPx:   5,
	}
	opt := Options{DiameterPx: 5, MinSNR: 2.5, Mask: mask, Workers: 2}
	all := make([][]Detection, nFrames)
	if err := Run(newMemSource(imgs), bg, opt, func(f int, d []Detection) error { all[f] = d; return nil }); err != nil {
		t.Fatal(err)
	}
	edges := []float64{1, 2, 3, 4, 5, 6, 8, 10, 12, 16}
	found, total := make([]int, len(edges)), make([]int, len(edges))
	trueDet, nDet := make([]int, len(edges)), make([]int, len(edges))
	bin := func(snr float64) int {
		for i := len(edges) - 1; i >= 0; i-- {
			if snr >= edges[i] {
				return i
			}
		}
		return -1
	}
	noise := rs.noiseGrey()
	var stuckFound, stuckLow, outside int
	for f := range all {
		m := match(truth[f], all[f], matchPx)
		matched := make([]bool, len(all[f]))
		for i, j := range m {
			b := bin(rs.amplitudeGrey(truth[f][i]) / noise)
			total[b]++
			if j >= 0 {
				found[b]++
				matched[j] = true
			}
		}
		// Without a background image the stuck particles are tracers like
		// the others: finding them is right.
		for _, j := range match(rs.stuck, all[f], matchPx) {
			if j >= 0 {
				if !withBg {
					matched[j] = true
					continue
				}
				stuckLow++
				if all[f][j].SNR >= acceptSNR {
					stuckFound++
				}
			}
		}
		for j, d := range all[f] {
			if !mask.Contains(d.XPx, d.YPx) {
				outside++
			}
			b := max(0, bin(d.SNR))
			nDet[b]++
			if matched[j] {
				trueDet[b]++
			}
		}
	}
	var b strings.Builder
	b.WriteString("SNR bin   true  recall | detections  precision\n")
	var fAbove, tAbove, dAbove, tdAbove int
	for i, lo := range edges {
		hi := "inf"
		if i+1 < len(edges) {
			hi = formatG(edges[i+1])
		}
		rec, prec := ratio(found[i], total[i]), ratio(trueDet[i], nDet[i])
		b.WriteString(padf("%4s-%-4s %5d  %6.4f | %10d  %9.4f\n", formatG(lo), hi, total[i], rec, nDet[i], prec))
		if lo >= acceptSNR {
			fAbove += found[i]
			tAbove += total[i]
			dAbove += nDet[i]
			tdAbove += trueDet[i]
		}
	}
	t.Logf("recall by true SNR, precision by measured SNR (MinSNR %g, %d frames, %d tracers a frame):\n%s", opt.MinSNR, nFrames, rs.tracersFrame, b.String())
	rec, prec := ratio(fAbove, tAbove), ratio(tdAbove, dAbove)
	t.Logf("SNR >= %d: recall %.4f (%d/%d), precision %.4f (%d/%d)", acceptSNR, rec, fAbove, tAbove, prec, tdAbove, dAbove)
	if rec < acceptRate || prec < acceptRate {
		t.Errorf("SNR >= %d: recall %.4f, precision %.4f, want both >= %g", acceptSNR, rec, prec, acceptRate)
	}
	if withBg {
		// The residual at a stuck particle is the difference of two noisy
		// readings of a bright spot, with more shot noise than elsewhere:
		// it may pass a low threshold, never a high one.
		t.Logf("stuck particles: %d detections in %d frames, %d of them at SNR >= %d", stuckLow, nFrames, stuckFound, acceptSNR)
		if stuckFound > 0 {
			t.Errorf("%d detections of stuck particles at SNR >= %d, which the background should remove", stuckFound, acceptSNR)
		}
	}
	if outside > 0 {
		t.Errorf("%d detections outside the mask", outside)
	}
}

func ratio(a, b int) float64 {
	if b == 0 {
		return math.NaN()
	}
	return float64(a) / float64(b)
}
