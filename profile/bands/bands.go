// Package bands fits a velocity profile across the gap with continuous
// piecewise-linear models of one, two and three bands of uniform shear rate
// whose boundaries are unknown, and chooses among them by the Bayesian
// information criterion (Schwarz 1978, Ann. Statist. 6:461) together with a
// minimum band width and a minimum rate contrast between neighbouring bands.
//
// The fit's velocity at the domain's two ends is free, so wall slip shows as
// an offset at the walls, not as extra bands. Positions are in um, velocities
// in um/s and rates (slopes) in 1/s.
package bands

import (
	"errors"
	"fmt"
	"math"

	"gonum.org/v1/gonum/mat"
)

// Point is one layer of the measured profile: height U (um), velocity V
// (um/s) and its standard error Err (um/s, positive). Width, when
// positive, is the extent (um) of the heights the layer's value averages:
// the value is then fitted as the model's mean over [U - Width/2, U +
// Width/2], as a layer of tracers spread evenly around U measures it. A
// layer across a band boundary otherwise carries the kink's curvature, up
// to an eighth of the rate difference times its width, as a bias, and moves
// the fitted boundary by a fraction of a layer.
type Point struct {
	U, V, Err float64
	Width     float64
}

// Model is a continuous piecewise-linear profile on [0, H]:
//
//	v(u) = V0 + sum_k Rates[k] * clamp(u - b_{k-1}, 0, b_k - b_{k-1})
//
// with b_0 = 0, b_K = H and Bounds = b_1 ... b_{K-1}. Errors are standard
// errors from the fit's covariance (Gauss-Newton, boundaries included),
// inflated by the square root of the reduced chi-square when it exceeds one.
type Model struct {
	H                 float64   // domain length, um
	V0, V0Err         float64   // velocity at u = 0, um/s
	Rates, RateErrs   []float64 // band slopes, 1/s, from u = 0 up
	Bounds, BoundErrs []float64 // inner boundaries, um
	Chi2              float64   // weighted sum of squared residuals
	N                 int       // points fitted
	BIC               float64   // Chi2 + (number of parameters) ln N
	cov               *mat.SymDense
	params            []float64
}

// Bands returns the number of bands.
func (m *Model) Bands() int { return len(m.Rates) }

// Edges returns the band edges: 0, the inner boundaries and H, in um.
func (m *Model) Edges() []float64 {
	e := append([]float64{0}, m.Bounds...)
	return append(e, m.H)
}

// At returns the model's velocity at u in um/s.
func (m *Model) At(u float64) float64 {
	return valueAt(u, m.V0, m.Rates, m.Bounds)
}

// AtErr returns the model's velocity at u and its standard error, from the
// covariance of the parameters.
func (m *Model) AtErr(u float64) (v, err float64) {
	g := m.gradient(u)
	return m.At(u), math.Sqrt(math.Max(0, mat.Inner(g, m.cov, g)))
}

// Cov returns the covariance of the model's velocities at u1 and u2, in
// (um/s)^2.
func (m *Model) Cov(u1, u2 float64) float64 {
	return mat.Inner(m.gradient(u1), m.cov, m.gradient(u2))
}

// CovRate returns the covariance of the model's velocity at u with the
// rate of band k (from 0), in um/s times 1/s.
func (m *Model) CovRate(u float64, k int) float64 {
	e := mat.NewVecDense(m.cov.SymmetricDim(), nil)
	e.SetVec(1+k, 1)
	return mat.Inner(m.gradient(u), m.cov, e)
}

func (m *Model) gradient(u float64) *mat.VecDense {
	return m.gradientOver(u, 0)
}

// gradientOver is the gradient of the model's mean over [u - w/2, u + w/2]
// with respect to (V0, rates, bounds).
func (m *Model) gradientOver(u, w float64) *mat.VecDense {
	k := len(m.Rates)
	row := make([]float64, 2*k)
	design(row[:k+1], u, w, m.Bounds)
	for j := range k - 1 {
		row[1+k+j] = (m.Rates[j] - m.Rates[j+1]) * fractionAbove(u, w, m.Bounds[j])
	}
	return mat.NewVecDense(2*k, row)
}

// hingeMean returns the mean of max(x - c, 0) over x in [u - w/2, u + w/2]
// (its value at u when w is 0); 0 for c = +Inf.
func hingeMean(u, w, c float64) float64 {
	if math.IsInf(c, 1) {
		return 0
	}
	if !(w > 0) {
		return math.Max(u-c, 0)
	}
	lo, hi := math.Max(u-w/2-c, 0), math.Max(u+w/2-c, 0)
	return (hi*hi - lo*lo) / (2 * w)
}

// fractionAbove returns the fraction of [u - w/2, u + w/2] above c (1 or
// 0 for a point, w = 0).
func fractionAbove(u, w, c float64) float64 {
	if !(w > 0) {
		if u > c {
			return 1
		}
		return 0
	}
	return clamp((u+w/2-c)/w, 0, 1)
}

func valueAt(u, v0 float64, rates, bounds []float64) float64 {
	v := v0
	lo := 0.0
	for j, r := range rates {
		hi := math.Inf(1)
		if j < len(bounds) {
			hi = bounds[j]
		}
		if j == 0 {
			v += r * math.Min(u, hi) // extrapolates below 0 with the first rate
		} else {
			v += r * clamp(u-lo, 0, hi-lo)
		}
		lo = hi
	}
	return v
}

func clamp(x, lo, hi float64) float64 { return math.Max(lo, math.Min(hi, x)) }

// gridSteps is the number of candidate boundary positions across the
// domain in the coarse search: a boundary found to 1/50 of the gap (half
// the narrowest band of the default criteria) is then refined by a local
// search.
const gridSteps = 50

// refineRounds of halving the step refine the boundaries from 1/50 to
// about 1/12800 of the gap, far below their statistical error.
const refineRounds = 8

// Fit fits a k-band model (k = 1, 2 or 3) to pts on [0, h] with every band
// at least minWidth wide.
func Fit(pts []Point, k int, h, minWidth float64) (*Model, error) {
	if k < 1 || k > 3 {
		return nil, fmt.Errorf("bands: %d bands; only 1, 2 or 3 are fitted", k)
	}
	if !(h > 0) {
		return nil, fmt.Errorf("bands: domain length %g um is not positive", h)
	}
	for _, p := range pts {
		if !(p.Err > 0) || math.IsInf(p.Err, 0) || math.IsNaN(p.V) || math.IsNaN(p.U) || math.IsInf(p.V, 0) || math.IsInf(p.U, 0) {
			return nil, fmt.Errorf("bands: point at %g um has value %g and error %g; give only known layers with a positive error", p.U, p.V, p.Err)
		}
		if !(p.Width >= 0) || math.IsInf(p.Width, 0) {
			return nil, fmt.Errorf("bands: point at %g um has width %g um; give a finite width, 0 or more", p.U, p.Width)
		}
	}
	if len(pts) < 2*k+1 {
		return nil, fmt.Errorf("bands: %d layers are too few for %d bands", len(pts), k)
	}
	if float64(k)*minWidth > h {
		return nil, fmt.Errorf("bands: %d bands of at least %g um do not fit in %g um", k, minWidth, h)
	}
	var best struct {
		chi2   float64
		bounds []float64
		found  bool // a placement was fitted (bounds is nil for one band)
	}
	best.chi2 = math.Inf(1)
	try := func(b []float64) {
		if !feasible(b, h, minWidth) {
			return
		}
		if c, _, _, ok := linearFit(pts, b); ok && c < best.chi2 {
			best.chi2, best.bounds, best.found = c, append([]float64(nil), b...), true
		}
	}
	step := h / gridSteps
	switch k {
	case 1:
		try(nil)
	case 2:
		for i := 1; i < gridSteps; i++ {
			try([]float64{float64(i) * step})
		}
	case 3:
		for i := 1; i < gridSteps; i++ {
			for j := i + 1; j < gridSteps; j++ {
				try([]float64{float64(i) * step, float64(j) * step})
			}
		}
	}
	if !best.found {
		// Also one band: layers that all sit at one height, or whose
		// values overflow, determine no line (issue 18: a cellular
		// automaton's tracks gave a fit with no rates).
		if k == 1 {
			return nil, fmt.Errorf("bands: %d layers determine no straight-line profile (they lie at one height or their values are not finite)", len(pts))
		}
		return nil, fmt.Errorf("bands: no placement of %d bands of at least %g um fits %d layers", k, minWidth, len(pts))
	}
	// Coordinate search with a halving step around the grid optimum.
	for range refineRounds {
		step /= 2
		for moved := true; moved; {
			moved = false
			for j := range best.bounds {
				for _, d := range []float64{-step, step} {
					b := append([]float64(nil), best.bounds...)
					b[j] += d
					c0 := best.chi2
					try(b)
					if best.chi2 < c0 {
						moved = true
					}
				}
			}
		}
	}
	chi2, v0, rates, ok := linearFit(pts, best.bounds)
	if !ok || len(rates) != k {
		return nil, fmt.Errorf("bands: the %d-band fit of %d layers failed", k, len(pts))
	}
	m := &Model{H: h, V0: v0, Rates: rates, Bounds: best.bounds, Chi2: chi2, N: len(pts)}
	np := 2 * k
	m.BIC = chi2 + float64(np)*math.Log(float64(len(pts)))
	if err := m.covariance(pts); err != nil {
		return nil, err
	}
	return m, nil
}

func feasible(b []float64, h, minWidth float64) bool {
	lo := 0.0
	for _, x := range b {
		if x-lo < minWidth {
			return false
		}
		lo = x
	}
	return h-lo >= minWidth
}

// linearFit solves the weighted least squares for V0 and the rates with the
// boundaries fixed.
func linearFit(pts []Point, bounds []float64) (chi2, v0 float64, rates []float64, ok bool) {
	k := len(bounds) + 1
	p := k + 1
	var ata [16]float64
	var atb [4]float64
	var row [4]float64
	for _, q := range pts {
		design(row[:p], q.U, q.Width, bounds)
		w := 1 / (q.Err * q.Err)
		for i := range p {
			atb[i] += w * row[i] * q.V
			for j := range p {
				ata[i*p+j] += w * row[i] * row[j]
			}
		}
	}
	x, ok := solve(ata[:p*p], atb[:p], p)
	if !ok {
		return math.Inf(1), 0, nil, false
	}
	for _, q := range pts {
		design(row[:p], q.U, q.Width, bounds)
		f := 0.0
		for i := range p {
			f += row[i] * x[i]
		}
		r := (q.V - f) / q.Err
		chi2 += r * r
	}
	return chi2, x[0], x[1:], true
}

// design fills the row of the linear design matrix for the mean over
// [u - w/2, u + w/2] (the value at u when w is 0): 1, then each band's
// length below the height, averaged. The first band's length is
// min(x, b_1) = x - max(x - b_1, 0), extrapolated below 0 with its rate;
// band j's is clamp(x - b_{j-1}, 0, b_j - b_{j-1}) = max(x - b_{j-1}, 0) -
// max(x - b_j, 0); both are means of hinges, linear in the boundaries'
// placement between layers and exact over a layer that straddles one.
func design(row []float64, u, w float64, bounds []float64) {
	row[0] = 1
	lo := 0.0
	for j := range len(row) - 1 {
		hi := math.Inf(1)
		if j < len(bounds) {
			hi = bounds[j]
		}
		if j == 0 {
			row[1] = u - hingeMean(u, w, hi)
		} else {
			row[1+j] = hingeMean(u, w, lo) - hingeMean(u, w, hi)
		}
		lo = hi
	}
}

// solve solves the small symmetric system a x = b by Gaussian elimination
// with partial pivoting; ok is false when a is singular.
func solve(a []float64, b []float64, n int) ([]float64, bool) {
	m := append([]float64(nil), a...)
	x := append([]float64(nil), b...)
	for c := range n {
		piv := c
		for r := c + 1; r < n; r++ {
			if math.Abs(m[r*n+c]) > math.Abs(m[piv*n+c]) {
				piv = r
			}
		}
		if math.Abs(m[piv*n+c]) < 1e-300 {
			return nil, false
		}
		if piv != c {
			for j := range n {
				m[c*n+j], m[piv*n+j] = m[piv*n+j], m[c*n+j]
			}
			x[c], x[piv] = x[piv], x[c]
		}
		for r := c + 1; r < n; r++ {
			f := m[r*n+c] / m[c*n+c]
			for j := c; j < n; j++ {
				m[r*n+j] -= f * m[c*n+j]
			}
			x[r] -= f * x[c]
		}
	}
	for c := n - 1; c >= 0; c-- {
		s := x[c]
		for j := c + 1; j < n; j++ {
			s -= m[c*n+j] * x[j]
		}
		x[c] = s / m[c*n+c]
	}
	return x, true
}

// covariance sets the parameter covariance from the Jacobian at the optimum
// (V0, rates, bounds), inflated by chi2/(n-p) when that exceeds one.
func (m *Model) covariance(pts []Point) error {
	k := len(m.Rates)
	np := 2 * k
	jtj := mat.NewSymDense(np, nil)
	for _, q := range pts {
		g := m.gradientOver(q.U, q.Width)
		w := 1 / (q.Err * q.Err)
		for i := range np {
			for j := i; j < np; j++ {
				jtj.SetSym(i, j, jtj.At(i, j)+w*g.AtVec(i)*g.AtVec(j))
			}
		}
	}
	var ch mat.Cholesky
	if !ch.Factorize(jtj) {
		return errors.New("bands: the fit's parameters are not determined by the layers (singular normal matrix)")
	}
	cov := mat.NewSymDense(np, nil)
	if err := ch.InverseTo(cov); err != nil {
		return fmt.Errorf("bands: inverting the normal matrix: %w", err)
	}
	if dof := len(pts) - np; dof > 0 {
		if s := m.Chi2 / float64(dof); s > 1 {
			cov.ScaleSym(s, cov)
		}
	}
	m.cov = cov
	m.V0Err = math.Sqrt(cov.At(0, 0))
	m.RateErrs = make([]float64, k)
	for j := range k {
		m.RateErrs[j] = math.Sqrt(cov.At(1+j, 1+j))
	}
	m.BoundErrs = make([]float64, k-1)
	for j := range k - 1 {
		m.BoundErrs[j] = math.Sqrt(cov.At(1+k+j, 1+k+j))
	}
	return nil
}

// Criteria for accepting a model with more than one band.
type Criteria struct {
	// MinWidthUM is the narrowest band, um.
	MinWidthUM float64
	// MinContrast is the least relative difference between the rates of
	// neighbouring bands, |r2 - r1| / max(|r1|, |r2|).
	MinContrast float64
	// MinSigma is how many standard errors that difference must exceed.
	MinSigma float64
}

// Default criteria, as fractions of the gap h.
const (
	// DefaultMinWidthFraction: a band narrower than a tenth of the gap spans
	// only about four layers of the default forty, too few for its own rate.
	DefaultMinWidthFraction = 0.10
	// DefaultMinContrast: rates within 20% of each other are one band
	// bent by curvature, calibration or a slowly varying rate, not two
	// coexisting states (common practice).
	DefaultMinContrast = 0.20
	// DefaultMinSigma: three standard errors (common practice).
	DefaultMinSigma = 3
)

// DefaultCriteria returns the default criteria for a domain of h um.
func DefaultCriteria(h float64) Criteria {
	return Criteria{MinWidthUM: DefaultMinWidthFraction * h, MinContrast: DefaultMinContrast, MinSigma: DefaultMinSigma}
}

// Selection is the outcome of Select: the chosen model and every model
// fitted, by number of bands (nil where the fit was impossible).
type Selection struct {
	Best   *Model
	Fitted [3]*Model
	// Rejected says, per number of bands, why a better-scoring model was
	// not taken (empty when it was taken or scored worse).
	Rejected [3]string
}

// Select fits 1, 2 and 3 bands and returns the model with the lowest BIC
// among those whose neighbouring bands all differ by the criteria. The
// one-band model is always admissible.
func Select(pts []Point, h float64, c Criteria) (*Selection, error) {
	s := &Selection{}
	one, err := Fit(pts, 1, h, 0)
	if err != nil {
		return nil, err
	}
	s.Fitted[0], s.Best = one, one
	for k := 2; k <= 3; k++ {
		m, err := Fit(pts, k, h, c.MinWidthUM)
		if err != nil {
			s.Rejected[k-1] = err.Error()
			continue
		}
		s.Fitted[k-1] = m
		if m.BIC >= s.Best.BIC {
			continue
		}
		if why := c.distinct(m); why != "" {
			s.Rejected[k-1] = why
			continue
		}
		s.Best = m
	}
	return s, nil
}

// distinct returns why neighbouring bands of m are not distinct, or "".
func (c Criteria) distinct(m *Model) string {
	k := len(m.Rates)
	for j := range k - 1 {
		r1, r2 := m.Rates[j], m.Rates[j+1]
		// In steady shear between two walls the shear stress is uniform
		// across the gap (the momentum balance without inertia, dσ/dy =
		// 0; Bird, Stewart & Lightfoot 2002, Transport Phenomena, 2nd
		// ed., section 3.2, from memory), and a fluid's rate has its
		// stress's sign (it dissipates): bands that both shear,
		// distinctly from zero, in opposite senses are not bands but
		// wrong layers (on the coverage sweep, static false detections
		// next to a moving plate, H.264 at CRF 23, issue 12).
		e1, e2 := m.RateErrs[j], m.RateErrs[j+1]
		if r1*r2 < 0 && math.Abs(r1) > c.MinSigma*e1 && math.Abs(r2) > c.MinSigma*e2 {
			return fmt.Sprintf("bands %d and %d shear in opposite senses (%.4g and %.4g 1/s), which a uniform shear stress across the gap rules out", j+1, j+2, r1, r2)
		}
		d := math.Abs(r2 - r1)
		if d < c.MinContrast*math.Max(math.Abs(r1), math.Abs(r2)) {
			return fmt.Sprintf("bands %d and %d have rates %.4g and %.4g 1/s, closer than %.0f%%", j+1, j+2, r1, r2, 100*c.MinContrast)
		}
		// Var(r2 - r1) from the covariance.
		v := m.cov.At(1+j, 1+j) + m.cov.At(2+j, 2+j) - 2*m.cov.At(1+j, 2+j)
		if d < c.MinSigma*math.Sqrt(math.Max(0, v)) {
			return fmt.Sprintf("bands %d and %d have rates %.4g and %.4g 1/s, within %g standard errors (%.2g)", j+1, j+2, r1, r2, c.MinSigma, math.Sqrt(v))
		}
	}
	return ""
}
