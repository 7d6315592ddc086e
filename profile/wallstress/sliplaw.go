package wallstress

import "math"

// Point is one shear phase's slip velocity at a wall, um/s, against the
// wall stress there, Pa, each with its standard uncertainty.
type Point struct {
	StressPa, StressErrPa     float64
	SlipUMPerS, SlipErrUMPerS float64
	// Significant is the verdict rule's wall slip at this wall: a slip of
	// at least 3 standard uncertainties and 2 % of the wall speed.
	Significant bool
}

// SlipLaw is a slip law fitted to the phases' points of one wall.
//
// Navier's slip law makes the slip velocity proportional to the wall
// stress, v = beta sigma (Navier 1823; beta is the Navier slip length over
// the viscosity). Its power-law generalisation v = k sigma^p (as used for
// polymer melts and pastes, e.g. Hatzikiriakos 2012, Prog. Polym. Sci. 37,
// 624, from memory) is fitted when at least two phases have slip and
// different stresses: a straight line through ln v against ln sigma,
// weighted by the points' uncertainties. Unknown values are NaN.
type SlipLaw struct {
	Phases int // phases with a known stress and slip
	// NavierUMPerSPerPa is beta, um/s per Pa, with its standard
	// uncertainty.
	NavierUMPerSPerPa, NavierErrUMPerSPerPa float64
	// PowerLawExponent is p and PowerLawCoefficient k, in um/s per Pa^p;
	// PowerLawPhases counts the phases of positive slip it is fitted to.
	PowerLawExponent, PowerLawExponentErr float64
	PowerLawCoefficient                   float64
	PowerLawPhases                        int
}

// FitSlipLaw fits the Navier and the power-law slip laws to pts (points
// with an unknown stress or slip are left out); ok is false without a
// point, or when no point's slip is Significant (a wall that does not
// slip has no slip law to fit).
func FitSlipLaw(pts []Point) (SlipLaw, bool) {
	var use []Point
	slips := false
	for _, p := range pts {
		if finite(p.StressPa) && finite(p.SlipUMPerS) && p.StressPa != 0 {
			use = append(use, p)
			slips = slips || p.Significant
		}
	}
	law := SlipLaw{Phases: len(use), NavierUMPerSPerPa: math.NaN(), NavierErrUMPerSPerPa: math.NaN(),
		PowerLawExponent: math.NaN(), PowerLawExponentErr: math.NaN(), PowerLawCoefficient: math.NaN()}
	if len(use) == 0 || !slips {
		return law, false
	}
	// Navier: weighted least squares through the origin, the weights with
	// the stress's uncertainty carried through the slope of the first pass.
	beta := 0.0
	for pass := 0; pass < 2; pass++ {
		var sw, swx, swy float64
		for _, p := range use {
			v := sq(orZero(p.SlipErrUMPerS)) + sq(beta*orZero(p.StressErrPa))
			w := 1.0
			if v > 0 {
				w = 1 / v
			}
			sw += w
			swx += w * p.StressPa * p.StressPa
			swy += w * p.StressPa * p.SlipUMPerS
		}
		beta = swy / swx
		law.NavierUMPerSPerPa = beta
		law.NavierErrUMPerSPerPa = math.NaN()
		if sw > 0 && allErrs(use) {
			law.NavierErrUMPerSPerPa = 1 / math.Sqrt(swx)
		}
	}
	// Power law on the points of positive slip and stress in the sense of
	// the shear.
	var xs, ys, ws []float64
	for _, p := range use {
		if p.SlipUMPerS > 0 && p.StressPa > 0 {
			xs, ys = append(xs, math.Log(p.StressPa)), append(ys, math.Log(p.SlipUMPerS))
			ws = append(ws, 1)
		}
	}
	law.PowerLawPhases = len(xs)
	if len(xs) >= 2 && spread(xs) > minLogStressSpan {
		pw := 1.0
		for pass := 0; pass < 2; pass++ {
			k := 0
			for _, p := range use {
				if p.SlipUMPerS > 0 && p.StressPa > 0 {
					v := sq(orZero(p.SlipErrUMPerS)/p.SlipUMPerS) + sq(pw*orZero(p.StressErrPa)/p.StressPa)
					ws[k] = 1
					if v > 0 {
						ws[k] = 1 / v
					}
					k++
				}
			}
			a, b, be := weightedLine(xs, ys, ws)
			pw = b
			law.PowerLawExponent, law.PowerLawCoefficient = b, math.Exp(a)
			law.PowerLawExponentErr = be
		}
	}
	return law, true
}

// minLogStressSpan: stresses differing by less than 5 % give no exponent.
const minLogStressSpan = 0.05

// weightedLine fits y = a + b x with weights w (inverse variances) and
// returns b's standard uncertainty from the weights.
func weightedLine(xs, ys, ws []float64) (a, b, be float64) {
	var sw, sx, sy, sxx, sxy float64
	for i := range xs {
		w := ws[i]
		sw += w
		sx += w * xs[i]
		sy += w * ys[i]
		sxx += w * xs[i] * xs[i]
		sxy += w * xs[i] * ys[i]
	}
	d := sw*sxx - sx*sx
	b = (sw*sxy - sx*sy) / d
	a = (sy - b*sx) / sw
	return a, b, math.Sqrt(sw / d)
}

func spread(v []float64) float64 {
	lo, hi := math.Inf(1), math.Inf(-1)
	for _, x := range v {
		lo, hi = math.Min(lo, x), math.Max(hi, x)
	}
	return hi - lo
}

func allErrs(pts []Point) bool {
	for _, p := range pts {
		if !(p.SlipErrUMPerS > 0) {
			return false
		}
	}
	return true
}

func finite(x float64) bool { return !math.IsNaN(x) && !math.IsInf(x, 0) }
func sq(x float64) float64  { return x * x }
func orZero(x float64) float64 {
	if finite(x) {
		return x
	}
	return 0
}
