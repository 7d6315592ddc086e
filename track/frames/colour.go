package frames

import (
	"fmt"
	"image"
	"math"
	"slices"

	"gaptrace/calib/robust"
	"gocv.io/x/gocv"
)

// Grey is how the three channels of a colour video are reduced to the one
// grey channel the frames are delivered in.
type Grey struct {
	// Method is GreyLuma or GreyWeighted.
	Method string
	// WeightsBGR are the weights of the blue, green and red channels,
	// summing to 1: the luma weights, or those chosen for the tracers'
	// contrast against the noise.
	WeightsBGR [3]float64
	// LumaFraction is the contrast-to-noise ratio of the tracers in luma
	// as a fraction of that of the best weighting (1 when luma is best),
	// as measured on the recording's first frames; 0 when Measured is
	// false.
	LumaFraction float64
	// Measured is false when luma was kept without measuring: the codec
	// stores the colour at a lower resolution than luma (chroma
	// subsampling, as Motion JPEG at 4:2:0 or 4:2:2 and H.264 do), and
	// quantizes it harder, so a weighting would lean on the blurred,
	// blotched colour (on a Motion JPEG of red light, weights 0, 0.08,
	// 0.92 cut detectscore's precision from 0.999 to 0.975 and raised its
	// RMS from 0.081 to 0.107 px), which the noise of two frames'
	// difference does not show: the compression's blotches repeat on a
	// static scene.
	Measured bool
}

// unmeasuredLuma is luma kept without measuring (see Grey.Measured).
var unmeasuredLuma = Grey{Method: GreyLuma, WeightsBGR: lumaBGR}

// fullColourCodecs are the FOURCCs of the video codecs whose colour
// channels keep the frame's resolution, as OpenCV's FFmpeg reader reports
// them: lossless FFV1 (OpenCV writes colour FFV1 as RGB), HuffYUV, PNG and
// uncompressed frames (FOURCC 0 or a raw pixel format). Other codecs are
// taken to subsample the colour (H.264, MPEG-4 and most lossy codecs store
// 4:2:0 by default) and keep luma unmeasured.
var fullColourCodecs = []string{"FFV1", "HFYU", "FFVH", "MPNG", "PNG ", "\x00\x00\x00\x00", "BGR\x18", "RGBA", "BGRA", "RGB\x18"}

// fourCC spells a FOURCC property of OpenCV's capture.
func fourCC(v float64) string {
	n := uint32(v)
	return string([]byte{byte(n), byte(n >> 8), byte(n >> 16), byte(n >> 24)})
}

// jpegSubsampled reports whether the JPEG image p stores a colour
// component at a lower resolution than another (its frame header's
// sampling factors differ, ITU-T T.81, 1992, B.2.2), or has no readable
// frame header.
func jpegSubsampled(p []byte) bool {
	i := 2
	for i+4 <= len(p) && p[i] == 0xFF {
		m := p[i+1]
		n := int(p[i+2])<<8 | int(p[i+3])
		if m >= 0xC0 && m <= 0xCF && m != 0xC4 && m != 0xC8 && m != 0xCC {
			// SOFn: P, Y, X, Nf, then Nf times C, H:V, Tq.
			if i+10 > len(p) {
				return true
			}
			nf := int(p[i+9])
			if i+10+3*nf > len(p) || nf < 1 {
				return true
			}
			hv := p[i+11]
			for k := 1; k < nf; k++ {
				if p[i+11+3*k] != hv {
					return true
				}
			}
			return false
		}
		if m == 0xDA || n < 2 {
			return true
		}
		i += 2 + n
	}
	return true
}

// The reductions of Grey.Method.
const (
	// GreyLuma is the standard luma (ITU-R BT.601 weights, as OpenCV's
	// BGR to grey conversion and a JPEG's own luma plane, which Motion
	// JPEG is decoded to directly).
	GreyLuma = "luma"
	// GreyWeighted is a weighted sum of the channels chosen per recording.
	GreyWeighted = "weighted"
)

// lumaBGR are the luma weights of blue, green and red of ITU-R
// Recommendation BT.601 (Y = 0.299 R + 0.587 G + 0.114 B), which OpenCV's
// ColorBGRToGray (its cvtColor documentation) and JPEG's YCbCr use.
var lumaBGR = [3]float64{0.114, 0.587, 0.299}

const (
	// lumaLossFraction is how much contrast-to-noise luma may lose against
	// the best weighting and still be used: 5 % raises the faintest
	// tracer found by 5 % of the detection threshold, less than the spread
	// of tracer brightness, and keeps the fast path (Motion JPEG decoded
	// to its luma plane, no colour conversion) for grey and near-neutral
	// video.
	lumaLossFraction = 0.05
	// colourSpotSigmaPx and colourBackgroundSigmaPx are the two Gaussians
	// whose difference is the band-pass the contrast and the noise are
	// measured through: a spot of a tracer a few pixels across against
	// the background around it (common practice: a difference of
	// Gaussians a few times apart in scale). The frames module does not
	// know the tracers' size; the channels' contrast ratios do not depend
	// on it.
	colourSpotSigmaPx       = 1.0
	colourBackgroundSigmaPx = 4.0
	// colourSampleStep is the grid on which the band-passed frame is
	// sampled: every second pixel of every second row, a quarter of a
	// million samples on a 1 MP frame.
	colourSampleStep = 2
	// colourSignalSigmas is how far beyond the noise, in sds of the
	// channels' noise-weighted sum, a sample must lie to count as tracer
	// contrast: far out of the noise's reach (a Gaussian's tail beyond 8
	// sd is 1e-15).
	colourSignalSigmas = 8
	// colourRegionPx bounds the side of the frame's middle square the
	// reduction is chosen on: 512 px hold a hundred thousand samples and
	// a few hundred tracers at a typical seeding, more than the 1 %
	// scatter of the noise's MAD needs, at a quarter of a 1 MP frame's
	// cost.
	colourRegionPx = 512
	// neutralSlackGrey, neutralSamples and neutralOutliers decide that a
	// frame is grey: its channels within 2 grey levels of each other (the
	// rounding of a JPEG's colour conversion and of its subsampled chroma
	// on grey content) at all but 0.1 % of 10 000 sampled pixels.
	neutralSlackGrey = 2
	neutralSamples   = 10000
	neutralOutliers  = 0.001
	// minColourSignal is the fewest signal samples the weights are chosen
	// from; with fewer, luma is used.
	minColourSignal = 50
)

// chooseGrey measures, on two consecutive 8-bit BGR frames, the tracers'
// contrast in each channel through a band-pass (colourSpotSigmaPx against
// colourBackgroundSigmaPx) on the first, and the covariance of the
// band-passed noise between the channels on their difference (robustly,
// from the MADs of the channels and of their sums and differences, which
// shows correlated noise such as a colour sensor's demosaicing or chroma
// subsampling; the static scene, walls and plates, cancels in the
// difference). The weights that give the best contrast-to-noise ratio are
// those of the generalized matched filter, C^-1 s for contrast s and
// noise covariance C (from memory; Cauchy-Schwarz on C^(1/2) w and
// C^(-1/2) s shows it), kept non-negative so that the grey image stays
// within the channels' range. Luma is kept unless it loses more than
// lumaLossFraction of that ratio. With an empty second frame (a video of
// one frame) the noise is taken from the first frame's band-pass.
func chooseGrey(first, second gocv.Mat) (Grey, error) {
	luma := Grey{Method: GreyLuma, WeightsBGR: lumaBGR, LumaFraction: 1, Measured: true}
	for _, m := range []gocv.Mat{first, second} {
		if !m.Empty() && m.Type() != gocv.MatTypeCV8UC3 {
			return luma, fmt.Errorf("frames: colour reduction of a frame of type %v, want 8-bit BGR", m.Type())
		}
	}
	if first.Empty() || (!second.Empty() && (second.Cols() != first.Cols() || second.Rows() != first.Rows())) {
		return luma, fmt.Errorf("frames: colour reduction needs a frame, and a second of the same size or none")
	}
	if neutralChannels(first) {
		return luma, nil
	}
	r := centralRegion(first.Cols(), first.Rows())
	a := first.Region(r)
	defer a.Close()
	b := gocv.NewMat()
	if !second.Empty() {
		b.Close()
		b = second.Region(r)
	}
	defer b.Close()
	s, c, ok := colourStats(a, b)
	if !ok {
		return luma, nil
	}
	best, bestCNR := bestWeights(s, c)
	if !(bestCNR > 0) {
		return luma, nil
	}
	frac := cnr(lumaBGR, s, c) / bestCNR
	if frac >= 1-lumaLossFraction {
		luma.LumaFraction = math.Min(1, frac)
		return luma, nil
	}
	return Grey{Method: GreyWeighted, WeightsBGR: best, LumaFraction: frac, Measured: true}, nil
}

// centralRegion is the middle of a w x h frame, at most colourRegionPx
// square, that the reduction is chosen on.
func centralRegion(w, h int) image.Rectangle {
	rw, rh := min(w, colourRegionPx), min(h, colourRegionPx)
	x0, y0 := (w-rw)/2, (h-rh)/2
	return image.Rect(x0, y0, x0+rw, y0+rh)
}

// neutralChannels reports whether the BGR frame m is grey: on a sample of
// its pixels, fewer than neutralOutliers of them have channels more than
// neutralSlackGrey apart. Every weighting of such a frame is its luma.
func neutralChannels(m gocv.Mat) bool {
	px, err := m.DataPtrUint8()
	if err != nil || len(px) < 3 {
		return false
	}
	n, off := 0, 0
	step := max(1, len(px)/3/neutralSamples)
	for k := 0; 3*k+2 < len(px); k += step {
		b, g, r := int(px[3*k]), int(px[3*k+1]), int(px[3*k+2])
		if abs(b-g) > neutralSlackGrey || abs(g-r) > neutralSlackGrey {
			off++
		}
		n++
	}
	return float64(off) < neutralOutliers*float64(n)
}

func abs(i int) int {
	if i < 0 {
		return -i
	}
	return i
}

// bandPass returns the band-pass of the BGR frame m, CV_32FC3; the caller
// closes it.
func bandPass(m gocv.Mat) gocv.Mat {
	f, near, far := gocv.NewMat(), gocv.NewMat(), gocv.NewMat()
	defer f.Close()
	defer near.Close()
	defer far.Close()
	m.ConvertTo(&f, gocv.MatTypeCV32FC3)
	gocv.GaussianBlur(f, &near, image.Pt(0, 0), colourSpotSigmaPx, colourSpotSigmaPx, gocv.BorderReflect101)
	gocv.GaussianBlur(f, &far, image.Pt(0, 0), colourBackgroundSigmaPx, colourBackgroundSigmaPx, gocv.BorderReflect101)
	bp := gocv.NewMat()
	gocv.Subtract(near, far, &bp)
	return bp
}

// colourStats returns the tracers' mean band-passed contrast per channel
// (signed towards the tracers) in frame first and the band-passed noise
// covariance of the channels, from first minus second (or first alone
// when second is empty); false when the frame shows too little contrast
// to choose by.
func colourStats(first, second gocv.Mat) (s [3]float64, c [3][3]float64, ok bool) {
	bp := bandPass(first)
	defer bp.Close()
	px, err := bp.DataPtrFloat32()
	if err != nil {
		return s, c, false
	}
	noisePx, scale := px, 1.0
	if !second.Empty() {
		bp2 := bandPass(second)
		defer bp2.Close()
		diff := gocv.NewMat()
		defer diff.Close()
		gocv.Subtract(bp, bp2, &diff)
		if noisePx, err = diff.DataPtrFloat32(); err != nil {
			return s, c, false
		}
		scale = 1 / math.Sqrt2 // the difference holds the noise of two frames
	}
	w, h := first.Cols(), first.Rows()
	var ch, nz [3][]float32
	for y := 0; y < h; y += colourSampleStep {
		for x := (y / colourSampleStep) % colourSampleStep; x < w; x += colourSampleStep {
			k := 3 * (y*w + x)
			for i := range ch {
				ch[i] = append(ch[i], px[k+i])
				nz[i] = append(nz[i], noisePx[k+i])
			}
		}
	}
	n := len(ch[0])
	if n < minColourSignal {
		return s, c, false
	}
	// Noise: robust sds of each channel and of each pair's sum and
	// difference, cov(a, b) = (var(a+b) - var(a-b)) / 4.
	buf := make([]float32, n)
	sd := func(v func(k int) float32) float64 {
		for k := range buf {
			buf[k] = v(k)
		}
		med := robust.SelectKth(buf, n/2)
		for k := range buf {
			buf[k] = float32(math.Abs(float64(buf[k] - med)))
		}
		return scale * robust.MADToSigma * float64(robust.SelectKth(buf, n/2))
	}
	var sig [3]float64
	for i := range 3 {
		sig[i] = sd(func(k int) float32 { return nz[i][k] })
		c[i][i] = sig[i] * sig[i]
	}
	if slices.Contains(sig[:], 0) {
		return s, c, false // a channel without noise: leave it to luma
	}
	for i := range 3 {
		for j := i + 1; j < 3; j++ {
			plus := sd(func(k int) float32 { return nz[i][k] + nz[j][k] })
			minus := sd(func(k int) float32 { return nz[i][k] - nz[j][k] })
			c[i][j] = (plus*plus - minus*minus) / 4
			c[j][i] = c[i][j]
		}
	}
	// Signal: the samples far out in the noise-weighted sum z; their
	// band-passed values, signed like z, are the tracers' contrast.
	z := buf
	for k := range z {
		z[k] = float32(float64(ch[0][k])/sig[0] + float64(ch[1][k])/sig[1] + float64(ch[2][k])/sig[2])
	}
	var zs float64
	for i := range 3 {
		for j := range 3 {
			zs += c[i][j] / (sig[i] * sig[j])
		}
	}
	lim := colourSignalSigmas * math.Sqrt(zs)
	cnt := 0
	for k, v := range z {
		if math.Abs(float64(v)) < lim {
			continue
		}
		sgn := math.Copysign(1, float64(v))
		for i := range 3 {
			s[i] += sgn * float64(ch[i][k])
		}
		cnt++
	}
	if cnt < minColourSignal {
		return s, c, false
	}
	for i := range s {
		s[i] /= float64(cnt)
	}
	return s, c, true
}

// cnr is the contrast-to-noise ratio w.s / sqrt(w' C w) of weights w.
func cnr(w, s [3]float64, c [3][3]float64) float64 {
	var num, v float64
	for i := range 3 {
		num += w[i] * s[i]
		for j := range 3 {
			v += w[i] * c[i][j] * w[j]
		}
	}
	if !(v > 0) {
		return 0
	}
	return num / math.Sqrt(v)
}

// bestWeights returns the non-negative weights, summing to 1, of the best
// contrast-to-noise ratio for contrast s and noise covariance c, and that
// ratio: the matched filter C^-1 s on each subset of the channels (the
// optimum with the others at zero), the best of those whose weights are
// all positive.
func bestWeights(s [3]float64, c [3][3]float64) ([3]float64, float64) {
	var best [3]float64
	bestCNR := 0.0
	for set := 1; set < 8; set++ {
		var idx []int
		for i := range 3 {
			if set&(1<<i) != 0 {
				idx = append(idx, i)
			}
		}
		w, ok := solveSub(c, s, idx)
		if !ok {
			continue
		}
		var sum float64
		pos := true
		for _, i := range idx {
			pos = pos && w[i] > 0
			sum += w[i]
		}
		if !pos {
			continue
		}
		for i := range w {
			w[i] /= sum
		}
		if r := cnr(w, s, c); r > bestCNR {
			best, bestCNR = w, r
		}
	}
	return best, bestCNR
}

// solveSub solves C_II w_I = s_I for the channels idx (the others' weights
// zero), by Gaussian elimination with partial pivoting.
func solveSub(c [3][3]float64, s [3]float64, idx []int) ([3]float64, bool) {
	n := len(idx)
	var a [3][4]float64
	for r, i := range idx {
		for q, j := range idx {
			a[r][q] = c[i][j]
		}
		a[r][n] = s[i]
	}
	for col := range n {
		p := col
		for r := col + 1; r < n; r++ {
			if math.Abs(a[r][col]) > math.Abs(a[p][col]) {
				p = r
			}
		}
		if !(math.Abs(a[p][col]) > 0) {
			return [3]float64{}, false
		}
		a[col], a[p] = a[p], a[col]
		for r := range n {
			if r == col {
				continue
			}
			f := a[r][col] / a[col][col]
			for q := col; q <= n; q++ {
				a[r][q] -= f * a[col][q]
			}
		}
	}
	var w [3]float64
	for r, i := range idx {
		w[i] = a[r][n] / a[r][r]
	}
	return w, true
}

// weightsMat returns g's weights as the 1x3 CV_32F matrix of
// gocv.Transform; the caller closes it.
func weightsMat(g Grey) gocv.Mat {
	m := gocv.NewMatWithSize(1, 3, gocv.MatTypeCV32F)
	for i, w := range g.WeightsBGR {
		m.SetFloatAt(0, i, float32(w))
	}
	return m
}
