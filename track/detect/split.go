package detect

import (
	"math"
	"slices"
)

const (
	// splitMinSNR is the SNR from which an elongated spot is tested for
	// two tracers closer than the matched filter separates (its maxima
	// merge below about 2.8 spot sds): below it the moments are too
	// noisy to tell (shapeMinSNR).
	splitMinSNR = shapeMinSNR
	// splitMinExcess is the long axis's variance beyond the short one's,
	// px^2, from which a spot is tested: two equal spots 2 px apart add
	// 1 px^2.
	splitMinExcess = 2
	// splitMinPx is the smallest separation of the two spots kept, px:
	// closer, two spots of the nominal size (sd 1.25 px for 5 px) are one
	// to the fit within the noise.
	splitMinPx = 2
	// splitChi2 is the drop of the residual sum of squares, in per-pixel
	// noise variances, that the two-spot model must reach over the one-spot
	// model: the chi-square 0.1 % point for its 3 more parameters, 16.27
	// (Abramowitz & Stegun 1964, table 26.8; from memory).
	splitChi2 = 16.27
	// splitStreakChi2 is the drop of the residual sum of squares, in
	// per-pixel noise variances, that the pair must reach over a streak
	// (fitModel with streak), which has one parameter fewer: the chi-square 0.1 %
	// point for one degree of freedom, 10.83 (Abramowitz & Stegun 1964,
	// table 26.8; from memory).
	splitStreakChi2 = 10.83
	// splitStartMaxPx bounds the half-separation the fits start from, px:
	// the deconvolved moments of an elongated spot grow without bound as
	// its light fills the weight's, and a pair more than 4 px apart has
	// two maxima of its own.
	splitStartMaxPx = 2
	// splitConvergedPx ends a fit's iterations: a hundredth of a pixel
	// decides between the models, refine places the spots finer.
	splitConvergedPx = 0.01
	// splitIterations bounds the Gauss-Newton steps of a pair's fit.
	splitIterations = 15
	// splitMidSigmas bounds the mean residual of the pair's fit on the 3x3
	// pixels about the midpoint of its spots, in sds of that mean (noise/3
	// for white noise): a pair's is zero, a streak's or a wide blob's, whose
	// light is brightest there, many sds at the SNRs tested.
	splitMidSigmas = 3
)

// midExcess returns the mean, over the 3x3 pixels of the loaded window
// (half-width R) about the midpoint of the two spots of fit p (fitModel's
// parameters), of the data minus the fitted pair.
func (d *Detector) midExcess(R int, p *[7]float64) float64 {
	n := 2*R + 1
	s2 := spotVar(d.sigma)
	mx, my := int(math.Round((p[1]+p[4])/2)), int(math.Round((p[2]+p[5])/2))
	var sum float64
	for j := my - 1; j <= my+1; j++ {
		for i := mx - 1; i <= mx+1; i++ {
			if i < -R || i > R || j < -R || j > R {
				return math.Inf(1)
			}
			m := p[6]
			for s := range 2 {
				dx, dy := float64(i)-p[3*s+1], float64(j)-p[3*s+2]
				m += p[3*s] * math.Exp(-(dx*dx+dy*dy)/(2*s2))
			}
			sum += d.win[(j+R)*n+i+R] - m
		}
	}
	return sum / 9
}

// splitPairs tests every refined candidate that is elongated beyond the
// nominal spot for two tracers: a fit of two spots of the nominal size and
// a common level against one spot, on the window with the neighbours'
// spots subtracted. Where the pair fits better by splitChi2 noise variances
// and both spots reach MinSNR, the candidate becomes the first spot and the
// second is appended as a candidate of its own. noise is the frame's
// per-pixel noise sd. Motion streaks along the flow are left whole. It
// reports whether any candidate was split.
func (d *Detector) splitPairs(p *pixels, noise float64) bool {
	split := false
	for k, i := range d.kept {
		c := &d.cands[i]
		if !c.ok || c.det.SNR < splitMinSNR*noise || c.shape.longVar-c.shape.shortVar < splitMinExcess ||
			math.IsInf(c.shape.longVar, 0) || d.isStreak(c.shape) {
			continue
		}
		// The refinement window without its slack: the pair lies within
		// a pixel and a half of the candidate, and half the pixels halve
		// the cost of the fits.
		R := d.wr
		// The window about the refined centre, the middle of the pair.
		x0, y0 := int(math.Round(c.det.XPx)), int(math.Round(c.det.YPx))
		if x0-R < 0 || x0+R >= p.w || y0-R < 0 || y0+R >= p.h {
			continue
		}
		wall := p.bands != nil && d.nearWall(x0, y0)
		if wall && slices.Contains(p.cutPlate, true) {
			continue
		}
		p.window(d.win, x0, y0, R, wall)
		d.models = d.models[:0]
		for _, j := range d.nbList[d.nbStart[k]:d.nbStart[k+1]] {
			if o := &d.cands[j]; o.ma > 0 {
				d.models = append(d.models, spotModel{o.mx, o.my, o.ma})
			}
		}
		if len(d.models) > 0 {
			d.subtractModels(x0, y0, R, d.models)
		}
		// The initial pair: the moments' long axis through the refined
		// centre, the spots where two equal ones give its excess variance.
		h := min(math.Sqrt(c.shape.longVar-c.shape.shortVar), splitStartMaxPx)
		ux, uy := math.Cos(c.shape.axisRad), math.Sin(c.shape.axisRad)
		cx, cy := c.det.XPx-float64(x0), c.det.YPx-float64(y0)
		two := d.fitModel(R, [7]float64{c.det.SNR / 2, cx - h*ux, cy - h*uy, c.det.SNR / 2, cx + h*ux, cy + h*uy}, 2, false)
		if !two.ok || math.Hypot(two.p[4]-two.p[1], two.p[5]-two.p[2]) < splitMinPx {
			continue
		}
		one := d.fitModel(R, [7]float64{c.det.SNR, cx, cy}, 1, false)
		if !one.ok || one.sse-two.sse < splitChi2*noise*noise {
			continue
		}
		a1, x1, y1 := two.p[0], two.p[1], two.p[2]
		a2, x2, y2 := two.p[3], two.p[4], two.p[5]
		tScale := d.sigma * d.sigma / spotVar(d.sigma)
		// The amplitude in the units of Detection.SNR before the noise
		// divides it: the density's peak, as refine's.
		s1, s2 := a1/tScale, a2/tScale
		if s1 < d.opt.MinSNR*noise || s2 < d.opt.MinSNR*noise || math.Hypot(x2-x1, y2-y1) < splitMinPx ||
			math.Max(math.Abs(x1), math.Abs(y1)) > float64(R-1) || math.Max(math.Abs(x2), math.Abs(y2)) > float64(R-1) {
			continue
		}
		// Two spots leave a dip between them; a streak or a wide blob
		// is brightest there, above what the pair puts there.
		if d.midExcess(R, &two.p) > splitMidSigmas*noise/3 {
			continue
		}
		// Two spots D apart add D^2/4 to the long axis's variance, a
		// streak of length L adds L^2/12 but is fitted by two spots
		// closer than L/sqrt(3).
		l3 := min(math.Sqrt(12*(c.shape.longVar-c.shape.shortVar))/3, splitStartMaxPx)
		st := d.fitModel(R, [7]float64{c.det.SNR / 3, cx, cy, l3 * ux, l3 * uy}, 0, true)
		if st.ok && st.sse-two.sse < splitStreakChi2*noise*noise {
			continue
		}
		round := shape{longVar: spotVar(d.sigma), shortVar: spotVar(d.sigma)}
		size := math.Sqrt(2 * spotVar(d.sigma))
		b := c.det.Brightness
		second := c.det
		c.det.XPx, c.det.YPx, c.det.SNR = float64(x0)+x1, float64(y0)+y1, s1
		c.det.Brightness, c.det.SizePx, c.det.Eccentricity = b*a1/(a1+a2), size, 0
		c.shape = round
		second.XPx, second.YPx, second.SNR = float64(x0)+x2, float64(y0)+y2, s2
		second.Brightness, second.SizePx, second.Eccentricity = b*a2/(a1+a2), size, 0
		d.cands = append(d.cands, candidate{x: int(math.Round(second.XPx)), y: int(math.Round(second.YPx)), det: second, shape: round, ok: true})
		split = true
	}
	if split {
		// Raster order of the integer positions again.
		slices.SortStableFunc(d.cands, func(a, b candidate) int {
			if a.y != b.y {
				return a.y - b.y
			}
			return a.x - b.x
		})
	}
	return split
}

// spotsFit is a fit of fitModel: the parameters (per spot the template
// amplitude and the centre relative to the window's, then the level), the
// residual sum of squares and whether it converged.
type spotsFit struct {
	p   [7]float64
	sse float64
	ok  bool
}

// fitModel fits to the loaded window (half-width R) a model of spots of the
// nominal size, amplitude a exp(-r^2/(2 s2)), and a common level, by
// Gauss-Newton from start: without streak, spots free spots (a, x, y each,
// relative to the window's centre); with streak, a streak of three spots
// of one amplitude equally spaced on a line, at (cx, cy) and (cx, cy) +-
// (hx, hy), from (a, cx, cy, hx, hy): three spots 2 px apart stand for a
// streak of 6 px within a few percent of its peak.
func (d *Detector) fitModel(R int, start [7]float64, spots int, streak bool) spotsFit {
	n := 2*R + 1
	s2 := spotVar(d.sigma)
	ns, np := spots, 3*spots+1
	if streak {
		ns, np = 3, 6
	}
	// pos returns spot s's amplitude and centre.
	pos := func(p *[7]float64, s int) (a, x, y float64) {
		if !streak {
			return p[3*s], p[3*s+1], p[3*s+2]
		}
		k := float64(s - 1)
		return p[0], p[1] + k*p[3], p[2] + k*p[4]
	}
	p := start
	p[np-1] = 0
	var jtj [7][7]float64
	var jtr, jac [7]float64
	gx, gy := &d.fitGX, &d.fitGY
	for s := range ns {
		if len(gx[s]) < n {
			gx[s], gy[s] = make([]float64, n), make([]float64, n)
		}
	}
	setG := func() {
		for s := range ns {
			_, x, y := pos(&p, s)
			gauss1D(gx[s], float64(-R)-x, s2, d.decaySpot)
			gauss1D(gy[s], float64(-R)-y, s2, d.decaySpot)
		}
	}
	eval := func() float64 {
		var sse float64
		setG()
		for j := range n {
			for i := range n {
				r := d.win[j*n+i] - p[np-1]
				for s := range ns {
					a, _, _ := pos(&p, s)
					r -= a * gx[s][i] * gy[s][j]
				}
				sse += r * r
			}
		}
		return sse
	}
	for range splitIterations {
		jtj, jtr = [7][7]float64{}, [7]float64{}
		setG()
		for j := range n {
			for i := range n {
				r := d.win[j*n+i] - p[np-1]
				jac = [7]float64{}
				for s := range ns {
					g := gx[s][i] * gy[s][j]
					a, x, y := pos(&p, s)
					r -= a * g
					ux, uy := a*g*(float64(i-R)-x)/s2, a*g*(float64(j-R)-y)/s2
					if streak {
						k := float64(s - 1)
						jac[0] += g
						jac[1] += ux
						jac[2] += uy
						jac[3] += k * ux
						jac[4] += k * uy
						continue
					}
					jac[3*s] = g
					jac[3*s+1] = ux
					jac[3*s+2] = uy
				}
				jac[np-1] = 1
				for q := range np {
					jtr[q] += jac[q] * r
					for w := q; w < np; w++ {
						jtj[q][w] += jac[q] * jac[w]
					}
				}
			}
		}
		for q := range np {
			for w := 0; w < q; w++ {
				jtj[q][w] = jtj[w][q]
			}
		}
		step, ok := solveN(jtj, jtr, np)
		if !ok {
			return spotsFit{}
		}
		// At most half a pixel per step, as fitMasked.
		m := 0.0
		for q := 1; q < np-1; q++ {
			if streak || q%3 != 0 {
				m = math.Max(m, math.Abs(step[q]))
			}
		}
		if m > 0.5 {
			for q := range np {
				step[q] *= 0.5 / m
			}
		}
		for q := range np {
			p[q] += step[q]
		}
		for s := range ns {
			if a, x, y := pos(&p, s); !(a > 0) || math.Abs(x) > float64(R) || math.Abs(y) > float64(R) {
				return spotsFit{}
			}
		}
		if m < splitConvergedPx {
			break
		}
	}
	return spotsFit{p: p, sse: eval(), ok: true}
}

// solveN solves the n x n system held in a and b (n <= 7) by Gaussian
// elimination with partial pivoting.
func solveN(a [7][7]float64, b [7]float64, n int) ([7]float64, bool) {
	for col := range n {
		p := col
		for r := col + 1; r < n; r++ {
			if math.Abs(a[r][col]) > math.Abs(a[p][col]) {
				p = r
			}
		}
		if !(math.Abs(a[p][col]) > 0) {
			return b, false
		}
		a[col], a[p] = a[p], a[col]
		b[col], b[p] = b[p], b[col]
		for r := col + 1; r < n; r++ {
			f := a[r][col] / a[col][col]
			for k := col; k < n; k++ {
				a[r][k] -= f * a[col][k]
			}
			b[r] -= f * b[col]
		}
	}
	var x [7]float64
	for r := n - 1; r >= 0; r-- {
		v := b[r]
		for k := r + 1; k < n; k++ {
			v -= a[r][k] * x[k]
		}
		x[r] = v / a[r][r]
	}
	return x, true
}
