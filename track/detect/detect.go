// Package detect finds tracer particles in background-subtracted frames and
// locates them to a fraction of a pixel.
//
// A frame is processed in five steps:
//
//  1. Background removal: the frame minus a background image (usually the
//     temporal median of frames.Median), with the sign set by the polarity so
//     that tracers are positive: bright tracers on a dark field, or dark
//     (absorbing) tracers on a bright one. PolarityAuto decides from the
//     frame which of the two it is.
//  2. Band-pass: a Gaussian matched to the tracer's apparent size minus a box
//     mean twice the tracer's diameter wide (the band-pass of Crocker & Grier
//     1996, with the matched Gaussian of the detection-theory optimum).
//  3. Candidates: local maxima of the band-passed image above a threshold set
//     from the frame's own noise, so that MinSNR is a signal-to-noise ratio
//     and not a grey level; maxima closer than MinSeparationPx keep only the
//     strongest, and those inside the Mask only.
//  4. Sub-pixel position by one of two published estimators (see Estimator).
//  5. Shape: size (radius of gyration), eccentricity and integrated
//     brightness; blobs too large, too elongated or overlapping a strong
//     neighbour are rejected.
//
// # Signal-to-noise ratio
//
// The SNR of a detection is A/sigma. A is the spot's amplitude in grey
// levels: the peak of the Gaussian N/(2 pi s^2) that holds the spot's
// integrated brightness N at the nominal spread s = DiameterPx/4, fitted by
// least squares at the refined position. sigma is the frame's per-pixel noise
// standard deviation, estimated robustly from the band-passed image
// (1.4826 times its median absolute value over a pixel subsample, divided by
// the band-pass filter's white-noise gain, the root sum of squares of its
// kernel). Both are computed on every frame.
//
// Run processes a whole Source on several goroutines, each with its own
// Detector, and hands the detections back in frame order; the result does
// not depend on the number of workers.
package detect

import (
	"errors"
	"fmt"
	"image"
	"math"
	"sort"

	"gaptrace/calib"
	"gocv.io/x/gocv"
)

// Polarities of the tracers against the background.
const (
	PolarityAuto   = "auto"   // decided from the frame
	PolarityBright = "bright" // bright tracers on a darker background
	PolarityDark   = "dark"   // dark tracers on a brighter background
)

// Estimator is a sub-pixel localization method.
type Estimator int

const (
	// Centroid is the iterated intensity-weighted centroid of Crocker &
	// Grier (1996), with a Gaussian mask of the nominal spot spread that is
	// moved by sub-pixel steps to the last estimate until it stops moving.
	// For a Gaussian spot its fixed point is the spot's centre, so it does
	// not lock to pixel centres; for additive noise it is the
	// maximum-likelihood estimate of a spot of known width.
	Centroid Estimator = iota
	// RadialSymmetry is the radial-symmetry centre of Parthasarathy (2012):
	// the point closest, in weighted least squares, to the lines through
	// every gradient of the spot's image.
	RadialSymmetry
)

func (e Estimator) String() string {
	switch e {
	case Centroid:
		return "centroid"
	case RadialSymmetry:
		return "radial-symmetry"
	}
	return fmt.Sprintf("Estimator(%d)", int(e))
}

// ParseEstimator returns the Estimator named s ("centroid" or
// "radial-symmetry").
func ParseEstimator(s string) (Estimator, error) {
	for _, e := range []Estimator{Centroid, RadialSymmetry} {
		if s == e.String() {
			return e, nil
		}
	}
	return 0, fmt.Errorf("detect: unknown estimator %q (want centroid or radial-symmetry)", s)
}

// Detection is one tracer found in one frame.
type Detection struct {
	Frame int
	// XPx, YPx is the position in image pixels, the origin at the centre
	// of the top-left pixel, x to the right and y down.
	XPx, YPx float64
	// Brightness is the integrated background-subtracted intensity of the
	// spot in grey levels (positive in either polarity).
	Brightness float64
	// SizePx is the spot's radius of gyration in pixels, sqrt(<r^2>): sqrt(2)
	// times the sd of a Gaussian spot.
	SizePx float64
	// Eccentricity is sqrt(1 - b^2/a^2) of the spot's second-moment ellipse
	// with axes a >= b: 0 for a round spot, towards 1 for an elongated one.
	Eccentricity float64
	// SNR is the spot amplitude over the frame's noise (see the package
	// documentation).
	SNR float64
}

// Mask keeps the detections between two wall lines, at least MarginPx away
// from each (a calib.Calibration supplies the lines).
type Mask struct {
	Stationary, Moving calib.Line
	MarginPx           float64
}

// lineDist returns the signed distance of (x, y) from l, positive on the
// side of (px, py).
func lineDist(l calib.Line, x, y, px, py float64) float64 {
	dx, dy := l[1][0]-l[0][0], l[1][1]-l[0][1]
	n := math.Hypot(dx, dy)
	d := ((x-l[0][0])*dy - (y-l[0][1])*dx) / n
	if ((px-l[0][0])*dy - (py-l[0][1])*dx) < 0 {
		d = -d
	}
	return d
}

// Contains reports whether (xPx, yPx) lies between the walls with the margin.
func (m *Mask) Contains(xPx, yPx float64) bool {
	sm := (m.Moving[0][0] + m.Moving[1][0]) / 2
	smy := (m.Moving[0][1] + m.Moving[1][1]) / 2
	ss := (m.Stationary[0][0] + m.Stationary[1][0]) / 2
	ssy := (m.Stationary[0][1] + m.Stationary[1][1]) / 2
	return lineDist(m.Stationary, xPx, yPx, sm, smy) >= m.MarginPx &&
		lineDist(m.Moving, xPx, yPx, ss, ssy) >= m.MarginPx
}

func (m *Mask) check() error {
	for _, l := range []calib.Line{m.Stationary, m.Moving} {
		if l[0] == l[1] {
			return fmt.Errorf("detect: mask wall line %v has two equal points", l)
		}
	}
	if m.MarginPx < 0 || math.IsNaN(m.MarginPx) {
		return fmt.Errorf("detect: mask margin %g px is negative", m.MarginPx)
	}
	return nil
}

// Options configure detection. Zero fields take the defaults given.
type Options struct {
	// DiameterPx is the tracers' apparent diameter in pixels, four times
	// the sd of their spot (the e^-2 width); required, at least 2.
	DiameterPx float64
	// Polarity is PolarityAuto (default), PolarityBright or PolarityDark.
	Polarity string
	// MinSNR is the smallest SNR kept (default DefaultMinSNR).
	MinSNR float64
	// MinSeparationPx is the smallest distance between two maxima; the
	// weaker of two closer maxima is dropped (default DiameterPx).
	MinSeparationPx float64
	// MaxSizePx rejects spots whose radius of gyration is larger (default
	// DefaultMaxSizeRatio times that of a pixel-integrated spot of the
	// nominal diameter, sqrt(2 (s^2 + 1/12)) for s = DiameterPx/4).
	MaxSizePx float64
	// MaxEccentricity rejects more elongated spots with an SNR of 10 or
	// more (default DefaultMaxEccentricity).
	MaxEccentricity float64
	// OverlapRatio rejects a spot when a dropped maximum within
	// MinSeparationPx of it is stronger than this fraction of its own
	// band-passed peak: the two overlap and neither position can be trusted
	// (default DefaultOverlapRatio).
	OverlapRatio float64
	// Estimator is the sub-pixel estimator (default Centroid).
	Estimator Estimator
	// Workers is the number of frames Run processes at once (default
	// runtime.GOMAXPROCS).
	Workers int
	// Mask, when not nil, keeps only the detections inside it.
	Mask *Mask
}

// Defaults.
const (
	// DefaultMinSNR keeps spots four times above the noise: below that the
	// false-positive rate rises quickly (TestRecallPrecision) and the
	// position error is a large fraction of a pixel.
	DefaultMinSNR = 4
	// DefaultMaxSizeRatio allows spots up to 1.5 times the nominal radius
	// of gyration: a tracer out of focus, or two touching ones, is larger,
	// while 99.9% of round spots at SNR 5 stay under 1.4 times
	// (TestShapeNoise). The measure saturates for blobs much larger than the
	// refinement window, so the limit cannot be much looser.
	DefaultMaxSizeRatio = 1.5
	// DefaultMaxEccentricity allows an axis ratio down to 0.6
	// (sqrt(1-0.6^2) = 0.8): round tracers blurred by motion within the
	// exposure or sampled at low SNR stay, merged pairs go.
	DefaultMaxEccentricity = 0.8
	// DefaultOverlapRatio rejects a spot with a neighbour at least 30% as
	// strong inside the separation: such a neighbour shifts a centroid by a
	// sizeable fraction of a pixel.
	DefaultOverlapRatio = 0.3
	// minDiameterPx is the smallest diameter the band-pass can match: below
	// 2 px (sd 0.5 px) a spot is a single pixel and sub-pixel estimators
	// lock to the grid.
	minDiameterPx = 2
)

// withDefaults returns o with its zero fields filled and checks it.
func (o Options) withDefaults() (Options, error) {
	if !(o.DiameterPx >= minDiameterPx) || math.IsInf(o.DiameterPx, 0) {
		return o, fmt.Errorf("detect: tracer diameter %g px: need at least %d px", o.DiameterPx, minDiameterPx)
	}
	switch o.Polarity {
	case "":
		o.Polarity = PolarityAuto
	case PolarityAuto, PolarityBright, PolarityDark:
	default:
		return o, fmt.Errorf("detect: polarity %q: want auto, bright or dark", o.Polarity)
	}
	sigma := o.DiameterPx / diameterSigmas
	def := func(v *float64, d float64, name string) error {
		if *v == 0 {
			*v = d
		}
		if !(*v > 0) || math.IsInf(*v, 0) {
			return fmt.Errorf("detect: %s %g must be positive", name, *v)
		}
		return nil
	}
	if err := errors.Join(
		def(&o.MinSNR, DefaultMinSNR, "minimum SNR"),
		def(&o.MinSeparationPx, o.DiameterPx, "minimum separation (px)"),
		def(&o.MaxSizePx, DefaultMaxSizeRatio*math.Sqrt(2*(sigma*sigma+1.0/12)), "largest size (px)"),
		def(&o.MaxEccentricity, DefaultMaxEccentricity, "largest eccentricity"),
		def(&o.OverlapRatio, DefaultOverlapRatio, "overlap ratio"),
	); err != nil {
		return o, err
	}
	if o.Estimator != Centroid && o.Estimator != RadialSymmetry {
		return o, fmt.Errorf("detect: unknown estimator %d", int(o.Estimator))
	}
	if o.Workers < 0 {
		return o, fmt.Errorf("detect: %d workers", o.Workers)
	}
	if o.Mask != nil {
		if err := o.Mask.check(); err != nil {
			return o, err
		}
	}
	return o, nil
}

const (
	// diameterSigmas is the apparent diameter in spot sds: the width at
	// which a Gaussian falls to e^-2 of its peak (common practice).
	diameterSigmas = 4
	// boxDiameters is the width of the band-pass's background box in tracer
	// diameters: wide enough that the spot takes little of its mean, narrow
	// enough to follow illumination that the background image missed.
	boxDiameters = 2
	// kernelSigmas is the half-width of the matched Gaussian kernel and of
	// the refinement window in sds: the product of the weight and the spot
	// is below 1e-4 of its peak beyond it.
	kernelSigmas = 3
	// noiseSamples is about the number of pixels the noise estimate looks
	// at: the MAD of n samples has a relative sd of about 1.36/sqrt(n),
	// under 1% here.
	noiseSamples = 32768
	// madToSigma converts a median absolute deviation into a Gaussian sd.
	madToSigma = 1.4826
	// minNoiseSamples is the fewest samples the noise is estimated from.
	minNoiseSamples = 200
	// clipSigmas is where the first noise estimate clips the samples, and
	// clippedMAD the median absolute value of a unit Gaussian clipped there:
	// the x with P(|z| < x) = P(|z| < 2.5)/2.
	clipSigmas = 2.5
	clippedMAD = 0.66488
	// exclusionWindows is how far, in refinement windows, the final noise
	// estimate keeps from every candidate: past the spot and the band-pass's
	// halo.
	exclusionWindows = 2
	// noiselessGrey is the noise assumed for a frame without any: a tenth of
	// a grey level, the rounding of an 8-bit image.
	noiselessGrey = 0.1
	// candidateSlack lowers the band-pass threshold below MinSNR so that
	// spots whose final SNR (fitted at the sub-pixel position) reaches MinSNR
	// are not lost to the half-pixel offset of the integer maximum.
	candidateSlack = 0.7
	// centroidMaskWidening is the centroid mask's sd over the spot's. A mask
	// as wide as the spot is the maximum-likelihood weight when background
	// noise dominates; with the spot's own shot noise it gives sqrt(16/9)
	// times the shot-noise limit (Mortensen et al. 2010, Nat. Methods 7:377,
	// for least squares). Widening it by 15% brings that to 1.14x, as
	// worked out from the moments of the Gaussians, for a few percent more
	// variance when background dominates; the localization test measures
	// both regimes.
	centroidMaskWidening = 1.15
	// shapeMinSNR is the SNR from which the eccentricity limit applies:
	// below it the second moments of a round spot are too noisy to judge
	// its shape (at SNR 10, 99.9% of round spots have an eccentricity
	// under 0.75 in TestShapeNoise).
	shapeMinSNR = 10
	// maxIterations bounds the centroid iterations.
	maxIterations = 30
	// convergedPx ends the centroid iterations: the step is a hundredth of
	// the best precision the package aims at.
	convergedPx = 1e-4
	// maxShiftPx rejects a candidate whose refined position is more than a
	// pixel and a half from its integer maximum: the refinement ran away.
	maxShiftPx = 1.5
	// polaritySNR is the band-passed level, in noise sds, at which pixels
	// are counted for automatic polarity.
	polaritySNR = 6
)

// Detector finds tracers in one frame at a time. It owns its buffers: use
// one Detector per goroutine. Close it when done.
type Detector struct {
	opt      Options
	polarity string

	sigma   float64 // nominal spot sd, px
	wr      int     // refinement window half-width, px
	boxPx   int     // background box width, px
	kernel  []float32
	kx      gocv.Mat
	gain1   float64 // band-pass response at the centre of a unit-amplitude spot
	noiseG  float64 // white-noise gain of the band-pass
	f, r    gocv.Mat
	s, b, g gocv.Mat
	bgF     gocv.Mat

	samples []float32
	excl    []bool
	cands   []candidate
	grid    map[[2]int][]int32
	wx, wy  []float64
	win     []float64
	gxBuf   []float64
	gyBuf   []float64
	sgxBuf  []float64
	sgyBuf  []float64
}

type candidate struct {
	x, y    int
	g       float32
	dropped bool
	overlap bool
}

// NewDetector checks opt and returns a Detector.
func NewDetector(opt Options) (*Detector, error) {
	opt, err := opt.withDefaults()
	if err != nil {
		return nil, err
	}
	d := &Detector{opt: opt, polarity: opt.Polarity}
	d.sigma = opt.DiameterPx / diameterSigmas
	d.wr = int(math.Ceil(kernelSigmas * d.sigma))
	d.boxPx = 2*int(math.Round(boxDiameters*opt.DiameterPx/2)) + 1
	n := 2*d.wr + 1
	d.kernel = make([]float32, n)
	var sum float64
	for i := range d.kernel {
		x := float64(i - d.wr)
		v := math.Exp(-x * x / (2 * d.sigma * d.sigma))
		d.kernel[i] = float32(v)
		sum += v
	}
	for i := range d.kernel {
		d.kernel[i] /= float32(sum)
	}
	d.kx, err = gocv.NewMatFromBytes(1, n, gocv.MatTypeCV32F, float32Bytes(d.kernel))
	if err != nil {
		return nil, err
	}
	d.filterGains()
	for _, m := range []*gocv.Mat{&d.f, &d.r, &d.s, &d.b, &d.g, &d.bgF} {
		*m = gocv.NewMat()
	}
	d.wx, d.wy = make([]float64, n), make([]float64, n)
	d.win = make([]float64, n*n)
	d.gxBuf, d.gyBuf = make([]float64, (n-1)*(n-1)), make([]float64, (n-1)*(n-1))
	d.sgxBuf, d.sgyBuf = make([]float64, (n-1)*(n-1)), make([]float64, (n-1)*(n-1))
	d.grid = map[[2]int][]int32{}
	return d, nil
}

// filterGains computes, on the kernel grid, the band-pass response to a
// unit-amplitude pixel-integrated spot at a pixel centre and the band-pass's
// white-noise gain.
func (d *Detector) filterGains() {
	half := d.boxPx/2 + d.wr
	n := 2*half + 1
	spot := make([]float64, n*n)
	norm := 2 * math.Pi * d.sigma * d.sigma
	k := 1 / (math.Sqrt2 * d.sigma)
	pix := func(c float64) float64 { return 0.5 * (math.Erf((c+0.5)*k) - math.Erf((c-0.5)*k)) }
	for y := 0; y < n; y++ {
		for x := 0; x < n; x++ {
			spot[y*n+x] = norm * pix(float64(x-half)) * pix(float64(y-half))
		}
	}
	// Band-pass kernel: outer product of the Gaussian minus the box mean.
	box := 1 / float64(d.boxPx*d.boxPx)
	var resp, ss float64
	for y := -half; y <= half; y++ {
		for x := -half; x <= half; x++ {
			var kv float64
			if abs(x) <= d.wr && abs(y) <= d.wr {
				kv = float64(d.kernel[x+d.wr]) * float64(d.kernel[y+d.wr])
			}
			if abs(x) <= d.boxPx/2 && abs(y) <= d.boxPx/2 {
				kv -= box
			}
			resp += kv * spot[(y+half)*n+x+half]
			ss += kv * kv
		}
	}
	d.gain1, d.noiseG = resp, math.Sqrt(ss)
}

func abs(i int) int {
	if i < 0 {
		return -i
	}
	return i
}

func float32Bytes(v []float32) []byte {
	b := make([]byte, 4*len(v))
	for i, f := range v {
		u := math.Float32bits(f)
		b[4*i], b[4*i+1], b[4*i+2], b[4*i+3] = byte(u), byte(u>>8), byte(u>>16), byte(u>>24)
	}
	return b
}

// Close releases the Detector's buffers.
func (d *Detector) Close() error {
	for _, m := range []*gocv.Mat{&d.kx, &d.f, &d.r, &d.s, &d.b, &d.g, &d.bgF} {
		m.Close()
	}
	return nil
}

// Polarity returns the polarity in use: the option, or after the first
// frame with PolarityAuto, the one decided from it.
func (d *Detector) Polarity() string { return d.polarity }

// Options returns the options in use, defaults filled in.
func (d *Detector) Options() Options { return d.opt }

// Frame detects the tracers of img (single-channel CV_8U or CV_16U), frame
// number frame, against the background bg (same size, any depth, CV_32F
// fastest; an empty Mat for none), and appends them to out in raster order of
// their integer maxima.
func (d *Detector) Frame(img, bg gocv.Mat, frame int, out []Detection) ([]Detection, error) {
	w, h := img.Cols(), img.Rows()
	if img.Channels() != 1 || (img.Type() != gocv.MatTypeCV8U && img.Type() != gocv.MatTypeCV16U) {
		return out, fmt.Errorf("detect: frame %d has type %v, want 8 or 16 bit grey", frame, img.Type())
	}
	if w < 2*d.wr+3 || h < 2*d.wr+3 {
		return out, fmt.Errorf("detect: frame %d is %dx%d px, too small for %g px tracers", frame, w, h, d.opt.DiameterPx)
	}
	hasBg := !bg.Empty()
	if hasBg {
		if bg.Cols() != w || bg.Rows() != h || bg.Channels() != 1 {
			return out, fmt.Errorf("detect: background is %dx%d px with %d channels, frame %d is %dx%d px grey",
				bg.Cols(), bg.Rows(), bg.Channels(), frame, w, h)
		}
		if bg.Type() != gocv.MatTypeCV32F {
			bg.ConvertTo(&d.bgF, gocv.MatTypeCV32F)
			bg = d.bgF
		}
	}
	if d.polarity == PolarityAuto {
		d.residual(img, bg, hasBg, 1)
		d.bandPass()
		d.polarity = d.decidePolarity()
	}
	sign := 1.0
	if d.polarity == PolarityDark {
		sign = -1
	}
	d.residual(img, bg, hasBg, sign)
	d.bandPass()
	r, err := d.r.DataPtrFloat32()
	if err != nil {
		return out, err
	}
	g, _ := d.g.DataPtrFloat32()
	b, _ := d.b.DataPtrFloat32()
	noise := d.noise(g, w, h, false) / d.noiseG
	if !(noise > 0) {
		noise = noiselessGrey
	}
	thr := float32(candidateSlack * d.opt.MinSNR * noise * d.gain1)
	d.findCandidates(g, w, h, thr)
	if n := d.noise(g, w, h, true) / d.noiseG; n > 0 {
		noise = n
	}
	for i := range d.cands {
		c := &d.cands[i]
		if c.dropped || c.overlap {
			continue
		}
		det, ok := d.refine(r, b, w, h, c.x, c.y)
		if !ok {
			continue
		}
		det.Frame = frame
		det.SNR /= noise
		if det.SNR < d.opt.MinSNR || det.SizePx > d.opt.MaxSizePx ||
			(det.SNR >= shapeMinSNR && det.Eccentricity > d.opt.MaxEccentricity) {
			continue
		}
		if d.opt.Mask != nil && !d.opt.Mask.Contains(det.XPx, det.YPx) {
			continue
		}
		out = append(out, det)
	}
	return out, nil
}

// residual sets d.r to sign*(img - bg), in float32.
func (d *Detector) residual(img, bg gocv.Mat, hasBg bool, sign float64) {
	img.ConvertToWithParams(&d.f, gocv.MatTypeCV32F, float32(sign), 0)
	switch {
	case !hasBg:
		d.f.CopyTo(&d.r)
	case sign > 0:
		gocv.Subtract(d.f, bg, &d.r)
	default:
		gocv.Add(d.f, bg, &d.r)
	}
}

// bandPass sets d.s to the matched Gaussian of d.r, d.b to its box mean and
// d.g to their difference.
func (d *Detector) bandPass() {
	gocv.SepFilter2D(d.r, &d.s, gocv.MatTypeCV32F, d.kx, d.kx, image.Pt(-1, -1), 0, gocv.BorderReflect101)
	gocv.Blur(d.r, &d.b, image.Pt(d.boxPx, d.boxPx))
	gocv.Subtract(d.s, d.b, &d.g)
}

// noise returns a robust sd of the band-passed image g over a regular
// subsample of about noiseSamples pixels: 1.4826 times the median absolute
// deviation from the median. With the candidates already found (after
// findCandidates), the samples within exclusionWindows refinement windows of
// any candidate are left out, so that the tracers' spots and their halos do
// not inflate it; before, pixels beyond clipSigmas of a first estimate are
// left out, and the result corrected for the clipping.
func (d *Detector) noise(g []float32, w, h int, excludeCandidates bool) float64 {
	step := max(1, int(math.Sqrt(float64(w*h)/noiseSamples)))
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
	d.samples = d.samples[:0]
	for y := step / 2; y < h; y += step {
		row := g[y*w : y*w+w]
		for x := (y / step) % step; x < w; x += step {
			if excludeCandidates && d.excl[(y/step)*gw+x/step] {
				continue
			}
			d.samples = append(d.samples, row[x])
		}
	}
	if len(d.samples) < minNoiseSamples {
		return 0
	}
	med := selectKth(d.samples, len(d.samples)/2)
	for i, v := range d.samples {
		d.samples[i] = abs32(v - med)
	}
	mad := float64(selectKth(d.samples, len(d.samples)/2))
	if excludeCandidates {
		return madToSigma * mad
	}
	// Clip once at clipSigmas and take the median absolute deviation of
	// what is left, which for a Gaussian is clippedMAD sds.
	lim := float32(clipSigmas * madToSigma * mad)
	kept := d.samples[:0]
	for _, v := range d.samples {
		if v < lim {
			kept = append(kept, v)
		}
	}
	if len(kept) < minNoiseSamples {
		return madToSigma * mad
	}
	return float64(selectKth(kept, len(kept)/2)) / clippedMAD
}

func abs32(v float32) float32 {
	if v < 0 {
		return -v
	}
	return v
}

// decidePolarity compares the numbers of strongly positive and strongly
// negative band-passed pixels of a bright-polarity residual.
func (d *Detector) decidePolarity() string {
	g, _ := d.g.DataPtrFloat32()
	w, h := d.g.Cols(), d.g.Rows()
	sd := float32(d.noise(g, w, h, false))
	if !(sd > 0) {
		return PolarityBright
	}
	thr := polaritySNR * sd
	var pos, neg int
	for _, v := range g {
		switch {
		case v > thr:
			pos++
		case v < -thr:
			neg++
		}
	}
	if neg > pos {
		return PolarityDark
	}
	return PolarityBright
}

// selectKth reorders v so that v[k] is its k-th smallest value and returns it.
func selectKth(v []float32, k int) float32 {
	lo, hi := 0, len(v)-1
	for lo < hi {
		pivot := v[(lo+hi)/2]
		i, j := lo, hi
		for i <= j {
			for v[i] < pivot {
				i++
			}
			for v[j] > pivot {
				j--
			}
			if i <= j {
				v[i], v[j] = v[j], v[i]
				i++
				j--
			}
		}
		switch {
		case k <= j:
			hi = j
		case k >= i:
			lo = i
		default:
			return v[k]
		}
	}
	return v[k]
}

// findCandidates fills d.cands with the local maxima of g above thr that
// lie at least a refinement window from the border, in raster order, and
// marks those dropped by the minimum separation or overlapping.
func (d *Detector) findCandidates(g []float32, w, h int, thr float32) {
	d.cands = d.cands[:0]
	m := d.wr + 1
	for y := m; y < h-m; y++ {
		row := g[y*w : y*w+w]
		up := g[(y-1)*w : (y-1)*w+w]
		dn := g[(y+1)*w : (y+1)*w+w]
		for x := m; x < w-m; x++ {
			v := row[x]
			if v < thr {
				continue
			}
			// Strictly greater than the neighbours before it in raster
			// order, at least equal to those after: one maximum per plateau.
			if !(v > row[x-1] && v >= row[x+1] && v > up[x-1] && v > up[x] && v > up[x+1] &&
				v >= dn[x-1] && v >= dn[x] && v >= dn[x+1]) {
				continue
			}
			if d.opt.Mask != nil && !d.opt.Mask.Contains(float64(x), float64(y)) {
				// The refined position moves by less than a pixel; a
				// candidate a pixel outside is kept for the final test.
				if !d.opt.Mask.nearInside(float64(x), float64(y)) {
					continue
				}
			}
			d.cands = append(d.cands, candidate{x: x, y: y, g: v})
		}
	}
	d.separate()
}

// nearInside reports whether (x, y) is inside the mask widened by a pixel.
func (m *Mask) nearInside(x, y float64) bool {
	wide := *m
	wide.MarginPx--
	return wide.Contains(x, y)
}

// separate drops, of two candidates closer than MinSeparationPx, the
// weaker, and marks the stronger as overlapping when the weaker reaches
// OverlapRatio of it.
func (d *Detector) separate() {
	sep := d.opt.MinSeparationPx
	sep2 := sep * sep
	cell := func(x, y int) [2]int {
		return [2]int{int(math.Floor(float64(x) / sep)), int(math.Floor(float64(y) / sep))}
	}
	order := make([]int32, len(d.cands))
	for i := range order {
		order[i] = int32(i)
	}
	sort.SliceStable(order, func(a, b int) bool { return d.cands[order[a]].g > d.cands[order[b]].g })
	clear(d.grid)
	for _, i := range order {
		c := &d.cands[i]
		k := cell(c.x, c.y)
		for gy := k[1] - 1; gy <= k[1]+1 && !c.dropped; gy++ {
			for gx := k[0] - 1; gx <= k[0]+1 && !c.dropped; gx++ {
				for _, j := range d.grid[[2]int{gx, gy}] {
					o := &d.cands[j]
					dx, dy := float64(o.x-c.x), float64(o.y-c.y)
					if dx*dx+dy*dy < sep2 {
						c.dropped = true
						if float64(c.g) >= d.opt.OverlapRatio*float64(o.g) {
							o.overlap = true
						}
						break
					}
				}
			}
		}
		if !c.dropped {
			d.grid[k] = append(d.grid[k], i)
		}
	}
	// Keep the slices' memory for the next frame.
	for k, v := range d.grid {
		d.grid[k] = v[:0]
	}
}

// refine locates the spot whose integer maximum is (x0, y0) in the residual
// r, with b the band-pass's box mean (the local background offset).
func (d *Detector) refine(r, b []float32, w, h, x0, y0 int) (Detection, bool) {
	wr := d.wr
	off := float64(b[y0*w+x0])
	var cx, cy float64
	ok := false
	switch d.opt.Estimator {
	case Centroid:
		cx, cy, ok = d.centroid(r, w, h, x0, y0, off)
	case RadialSymmetry:
		cx, cy, ok = d.radialCentre(r, w, x0, y0)
	}
	if !ok || math.Abs(cx-float64(x0)) > maxShiftPx || math.Abs(cy-float64(y0)) > maxShiftPx {
		return Detection{}, false
	}
	// Window around the refined position for the shape and amplitude.
	ix, iy := int(math.Round(cx)), int(math.Round(cy))
	if ix < wr || iy < wr || ix >= w-wr || iy >= h-wr {
		return Detection{}, false
	}
	s2 := d.sigma*d.sigma + 1.0/12
	sw2 := d.sigma * d.sigma
	// First pass: least-squares fit of amplitude and offset, v = a t + c,
	// with t the pixel-integrated unit Gaussian at the refined position.
	var st, stt, sv, svt float64
	np := float64((2*wr + 1) * (2*wr + 1))
	for j := -wr; j <= wr; j++ {
		yy := float64(iy+j) - cy
		d.wy[j+wr] = yy
		row := r[(iy+j)*w:]
		for i := -wr; i <= wr; i++ {
			xx := float64(ix+i) - cx
			v := float64(row[ix+i])
			t := math.Exp(-(xx*xx + yy*yy) / (2 * s2))
			st += t
			stt += t * t
			sv += v
			svt += v * t
		}
	}
	den := np*stt - st*st
	if !(den > 0) {
		return Detection{}, false
	}
	// The template's peak is s^2/s2 of the density's peak N/(2 pi s^2).
	amp := (np*svt - st*sv) / den * s2 / sw2
	off = (sv*stt - st*svt) / den
	var sumW, mxx, myy, mxy, bright float64
	rDisc2 := float64(wr * wr)
	for j := -wr; j <= wr; j++ {
		yy := float64(iy+j) - cy
		row := r[(iy+j)*w:]
		for i := -wr; i <= wr; i++ {
			xx := float64(ix+i) - cx
			v := float64(row[ix+i]) - off
			d2 := xx*xx + yy*yy
			wt := math.Exp(-d2 / (2 * sw2))
			sumW += v * wt
			mxx += v * wt * xx * xx
			myy += v * wt * yy * yy
			mxy += v * wt * xx * yy
			if d2 <= rDisc2 {
				bright += v
			}
		}
	}
	if !(sumW > 0) {
		return Detection{}, false
	}
	// Gaussian-weighted second moments of a Gaussian spot of variance v
	// with a weight of variance sw2 are v*sw2/(v+sw2): invert per axis.
	mxx, myy, mxy = mxx/sumW, myy/sumW, mxy/sumW
	tr, det := mxx+myy, mxx*myy-mxy*mxy
	disc := math.Sqrt(math.Max(0, tr*tr/4-det))
	l1, l2 := tr/2+disc, tr/2-disc
	deconv := func(m float64) float64 {
		if m >= sw2 {
			return math.Inf(1)
		}
		return math.Max(0, m*sw2/(sw2-m))
	}
	v1, v2 := deconv(l1), deconv(l2)
	size := math.Sqrt(v1 + v2)
	ecc := 1.0
	if v1 > 0 && !math.IsInf(v1, 0) {
		ecc = math.Sqrt(math.Max(0, 1-v2/v1))
	}
	return Detection{XPx: cx, YPx: cy, Brightness: bright, SizePx: size, Eccentricity: ecc, SNR: amp}, true
}

// centroid is the iterated Gaussian-weighted centroid, the mask's sd
// centroidMaskWidening times the nominal spot sd. Each step moves the
// mask by the centroid offset times (sw2+s2)/sw2, the factor by which a
// Gaussian mask of variance sw2 pulls the centroid of a Gaussian spot of
// variance s2 towards itself: a Newton step, which converges in a few
// iterations for a spot of about the nominal size.
func (d *Detector) centroid(r []float32, w, h, x0, y0 int, off float64) (cx, cy float64, ok bool) {
	wr := d.wr
	sw2 := centroidMaskWidening * centroidMaskWidening * d.sigma * d.sigma
	s2 := d.sigma*d.sigma + 1.0/12
	gainStep := (sw2 + s2) / sw2
	cx, cy = float64(x0), float64(y0)
	ix, iy := x0, y0
	for it := 0; it < maxIterations; it++ {
		for i := -wr; i <= wr; i++ {
			dx := float64(ix+i) - cx
			d.wx[i+wr] = math.Exp(-dx * dx / (2 * sw2))
			dy := float64(iy+i) - cy
			d.wy[i+wr] = math.Exp(-dy * dy / (2 * sw2))
		}
		var sw, sx, sy float64
		for j := -wr; j <= wr; j++ {
			row := r[(iy+j)*w+ix-wr : (iy+j)*w+ix+wr+1]
			wyj := d.wy[j+wr]
			var rs, rx float64
			for i, v := range row {
				t := (float64(v) - off) * d.wx[i]
				rs += t
				rx += t * float64(i-wr)
			}
			sw += rs * wyj
			sx += rx * wyj
			sy += rs * wyj * float64(j)
		}
		if !(sw > 0) {
			return 0, 0, false
		}
		// Offsets relative to the current centre.
		ex := sx/sw + float64(ix) - cx
		ey := sy/sw + float64(iy) - cy
		cx += gainStep * ex
		cy += gainStep * ey
		if math.Abs(cx-float64(x0)) > maxShiftPx || math.Abs(cy-float64(y0)) > maxShiftPx {
			return 0, 0, false
		}
		nx, ny := int(math.Round(cx)), int(math.Round(cy))
		if nx < wr || ny < wr || nx >= w-wr || ny >= h-wr {
			return 0, 0, false
		}
		ix, iy = nx, ny
		if math.Abs(ex) < convergedPx && math.Abs(ey) < convergedPx {
			break
		}
	}
	return cx, cy, true
}

// radialCentre is the radial-symmetry centre of Parthasarathy (2012) on the
// (2 wr + 1)^2 window centred at (x0, y0). The intensity gradient is taken
// at the 2 wr x 2 wr corners between pixels (Roberts cross), smoothed by a
// 3 x 3 mean; the centre is the point that minimizes the sum of squared
// distances to the lines through each corner along its gradient, weighted by
// the squared gradient magnitude over the corner's distance from the
// gradient-weighted centroid.
func (d *Detector) radialCentre(r []float32, w, x0, y0 int) (cx, cy float64, ok bool) {
	wr := d.wr
	n := 2*wr + 1
	m := n - 1
	for j := 0; j < n; j++ {
		row := r[(y0-wr+j)*w+x0-wr:]
		for i := 0; i < n; i++ {
			d.win[j*n+i] = float64(row[i])
		}
	}
	// Gradients at the corner between pixels (i, j) and (i+1, j+1).
	gx, gy := d.gxBuf, d.gyBuf
	for j := 0; j < m; j++ {
		for i := 0; i < m; i++ {
			a, b := d.win[j*n+i], d.win[j*n+i+1]
			c, e := d.win[(j+1)*n+i], d.win[(j+1)*n+i+1]
			gx[j*m+i] = 0.5 * (b - a + e - c)
			gy[j*m+i] = 0.5 * (c - a + e - b)
		}
	}
	// 3x3 mean, truncated at the border of the corner grid.
	sgx, sgy := d.sgxBuf, d.sgyBuf
	for j := 0; j < m; j++ {
		for i := 0; i < m; i++ {
			var sx, sy float64
			cnt := 0
			for dj := -1; dj <= 1; dj++ {
				for di := -1; di <= 1; di++ {
					jj, ii := j+dj, i+di
					if jj < 0 || ii < 0 || jj >= m || ii >= m {
						continue
					}
					sx += gx[jj*m+ii]
					sy += gy[jj*m+ii]
					cnt++
				}
			}
			sgx[j*m+i], sgy[j*m+i] = sx/float64(cnt), sy/float64(cnt)
		}
	}
	// Corner (i, j) is at window coordinates (i+0.5, j+0.5) - wr relative to
	// the centre pixel.
	var sg, scx, scy float64
	for j := 0; j < m; j++ {
		for i := 0; i < m; i++ {
			g2 := sgx[j*m+i]*sgx[j*m+i] + sgy[j*m+i]*sgy[j*m+i]
			sg += g2
			scx += g2 * (float64(i) + 0.5 - float64(wr))
			scy += g2 * (float64(j) + 0.5 - float64(wr))
		}
	}
	if !(sg > 0) {
		return 0, 0, false
	}
	ccx, ccy := scx/sg, scy/sg
	// Normal equations of sum w ((p - q) . nrm)^2, nrm the unit normal to
	// the gradient.
	var a11, a12, a22, b1, b2 float64
	for j := 0; j < m; j++ {
		for i := 0; i < m; i++ {
			ux, uy := sgx[j*m+i], sgy[j*m+i]
			g2 := ux*ux + uy*uy
			if g2 == 0 {
				continue
			}
			qx, qy := float64(i)+0.5-float64(wr), float64(j)+0.5-float64(wr)
			dist := math.Hypot(qx-ccx, qy-ccy)
			if dist < 1e-6 {
				dist = 1e-6
			}
			wt := g2 / dist
			// nrm nrm^T = (1/g2) [uy^2, -ux uy; -ux uy, ux^2]; the weight
			// already holds g2, so wt/g2 = 1/dist.
			k := wt / g2
			n11, n12, n22 := k*uy*uy, -k*ux*uy, k*ux*ux
			a11 += n11
			a12 += n12
			a22 += n22
			b1 += n11*qx + n12*qy
			b2 += n12*qx + n22*qy
		}
	}
	det := a11*a22 - a12*a12
	if !(math.Abs(det) > 0) {
		return 0, 0, false
	}
	px := (a22*b1 - a12*b2) / det
	py := (a11*b2 - a12*b1) / det
	return float64(x0) + px, float64(y0) + py, true
}
