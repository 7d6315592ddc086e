package detect

import (
	"encoding/binary"
	"fmt"
	"gaptrace/calib/robust"
	"image"
	"math"
	"slices"
	"unsafe"

	"gocv.io/x/gocv"
)

const (
	// diameterSigmas is the apparent diameter in spot sds: the width at
	// which a Gaussian falls to e^-2 of its peak (common practice).
	diameterSigmas = 4
	// boxDiameters is the width of the box mean that stands in for the
	// background image when there is none, in tracer diameters: wide enough
	// that the spot takes little of its mean, narrow enough to follow uneven
	// illumination.
	boxDiameters = 2
	// kernelSigmas is the half-width of the refinement window in sds: the
	// product of the weight and the spot is below 1e-4 of its peak beyond
	// it.
	kernelSigmas = 3
	// filterSigmas is the half-width of the matched Gaussian kernel of the
	// candidate search in sds: 2 sds keep 95% of its weight per axis, and
	// the kernel is only used to find the spots, not to locate them.
	filterSigmas = 2
	// windowSlack is how much wider, in px, the pixels loaded around a
	// candidate are than the refinement window, so that the window can
	// follow the estimate by up to maxShiftPx.
	windowSlack = 2
	// noiseSamples and crudeNoiseSamples are about the numbers of 2x2
	// sums the final and the first noise estimates look at: the MAD of n
	// samples has a relative sd of about 1.36/sqrt(n), 1% and 2% here.
	noiseSamples      = 16384
	crudeNoiseSamples = 4096
	// minNoiseSamples is the fewest samples the noise is estimated from.
	minNoiseSamples = 100
	// clipSigmas is where the first noise estimate clips the samples, and
	// clippedMAD the median absolute value of a unit Gaussian clipped there:
	// the x with P(|z| < x) = P(|z| < 2.5)/2.
	clipSigmas = 2.5
	clippedMAD = 0.66488
	// exclusionWindows is how far, in refinement windows, the final noise
	// estimate keeps from every candidate.
	exclusionWindows = 2
	// noiselessGrey is the noise assumed for a frame without any: a tenth of
	// a grey level, the rounding of an 8-bit image.
	noiselessGrey = 0.1
	// candidateSlack lowers the candidate threshold below MinSNR so that
	// spots whose final SNR (fitted at the sub-pixel position) reaches MinSNR
	// are not lost to the offset of the integer maximum, the noise of the
	// filtered peak and the rounding of the filtered image.
	candidateSlack = 0.6
	// centroidMaskWidening is the centroid mask's sd over the spot's. A mask
	// as wide as the spot is the maximum-likelihood weight when background
	// noise dominates; with the spot's own shot noise it gives sqrt(16/9)
	// times the shot-noise limit (the factor of Mortensen et al. 2010, Nat.
	// Methods 7:377, for least squares). Widening it by 15% brings that to
	// 1.2x, as worked out from the moments of the Gaussians, for a few
	// percent more variance when background dominates;
	// TestLocalizationPrecision measures both regimes.
	centroidMaskWidening = 1.15
	// shapeMinSNR is the SNR from which the eccentricity limit applies:
	// below it the second moments of a round spot are too noisy to judge
	// its shape (at SNR 10, 99.9% of round spots have an eccentricity
	// under 0.75 in TestShapeNoise).
	shapeMinSNR = 10
	// maxIterations bounds the centroid iterations.
	maxIterations = 20
	// convergedPx ends the centroid iterations: a step a tenth of the best
	// precision the package reaches.
	convergedPx = 1e-3
	// maxShiftPx rejects a candidate whose refined position is more than a
	// pixel and a half from its integer maximum: the refinement ran away.
	maxShiftPx = 1.5
	// polarityMinPixels is the fewest extreme pixels automatic polarity
	// looks at, so that a single hot pixel cannot decide.
	polarityMinPixels = 10
)

// Detector finds tracers in one frame at a time. It owns its buffers: use
// one Detector per goroutine, and Close it when done.
type Detector struct {
	opt      Options
	polarity string

	sigma float64 // nominal spot sd, px
	wr    int     // refinement window half-width, px
	// decaySpot and decayMask are gauss1D's decay for the spot's and the
	// centroid mask's variance.
	decaySpot, decayMask float64
	// flowRad is the flow's direction, the angle of the Mask's moving wall
	// line from the image rows (0 without a Mask), rad.
	flowRad float64
	khalf   int // matched Gaussian kernel half-width, px
	ksize   int // matched Gaussian kernel size, px
	boxPx   int // box mean width without a background image, px
	// gain1 and gainBox are the band-pass responses at the centre of a
	// unit-amplitude spot, against a background image and against the box
	// mean.
	gain1, gainBox float64

	bg       []float32 // background image, grey levels (nil: none)
	bgW, bgH int
	bgSmooth gocv.Mat // matched Gaussian of the background, in the frames' depth
	bgType   gocv.MatType

	sm, lo, cand, cand2 gocv.Mat

	samples []float32
	// ampW are the weights of the least-squares amplitude of a spot
	// centred on a pixel, over the (2 wr + 1)^2 window, and ampWNorm their
	// root sum of squares; amps the amplitudes at the empty positions of a
	// frame (amplitudeNoise).
	ampW     []float64
	ampWNorm float64
	amps     []float32
	// tailRatio is the last frame's amplitude scale at the tail over that
	// of the core (amplitudeNoise): 1 for Gaussian noise, more for a lossy
	// codec's blotches.
	tailRatio float64
	excl      []bool
	// noiseAt holds, for the crude and the fine noise sampling of a frame
	// size, the sample pixels inside the mask: the same in every frame.
	noiseAt [2]noiseGrid
	cands   []candidate
	order   []int32
	head    []int32 // separation grid: first candidate of each cell
	next    []int32 // next candidate in the same cell
	frameW  int
	frameH  int
	win     []float64 // residual around a candidate, (2R+1)^2, R = wr+windowSlack
	ring    []float64 // the window's border pixels
	wx, wy  []float64
	gx, gy  []float64
	sgx     []float64
	sgy     []float64

	// kept are the indices of the candidates not dropped, in raster
	// order; nbStart and nbList their neighbours' (kept[k]'s are
	// nbList[nbStart[k]:nbStart[k+1]]); models the neighbours' spots of
	// the candidate being refined; valid marks the window's pixels inside
	// the frame.
	kept, nbStart, nbList []int32
	models                []spotModel
	valid                 []bool
	mdx, mdy              []float64

	// bands are the rows next to the walls processed with the walls'
	// profile subtracted, for frames of bandsW x bandsH.
	bands          []wallBand
	bandsW, bandsH int
	// cutPlate marks, in this frame, the walls whose plate is left out
	// (unmodelledPlates); plateS and gapS are its samples.
	cutPlate     []bool
	plateS, gapS []float32
}

type candidate struct {
	x, y    int
	v       int // band-passed value, grey levels
	dropped bool
	// The spot as its neighbours see it, for deblending: the centre, px,
	// and the amplitude of its template (see spotModel).
	mx, my, ma float64
	det        Detection // the refined spot, when ok
	shape      shape     // its moments, when ok
	ok         bool
}

// NewDetector checks opt and returns a Detector without a background image
// (see SetBackground).
func NewDetector(opt Options) (*Detector, error) {
	opt, err := opt.withDefaults()
	if err != nil {
		return nil, err
	}
	d := &Detector{opt: opt, polarity: opt.Polarity, bgType: -1}
	d.sigma = opt.DiameterPx / diameterSigmas
	d.wr = int(math.Ceil(kernelSigmas * d.sigma))
	d.decaySpot, d.decayMask = math.Exp(-1/spotVar(d.sigma)), math.Exp(-1/maskVar(d.sigma))
	if m := opt.Mask; m != nil {
		d.flowRad = math.Atan2(m.Moving[1][1]-m.Moving[0][1], m.Moving[1][0]-m.Moving[0][0])
	}
	d.khalf = int(math.Ceil(filterSigmas * d.sigma))
	d.ksize = 2*d.khalf + 1
	d.boxPx = 2*int(math.Round(boxDiameters*opt.DiameterPx/2)) + 1
	for _, m := range []*gocv.Mat{&d.bgSmooth, &d.sm, &d.lo, &d.cand, &d.cand2} {
		*m = gocv.NewMat()
	}
	n := 2*d.wr + 1
	R := 2*(d.wr+windowSlack) + 1
	d.win = make([]float64, R*R)
	d.wx, d.wy = make([]float64, n), make([]float64, n)
	m := n - 1
	d.gx, d.gy = make([]float64, m*m), make([]float64, m*m)
	d.sgx, d.sgy = make([]float64, m*m), make([]float64, m*m)
	d.gain1, d.gainBox = d.filterGain(false), d.filterGain(true)
	d.ampW, d.ampWNorm = amplitudeWeights(d.wr, spotVar(d.sigma))
	d.ring = make([]float64, 0, 8*(d.wr+windowSlack))
	d.valid = make([]bool, R*R)
	d.mdx, d.mdy = make([]float64, R), make([]float64, R)
	return d, nil
}

// filterGain returns the band-pass response at the centre of a
// pixel-integrated spot of unit amplitude (the peak of its Gaussian
// density): the matched Gaussian's, minus the box mean's when box.
func (d *Detector) filterGain(box bool) float64 {
	k := 1 / (math.Sqrt2 * d.sigma)
	norm := math.Sqrt(2 * math.Pi * d.sigma * d.sigma) // per axis
	pix := func(c float64) float64 { return norm * 0.5 * (math.Erf((c+0.5)*k) - math.Erf((c-0.5)*k)) }
	kern := make([]float64, d.ksize)
	var sum float64
	for i := range kern {
		x := float64(i - d.khalf)
		kern[i] = math.Exp(-x * x / (2 * d.sigma * d.sigma))
		sum += kern[i]
	}
	var g1, b1 float64
	for i := -d.khalf; i <= d.khalf; i++ {
		g1 += kern[i+d.khalf] / sum * pix(float64(i))
	}
	g1 *= g1 // separable
	if box {
		for i := -d.boxPx / 2; i <= d.boxPx/2; i++ {
			b1 += pix(float64(i)) / float64(d.boxPx)
		}
		b1 *= b1
	}
	return g1 - b1
}

// Close releases the Detector's buffers.
func (d *Detector) Close() error {
	for _, m := range []*gocv.Mat{&d.bgSmooth, &d.sm, &d.lo, &d.cand, &d.cand2} {
		m.Close()
	}
	d.closeBands()
	return nil
}

// Polarity returns the polarity in use: the option, or after the first
// frame with PolarityAuto, the one decided from it.
func (d *Detector) Polarity() string { return d.polarity }

// Options returns the options in use, defaults filled in.
func (d *Detector) Options() Options { return d.opt }

// SetBackground sets the background image subtracted from every frame:
// single-channel, any depth, in the frames' grey levels (frames.Median's
// CV_32F result), or an empty Mat for none, when the frame's own box mean
// takes its place. The Detector keeps a copy.
func (d *Detector) SetBackground(bg gocv.Mat) error {
	d.bg, d.bgW, d.bgH = nil, 0, 0
	d.bgSmooth.Close()
	d.bgSmooth, d.bgType = gocv.NewMat(), -1
	if bg.Empty() {
		return nil
	}
	if bg.Channels() != 1 {
		return fmt.Errorf("detect: background has %d channels, want grey", bg.Channels())
	}
	f := gocv.NewMat()
	defer f.Close()
	bg.ConvertTo(&f, gocv.MatTypeCV32F)
	v, err := f.DataPtrFloat32()
	if err != nil {
		return fmt.Errorf("detect: background: %v", err)
	}
	d.bg = append([]float32(nil), v...)
	d.bgW, d.bgH = bg.Cols(), bg.Rows()
	return nil
}

// smoothBackground computes the matched Gaussian of the background in the
// depth t of the frames, rounded.
func (d *Detector) smoothBackground(t gocv.MatType) error {
	f, err := gocv.NewMatFromBytes(d.bgH, d.bgW, gocv.MatTypeCV32F, unsafe.Slice((*byte)(unsafe.Pointer(&d.bg[0])), 4*len(d.bg)))
	if err != nil {
		return err
	}
	defer f.Close()
	s := gocv.NewMat()
	defer s.Close()
	gocv.GaussianBlur(f, &s, image.Pt(d.ksize, d.ksize), d.sigma, d.sigma, gocv.BorderReflect101)
	s.ConvertTo(&d.bgSmooth, t) // rounds and saturates
	d.bgType = t
	return nil
}

// Frame detects the tracers of img (single-channel CV_8U or CV_16U), frame
// number frame, and appends them to out in raster order of their integer
// maxima.
func (d *Detector) Frame(img gocv.Mat, frame int, out []Detection) ([]Detection, error) {
	w, h := img.Cols(), img.Rows()
	t := img.Type()
	if t != gocv.MatTypeCV8U && t != gocv.MatTypeCV16U {
		return out, fmt.Errorf("detect: frame %d has type %v, want 8 or 16 bit grey", frame, t)
	}
	R := d.wr + windowSlack
	if w < 2*R+3 || h < 2*R+3 {
		return out, fmt.Errorf("detect: frame %d is %dx%d px, too small for %g px tracers", frame, w, h, d.opt.DiameterPx)
	}
	hasBg := d.bg != nil
	if hasBg {
		if d.bgW != w || d.bgH != h {
			return out, fmt.Errorf("detect: background is %dx%d px, frame %d is %dx%d px", d.bgW, d.bgH, frame, w, h)
		}
		if d.bgType != t {
			if err := d.smoothBackground(t); err != nil {
				return out, err
			}
		}
	}
	// Only the rows the mask can reach, with room for the filters and the
	// refinement window, are filtered.
	y0, y1 := d.rowBand(w, h)
	full := y0 == 0 && y1 == h
	src, low := img, d.bgSmooth
	if !full {
		src = img.Region(image.Rect(0, y0, w, y1))
		defer src.Close()
		if hasBg {
			low = d.bgSmooth.Region(image.Rect(0, y0, w, y1))
			defer low.Close()
		}
	}
	// Band-pass, clipped at zero on the tracers' side.
	gocv.GaussianBlur(src, &d.sm, image.Pt(d.ksize, d.ksize), d.sigma, d.sigma, gocv.BorderReflect101)
	if !hasBg {
		gocv.Blur(src, &d.lo, image.Pt(d.boxPx, d.boxPx))
		low = d.lo
	}
	gain := d.gain1
	if !hasBg {
		gain = d.gainBox
	}
	if d.polarity == PolarityAuto {
		gocv.Subtract(d.sm, low, &d.cand)
		gocv.Subtract(low, d.sm, &d.cand2)
		d.polarity = decidePolarity(d.cand, d.cand2)
	}
	if d.polarity == PolarityDark {
		gocv.Subtract(low, d.sm, &d.cand)
	} else {
		gocv.Subtract(d.sm, low, &d.cand)
	}
	sign := 1.0
	if d.polarity == PolarityDark {
		sign = -1
	}
	px := pixels{w: w, h: h, sign: sign, refF: d.bg, refOff: y0 * w}
	if len(d.opt.Walls) > 0 && !hasBg {
		if d.bandsW != w || d.bandsH != h {
			if err := d.buildBands(w, h, y0, y1); err != nil {
				return out, err
			}
		}
		if err := d.applyWalls(img, y0, d.polarity == PolarityDark); err != nil {
			return out, err
		}
		px.cutPlate = d.cutPlate
		for i := range d.bands {
			b := &d.bands[i]
			px.bands = append(px.bands, bandRef{ia: b.ia, ib: b.ib, ref: b.refPx, ra: b.ra, rb: b.rb, side: b.side})
		}
	}
	var err error
	if t == gocv.MatTypeCV8U {
		if px.u8, err = img.DataPtrUint8(); err == nil && !hasBg {
			px.refU8, err = d.lo.DataPtrUint8()
		}
	} else {
		if px.u16, err = img.DataPtrUint16(); err == nil && !hasBg {
			px.refU16, err = d.lo.DataPtrUint16()
		}
	}
	if err != nil {
		return out, err
	}

	noise := d.noise(&px, false)
	if !(noise > 0) {
		noise = noiselessGrey
	}
	thr := candidateSlack * d.opt.MinSNR * noise * gain
	if err := d.findCandidates(d.cand, y0, h, int(math.Ceil(thr))); err != nil {
		return out, err
	}
	if n := d.noise(&px, true); n > 0 {
		noise = n
	}
	// Noise the spots' amplitude sees beyond that of white noise of the
	// same per-pixel sd (the blotches of hard compression) raises the
	// noise the SNR is taken against.
	if n := d.amplitudeNoise(&px) / (1 + ampNoiseSlack); n > noise {
		noise = n
	}
	d.refineAll(&px, gain)
	if out == nil {
		out = make([]Detection, 0, len(d.cands)) // one allocation, not a dozen
	}
	for i := range d.cands {
		c := &d.cands[i]
		if c.dropped || !c.ok {
			continue
		}
		det := c.det
		det.Frame = frame
		det.SNR /= noise
		if !d.keep(det, c.shape, w, h) {
			continue
		}
		out = append(out, det)
	}
	return out, nil
}

// keep reports whether a refined spot det (SNR divided by the noise) of
// shape sh passes the SNR, size, shape and mask cuts in a w x h frame.
func (d *Detector) keep(det Detection, sh shape, w, h int) bool {
	if det.SNR < d.opt.MinSNR {
		return false
	}
	if (det.SizePx > d.opt.MaxSizePx || (det.SNR >= shapeMinSNR && det.Eccentricity > d.opt.MaxEccentricity)) &&
		!d.isStreak(sh) {
		return false
	}
	// In a frame of codec blotches a faint spot must also have the shape a
	// round tracer keeps in noise at that SNR.
	if d.tailRatio > blotchyTailRatio && det.SNR < shapeMinSNR &&
		(det.Eccentricity > faintMaxEccentricity || det.SizePx > faintMaxSizeRatio*d.nominalSizePx()) && !d.isStreak(sh) {
		return false
	}
	if d.opt.Mask != nil && !d.opt.Mask.Contains(det.XPx, det.YPx) {
		return false
	}
	// A centre beyond the frame's outer side is the fit of a spot seen
	// too little to place.
	return det.XPx >= -0.5 && det.XPx <= float64(w)-0.5 && det.YPx >= -0.5 && det.YPx <= float64(h)-0.5
}

// pixels reads the background-subtracted, polarity-signed residual of a
// frame: sign * (frame - ref), ref the background image (refF) or the box
// mean (refU8 or refU16, in the frame's depth).
type pixels struct {
	u8     []uint8
	u16    []uint16
	refF   []float32
	refU8  []uint8  // box mean over the filtered rows only
	refU16 []uint16 // box mean over the filtered rows only
	refOff int      // index in the frame of refU8[0] or refU16[0]
	w, h   int
	sign   float64
	// bands replace ref on the rows next to the walls; cutPlate marks the
	// walls whose plate is left out.
	bands    []bandRef
	cutPlate []bool
}

// bandRef is the reference of rows [ia, ib) of the frame, row-major, and
// the plate side of rows [ra, rb) (wallBand.side).
type bandRef struct {
	ia, ib int
	ref    []float32
	ra, rb int
	side   []int8
}

// bandRow returns the reference row of frame row y in a wall band, or nil.
func (p *pixels) bandRow(y int) []float32 {
	for i := range p.bands {
		b := &p.bands[i]
		if y >= b.ia && y < b.ib {
			return b.ref[(y-b.ia)*p.w : (y-b.ia+1)*p.w]
		}
	}
	return nil
}

// at returns the residual at pixel index i.
func (p *pixels) at(i int) float64 {
	var v, r float64
	if p.u8 != nil {
		v = float64(p.u8[i])
	} else {
		v = float64(p.u16[i])
	}
	if p.bands != nil {
		if row := p.bandRow(i / p.w); row != nil {
			return p.sign * (v - float64(row[i%p.w]))
		}
	}
	switch {
	case p.refF != nil:
		r = float64(p.refF[i])
	case p.refU8 != nil:
		r = float64(p.refU8[i-p.refOff])
	case p.refU16 != nil:
		r = float64(p.refU16[i-p.refOff])
	}
	return p.sign * (v - r)
}

// window loads into dst, row by row, the frame on the (2R+1)^2 square
// centred at (x0, y0), minus the background image when there is one, signed
// by the polarity. Without a background image the raw frame is loaded: the
// refinement subtracts the window's own border level. With wall, the window
// lies in a wall band and the frame minus the band's reference is loaded.
func (p *pixels) window(dst []float64, x0, y0, R int, wall bool) {
	n := 2*R + 1
	for j := 0; j < n; j++ {
		i0 := (y0-R+j)*p.w + x0 - R
		row := dst[j*n : j*n+n]
		if wall {
			if ref := p.bandRow(y0 - R + j); ref != nil {
				x := x0 - R
				if p.u8 != nil {
					loadRow(row, p.u8[i0:i0+n], ref[x:x+n], p.sign)
				} else {
					loadRow(row, p.u16[i0:i0+n], ref[x:x+n], p.sign)
				}
				continue
			}
		}
		switch {
		case p.u8 != nil && p.refF != nil:
			loadRow(row, p.u8[i0:i0+n], p.refF[i0:i0+n], p.sign)
		case p.u8 != nil:
			loadRow(row, p.u8[i0:i0+n], nil, p.sign)
		case p.refF != nil:
			loadRow(row, p.u16[i0:i0+n], p.refF[i0:i0+n], p.sign)
		default:
			loadRow(row, p.u16[i0:i0+n], nil, p.sign)
		}
	}
}

// windowClipped loads into dst what window would on the (2R+1)^2 square
// centred at (x0, y0), which the frame's edge cuts, and marks in valid the
// pixels inside the frame; the others are set to zero. Inside a wall band
// (wall) it loads the residual (see at).
func (p *pixels) windowClipped(dst []float64, valid []bool, x0, y0, R int, wall bool) {
	n := 2*R + 1
	for j := range n {
		y := y0 - R + j
		for i := range n {
			x := x0 - R + i
			k := j*n + i
			if x < 0 || x >= p.w || y < 0 || y >= p.h {
				dst[k], valid[k] = 0, false
				continue
			}
			valid[k] = true
			idx := y*p.w + x
			var v float64
			if p.u8 != nil {
				v = float64(p.u8[idx])
			} else {
				v = float64(p.u16[idx])
			}
			switch {
			case wall:
				dst[k] = p.at(idx)
			case p.refF != nil:
				dst[k] = p.sign * (v - float64(p.refF[idx]))
			default:
				dst[k] = p.sign * v
			}
		}
	}
}

func loadRow[T uint8 | uint16](dst []float64, src []T, ref []float32, sign float64) {
	if ref == nil {
		for i, v := range src {
			dst[i] = sign * float64(v)
		}
		return
	}
	for i, v := range src {
		dst[i] = sign * (float64(v) - float64(ref[i]))
	}
}

// noise returns the per-pixel noise sd of the residual: half of 1.4826
// times the median absolute deviation of 2x2 sums on a regular subsample,
// inside the mask if there is one. With excludeCandidates, the sums within
// exclusionWindows refinement windows of any candidate are left out, so that
// the tracers do not inflate it; without, sums beyond clipSigmas of a first
// estimate are left out and the result corrected for the clipping.
func (d *Detector) noise(p *pixels, excludeCandidates bool) float64 {
	w, h := p.w, p.h
	want := crudeNoiseSamples
	if excludeCandidates {
		want = noiseSamples
	}
	step := max(2, int(math.Sqrt(float64(w*h)/float64(want))))
	gw, gh := (w+step-1)/step, (h+step-1)/step
	if excludeCandidates {
		if cap(d.excl) < gw*gh {
			d.excl = make([]bool, gw*gh)
		}
		d.excl = d.excl[:gw*gh]
		clear(d.excl)
		ex := exclusionWindows * d.wr
		for _, c := range d.cands {
			for cy := max(0, (c.y-ex)/step); cy <= min(gh-1, (c.y+ex)/step); cy++ {
				for cx := max(0, (c.x-ex)/step); cx <= min(gw-1, (c.x+ex)/step); cx++ {
					d.excl[cy*gw+cx] = true
				}
			}
		}
	}
	g := &d.noiseAt[0]
	if excludeCandidates {
		g = &d.noiseAt[1]
	}
	if g.w != w || g.h != h || g.step != step {
		d.buildNoiseGrid(g, w, h, step)
	}
	d.samples = d.samples[:0]
	for k, i := range g.pixel {
		if excludeCandidates && d.excl[g.cell[k]] {
			continue
		}
		d.samples = append(d.samples, float32(p.at(int(i))+p.at(int(i)+1)+p.at(int(i)+w)+p.at(int(i)+w+1)))
	}
	if len(d.samples) < minNoiseSamples {
		return 0
	}
	med := robust.SelectKth(d.samples, len(d.samples)/2)
	for i, v := range d.samples {
		d.samples[i] = abs32(v - med)
	}
	mad := float64(robust.SelectKth(d.samples, len(d.samples)/2))
	if excludeCandidates {
		return robust.MADToSigma * mad / 2
	}
	lim := float32(clipSigmas * robust.MADToSigma * mad)
	kept := d.samples[:0]
	for _, v := range d.samples {
		if v < lim {
			kept = append(kept, v)
		}
	}
	if len(kept) < minNoiseSamples {
		return robust.MADToSigma * mad / 2
	}
	return float64(robust.SelectKth(kept, len(kept)/2)) / clippedMAD / 2
}

// amplitudeWeights returns the weights w of the least-squares amplitude a =
// sum w v of a template exp(-r^2/(2 v)) centred on the middle pixel of a
// (2 wr + 1)^2 window, with a constant offset (the weights sum to zero),
// and their root sum of squares: the amplitude's sd for white noise of
// unit sd.
func amplitudeWeights(wr int, v float64) ([]float64, float64) {
	n := 2*wr + 1
	g := make([]float64, n)
	for i := range g {
		u := float64(i - wr)
		g[i] = math.Exp(-u * u / (2 * v))
	}
	var st, stt float64
	for _, a := range g {
		for _, b := range g {
			st += a * b
			stt += a * b * a * b
		}
	}
	np := float64(n * n)
	den := np*stt - st*st
	w := make([]float64, n*n)
	var ss float64
	for j, b := range g {
		for i, a := range g {
			w[j*n+i] = (np*a*b - st) / den
			ss += w[j*n+i] * w[j*n+i]
		}
	}
	return w, math.Sqrt(ss)
}

const (
	// ampNoiseSamples is about the number of empty positions at which
	// amplitudeNoise measures the amplitude's scatter: the MAD of n values
	// has a relative sd of about 1.36/sqrt(n), 4 % here.
	ampNoiseSamples = 1024
	// ampNoiseSlack is how far the amplitude's scatter, in per-pixel
	// noise, may exceed the per-pixel noise before it raises it: three
	// times the 4 % of its sampling, so that white noise leaves the
	// SNR as it was.
	ampNoiseSlack = 0.13
	// ampTailQuantile is the share of the empty positions' absolute
	// amplitudes (about their median) below the tail point from which
	// amplitudeNoise also reads the scale, ampTailZ the same quantile of
	// the absolute value of a unit Gaussian, P(|z| < 1.96) = 0.95. For
	// Gaussian noise it gives the MAD's scale, with a sampling sd of
	// sqrt(p (1 - p) / n) / (2 phi(1.96) 1.96), 5 % for 400 positions,
	// inside ampNoiseSlack. The blotches of a lossy codec make the
	// amplitude's distribution heavy-tailed (about Laplacian, as the DCT
	// coefficients it quantizes: Lam & Goodman 2000, IEEE Trans. Image
	// Process. 9:1661; from memory): there the tail's scale is 1.3-1.5
	// times the core's (H.264 at CRF 20, measured in detectscore's
	// renders), and the threshold at MinSNR, set against the core, let a
	// blotch through in every few hundred positions.
	ampTailQuantile = 0.95
	ampTailZ        = 1.959964
	// ampFitLowQuantile and ampFitHighQuantile are the points of the
	// absolute amplitudes through which, in a frame of codec blotches
	// (blotchyTailRatio), an exponential tail is drawn to where MinSNR's
	// false-alarm rate of Gaussian noise lies: for a Laplace distribution
	// the construction is exact. 2 % of 400 positions leaves 8 beyond the
	// upper point.
	ampFitLowQuantile  = 0.90
	ampFitHighQuantile = 0.98
	// blotchyTailRatio is the tail-over-core ratio of the amplitudes
	// (amplitudeNoise) above which a frame holds codec blotches: three
	// sampling sds of the ratio (5 % each, see ampTailQuantile) above the
	// 1 of Gaussian noise.
	blotchyTailRatio = 1.15
	// faintMaxEccentricity and faintMaxSizeRatio bound the shape of spots
	// below shapeMinSNR in such frames: 99.9 % of round spots at SNR 5 in
	// white noise stay under an eccentricity of 0.871 and a size of 1.33
	// times the nominal (TestShapeNoise), while the blotches are larger
	// and longer (median 2.46 px against the tracers' 1.88 px, eccentricity
	// 0.81 against 0.48, on H.264 CRF 28 in detectscore's renders).
	faintMaxEccentricity = 0.88
	faintMaxSizeRatio    = 1.35
)

// nominalSizePx is the radius of gyration of a pixel-integrated spot of the
// nominal size: sqrt(2 (s^2 + 1/12)), s its sd.
func (d *Detector) nominalSizePx() float64 {
	return math.Sqrt(2 * (d.sigma*d.sigma + 1.0/12))
}

// amplitudeNoise returns the per-pixel noise that would give the
// least-squares amplitude of a spot (amplitudeWeights) the scatter it has
// at empty positions of the frame: about ampNoiseSamples positions of the
// fine noise grid, away from every candidate (the exclusion of the last
// noise call with excludeCandidates), as 1.4826 MADs over ampWNorm. For
// white noise it is the per-pixel sd; noise correlated over a few pixels,
// which the 2x2 sums of noise do not see, raises it. It returns 0 when too
// few positions are free.
func (d *Detector) amplitudeNoise(p *pixels) float64 {
	g := &d.noiseAt[1]
	wr := d.wr
	n := 2*wr + 1
	step := max(1, len(g.pixel)/ampNoiseSamples)
	cut := p.bands != nil && slices.Contains(p.cutPlate, true)
	d.amps = d.amps[:0]
	d.tailRatio = 1
	for k := 0; k < len(g.pixel); k += step {
		if d.excl[g.cell[k]] {
			continue
		}
		i := int(g.pixel[k])
		x, y := i%p.w, i/p.w
		if x-wr < 0 || x+wr >= p.w || y-wr < 0 || y+wr >= p.h {
			continue
		}
		wall := p.bands != nil && d.nearWall(x, y)
		if wall && cut {
			continue
		}
		win := d.win[:n*n]
		p.window(win, x, y, wr, wall)
		var a float64
		for k, w := range d.ampW {
			a += w * win[k]
		}
		d.amps = append(d.amps, float32(a))
	}
	if len(d.amps) < minNoiseSamples {
		return 0
	}
	sd, ratio := d.ampScale(d.amps)
	d.tailRatio = ratio
	return sd / d.ampWNorm
}

// ampScale returns the scale of amplitudes v (reordered): the larger of
// 1.4826 MADs and of the tail's (ampTailQuantile) scale, and in a frame of
// codec blotches the noise that puts MinSNR at the false-alarm rate of
// Gaussian noise; and the tail's scale over the MAD's.
func (d *Detector) ampScale(v []float32) (sd, tailRatio float64) {
	med := robust.SelectKth(v, len(v)/2)
	for i, x := range v {
		v[i] = abs32(x - med)
	}
	// Each SelectKth leaves the larger values after its k, where the
	// next, higher quantile is selected.
	q := func(from int, p float64) (float64, int) {
		k := max(from, int(p*float64(len(v)-1)))
		return float64(robust.SelectKth(v[from:], k-from)), k
	}
	mad, k50 := q(0, 0.5)
	core := robust.MADToSigma * mad
	q90, k90 := q(k50, ampFitLowQuantile)
	q95, k95 := q(k90, ampTailQuantile)
	tail := q95 / ampTailZ
	tailRatio = tail / core
	sd = math.Max(core, tail)
	if tailRatio > blotchyTailRatio {
		// The blotches' tail, exponential, P(|a| > t) = C exp(-t/b), from
		// its 90 % and 98 % points, reaches MinSNR's false-alarm rate of
		// Gaussian noise at t; the noise that puts MinSNR there.
		q98, _ := q(k95, ampFitHighQuantile)
		b := (q98 - q90) / math.Log((1-ampFitLowQuantile)/(1-ampFitHighQuantile))
		pFalse := math.Erfc(d.opt.MinSNR / math.Sqrt2)
		t := q98 + b*math.Log((1-ampFitHighQuantile)/pFalse)
		sd = math.Max(sd, t/d.opt.MinSNR)
	}
	return sd, tailRatio
}

// noiseGrid is the sampling pattern of noise for one frame size: the pixel
// index of every sample inside the mask and its cell in the exclusion grid.
type noiseGrid struct {
	w, h, step int
	pixel      []int32
	cell       []int32
}

// buildNoiseGrid fills g with the samples of a w x h frame taken every
// step pixels, staggered from row to row, that lie inside the mask.
func (d *Detector) buildNoiseGrid(g *noiseGrid, w, h, step int) {
	gw := (w + step - 1) / step
	g.w, g.h, g.step = w, h, step
	g.pixel, g.cell = g.pixel[:0], g.cell[:0]
	for y := step / 2; y < h-1; y += step {
		for x := (y / step) % step; x < w-1; x += step {
			if d.opt.Mask != nil && !d.opt.Mask.Contains(float64(x), float64(y)) {
				continue
			}
			g.pixel = append(g.pixel, int32(y*w+x))
			g.cell = append(g.cell, int32((y/step)*gw+x/step))
		}
	}
}

// float32Bytes returns the bytes of v.
func float32Bytes(v []float32) []byte {
	return unsafe.Slice((*byte)(unsafe.Pointer(&v[0])), 4*len(v))
}

func abs32(v float32) float32 {
	if v < 0 {
		return -v
	}
	return v
}

func abs(i int) int {
	if i < 0 {
		return -i
	}
	return i
}

// decidePolarity compares the strongest values of the clipped band-passed
// images of the two polarities: the k-th largest of each, k a ten-thousandth
// of the pixels (at least polarityMinPixels). Tracers give the larger
// extremes on their own side.
func decidePolarity(bright, dark gocv.Mat) string {
	kth := func(m gocv.Mat) int {
		n := m.Rows() * m.Cols()
		k := max(polarityMinPixels, n/10000)
		var hist []int
		if m.Type() == gocv.MatTypeCV8U {
			b, _ := m.DataPtrUint8()
			hist = make([]int, 256)
			for _, v := range b {
				hist[v]++
			}
		} else {
			b, _ := m.DataPtrUint16()
			hist = make([]int, 65536)
			for _, v := range b {
				hist[v]++
			}
		}
		for v := len(hist) - 1; v >= 0; v-- {
			k -= hist[v]
			if k <= 0 {
				return v
			}
		}
		return 0
	}
	if kth(dark) > kth(bright) {
		return PolarityDark
	}
	return PolarityBright
}

// findCandidates fills d.cands with the local maxima of the band-passed
// image c (rows y0 to y0+c.Rows()-1 of a frame h rows high) that reach thr
// grey levels and lie far enough from the border for the refinement window,
// in raster order, and marks those dropped by the minimum separation or
// overlapping. Eight pixels at a time are skipped when none reaches thr.
func (d *Detector) findCandidates(c gocv.Mat, y0, h, thr int) error {
	d.cands = d.cands[:0]
	w := c.Cols()
	d.frameW, d.frameH = w, h
	// Rows of c to scan: one row from c's edges (the maximum test looks at
	// the rows around); columns likewise. Near the frame's edges the
	// refinement fits the visible part of the spot.
	m := 1
	r0, r1 := 1, c.Rows()-1
	if mk := d.opt.Mask; mk != nil {
		lo, hi := mk.rows(w)
		r0, r1 = max(r0, lo-y0), min(r1, hi-y0)
	}
	thr = max(thr, 1)
	if c.Type() == gocv.MatTypeCV8U {
		b, err := c.DataPtrUint8()
		if err != nil {
			return err
		}
		if thr <= 255 {
			scanMaxima(d, b, w, r0, r1, y0, m, uint8(thr))
		}
	} else {
		b, err := c.DataPtrUint16()
		if err != nil {
			return err
		}
		if thr <= 65535 {
			scanMaxima(d, b, w, r0, r1, y0, m, uint16(thr))
		}
	}
	d.separate()
	return nil
}

// rows returns the range of image rows [lo, hi) the mask can reach in an
// image w px wide, widened by a pixel. For walls closer to the columns than
// to the rows it is every row.
func (m *Mask) rows(w int) (lo, hi int) {
	a, b := math.Inf(1), math.Inf(-1)
	for _, l := range [...][2][2]float64{m.Stationary, m.Moving} {
		if math.Abs(l[1][0]-l[0][0]) < math.Abs(l[1][1]-l[0][1]) {
			return math.MinInt32, math.MaxInt32
		}
		for _, x := range []float64{0, float64(w - 1)} {
			y := lineY(l, x)
			a, b = math.Min(a, y), math.Max(b, y)
		}
	}
	return int(math.Floor(a)) - 1, int(math.Ceil(b)) + 2
}

// rowBand returns the rows [y0, y1) of a w x h frame to filter: with a mask,
// the rows it can reach with room for the refinement window and the
// filters' kernels; else all.
func (d *Detector) rowBand(w, h int) (y0, y1 int) {
	if d.opt.Mask == nil {
		return 0, h
	}
	lo, hi := d.opt.Mask.rows(w)
	pad := d.wr + windowSlack + 1 + max(d.khalf, d.boxPx/2) + 1
	return max(0, lo-pad), min(h, hi+pad)
}

// lineY returns the y of line l at abscissa x (its mean y if vertical).
func lineY(l [2][2]float64, x float64) float64 {
	dx := l[1][0] - l[0][0]
	if dx == 0 {
		return (l[0][1] + l[1][1]) / 2
	}
	return l[0][1] + (x-l[0][0])*(l[1][1]-l[0][1])/dx
}

// scanMaxima appends to d.cands the local maxima of b (w wide) at least thr
// in rows r0 to r1-1, columns m to w-m-1 and, with m = 1, the frame's first
// and last columns, whose maxima are tested against the neighbours they
// have; row r of b is row r+y0 of the frame.
func scanMaxima[T uint8 | uint16](d *Detector, b []T, w, r0, r1, y0, m int, thr T) {
	var zero T
	size := int(unsafe.Sizeof(zero))
	per := 8 / size // values per 64-bit word
	word := belowMask(thr)
	for y := r0; y < r1; y++ {
		row := b[y*w : y*w+w]
		up := b[(y-1)*w : y*w]
		dn := b[(y+1)*w : (y+2)*w]
		add := func(x int, v T) {
			if mk := d.opt.Mask; mk == nil || mk.nearInside(float64(x), float64(y+y0)) {
				d.cands = append(d.cands, candidate{x: x, y: y + y0, v: int(v)})
			}
		}
		if v := row[0]; m == 1 && v >= thr && v >= row[1] && v > up[0] && v >= dn[0] && v >= up[1] && v >= dn[1] {
			add(0, v)
		}
		x := m
		for x < w-m {
			// Skip a word at a time while every value is below thr.
			if x+per <= w-m && allBelow(row[x:x+per], thr, word) {
				x += per
				continue
			}
			v := row[x]
			if v >= thr &&
				v > row[x-1] && v >= row[x+1] && v > up[x] && v >= dn[x] &&
				v >= up[x-1] && v >= up[x+1] && v >= dn[x-1] && v >= dn[x+1] {
				// Strictly greater than the side neighbours before it in
				// raster order, at least equal to those after and to the
				// diagonal ones: the rounding of the filtered image makes
				// ties, and a peak must not vanish in a diagonal tie. The
				// separation merges what this leaves twice.
				add(x, v)
			}
			x++
		}
		if v := row[w-1]; m == 1 && v >= thr && v > row[w-2] && v > up[w-1] && v >= dn[w-1] && v >= up[w-2] && v >= dn[w-2] {
			add(w-1, v)
		}
	}
}

// belowMask returns, for 8-bit values, the word added to eight values at
// once so that the high bit of each byte of value b ends set when b >= thr
// (b + 128 - thr >= 128); 0 for wider values.
func belowMask[T uint8 | uint16](thr T) uint64 {
	if unsafe.Sizeof(thr) != 1 || thr > 128 {
		return 0
	}
	return uint64(128-uint64(thr)) * 0x0101010101010101
}

// allBelow reports whether every value of v (one 64-bit word) is below
// thr. For 8-bit values it tests the word at once: the sum with add sets a
// byte's high bit for values from thr to 127, the value itself for 128 and
// above; a carry between bytes can only raise a false alarm, which the
// element test that follows resolves.
func allBelow[T uint8 | uint16](v []T, thr T, add uint64) bool {
	if add != 0 {
		b := unsafe.Slice((*byte)(unsafe.Pointer(&v[0])), 8)
		x := binary.LittleEndian.Uint64(b)
		return (x|(x+add))&0x8080808080808080 == 0
	}
	for _, x := range v {
		if x >= thr {
			return false
		}
	}
	return true
}

// nearInside reports whether (x, y) is inside the mask widened by a pixel:
// the refined position moves by less than that from the integer maximum.
func (m *Mask) nearInside(x, y float64) bool {
	wide := *m
	wide.MarginPx--
	return wide.Contains(x, y)
}

// separate drops, of two candidates closer than MinSeparationPx, the
// weaker: a ripple of the same spot. Kept candidates are filed in a grid of
// cells one separation wide, so that only the 3x3 cells around a candidate
// are searched.
func (d *Detector) separate() {
	sep := d.opt.MinSeparationPx
	sep2 := sep * sep
	w, h := d.frameW, d.frameH
	gw, gh := int(float64(w)/sep)+1, int(float64(h)/sep)+1
	if cap(d.head) < gw*gh {
		d.head = make([]int32, gw*gh)
	}
	d.head = d.head[:gw*gh]
	for i := range d.head {
		d.head[i] = -1
	}
	if cap(d.next) < len(d.cands) {
		d.next = make([]int32, len(d.cands))
	}
	d.next = d.next[:len(d.cands)]
	d.order = d.order[:0]
	for i := range d.cands {
		d.order = append(d.order, int32(i))
	}
	// Strongest first; ties in raster order, so the order is total.
	slices.SortFunc(d.order, func(a, b int32) int {
		if va, vb := d.cands[a].v, d.cands[b].v; va != vb {
			return vb - va
		}
		return int(a - b)
	})
	for _, i := range d.order {
		c := &d.cands[i]
		kx, ky := int(float64(c.x)/sep), int(float64(c.y)/sep)
	search:
		for gy := max(0, ky-1); gy <= min(gh-1, ky+1); gy++ {
			for gx := max(0, kx-1); gx <= min(gw-1, kx+1); gx++ {
				for j := d.head[gy*gw+gx]; j >= 0; j = d.next[j] {
					o := &d.cands[j]
					dx, dy := float64(o.x-c.x), float64(o.y-c.y)
					if dx*dx+dy*dy < sep2 {
						c.dropped = true
						break search
					}
				}
			}
		}
		if !c.dropped {
			d.next[i] = d.head[ky*gw+kx]
			d.head[ky*gw+kx] = i
		}
	}
}
