package walls

import (
	"math"

	"gaptrace/calib/robust"
)

const (
	// rowFloorLevels is the smallest residual scale the robust row level
	// assumes, 8-bit grey levels: the rounding of an 8-bit image (sd
	// 0.29) and the curvature of a sharp edge across a tilted strip (a
	// few tenths of a level) are below it, so that a clean row keeps
	// every column.
	rowFloorLevels = 2
	// rowIterations is the number of reweighted fits of a row: the
	// biweight's weights settle within a few (Huber 1981, Robust
	// Statistics, sec. 7.8, on iteratively reweighted least squares; from
	// memory), and a tracer's columns get weight zero at the first.
	rowIterations = 4
)

// rowFit holds the work buffers of rowLevel.
type rowFit struct {
	res []float64
}

// rowLevel returns the level of one row of a strip at the strip's centre
// column: the intercept of a straight line a + b (x - xc) fitted to the
// row's values by Tukey's biweight. On a clean row it is the row's mean
// (the least-squares intercept at the centre of symmetric columns), so that
// a tilted wall still averages across the strip as the wall model assumes
// (its box); a bright or dark spot that covers a minority of the columns (a
// tracer at rest left in the median image, dust) gets weight zero instead
// of pulling the level and, next to a wall, the wall's position.
func (f *rowFit) rowLevel(row []float32) float64 {
	n := len(row)
	if n < 4 {
		var s float64
		for _, v := range row {
			s += float64(v)
		}
		return s / float64(n)
	}
	xc := float64(n-1) / 2
	if cap(f.res) < n {
		f.res = make([]float64, n)
	}
	res := f.res[:n]
	// The least-squares line first: a row whose every value lies within
	// the biweight's reach of it (most rows) keeps its mean.
	var sv, sxv, sxx float64
	for i, v := range row {
		x := float64(i) - xc
		sv += float64(v)
		sxv += x * float64(v)
		sxx += x * x
	}
	a, b := sv/float64(n), sxv/sxx
	worst := 0.0
	for i, v := range row {
		res[i] = math.Abs(float64(v) - a - b*(float64(i)-xc))
		worst = math.Max(worst, res[i])
	}
	if worst < tukeyC*math.Max(rowFloorLevels, robust.MADToSigma*robust.Median(res)) {
		return a
	}
	// Else start from the median level and the slope between the medians
	// of the two halves, which a minority of outlying columns cannot
	// carry.
	for i, v := range row {
		res[i] = float64(v)
	}
	half := n / 2
	a = robust.Median(res)
	b = (robust.Median(res[n-half:]) - robust.Median(res[:half])) / float64(n-half)
	for range rowIterations {
		for i, v := range row {
			res[i] = math.Abs(float64(v) - a - b*(float64(i)-xc))
		}
		scale := math.Max(rowFloorLevels, robust.MADToSigma*robust.Median(res))
		c := tukeyC * scale
		var sw, swx, swy, swxx, swxy float64
		for i, v := range row {
			r := float64(v) - a - b*(float64(i)-xc)
			if math.Abs(r) >= c {
				continue
			}
			u := r / c
			wt := (1 - u*u) * (1 - u*u)
			x := float64(i) - xc
			sw += wt
			swx += wt * x
			swy += wt * float64(v)
			swxx += wt * x * x
			swxy += wt * x * float64(v)
		}
		det := sw*swxx - swx*swx
		if !(sw > 0) || !(det > 0) {
			break
		}
		a = (swy*swxx - swx*swxy) / det
		b = (sw*swxy - swx*swy) / det
	}
	return a
}
