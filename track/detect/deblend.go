package detect

import (
	"math"
	"sort"
)

// spotModel is a fitted spot as its neighbours subtract it: the centre in
// image px and the amplitude a of the template a exp(-r^2/(2 s2)), s2 the
// pixel-integrated spot's variance, in grey levels.
type spotModel struct{ x, y, a float64 }

const (
	// deblendPasses is how many times the crowded candidates are refined:
	// first against the neighbours' maxima, then against their refined
	// spots (a third pass moves the positions of TestDeblend by less than
	// its tolerance).
	deblendPasses = 2
	// neighbourSlackPx is how far beyond the window a neighbour counts,
	// px: the centroid's mask weighs the pixels more than 4 px from the
	// centre by under 2%, so a neighbour farther than the window's border
	// and a pixel touches the position by less than a thousandth of a
	// pixel and the border's median not at all.
	neighbourSlackPx = 1
	// fitIterations bounds the Gauss-Newton steps of fitMasked.
	fitIterations = 10
)

// refineAll refines every kept candidate, deblending the crowded ones:
// those with another kept candidate near enough for its light to reach
// their window are refined with their neighbours' spots subtracted,
// deblendPasses times, each pass with the latest estimates (in raster
// order). gain converts a band-passed peak into a spot's amplitude.
func (d *Detector) refineAll(p *pixels, gain float64) {
	tScale := d.sigma * d.sigma / spotVar(d.sigma) // template over density peak
	d.kept = d.kept[:0]
	for i := range d.cands {
		c := &d.cands[i]
		c.ok = false
		if c.dropped {
			continue
		}
		c.mx, c.my = float64(c.x), float64(c.y)
		c.ma = float64(c.v) / gain * tScale
		d.kept = append(d.kept, int32(i))
	}
	// Neighbours: the candidates are in raster order, so those within
	// reach lie in a run of rows around each.
	reach := float64(d.wr + windowSlack + neighbourSlackPx)
	reach2 := reach * reach
	d.nbStart, d.nbList = d.nbStart[:0], d.nbList[:0]
	for k, i := range d.kept {
		d.nbStart = append(d.nbStart, int32(len(d.nbList)))
		c := &d.cands[i]
		lo := sort.Search(k, func(j int) bool { return float64(d.cands[d.kept[j]].y) >= float64(c.y)-reach })
		for j := lo; j < len(d.kept); j++ {
			o := &d.cands[d.kept[j]]
			if float64(o.y) > float64(c.y)+reach {
				break
			}
			dx, dy := float64(o.x-c.x), float64(o.y-c.y)
			if j != k && dx*dx+dy*dy < reach2 {
				d.nbList = append(d.nbList, d.kept[j])
			}
		}
	}
	d.nbStart = append(d.nbStart, int32(len(d.nbList)))
	for pass := range deblendPasses {
		for k, i := range d.kept {
			nbs := d.nbList[d.nbStart[k]:d.nbStart[k+1]]
			if pass > 0 && len(nbs) == 0 {
				continue
			}
			d.models = d.models[:0]
			for _, j := range nbs {
				if o := &d.cands[j]; o.ma > 0 {
					d.models = append(d.models, spotModel{o.mx, o.my, o.ma})
				}
			}
			c := &d.cands[i]
			c.det, c.shape, c.ok = d.refine(p, c.x, c.y, d.models)
			if c.ok {
				c.mx, c.my, c.ma = c.det.XPx, c.det.YPx, math.Max(0, c.det.SNR*tScale)
			}
		}
	}
}

// subtractModels subtracts from the loaded window (centred at (x0, y0),
// half-width R) the spots of models.
func (d *Detector) subtractModels(x0, y0, R int, models []spotModel) {
	n := 2*R + 1
	s2 := spotVar(d.sigma)
	gx, gy := d.mdx[:n], d.mdy[:n]
	for _, m := range models {
		gauss1D(gx, float64(x0-R)-m.x, s2, d.decaySpot)
		gauss1D(gy, float64(y0-R)-m.y, s2, d.decaySpot)
		for j := range n {
			ay := m.a * gy[j]
			if ay < 1e-3 {
				continue
			}
			row := d.win[j*n : j*n+n]
			for i := range row {
				row[i] -= ay * gx[i]
			}
		}
	}
}

// fitMasked fits a spot of the nominal size and a constant level, by
// Gauss-Newton on the valid pixels of the loaded window (half-width R), and
// sets the invalid ones to the fitted spot and level, so that the
// estimators that follow see the whole spot. It starts from the window's
// centre and returns false when the fit fails.
func (d *Detector) fitMasked(R int) bool {
	n := 2*R + 1
	s2 := spotVar(d.sigma)
	var cx, cy, c float64
	// Start: the level of the valid border, the amplitude at the centre.
	d.ring = d.ring[:0]
	for j := range n {
		for i := range n {
			if (j == 0 || j == n-1 || i == 0 || i == n-1) && d.valid[j*n+i] {
				d.ring = append(d.ring, d.win[j*n+i])
			}
		}
	}
	if len(d.ring) > 0 {
		c = medianOfFew(d.ring, len(d.ring)/2)
	}
	a := d.win[R*n+R] - c
	if !(a > 0) {
		return false
	}
	gx, gy := d.mdx[:n], d.mdy[:n]
	for range fitIterations {
		var jtj [4][4]float64
		var jtr [4]float64
		gauss1D(gx, float64(-R)-cx, s2, d.decaySpot)
		gauss1D(gy, float64(-R)-cy, s2, d.decaySpot)
		for j := range n {
			v := float64(j-R) - cy
			for i := range n {
				if !d.valid[j*n+i] {
					continue
				}
				u := float64(i-R) - cx
				g := gx[i] * gy[j]
				r := d.win[j*n+i] - a*g - c
				jac := [4]float64{g, a * g * u / s2, a * g * v / s2, 1}
				for q := range 4 {
					jtr[q] += jac[q] * r
					for w := q; w < 4; w++ {
						jtj[q][w] += jac[q] * jac[w]
					}
				}
			}
		}
		for q := range 4 {
			for w := 0; w < q; w++ {
				jtj[q][w] = jtj[w][q]
			}
		}
		step, ok := solve4(jtj, jtr)
		if !ok {
			return false
		}
		// At most half a pixel per step: far from the optimum the
		// linearization overshoots.
		if m := math.Max(math.Abs(step[1]), math.Abs(step[2])); m > 0.5 {
			for q := range step {
				step[q] *= 0.5 / m
			}
		}
		a, cx, cy, c = a+step[0], cx+step[1], cy+step[2], c+step[3]
		if !(a > 0) || math.Abs(cx) > maxShiftPx+1 || math.Abs(cy) > maxShiftPx+1 {
			return false
		}
		if math.Abs(step[1]) < convergedPx && math.Abs(step[2]) < convergedPx {
			break
		}
	}
	gauss1D(gx, float64(-R)-cx, s2, d.decaySpot)
	gauss1D(gy, float64(-R)-cy, s2, d.decaySpot)
	for j := range n {
		for i := range n {
			if !d.valid[j*n+i] {
				d.win[j*n+i] = a*gx[i]*gy[j] + c
			}
		}
	}
	return true
}

// solve4 solves the 4x4 system a x = b by Gaussian elimination with
// partial pivoting.
func solve4(a [4][4]float64, b [4]float64) ([4]float64, bool) {
	for col := range 4 {
		p := col
		for r := col + 1; r < 4; r++ {
			if math.Abs(a[r][col]) > math.Abs(a[p][col]) {
				p = r
			}
		}
		if !(math.Abs(a[p][col]) > 0) {
			return b, false
		}
		a[col], a[p] = a[p], a[col]
		b[col], b[p] = b[p], b[col]
		for r := col + 1; r < 4; r++ {
			f := a[r][col] / a[col][col]
			for k := col; k < 4; k++ {
				a[r][k] -= f * a[col][k]
			}
			b[r] -= f * b[col]
		}
	}
	var x [4]float64
	for r := 3; r >= 0; r-- {
		v := b[r]
		for k := r + 1; k < 4; k++ {
			v -= a[r][k] * x[k]
		}
		x[r] = v / a[r][r]
	}
	return x, true
}
