// Package walls finds the two walls of a rheometer gap in a side-view image
// (usually the temporal median of a video, so that moving tracers are gone)
// as sub-pixel straight lines.
//
// The image is cut into vertical strips. In each strip the column-averaged
// intensity profile is smoothed and differentiated, and every strong
// horizontal edge gives a candidate point, located to a fraction of a pixel
// by a three-point Gaussian fit of the gradient peak. Candidate points of
// the same sign are grouped into lines by an exhaustive consensus search over
// pairs of strips and a robust fit (iteratively reweighted least squares with
// Tukey's biweight), so a stuck particle, a scratch or a tracer left in the
// median does not pull the line. Lines closer than MinGapPx are one wall
// (the two flanks of a reflection line, say); the two strongest walls are
// kept.
//
// Each wall is then placed by a model of its profile: a blurred step from
// the plate's level to the sample's, plus an optional thin reflection line
// on the wall, both integrated over the pixel. The model is
// fitted in every strip and a second robust line through the strips' wall
// positions is the wall.
//
// Image coordinates are pixels with the origin at the top-left pixel's
// centre, x to the right and y down. Edge contrasts are reported in grey
// levels of an 8-bit image (16-bit images are scaled by their effective bit
// depth).
package walls

import (
	"errors"
	"fmt"
	"math"
	"sort"

	"gocv.io/x/gocv"

	"gaptrace/calib/robust"
)

// Line is a straight line in image pixels, y = Y0 + Slope*x.
type Line struct {
	Y0    float64 // y at x = 0, px
	Slope float64 // dy/dx
}

// YAt returns the line's y in px at column xPx.
func (l Line) YAt(xPx float64) float64 { return l.Y0 + l.Slope*xPx }

// HeightErrPx returns the standard uncertainty, in px, of the wall line's
// height at column xPx, from the fit's own residuals: the variance of a
// straight-line fit's value at x, s^2 (1/W + (x - xbar)^2 / Sxx), with s the
// robust residual scale and W, xbar, Sxx the biweight-weighted count, mean
// and sum of squares of the points' columns (any regression text, e.g.
// Draper & Smith 1998, Applied Regression Analysis, eq. 1.4.7; from
// memory). NaN when the line was not fitted to points (given by hand).
func (w Wall) HeightErrPx(xPx float64) float64 {
	m := w.fit
	if !(m.w > 1) || !(m.sxx > 0) {
		return math.NaN()
	}
	d := xPx - m.xbar
	return w.ResidualPx * math.Sqrt(1/m.w+d*d/m.sxx)
}

// EdgeModelErrPx is the standard uncertainty, in px, that the wall model
// itself adds to a wall line's height, beyond what its residuals show: the
// edge's blur, a reflection line and the codec shift the fitted edge the
// same way in every strip, so that the residuals cannot see it. A Type B
// evaluation (GUM 4.3) from the renders of the coverage sweep
// (profile/pipeline BenchmarkCoverage, issue 12): on its 42 renders,
// tracked afresh at 838986f, the 84 fitted lines lie up to 0.225 px, in
// rms 0.095 px, from the true ones.
const EdgeModelErrPx = 0.1

// lineMoments are the weighted moments of a line fit's columns: the summed
// weights, the weighted mean column and the weighted sum of squares about
// it (px^2).
type lineMoments struct{ w, xbar, sxx float64 }

// momentsOf returns the moments of columns x with weights wt.
func momentsOf(x, wt []float64) lineMoments {
	var m lineMoments
	var sx float64
	for i, v := range x {
		m.w += wt[i]
		sx += wt[i] * v
	}
	if !(m.w > 0) {
		return m
	}
	m.xbar = sx / m.w
	for i, v := range x {
		d := v - m.xbar
		m.sxx += wt[i] * d * d
	}
	return m
}

// AngleDeg returns the line's angle to the image's x axis in degrees,
// positive when y grows with x (clockwise on screen).
func (l Line) AngleDeg() float64 { return math.Atan(l.Slope) * 180 / math.Pi }

// Points returns two points on the line, at x = 0 and x = widthPx-1, in the
// [[x, y], [x, y]] form of the calibration file.
func (l Line) Points(widthPx int) [2][2]float64 {
	x1 := float64(widthPx - 1)
	return [2][2]float64{{0, l.YAt(0)}, {x1, l.YAt(x1)}}
}

// LineThrough returns the line through two points [x, y] in px. The points
// must differ in x.
func LineThrough(p, q [2]float64) (Line, error) {
	dx := q[0] - p[0]
	if math.Abs(dx) < minRunPx {
		return Line{}, fmt.Errorf("walls: points %v and %v are not %g px apart along x, so they do not define a wall line", p, q, float64(minRunPx))
	}
	s := (q[1] - p[1]) / dx
	return Line{Y0: p[1] - s*p[0], Slope: s}, nil
}

// minRunPx is the least x separation of two points defining a wall line:
// closer points make the slope meaningless.
const minRunPx = 1

// Wall is one detected wall.
type Wall struct {
	Line
	// ContrastLevels is the median step across the wall in 8-bit grey levels,
	// signed: positive when the image gets brighter going down.
	ContrastLevels float64
	// Strips and Inliers count the strips with a candidate on the line and
	// those kept by the robust fit.
	Strips, Inliers int
	// ResidualPx is the robust spread (1.4826 x MAD) of the inlier points
	// about the line.
	ResidualPx float64
	// fit holds the weighted moments of the line fit's points, for
	// HeightErrPx.
	fit lineMoments
	// Reflection reports a thin reflection line found on the wall.
	Reflection bool
}

// Result is the outcome of Find.
type Result struct {
	Top, Bottom Wall // Top has the smaller y
	WidthPx     int
	HeightPx    int
	// GapPx is the perpendicular distance between the walls at the image's
	// centre column.
	GapPx float64
	// TiltDeg is the mean angle of the two walls to the image's x axis,
	// positive when y grows with x.
	TiltDeg float64
}

// Options tunes Find. The zero value is usable.
type Options struct {
	// StripPx is the width of the strips the image is cut into; 0 means
	// DefaultStripPx.
	StripPx int
	// MinContrastLevels is the least step across a wall, in 8-bit grey
	// levels; 0 means DefaultMinContrastLevels.
	MinContrastLevels float64
	// MinGapPx is the least plausible perpendicular wall distance; 0 means
	// MinGapPx.
	MinGapPx float64
	// Undistort, when not nil, maps a measured edge point to its position
	// without lens distortion before the lines are fitted.
	Undistort func(xPx, yPx float64) (float64, float64)
}

// Defaults and limits.
const (
	// DefaultStripPx: 16 columns average the noise down by 4 while a wall
	// tilted by 3 degrees moves by only 0.8 px inside the strip, which the
	// average turns into a symmetric blur centred on the strip's middle.
	DefaultStripPx = 16
	// DefaultMinContrastLevels: a plate edge in a lit rheometer gap is tens
	// of grey levels; below 10 the edge is lost in lighting gradients and
	// reflections (common practice).
	DefaultMinContrastLevels = 10
	// MinGapPx: below eight pixels a gap holds at most one or two tracer
	// diameters, too few to resolve a velocity profile (common practice).
	MinGapPx = 8
	// MaxTiltDeg bounds the wall angle searched for; a camera set up on a
	// rheometer is aligned to within a few degrees.
	MaxTiltDeg = 10
	// MaxWallAngleDiffDeg: the two walls of a gap are parallel to well
	// within this; a larger difference means one "wall" is something else.
	MaxWallAngleDiffDeg = 2
)

// Internal constants of the edge search.
const (
	smoothSigmaPx = 0.7 // Gaussian smoothing of the strip profiles before differentiation
	contrastArmPx = 4   // the step across an edge is read this far on both sides
	candPerStrip  = 6   // strongest edges kept per strip and sign
	inlierPx      = 1.0 // a candidate within this of a hypothesis line supports it
	minStripFrac  = 0.3 // a wall line must be seen in at least this fraction of the strips
	tukeyC        = 4.685
	minSigmaPx    = 0.05 // floor of the robust residual scale: sub-pixel points are not better than this
	irlsIter      = 20
	mergePx       = 2.5  // lines closer than this at every column are the same edge
	strongFrac    = 0.25 // a wall edge has at least this fraction of the strongest line's support
)

// candidate is one edge point in one strip.
type candidate struct {
	strip    int
	xPx, yPx float64
	contrast float64 // signed, 8-bit levels
}

// Find locates both walls in img, a one-channel 8- or 16-bit (or 32-bit
// float) image, or a 3-channel 8-bit image that is converted to grey.
func Find(img gocv.Mat, opt Options) (*Result, error) {
	pix, w, h, err := greyPixels(img)
	if err != nil {
		return nil, err
	}
	return FindPixels(pix, w, h, opt)
}

// FindPixels is Find on a row-major grey image held in pix (w x h values in
// 8-bit grey levels).
func FindPixels(pix []float32, w, h int, opt Options) (*Result, error) {
	if opt.StripPx == 0 {
		opt.StripPx = DefaultStripPx
	}
	if opt.MinContrastLevels == 0 {
		opt.MinContrastLevels = DefaultMinContrastLevels
	}
	if opt.MinGapPx == 0 {
		opt.MinGapPx = MinGapPx
	}
	if opt.StripPx < 1 {
		return nil, fmt.Errorf("walls: strip width %d px must be positive", opt.StripPx)
	}
	if len(pix) != w*h {
		return nil, fmt.Errorf("walls: %d pixels for a %dx%d image", len(pix), w, h)
	}
	nStrip := w / opt.StripPx
	const minStrips = 4
	if nStrip < minStrips || h < 2*contrastArmPx+int(opt.MinGapPx) {
		return nil, fmt.Errorf("walls: image %dx%d px is too small to find walls in (need %d strips of %d px and a height of %d px)",
			w, h, minStrips, opt.StripPx, 2*contrastArmPx+int(opt.MinGapPx))
	}
	cands, strongest, profs := edgeCandidates(pix, w, h, opt.StripPx, opt.MinContrastLevels)
	if len(cands) == 0 {
		return nil, fmt.Errorf("walls not found: strongest horizontal edge %.1f grey levels, need %g", strongest, opt.MinContrastLevels)
	}
	lines := consensusLines(cands, nStrip)
	if len(lines) == 0 {
		return nil, fmt.Errorf("walls not found: edges up to %.1f grey levels but none straight along %d%% of the image width",
			strongest, int(minStripFrac*100))
	}
	r, err := pickWalls(lines, w, h, opt.MinGapPx)
	if err != nil {
		return nil, err
	}
	if err := refineWalls(r, profs, opt); err != nil {
		return nil, err
	}
	return r, nil
}

// greyPixels returns img's pixels as float32 in 8-bit grey levels.
func greyPixels(img gocv.Mat) ([]float32, int, int, error) {
	if img.Empty() {
		return nil, 0, 0, errors.New("walls: empty image")
	}
	w, h := img.Cols(), img.Rows()
	src := img
	if img.Channels() == 3 || img.Channels() == 4 {
		g := gocv.NewMat()
		defer g.Close()
		code := gocv.ColorBGRToGray
		if img.Channels() == 4 {
			code = gocv.ColorBGRAToGray
		}
		gocv.CvtColor(img, &g, code)
		src = g
	} else if img.Channels() != 1 {
		return nil, 0, 0, fmt.Errorf("walls: image with %d channels, need 1 or 3", img.Channels())
	}
	scale := 1.0
	switch src.Type() {
	case gocv.MatTypeCV8U:
	case gocv.MatTypeCV16U, gocv.MatTypeCV32F:
		// A float image (a temporal median) holds 8- or 16-bit levels.
		if _, maxV, _, _ := gocv.MinMaxLoc(src); maxV > 255 {
			scale = 1 / levelUnit16(float64(maxV))
		}
	default:
		return nil, 0, 0, fmt.Errorf("walls: image type %v, need 8 or 16 bit grey", src.Type())
	}
	f := gocv.NewMat()
	defer f.Close()
	src.ConvertToWithParams(&f, gocv.MatTypeCV32F, float32(scale), 0)
	if !f.IsContinuous() {
		c := f.Clone()
		f.Close()
		f = c
	}
	d, err := f.DataPtrFloat32()
	if err != nil {
		return nil, 0, 0, fmt.Errorf("walls: %w", err)
	}
	out := make([]float32, len(d))
	copy(out, d)
	return out, w, h, nil
}

// levelUnit16 returns the size of one 8-bit grey level in a 16-bit image
// whose brightest pixel is maxV: the data fill an effective bit depth of
// ceil(log2(maxV+1)) bits, at least 8 (a 12-bit camera in a 16-bit file has
// a level of 16).
func levelUnit16(maxV float64) float64 {
	bits := math.Ceil(math.Log2(maxV + 1))
	if bits < 8 {
		bits = 8
	}
	return math.Exp2(bits - 8)
}

// stripProfile is the column-averaged intensity of one strip, 8-bit levels
// per row, and the strip's centre column.
type stripProfile struct {
	xPx float64
	v   []float64
}

// edgeCandidates returns the strong edge points of every strip, the
// strongest edge contrast seen anywhere (8-bit levels) and the strip
// profiles.
func edgeCandidates(pix []float32, w, h, stripPx int, minContrast float64) ([]candidate, float64, []stripProfile) {
	nStrip := w / stripPx
	off := (w - nStrip*stripPx) / 2
	prof := make([]float64, h)
	sm := make([]float64, h)
	grad := make([]float64, h)
	kern := gaussKernel(smoothSigmaPx)
	var cands []candidate
	var strongest float64
	profs := make([]stripProfile, nStrip)
	type peak struct {
		y, c, g float64
	}
	var peaks []peak
	var rf rowFit
	for s := 0; s < nStrip; s++ {
		x0 := off + s*stripPx
		for y := 0; y < h; y++ {
			prof[y] = rf.rowLevel(pix[y*w+x0 : y*w+x0+stripPx])
		}
		profs[s] = stripProfile{xPx: float64(x0) + float64(stripPx-1)/2, v: append([]float64(nil), prof...)}
		convolve(sm, prof, kern)
		for y := 1; y < h-1; y++ {
			grad[y] = (sm[y+1] - sm[y-1]) / 2
		}
		grad[0], grad[h-1] = 0, 0
		peaks = peaks[:0]
		for y := contrastArmPx; y < h-contrastArmPx; y++ {
			g := grad[y]
			if math.Abs(g) < math.Abs(grad[y-1]) || math.Abs(g) <= math.Abs(grad[y+1]) {
				continue
			}
			c := sm[y+contrastArmPx] - sm[y-contrastArmPx]
			if math.Abs(c) > strongest {
				strongest = math.Abs(c)
			}
			if math.Abs(c) < minContrast || c*g <= 0 {
				continue
			}
			peaks = append(peaks, peak{float64(y) + subPixel(grad[y-1], g, grad[y+1]), c, g})
		}
		sort.Slice(peaks, func(i, j int) bool { return math.Abs(peaks[i].g) > math.Abs(peaks[j].g) })
		if len(peaks) > 2*candPerStrip {
			peaks = peaks[:2*candPerStrip]
		}
		xc := float64(x0) + float64(stripPx-1)/2
		for _, p := range peaks {
			cands = append(cands, candidate{strip: s, xPx: xc, yPx: p.y, contrast: p.c})
		}
	}
	return cands, strongest, profs
}

// subPixel returns the offset in (-0.5, 0.5] of a peak from its middle
// sample by a three-point Gaussian fit (exact for a Gaussian-blurred step),
// falling back to a parabola when the samples change sign.
func subPixel(a, b, c float64) float64 {
	a, b, c = math.Abs(a), math.Abs(b), math.Abs(c)
	var d float64
	if a > 0 && c > 0 {
		la, lb, lc := math.Log(a), math.Log(b), math.Log(c)
		if den := la - 2*lb + lc; den < 0 {
			d = (la - lc) / (2 * den)
		}
	} else if den := a - 2*b + c; den < 0 {
		d = (a - c) / (2 * den)
	}
	return math.Max(-0.5, math.Min(0.5, d))
}

func gaussKernel(sigma float64) []float64 {
	r := int(math.Ceil(3 * sigma))
	k := make([]float64, 2*r+1)
	var sum float64
	for i := range k {
		x := float64(i - r)
		k[i] = math.Exp(-x * x / (2 * sigma * sigma))
		sum += k[i]
	}
	for i := range k {
		k[i] /= sum
	}
	return k
}

// convolve writes src convolved with the odd-length kernel k into dst,
// replicating the end samples.
func convolve(dst, src, k []float64) {
	r := len(k) / 2
	n := len(src)
	for i := range dst {
		var s float64
		for j, kv := range k {
			p := i + j - r
			if p < 0 {
				p = 0
			} else if p >= n {
				p = n - 1
			}
			s += kv * src[p]
		}
		dst[i] = s
	}
}

// fitted is a line found by the consensus search.
type fitted struct {
	Wall
	support float64 // summed |contrast| of the inliers
}

// consensusLines groups candidates into straight lines, strongest first.
func consensusLines(cands []candidate, nStrip int) []fitted {
	minStrips := int(math.Ceil(minStripFrac * float64(nStrip)))
	if minStrips < 3 {
		minStrips = 3
	}
	maxSlope := math.Tan(MaxTiltDeg * math.Pi / 180)
	// Pairs of strips far apart condition the slope: at least half the
	// image width.
	minSep := nStrip / 2
	if minSep < 1 {
		minSep = 1
	}
	used := make([]bool, len(cands))
	var out []fitted
	const maxLines = 8
	for len(out) < maxLines {
		best, bestScore := Line{}, 0.0
		var bestSign float64
		for i := range cands {
			if used[i] {
				continue
			}
			for j := range cands {
				a, b := cands[i], cands[j]
				if used[j] || b.strip-a.strip < minSep || a.contrast*b.contrast <= 0 {
					continue
				}
				s := (b.yPx - a.yPx) / (b.xPx - a.xPx)
				if math.Abs(s) > maxSlope {
					continue
				}
				l := Line{Y0: a.yPx - s*a.xPx, Slope: s}
				score := lineScore(cands, used, l, a.contrast)
				if score > bestScore {
					best, bestScore, bestSign = l, score, a.contrast
				}
			}
		}
		if bestScore == 0 {
			break
		}
		f, members := refine(cands, used, best, bestSign)
		if f.Strips < minStrips {
			// Mark the hypothesis's own points so the search moves on.
			for _, m := range members {
				used[m] = true
			}
			if len(members) == 0 {
				break
			}
			continue
		}
		for _, m := range members {
			used[m] = true
		}
		out = append(out, f)
	}
	sort.Slice(out, func(i, j int) bool { return out[i].support > out[j].support })
	return out
}

// lineScore sums the contrast of the best candidate per strip near l with
// the sign of sign.
func lineScore(cands []candidate, used []bool, l Line, sign float64) float64 {
	var score float64
	last, lastBest := -1, 0.0
	for k, c := range cands {
		if used[k] || c.contrast*sign <= 0 || math.Abs(c.yPx-l.YAt(c.xPx)) > inlierPx {
			continue
		}
		v := math.Abs(c.contrast)
		if c.strip != last {
			score += lastBest
			last, lastBest = c.strip, 0
		}
		lastBest = math.Max(lastBest, v)
	}
	return score + lastBest
}

// refine fits the line robustly to the candidates near l and returns it with
// the indices of the candidates it took.
func refine(cands []candidate, used []bool, l Line, sign float64) (fitted, []int) {
	// One candidate per strip: the nearest to the hypothesis within a
	// generous window.
	const windowPx = 3 * inlierPx
	byStrip := map[int]int{}
	for k, c := range cands {
		if used[k] || c.contrast*sign <= 0 {
			continue
		}
		d := math.Abs(c.yPx - l.YAt(c.xPx))
		if d > windowPx {
			continue
		}
		if o, ok := byStrip[c.strip]; !ok || d < math.Abs(cands[o].yPx-l.YAt(cands[o].xPx)) {
			byStrip[c.strip] = k
		}
	}
	idx := make([]int, 0, len(byStrip))
	for _, k := range byStrip {
		idx = append(idx, k)
	}
	sort.Ints(idx)
	n := len(idx)
	f := fitted{}
	f.Strips = n
	if n < 2 {
		return f, idx
	}
	x := make([]float64, n)
	y := make([]float64, n)
	for i, k := range idx {
		x[i], y[i] = cands[k].xPx, cands[k].yPx
	}
	l, sigma, wt := robustLine(x, y)
	f.Line = l
	f.ResidualPx = sigma
	f.fit = momentsOf(x, wt)
	contr := make([]float64, 0, n)
	for i, k := range idx {
		if wt[i] > 0 {
			f.Inliers++
			f.support += math.Abs(cands[k].contrast)
			contr = append(contr, cands[k].contrast)
		}
	}
	f.ContrastLevels = robust.Median(contr)
	f.Strips = f.Inliers
	return f, idx
}

// weightedLine fits y = a + b x by weighted least squares.
func weightedLine(x, y, w []float64) (Line, bool) {
	var sw, sx, sy float64
	for i := range x {
		sw += w[i]
		sx += w[i] * x[i]
		sy += w[i] * y[i]
	}
	if sw == 0 {
		return Line{}, false
	}
	mx, my := sx/sw, sy/sw
	var sxx, sxy float64
	for i := range x {
		dx := x[i] - mx
		sxx += w[i] * dx * dx
		sxy += w[i] * dx * (y[i] - my)
	}
	if sxx == 0 {
		return Line{}, false
	}
	b := sxy / sxx
	return Line{Y0: my - b*mx, Slope: b}, true
}

// pickWalls groups the strong lines into walls (lines closer than the
// least gap belong to the same wall: the flanks of a reflection line, a
// double edge) and chooses the two strongest parallel walls. Their lines
// are coarse; refineWalls places them.
func pickWalls(lines []fitted, w, h int, minGapPx float64) (*Result, error) {
	xc := float64(w-1) / 2
	var strong []fitted
	for _, l := range lines {
		if l.support >= strongFrac*lines[0].support {
			strong = append(strong, l)
		}
	}
	sort.Slice(strong, func(i, j int) bool { return strong[i].YAt(xc) < strong[j].YAt(xc) })
	type group struct {
		members []fitted
		support float64
	}
	var groups []group
	for _, l := range strong {
		if n := len(groups); n > 0 {
			g := &groups[n-1]
			last := g.members[len(g.members)-1]
			if l.YAt(xc)-last.YAt(xc) < minGapPx && math.Abs(l.AngleDeg()-last.AngleDeg()) <= MaxWallAngleDiffDeg {
				g.members = append(g.members, l)
				g.support += l.support
				continue
			}
		}
		groups = append(groups, group{members: []fitted{l}, support: l.support})
	}
	// The coarse wall of a group: the support-weighted mean line.
	coarse := func(g group) Wall {
		var y0, sl, c float64
		var wl Wall
		for _, m := range g.members {
			y0 += m.support * m.Y0
			sl += m.support * m.Slope
			c = math.Max(c, math.Abs(m.ContrastLevels))
			wl.Strips = max(wl.Strips, m.Strips)
		}
		wl.Line = Line{Y0: y0 / g.support, Slope: sl / g.support}
		wl.ContrastLevels = c
		return wl
	}
	bi, bj, best := -1, -1, 0.0
	for i := range groups {
		for j := i + 1; j < len(groups); j++ {
			a, b := coarse(groups[i]), coarse(groups[j])
			if math.Abs(a.AngleDeg()-b.AngleDeg()) > MaxWallAngleDiffDeg {
				continue
			}
			if s := groups[i].support + groups[j].support; s > best {
				bi, bj, best = i, j, s
			}
		}
	}
	if bi < 0 {
		g := groups[0]
		for _, gg := range groups {
			if gg.support > g.support {
				g = gg
			}
		}
		m := g.members
		if len(m) >= 2 {
			top, bot := m[0], m[len(m)-1]
			if d := bot.YAt(xc) - top.YAt(xc); d >= mergePx && top.ContrastLevels*bot.ContrastLevels < 0 {
				return nil, fmt.Errorf("walls: gap of %.1f px between the edges at y=%.1f and y=%.1f is implausible, need at least %g px",
					d, top.YAt(xc), bot.YAt(xc), minGapPx)
			}
		}
		return nil, fmt.Errorf("walls not found: only one wall-like edge, at y=%.1f px (%.1f grey levels); the other wall is missing or outside the %dx%d image",
			m[0].YAt(xc), math.Abs(m[0].ContrastLevels), w, h)
	}
	r := &Result{Top: coarse(groups[bi]), Bottom: coarse(groups[bj]), WidthPx: w, HeightPx: h}
	r.update()
	return r, nil
}

// update sets the gap and tilt from the wall lines.
func (r *Result) update() {
	xc := float64(r.WidthPx-1) / 2
	th := math.Atan((r.Top.Slope + r.Bottom.Slope) / 2)
	r.GapPx = (r.Bottom.YAt(xc) - r.Top.YAt(xc)) * math.Cos(th)
	r.TiltDeg = (r.Top.AngleDeg() + r.Bottom.AngleDeg()) / 2
}

// CheckInside reports an error when line l leaves the image of w x h pixels
// (by more than half a pixel) anywhere between its first and last column.
// The message starts with name, which says which line it is.
func CheckInside(name string, l Line, w, h int) error {
	const edgePx = 0.5 // the image extends half a pixel beyond the outer pixel centres
	for _, x := range []float64{0, float64(w - 1)} {
		if y := l.YAt(x); y < -edgePx || y > float64(h-1)+edgePx {
			return fmt.Errorf("%s at y=%.1f px (x=%g) lies outside the %dx%d image", name, y, x, w, h)
		}
	}
	return nil
}
