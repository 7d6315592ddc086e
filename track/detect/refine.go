package detect

import (
	"math"
	"slices"

	"gaptrace/calib/robust"
)

// refine locates, sizes and weighs the spot whose integer maximum is
// (x0, y0), with the spots of models (its neighbours) subtracted. It
// returns the detection with SNR holding the amplitude in grey levels,
// still to be divided by the frame's noise. A window that the frame's edge
// cuts is completed by a fit of the spot to its visible pixels.
func (d *Detector) refine(p *pixels, x0, y0 int, models []spotModel) (Detection, shape, bool) {
	wr := d.wr
	R := wr + windowSlack
	n := 2*R + 1
	inside := x0-R >= 0 && x0+R < p.w && y0-R >= 0 && y0+R < p.h
	wall := p.bands != nil && d.nearWall(x0, y0)
	if inside {
		p.window(d.win, x0, y0, R, wall)
	} else {
		p.windowClipped(d.win, d.valid, x0, y0, R, wall)
	}
	complete := inside
	if wall && slices.Contains(p.cutPlate, true) {
		// Leave out the pixels of a plate the profile does not model.
		if inside {
			for k := range d.valid[:n*n] {
				d.valid[k] = true
			}
		}
		for j := range n {
			for i := range n {
				if x, y := x0-R+i, y0-R+j; d.valid[j*n+i] && p.cut(x, y) {
					d.valid[j*n+i], complete = false, false
				}
			}
		}
	}
	if len(models) > 0 {
		d.subtractModels(x0, y0, R, models)
	}
	if !complete && !d.fitMasked(R) {
		return Detection{}, shape{}, false
	}
	// The window's border, more than 4 sd from the candidate, holds no
	// light of the spot: its median is the local background left.
	// Every other border pixel is plenty for a median.
	d.ring = d.ring[:0]
	for i := 0; i < n; i += 2 {
		d.ring = append(d.ring, d.win[i], d.win[(n-1)*n+i])
	}
	for j := 2; j < n-1; j += 2 {
		d.ring = append(d.ring, d.win[j*n], d.win[j*n+n-1])
	}
	level := medianOfFew(d.ring, len(d.ring)/2)
	for i := range d.win {
		d.win[i] -= level
	}
	var dx, dy float64 // position relative to (x0, y0)
	ok := false
	// The band-pass mirrors the frame at its edges, which moves the maximum
	// of a spot the edge cuts towards the edge: its refinement may move
	// as far as the window allows.
	limit := maxShiftPx
	if !inside {
		limit = windowSlack
	}
	switch d.opt.Estimator {
	case Centroid:
		dx, dy, ok = d.centroid(R, limit)
	case RadialSymmetry:
		dx, dy, ok = d.radialCentre(R)
	}
	if !ok || math.Abs(dx) > limit || math.Abs(dy) > limit {
		return Detection{}, shape{}, false
	}
	// Window of radius wr around the pixel nearest the estimate.
	ox, oy := int(math.Round(dx)), int(math.Round(dy))
	// One Gaussian of the pixel-integrated spot's variance s2 serves as the
	// amplitude template and as the weight of the moments.
	s2 := spotVar(d.sigma) // pixel integration widens the spot
	sw2 := s2
	var tx, ty [2*maxWindowHalf + 1]float64
	gauss1D(tx[:2*wr+1], float64(ox-wr)-dx, s2, d.decaySpot)
	gauss1D(ty[:2*wr+1], float64(oy-wr)-dy, s2, d.decaySpot)
	gx, gy := tx, ty
	// Least-squares fit of amplitude and offset, v = a t + c.
	var st, stt, sv, svt float64
	np := float64((2*wr + 1) * (2*wr + 1))
	for j := -wr; j <= wr; j++ {
		row := d.win[(R+oy+j)*n+R+ox-wr : (R+oy+j)*n+R+ox+wr+1]
		tyj := ty[j+wr]
		for i, v := range row {
			t := tx[i] * tyj
			st += t
			stt += t * t
			sv += v
			svt += v * t
		}
	}
	den := np*stt - st*st
	if !(den > 0) {
		return Detection{}, shape{}, false
	}
	// The template's peak is s^2/s2 of the density's peak N/(2 pi s^2).
	amp := (np*svt - st*sv) / den * s2 / (d.sigma * d.sigma)
	off := (sv*stt - st*svt) / den
	var sumW, mxx, myy, mxy, bright float64
	rDisc2 := float64(wr * wr)
	for j := -wr; j <= wr; j++ {
		row := d.win[(R+oy+j)*n+R+ox-wr : (R+oy+j)*n+R+ox+wr+1]
		uy := float64(oy+j) - dy
		gyj := gy[j+wr]
		for i, v := range row {
			v -= off
			ux := float64(ox+i-wr) - dx
			if ux*ux+uy*uy <= rDisc2 {
				bright += v
			}
			vw := v * gx[i] * gyj
			sumW += vw
			mxx += vw * ux * ux
			myy += vw * uy * uy
			mxy += vw * ux * uy
		}
	}
	if !(sumW > 0) {
		return Detection{}, shape{}, false
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
	// The long axis's angle from the image rows.
	axis := 0.5 * math.Atan2(2*mxy, mxx-myy)
	return Detection{XPx: float64(x0) + dx, YPx: float64(y0) + dy, Brightness: bright, SizePx: size, Eccentricity: ecc, SNR: amp},
		shape{longVar: v1, shortVar: v2, axisRad: axis}, true
}

// shape is a refined spot's second-moment ellipse: the deconvolved
// variances along its long and short axes, px^2, and the long axis's angle
// from the image rows, rad.
type shape struct {
	longVar, shortVar, axisRad float64
}

// streakAngleDeg is how far from the flow a streak's long axis may turn:
// the moments' axis of a 6 px streak at a round-spot SNR of 10 to 30 lies
// within 12.5 degrees of the streak for 99 % of them (TestStreak), twice
// that admits a streak itself a little off the wall line.
const streakAngleDeg = 25

// isStreak reports whether a spot of shape sh is a motion streak (see
// Options.MaxStreakPx).
func (d *Detector) isStreak(sh shape) bool {
	if math.IsInf(sh.longVar, 0) || !(sh.shortVar >= 0) {
		return false
	}
	turn := math.Remainder(sh.axisRad-d.flowRad, math.Pi)
	if math.Abs(turn) > streakAngleDeg*math.Pi/180 {
		return false
	}
	if math.Sqrt(2*sh.shortVar) > d.opt.MaxSizePx {
		return false
	}
	return math.Sqrt(12*(sh.longVar-sh.shortVar)) <= d.opt.MaxStreakPx
}

// maxWindowHalf bounds the refinement window's half-width for the
// stack-held weights: kernelSigmas sds of a spot of DiameterPx up to
// maxDiameterPx.
const maxWindowHalf = (kernelSigmas*maxDiameterPx)/diameterSigmas + 1

// centroid is the iterated Gaussian-weighted centroid on the loaded window
// (centre at index R), the mask's sd centroidMaskWidening times the nominal
// spot sd. Each step moves the mask by the centroid offset times
// (sw2+s2)/sw2, the factor by which a Gaussian mask of variance sw2 pulls
// the centroid of a Gaussian spot of variance s2 towards itself: a Newton
// step, which converges in a few iterations for a spot of about the nominal
// size. It returns the position relative to the window's centre, or false
// when the estimate leaves the square of half-width limit px.
func (d *Detector) centroid(R int, limit float64) (cx, cy float64, ok bool) {
	wr := d.wr
	n := 2*R + 1
	sw2 := maskVar(d.sigma)
	s2 := spotVar(d.sigma)
	gainStep := (sw2 + s2) / sw2
	ix, iy := 0, 0
	for it := 0; it < maxIterations; it++ {
		gauss1D(d.wx, float64(ix-wr)-cx, sw2, d.decayMask)
		gauss1D(d.wy, float64(iy-wr)-cy, sw2, d.decayMask)
		var sw, sx, sy float64
		for j := -wr; j <= wr; j++ {
			row := d.win[(R+iy+j)*n+R+ix-wr : (R+iy+j)*n+R+ix+wr+1]
			wyj := d.wy[j+wr]
			var rs, rx float64
			for i, v := range row {
				t := v * d.wx[i]
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
		// Offsets of the weighted centroid from the current centre.
		ex := sx/sw + float64(ix) - cx
		ey := sy/sw + float64(iy) - cy
		cx += gainStep * ex
		cy += gainStep * ey
		if math.Abs(cx) > limit || math.Abs(cy) > limit {
			return 0, 0, false
		}
		ix, iy = int(math.Round(cx)), int(math.Round(cy))
		if math.Abs(ex) < convergedPx && math.Abs(ey) < convergedPx {
			break
		}
	}
	return cx, cy, true
}

// radialCentre is the radial-symmetry centre of Parthasarathy (2012) on the
// (2 wr + 1)^2 square at the centre of the loaded window. The intensity
// gradient is taken at the 2 wr x 2 wr corners between pixels (Roberts
// cross), smoothed by a 3 x 3 mean; the centre is the point that minimizes
// the sum of squared distances to the lines through each corner along its
// gradient, weighted by the squared gradient magnitude over the corner's
// distance from the gradient-weighted centroid. It returns the position
// relative to the window's centre.
func (d *Detector) radialCentre(R int) (cx, cy float64, ok bool) {
	wr := d.wr
	n := 2*R + 1
	m := 2 * wr // corners per side
	at := func(i, j int) float64 { return d.win[(R-wr+j)*n+R-wr+i] }
	gx, gy := d.gx, d.gy
	for j := 0; j < m; j++ {
		for i := 0; i < m; i++ {
			a, b := at(i, j), at(i+1, j)
			c, e := at(i, j+1), at(i+1, j+1)
			gx[j*m+i] = 0.5 * (b - a + e - c)
			gy[j*m+i] = 0.5 * (c - a + e - b)
		}
	}
	// 3x3 mean, truncated at the border of the corner grid.
	sgx, sgy := d.sgx, d.sgy
	for j := 0; j < m; j++ {
		for i := 0; i < m; i++ {
			var sx, sy float64
			cnt := 0
			for jj := max(0, j-1); jj <= min(m-1, j+1); jj++ {
				for ii := max(0, i-1); ii <= min(m-1, i+1); ii++ {
					sx += gx[jj*m+ii]
					sy += gy[jj*m+ii]
					cnt++
				}
			}
			sgx[j*m+i], sgy[j*m+i] = sx/float64(cnt), sy/float64(cnt)
		}
	}
	// Corner (i, j) lies at (i+0.5-wr, j+0.5-wr) from the centre pixel.
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
	// Normal equations of sum w ((p - q) . u)^2, u the unit normal to the
	// gradient g: w u u^T = (w/|g|^2) [gy^2, -gx gy; -gx gy, gx^2], and
	// w/|g|^2 is 1/distance.
	var a11, a12, a22, b1, b2 float64
	for j := 0; j < m; j++ {
		for i := 0; i < m; i++ {
			ux, uy := sgx[j*m+i], sgy[j*m+i]
			if ux == 0 && uy == 0 {
				continue
			}
			qx, qy := float64(i)+0.5-float64(wr), float64(j)+0.5-float64(wr)
			k := 1 / math.Max(math.Hypot(qx-ccx, qy-ccy), 1e-6)
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
	return (a22*b1 - a12*b2) / det, (a11*b2 - a12*b1) / det, true
}

// gauss1D fills dst with exp(-u^2/(2 v)) at u = u0, u0+1, ...: two
// exponentials and a recurrence on the ratio of neighbours,
// g(u+1)/g(u) = exp(-(2u+1)/(2v)), which shrinks by decay = exp(-1/v) per
// step (the same for every spot of a Detector: spotVar, maskVar).
func gauss1D(dst []float64, u0, v, decay float64) {
	g := math.Exp(-u0 * u0 / (2 * v))
	r := math.Exp(-(2*u0 + 1) / (2 * v))
	for i := range dst {
		dst[i] = g
		g *= r
		r *= decay
	}
}

// spotVar is the variance of a pixel-integrated spot of sd sigma, px^2;
// maskVar that of the centroid's Gaussian mask.
func spotVar(sigma float64) float64 { return sigma*sigma + 1.0/12 }
func maskVar(sigma float64) float64 {
	return centroidMaskWidening * centroidMaskWidening * sigma * sigma
}

// medianOfFew returns the k-th smallest of the few values of v (the
// window's border ring), reordering v: an insertion sort, which beats
// selection on a couple of dozen values; longer slices go to
// robust.SelectKth.
func medianOfFew(v []float64, k int) float64 {
	if len(v) > fewValues {
		return robust.SelectKth(v, k)
	}
	for i := 1; i < len(v); i++ {
		x, j := v[i], i
		for ; j > 0 && v[j-1] > x; j-- {
			v[j] = v[j-1]
		}
		v[j] = x
	}
	return v[k]
}

// fewValues is the longest slice medianOfFew sorts by insertion: the ring
// of a window up to about 33 px across (common practice: insertion sort
// wins below a few dozen values).
const fewValues = 64
