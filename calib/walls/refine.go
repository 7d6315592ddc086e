package walls

import (
	"fmt"
	"math"
	"sort"
	"sync"

	"gaptrace/calib/robust"
)

// Wall profile model. Across a wall, at signed distance u = y - y0 from the
// wall line (positive downwards), a strip profile is taken to be
//
//	p(y) = a + b Phi(u / se) + c exp(-u^2 / (2 sl^2))
//
// a step from one side's level to the other's blurred by the optics (se),
// plus a thin reflection line of either sign lying on the wall (sl). The
// wall is y0: the step's midpoint, which is also the reflection's centre.
// For a given y0, se and sl the levels a, b, c follow by linear least
// squares; y0 is found per strip by a grid and golden-section search, and
// se, sl once per wall on a subset of strips.
//
// A shift of a step adds a term shaped like its derivative, a Gaussian,
// which the reflection term can absorb: without a reflection the full model
// cannot place the wall. So the reflection term is used only when the
// profile has one (it halves the residual and its height is a good part of
// the step's): then the reflection's odd-symmetric flanks fix y0. Otherwise
// the wall is the centre of the step alone (c = 0).
const (
	refineHalfPx = 6    // rows on each side of the coarse wall that the model sees
	searchHalfPx = 2.5  // y0 is searched this far from the coarse wall
	searchStepPx = 0.2  // grid step of the y0 search before golden-section refinement
	locateTolPx  = 1e-6 // Brent's method places y0 to this, px
	// The width refinements move the widths by at most sigmaRounds *
	// sigmaStepPx, which moves a strip's best y0 by a fraction of that, so
	// they search y0 within warmHalfPx of where it was at their start, to
	// warmTolPx, where the residual, quadratic about its minimum, is within
	// 1e-6 of it.
	warmHalfPx      = 0.6
	warmTolPx       = 4e-4
	sigmaMinPx      = 0.2  // blur and line widths tried for the wall model, px
	sigmaMaxPx      = 2.05 //
	sigmaStepPx     = 0.1  //
	sigmaStrips     = 5    // strips used to choose the model's widths
	sigmaCandidates = 3    // grid cells refined on many strips
	refineStride    = 1    // every refineStride-th strip refines the widths
	sigmaRounds     = 2    // rounds of width refinement off the grid
	sigmaTolPx      = 2e-3 // Brent's method finds each width to this, px
	sigmaFloorPx    = 0.1  // narrower than this a wall profile is not resolved
	minRefineFrac   = 0.5  // at least this fraction of the strips must fit the model
	// A round of the fit that moves a wall by recentrePx or more (most of
	// the search's reach, searchHalfPx) found it at the search's bound,
	// and another round starts from there, up to recentreRounds in all.
	recentrePx     = 2
	recentreRounds = 3
	// A reflection is on the wall when the model with it leaves at most
	// lineGain of the step-only residual, its height is at least
	// lineMinFrac of the step's, and the step alone misses the profile by
	// at least lineMinMisfit of the step's height (RMS): below that the
	// profile is a plain edge and the reflection term would only soak up
	// noise.
	lineGain      = 0.5
	lineMinFrac   = 0.2
	lineMinMisfit = 0.02
	// trimFrac of the strips with the largest residuals are left out when
	// the widths are chosen.
	trimFrac = 0.2
)

// wallModel evaluates the model's basis on a window of rows.
type wallModel struct {
	se, sl float64
	line   bool    // with the reflection term
	box    float64 // width of the box each sample integrates over, px
	// Tables of the step and line bases against u, for the widths and box
	// in stepKey and lineKey.
	stepKey, lineKey [2]float64
	tabStep, tabLine []float64
	rows             []float64 // y of each sample
	vals             []float64 // profile values
	sumV, sumVV      float64   // sum and sum of squares of vals
	// cache holds the tables built so far, by basis, width and box.
	cache map[[3]float64][]float64
	// hint[i], when not nil, is strip i's wall position found at the
	// start of a width refinement (NaN: none), where total searches.
	hint []float64
}

// setHints records each strip's wall position for the model's current
// widths, for the width refinement that follows (nil profs clears them).
func (m *wallModel) setHints(w *Wall, profs []stripProfile) {
	if profs == nil {
		m.hint = nil
		return
	}
	m.hint = make([]float64, len(profs))
	for i, p := range profs {
		m.hint[i] = math.NaN()
		if yc := w.YAt(p.xPx); m.window(p, yc) {
			m.hint[i], _, _, _ = m.locate(yc)
		}
	}
}

// clone returns a copy of m with its own tables, for another goroutine or
// another set of widths.
func (m *wallModel) clone() *wallModel {
	c := *m
	c.tabStep, c.tabLine, c.rows, c.vals, c.hint, c.cache = nil, nil, nil, nil, nil, nil
	return &c
}

// fit returns the least-squares levels and the residual sum of squares for
// a wall at y0.
func (m *wallModel) fit(y0 float64) (a, b, c, sse float64) {
	m.tables()
	// Normal equations of the linear model 1, step, line: only the sums
	// that depend on y0 are accumulated (the row count, the sum and the
	// sum of squares of the values are the window's).
	var s01, s02, s11, s12, s22, r1, r2 float64
	for i, y := range m.rows {
		f1, f2 := m.basis(y - y0)
		v := m.vals[i]
		s01 += f1
		s11 += f1 * f1
		r1 += f1 * v
		if m.line {
			s02 += f2
			s12 += f1 * f2
			s22 += f2 * f2
			r2 += f2 * v
		}
	}
	// The level a is eliminated by centring: a = mean(v) - b mean(step) -
	// c mean(line), and b, c solve the centred 2x2 system (c = 0 without
	// the reflection term).
	n := float64(len(m.rows))
	c11 := s11 - s01*s01/n
	q1 := r1 - s01*m.sumV/n
	svv := m.sumVV - m.sumV*m.sumV/n
	if m.line {
		c12 := s12 - s01*s02/n
		c22 := s22 - s02*s02/n
		q2 := r2 - s02*m.sumV/n
		det := c11*c22 - c12*c12
		if !(det > solveTiny*c11*c22) {
			return 0, 0, 0, math.Inf(1)
		}
		b = (q1*c22 - c12*q2) / det
		c = (c11*q2 - c12*q1) / det
		sse = svv - (b*q1 + c*q2)
	} else {
		if !(c11 > solveTiny) {
			return 0, 0, 0, math.Inf(1)
		}
		b = q1 / c11
		sse = svv - b*q1
	}
	a = (m.sumV - b*s01 - c*s02) / n
	return a, b, c, math.Max(sse, 0)
}

// Basis tables: the bases are sampled every 1/tabPerPx px over
// +-tabHalfPx and interpolated linearly; the interpolation error is below
// 1e-4 of the step for widths down to sigmaFloorPx.
const (
	tabPerPx  = 64
	tabHalfPx = 11 // covers refineHalfPx + searchHalfPx + the box
)

// tables fills the basis tables for the model's current widths. The step
// table depends on se and the box, the line table on sl and the box, so a
// search over one width rebuilds only its own table.
func (m *wallModel) tables() {
	if k := [2]float64{m.se, m.box}; k != m.stepKey || m.tabStep == nil {
		m.stepKey = k
		m.tabStep = m.table(false, m.se)
	}
	if !m.line {
		return
	}
	if k := [2]float64{m.sl, m.box}; k != m.lineKey || m.tabLine == nil {
		m.lineKey = k
		m.tabLine = m.table(true, m.sl)
	}
}

// tabCacheMax bounds the tables a model keeps: the width grids of
// chooseModel repeat each of their 19 widths per basis, the golden-section
// searches seldom repeat one.
const tabCacheMax = 64

// table returns the step (or, with line, the line) basis table for width
// sigma and the model's box, from the model's cache when it was built
// before. A returned table is never written again.
func (m *wallModel) table(line bool, sigma float64) []float64 {
	key := [3]float64{b2f(line), sigma, m.box}
	if t, ok := m.cache[key]; ok {
		return t
	}
	n := 2*tabHalfPx*tabPerPx + 1
	t := make([]float64, n)
	hb := m.box / 2
	for i := range t {
		u := float64(i)/tabPerPx - tabHalfPx
		if line {
			t[i] = phi((u+hb)/sigma) - phi((u-hb)/sigma)
		} else {
			// The step averaged over the sample's box: a pixel, widened
			// by the wall's drift across the strip.
			t[i] = sigma / m.box * (psi((u+hb)/sigma) - psi((u-hb)/sigma))
		}
	}
	if m.cache == nil {
		m.cache = make(map[[3]float64][]float64)
	}
	if len(m.cache) < tabCacheMax {
		m.cache[key] = t
	}
	return t
}

func b2f(b bool) float64 {
	if b {
		return 1
	}
	return 0
}

// basis returns the step and line bases at u px from the wall.
func (m *wallModel) basis(u float64) (step, line float64) {
	x := (u + tabHalfPx) * tabPerPx
	last := len(m.tabStep) - 1
	if x <= 0 || x >= float64(last) {
		i := 0
		if x > 0 {
			i = last
		}
		if m.line {
			line = m.tabLine[i]
		}
		return m.tabStep[i], line
	}
	i := int(x)
	f := x - float64(i)
	step = m.tabStep[i] + f*(m.tabStep[i+1]-m.tabStep[i])
	if m.line {
		line = m.tabLine[i] + f*(m.tabLine[i+1]-m.tabLine[i])
	}
	return step, line
}

// phi is the standard normal distribution function.
func phi(z float64) float64 { return 0.5 * math.Erfc(-z/math.Sqrt2) }

// psi is the antiderivative z phi(z) + the normal density of phi.
func psi(z float64) float64 { return z*phi(z) + math.Exp(-z*z/2)/math.Sqrt(2*math.Pi) }

// locate finds the y0 near yc with the least residual: a grid over
// +-searchHalfPx, then golden-section refinement of the best cell.
func (m *wallModel) locate(yc float64) (y0, b, c, sse float64) {
	return m.search(yc, searchHalfPx, locateTolPx)
}

// locateNear is locate for a wall known to lie within warmHalfPx of hint,
// with a coarser final bracket: it serves the width searches, which need
// the least residual, not the position.
func (m *wallModel) locateNear(hint float64) (y0, b, c, sse float64) {
	return m.search(hint, warmHalfPx, warmTolPx)
}

// search is locate over +-halfPx: a grid, then Brent's method on the
// best cell, to tolPx.
func (m *wallModel) search(yc, halfPx, tolPx float64) (y0, b, c, sse float64) {
	best, bestSSE := yc, math.Inf(1)
	for d := -halfPx; d <= halfPx+1e-9; d += searchStepPx {
		if _, _, _, e := m.fit(yc + d); e < bestSSE {
			best, bestSSE = yc+d, e
		}
	}
	y0, _ = brentMin(best-searchStepPx, best+searchStepPx, best, bestSSE, tolPx, func(y float64) float64 {
		_, _, _, e := m.fit(y)
		return e
	})
	_, b, c, sse = m.fit(y0)
	return y0, b, c, sse
}

// solveTiny bounds the normal equations away from singular: a step
// basis with less spread than this over the window (the wall far outside
// it), or step and line bases collinear to this relative precision, leave
// the levels undetermined and the fit is refused.
const solveTiny = 1e-12

// window fills the model's samples from a strip profile around yc; it
// reports false when the window leaves the image.
func (m *wallModel) window(p stripProfile, yc float64) bool {
	lo, hi := int(math.Floor(yc))-refineHalfPx, int(math.Ceil(yc))+refineHalfPx
	if lo < 0 || hi >= len(p.v) {
		return false
	}
	m.rows, m.vals = m.rows[:0], m.vals[:0]
	m.sumV, m.sumVV = 0, 0
	for y := lo; y <= hi; y++ {
		v := p.v[y]
		m.rows = append(m.rows, float64(y))
		m.vals = append(m.vals, v)
		m.sumV += v
		m.sumVV += v * v
	}
	return true
}

// refineWalls places both walls of r by fitting the wall model in every
// strip, then a robust line through the strips' wall points.
func refineWalls(r *Result, profs []stripProfile, opt Options) error {
	// A pixel's box, widened by the wall's drift across a strip (the two
	// boxes' convolution replaced by one box of the same variance).
	box := func(w *Wall) float64 { return math.Hypot(1, w.Slope*float64(opt.StripPx)) }
	// The coarse line can lie on another edge than the wall's step: with
	// tracers at rest packed against a wall, the median image's edge of
	// that layer, a few px into the gap, where the search of one round
	// (searchHalfPx) cannot reach the wall. Then the round's positions end
	// at the search's bound and the model is chosen again about them.
	for round := 0; ; round++ {
		before := [2]Line{r.Top.Line, r.Bottom.Line}
		// The two walls' models are chosen independently, on both cores.
		var mt, mb *wallModel
		var wg sync.WaitGroup
		wg.Go(func() { mb = chooseModel(&r.Bottom, profs, box(&r.Bottom)) })
		mt = chooseModel(&r.Top, profs, box(&r.Top))
		wg.Wait()
		if mt.line && mb.line {
			shareWidths(&r.Top, &r.Bottom, mt, mb, profs)
		}
		for _, wl := range []struct {
			name string
			w    *Wall
			m    *wallModel
		}{{"top", &r.Top, mt}, {"bottom", &r.Bottom, mb}} {
			if err := placeWall(wl.w, wl.m, profs, opt); err != nil {
				return fmt.Errorf("walls: %s wall: %w", wl.name, err)
			}
		}
		moved := 0.0
		for k, l := range [2]Line{r.Top.Line, r.Bottom.Line} {
			for _, x := range []float64{0, float64(r.WidthPx - 1)} {
				moved = math.Max(moved, math.Abs(l.YAt(x)-before[k].YAt(x)))
			}
		}
		if moved < recentrePx || round+1 >= recentreRounds {
			break
		}
	}
	if r.Top.YAt(float64(r.WidthPx-1)/2) > r.Bottom.YAt(float64(r.WidthPx-1)/2) {
		r.Top, r.Bottom = r.Bottom, r.Top
	}
	r.update()
	if r.GapPx < opt.MinGapPx {
		return fmt.Errorf("walls: gap of %.1f px between the walls at y=%.1f and y=%.1f is implausible, need at least %g px",
			r.GapPx, r.Top.YAt(float64(r.WidthPx-1)/2), r.Bottom.YAt(float64(r.WidthPx-1)/2), opt.MinGapPx)
	}
	return nil
}

// shareWidths gives both walls the same blur and reflection widths, chosen
// on both together: the two walls are seen through the same optics, and on
// a wall with a strong reflection the step's blur is poorly determined
// alone (the residual is nearly flat in it, and the wall's position is
// not), so the other wall's data settle it. Each wall's own widths start a
// refinement of the summed residual; the better result is kept.
func shareWidths(top, bottom *Wall, mt, mb *wallModel, profs []stripProfile) {
	a, b := mt.clone(), mb.clone()
	sum := func(se, sl float64) float64 {
		a.se, a.sl, b.se, b.sl = se, sl, se, sl
		var ea, eb float64
		var wg sync.WaitGroup
		wg.Go(func() { eb, _, _ = b.total(bottom, profs, refineStride) })
		ea, _, _ = a.total(top, profs, refineStride)
		wg.Wait()
		return ea + eb
	}
	bestSE, bestSL, bestSSE := mt.se, mt.sl, math.Inf(1)
	for _, start := range [][2]float64{{mt.se, mt.sl}, {mb.se, mb.sl}} {
		se, sl := start[0], start[1]
		a.se, a.sl, b.se, b.sl = se, sl, se, sl
		var wg sync.WaitGroup
		wg.Go(func() { b.setHints(bottom, profs) })
		a.setHints(top, profs)
		wg.Wait()
		for round := 0; round < sigmaRounds; round++ {
			se = widthMin(se-sigmaStepPx, se+sigmaStepPx, func(v float64) float64 { return sum(v, sl) })
			sl = widthMin(sl-sigmaStepPx, sl+sigmaStepPx, func(v float64) float64 { return sum(se, v) })
		}
		if e := sum(se, sl); e < bestSSE {
			bestSE, bestSL, bestSSE = se, sl, e
		}
	}
	mt.se, mt.sl, mb.se, mb.sl = bestSE, bestSL, bestSE, bestSL
}

// chooseModel picks the model's widths, and whether it has the reflection
// term, on a spread subset of the strips.
func chooseModel(w *Wall, profs []stripProfile, box float64) *wallModel {
	m := &wallModel{box: box}
	step := max(1, len(profs)/sigmaStrips)
	total := func() (sse, lineFrac, misfit float64) {
		return m.total(w, profs, step)
	}
	all := func() float64 {
		e, _, _ := m.total(w, profs, refineStride)
		return e
	}
	stepSE, stepSSE, stepMisfit := 1.0, math.Inf(1), 0.0
	for se := sigmaMinPx; se <= sigmaMaxPx; se += sigmaStepPx {
		m.se = se
		if e, _, mis := total(); e < stepSSE {
			stepSE, stepSSE, stepMisfit = se, e, mis
		}
	}
	m.line = true
	// Keep the best few grid cells of the subset, refine each on every strip
	// and take the best: the residual has several basins.
	type cell struct{ se, sl, sse, fr float64 }
	var cells []cell
	for se := sigmaMinPx; se <= sigmaMaxPx; se += sigmaStepPx {
		for sl := sigmaMinPx; sl <= sigmaMaxPx; sl += sigmaStepPx {
			m.se, m.sl = se, sl
			e, fr, _ := total()
			cells = append(cells, cell{se, sl, e, fr})
		}
	}
	sort.Slice(cells, func(i, j int) bool { return cells[i].sse < cells[j].sse })
	if c := cells[0]; c.sse <= lineGain*stepSSE && c.fr >= lineMinFrac && stepMisfit >= lineMinMisfit {
		best, bestSSE := c, math.Inf(1)
		for _, c := range cells[:min(sigmaCandidates, len(cells))] {
			m.se, m.sl = c.se, c.sl
			m.setHints(w, profs)
			for round := 0; round < sigmaRounds; round++ {
				m.se = widthMin(m.se-sigmaStepPx, m.se+sigmaStepPx, func(v float64) float64 { m.se = v; return all() })
				m.sl = widthMin(m.sl-sigmaStepPx, m.sl+sigmaStepPx, func(v float64) float64 { m.sl = v; return all() })
			}
			if e := all(); e < bestSSE {
				best, bestSSE = cell{m.se, m.sl, e, 0}, e
			}
		}
		m.se, m.sl = best.se, best.sl
		m.setHints(w, nil)
		return m
	}
	m.line = false
	m.se = stepSE
	m.setHints(w, profs)
	m.se = widthMin(stepSE-sigmaStepPx, stepSE+sigmaStepPx, func(v float64) float64 { m.se = v; return all() })
	m.setHints(w, nil)
	return m
}

// total returns the model's residual summed over every step-th strip and
// the median height of the reflection relative to the step.
func (m *wallModel) total(w *Wall, profs []stripProfile, step int) (sse, lineFrac, misfit float64) {
	var fr, es, mis []float64
	for i := 0; i < len(profs); i += step {
		yc := w.YAt(profs[i].xPx)
		if !m.window(profs[i], yc) {
			continue
		}
		var b, c, e float64
		if m.hint != nil && !math.IsNaN(m.hint[i]) {
			_, b, c, e = m.locateNear(m.hint[i])
		} else {
			_, b, c, e = m.locate(yc)
		}
		es = append(es, e)
		fr = append(fr, math.Abs(c)/math.Max(math.Abs(b), 1e-9))
		mis = append(mis, math.Sqrt(e/float64(len(m.rows)))/math.Max(math.Abs(b), 1e-9))
	}
	// Trim the worst strips: a scratch or a stuck particle there must not
	// choose the model's widths.
	sort.Float64s(es)
	for _, e := range es[:len(es)-int(trimFrac*float64(len(es)))] {
		sse += e
	}
	return sse, robust.Median(fr), robust.Median(mis)
}

// widthMin returns the minimiser of f on [lo, hi] (clamped to positive
// widths), to sigmaTolPx.
func widthMin(lo, hi float64, f func(float64) float64) float64 {
	lo = math.Max(lo, sigmaFloorPx)
	x := (lo + hi) / 2
	x, _ = brentMin(lo, hi, x, f(x), sigmaTolPx, f)
	return x
}

// brentMaxIter bounds Brent's method; with golden-section steps alone it
// shrinks a bracket by 1e-10 in 48 steps, so it never binds on the
// tolerances used here.
const brentMaxIter = 60

// brentMin returns the minimiser of f on [a, b] and f there, by Brent's
// method: successive parabolic interpolation, falling back on golden-section
// steps where the parabola is not trusted (Brent 1973, Algorithms for
// Minimization without Derivatives, ch. 5, procedure localmin). x in [a, b]
// is the starting point and fx = f(x). The minimiser is found to within
// about tol.
func brentMin(a, b, x, fx, tol float64, f func(float64) float64) (float64, float64) {
	const cgold = 0.3819660112501051 // (3 - sqrt(5)) / 2
	const relEps = 1.5e-8            // square root of the float64 epsilon
	w, v, fw, fv := x, x, fx, fx
	var d, e float64
	for range brentMaxIter {
		mid := (a + b) / 2
		tol1 := relEps*math.Abs(x) + tol/3
		tol2 := 2 * tol1
		if math.Abs(x-mid) <= tol2-(b-a)/2 {
			break
		}
		golden := true
		if math.Abs(e) > tol1 {
			// The parabola through (v, fv), (w, fw), (x, fx).
			r := (x - w) * (fx - fv)
			q := (x - v) * (fx - fw)
			p := (x-v)*q - (x-w)*r
			q = 2 * (q - r)
			if q > 0 {
				p = -p
			} else {
				q = -q
			}
			r, e = e, d
			if math.Abs(p) < math.Abs(q*r/2) && p > q*(a-x) && p < q*(b-x) {
				d = p / q
				if u := x + d; u-a < tol2 || b-u < tol2 {
					d = math.Copysign(tol1, mid-x)
				}
				golden = false
			}
		}
		if golden {
			if x < mid {
				e = b - x
			} else {
				e = a - x
			}
			d = cgold * e
		}
		u := x + d
		if math.Abs(d) < tol1 {
			u = x + math.Copysign(tol1, d)
		}
		fu := f(u)
		if fu <= fx {
			if u < x {
				b = x
			} else {
				a = x
			}
			v, fv, w, fw, x, fx = w, fw, x, fx, u, fu
			continue
		}
		if u < x {
			a = u
		} else {
			b = u
		}
		switch {
		case fu <= fw || w == x:
			v, fv, w, fw = w, fw, u, fu
		case fu <= fv || v == x || v == w:
			v, fv = u, fu
		}
	}
	return x, fx
}

// placeWall fits the model m in every strip and a robust line through the
// strips' wall points.
func placeWall(w *Wall, m *wallModel, profs []stripProfile, opt Options) error {
	var xs, ys, bs []float64
	for _, p := range profs {
		yc := w.YAt(p.xPx)
		if !m.window(p, yc) {
			continue
		}
		y0, b, _, _ := m.locate(yc)
		x := p.xPx
		if opt.Undistort != nil {
			x, y0 = opt.Undistort(x, y0)
		}
		xs, ys, bs = append(xs, x), append(ys, y0), append(bs, b)
	}
	if float64(len(xs)) < minRefineFrac*float64(len(profs)) || len(xs) < 2 {
		return fmt.Errorf("the wall model fits only %d of %d strips (the wall runs out of the image?)", len(xs), len(profs))
	}
	l, sigma, wt := robustLine(xs, ys)
	w.Line = l
	w.ResidualPx = sigma
	w.fit = momentsOf(xs, wt)
	w.Strips = len(xs)
	w.Inliers = 0
	w.Reflection = m.line
	var kept []float64
	for i := range wt {
		if wt[i] > 0 {
			w.Inliers++
			kept = append(kept, bs[i])
		}
	}
	w.ContrastLevels = robust.Median(kept)
	return nil
}

// robustLine fits y = a + b x by iteratively reweighted least squares with
// Tukey's biweight and returns the line, the robust residual scale and the
// final weights (0 for rejected points).
func robustLine(x, y []float64) (Line, float64, []float64) {
	n := len(x)
	wt := make([]float64, n)
	res := make([]float64, n)
	for i := range wt {
		wt[i] = 1
	}
	var l Line
	sigma := minSigmaPx
	for it := 0; it < irlsIter; it++ {
		nl, ok := weightedLine(x, y, wt)
		if !ok {
			break
		}
		l = nl
		for i := range x {
			res[i] = math.Abs(y[i] - l.YAt(x[i]))
		}
		sigma = math.Max(robust.MADToSigma*robust.Median(res), minSigmaPx)
		for i := range wt {
			u := res[i] / (tukeyC * sigma)
			if u < 1 {
				wt[i] = (1 - u*u) * (1 - u*u)
			} else {
				wt[i] = 0
			}
		}
	}
	return l, sigma, wt
}
