// Package flowprior estimates, before any tracer is linked, how far tracers
// move from one frame to the next at each height in the gap, and how far the
// whole image moved (camera jitter or drift). The linker uses the first as the
// prediction for tracers it has not yet seen move, so that a search region
// can follow the flow even next to the moving wall, where tracers travel a
// large part of their spacing per frame, and it removes the second before
// linking.
//
// Three estimators are provided: from the frames themselves, by phase
// correlation of strips parallel to the walls (StripEstimator); from the
// detections alone, by a histogram of candidate displacements at each height
// (FromDetections); and from tracks after a first linking pass (FromTracks,
// CommonModeFromTracks). Displacements are in image pixels per frame; heights
// are gap coordinates in um (y from the stationary wall, see package calib).
package flowprior

import (
	"fmt"
	"gaptrace/calib/robust"
	"math"

	"gaptrace/calib"
)

// Shift is a displacement in image pixels.
type Shift struct {
	DXPx, DYPx float64
}

// Field gives the expected displacement of a tracer between frame and
// frame+1, in image pixels, at gap height yUM. ok is false when the field
// knows nothing there.
type Field interface {
	Step(frame int, yUM float64) (dxPx, dyPx float64, ok bool)
}

// Profile is a displacement per frame against gap height, the same for all
// frames. Bins are in ascending YUM; a bin with N == 0 is unknown and is
// skipped by Step.
type Profile struct {
	YUM        []float64 // bin centres, um
	DXPx, DYPx []float64 // displacement per frame, image px
	SpreadPx   []float64 // robust scatter of single estimates along the flow (1.4826 MAD), px; NaN when unknown
	N          []int     // number of estimates in the bin
}

// Step returns the displacement at yUM, linearly interpolated between the
// nearest known bins and held constant beyond the outermost ones. frame is
// ignored: a Profile does not change in time.
func (p *Profile) Step(frame int, yUM float64) (dxPx, dyPx float64, ok bool) {
	if p == nil {
		return 0, 0, false
	}
	lo, hi := -1, -1
	for i, y := range p.YUM {
		if p.N[i] == 0 {
			continue
		}
		if y <= yUM {
			lo = i
		} else if hi < 0 {
			hi = i
		}
	}
	switch {
	case lo < 0 && hi < 0:
		return 0, 0, false
	case lo < 0:
		return p.DXPx[hi], p.DYPx[hi], true
	case hi < 0:
		return p.DXPx[lo], p.DYPx[lo], true
	}
	w := (yUM - p.YUM[lo]) / (p.YUM[hi] - p.YUM[lo])
	return p.DXPx[lo] + w*(p.DXPx[hi]-p.DXPx[lo]), p.DYPx[lo] + w*(p.DYPx[hi]-p.DYPx[lo]), true
}

// Known is the number of bins with an estimate.
func (p *Profile) Known() int {
	n := 0
	for _, c := range p.N {
		if c > 0 {
			n++
		}
	}
	return n
}

// AlongPx is the displacement per frame along the flow (the direction the
// moving wall travels) at bin i, px.
func (p *Profile) AlongPx(cal *calib.Calibration, i int) float64 {
	ex, ey := FlowDir(cal)
	return p.DXPx[i]*ex + p.DYPx[i]*ey
}

// FlowDir is the unit vector in the image along the flow (gap +x).
func FlowDir(cal *calib.Calibration) (ex, ey float64) {
	x0, y0 := cal.ToImage(0, 0)
	x1, y1 := cal.ToImage(cal.UMPerPx, 0)
	return x1 - x0, y1 - y0
}

// AcrossDir is the unit vector in the image across the gap (gap +y, towards
// the moving wall).
func AcrossDir(cal *calib.Calibration) (ex, ey float64) {
	x0, y0 := cal.ToImage(0, 0)
	x1, y1 := cal.ToImage(0, cal.UMPerPx)
	return x1 - x0, y1 - y0
}

// bins returns n bin centres covering [0, gapUM] with bins of about binUM.
func bins(gapUM, binUM float64) ([]float64, error) {
	if !(binUM > 0) || math.IsInf(binUM, 0) {
		return nil, fmt.Errorf("flowprior: bin height must be positive, got %g um", binUM)
	}
	if !(gapUM > 0) {
		return nil, fmt.Errorf("flowprior: gap must be positive, got %g um", gapUM)
	}
	n := int(math.Round(gapUM / binUM))
	if n < 1 {
		n = 1
	}
	if n > maxBins {
		return nil, fmt.Errorf("flowprior: bin height %g um gives %d bins over the %g um gap, more than %d", binUM, n, gapUM, maxBins)
	}
	ys := make([]float64, n)
	for i := range ys {
		ys[i] = (float64(i) + 0.5) * gapUM / float64(n)
	}
	return ys, nil
}

// maxBins bounds the number of gap bins: more than this is a unit mistake
// (a bin of 0.8 um in a 800 um gap), not a request.
const maxBins = 10000

// binOf returns the bin index of yUM for n bins over [0, gapUM], or -1
// outside the gap.
func binOf(yUM, gapUM float64, n int) int {
	if yUM < 0 || yUM > gapUM || math.IsNaN(yUM) {
		return -1
	}
	i := int(yUM / gapUM * float64(n))
	if i == n {
		i--
	}
	return i
}

// medianSpread returns the median of v and robust.MADToSigma times its
// median absolute deviation; the spread is NaN for fewer than two values.
func medianSpread(v []float64) (med, spread float64) {
	med, mad := robust.MAD(v)
	if len(v) < 2 {
		return med, math.NaN()
	}
	return med, robust.MADToSigma * mad
}
