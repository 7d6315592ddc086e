package walls

import (
	"fmt"
	"math"
	"slices"

	"gocv.io/x/gocv"
)

// Profile is the static image of one wall: the grey level against the
// signed perpendicular distance from the wall line (its edge, reflection
// line and the plate beyond), measured on a median image. It varies
// slowly along the wall (uneven illumination), so it is held per segment
// of SegmentPx along x and interpolated linearly between the segments'
// centres. The detector subtracts it from every frame before it looks for
// tracers next to the wall, so that neither the edge nor the reflection
// line shifts or hides a tracer touching them.
type Profile struct {
	// Line is the wall line.
	Line Line
	// HalfWidthPx is the reach of the profile on either side of the line,
	// px: beyond it the level at the end is held.
	HalfWidthPx float64
	// BinPx is the width of a distance bin, px.
	BinPx float64
	// SegmentPx is the length of a segment along x, px.
	SegmentPx float64
	// Level[s][b] is the median grey level (in the image's own levels) of
	// the pixels of segment s whose distance from the line, positive
	// downward in the image (towards larger y), lies in bin b, from
	// -HalfWidthPx + b BinPx to one bin further; DistPx[s][b] is the median
	// of their distances. Within a bin a level is monotone in the distance
	// (but at an extremum, where it is flat), so the median level is the
	// level at the median distance: the pair places the bin's sample
	// exactly however the pixels fall into it. XPx[s][b] is likewise the
	// median column of the bin's pixels (a tilted wall puts the pixels of
	// one distance at a few columns of the segment only), where the level
	// holds along x.
	Level, DistPx, XPx [][]float32
}

const (
	// profileBinPx is the distance bin of a profile: a quarter pixel
	// samples an edge blurred by the optics' line spread of 0.5 px or more
	// (common practice: four samples per pixel for a line spread).
	profileBinPx = 0.25
	// profileSegmentPx is the length of a segment along the wall: long
	// enough that a bin of a quarter pixel holds a few dozen pixels, whose
	// median ignores the tracers left in the median image, short enough to
	// follow vignetting.
	profileSegmentPx = 64
)

// MeasureProfile measures the profile of the wall along l in median (a
// one-channel image of any depth in the frames' grey levels, such as the
// temporal median of the first frames) out to halfWidthPx on either side.
// A bin no pixel falls into (walls parallel to the rows leave bins between
// whole-pixel distances empty) takes the level interpolated between its
// neighbours.
func MeasureProfile(median gocv.Mat, l Line, halfWidthPx float64) (*Profile, error) {
	if median.Empty() || median.Channels() != 1 {
		return nil, fmt.Errorf("walls: profile needs a one-channel image, have %d channels", median.Channels())
	}
	if !(halfWidthPx > 0) || halfWidthPx > float64(median.Rows()) {
		return nil, fmt.Errorf("walls: profile half-width %g px must be positive and within the image's %d rows", halfWidthPx, median.Rows())
	}
	f := gocv.NewMat()
	defer f.Close()
	median.ConvertTo(&f, gocv.MatTypeCV32F)
	pix, err := f.DataPtrFloat32()
	if err != nil {
		return nil, fmt.Errorf("walls: profile: %w", err)
	}
	w, h := median.Cols(), median.Rows()
	nb := int(math.Ceil(2 * halfWidthPx / profileBinPx))
	ns := max(1, int(math.Round(float64(w)/profileSegmentPx)))
	p := &Profile{Line: l, HalfWidthPx: halfWidthPx, BinPx: profileBinPx, SegmentPx: float64(w) / float64(ns)}
	buckets := make([][]float32, ns*nb)
	dists := make([][]float32, ns*nb)
	cols := make([][]float32, ns*nb)
	cosA := 1 / math.Hypot(1, l.Slope)
	for x := 0; x < w; x++ {
		yl := l.YAt(float64(x))
		reach := halfWidthPx / cosA
		s := min(ns-1, int(float64(x)/p.SegmentPx))
		for y := max(0, int(math.Floor(yl-reach))); y <= min(h-1, int(math.Ceil(yl+reach))); y++ {
			d := (float64(y) - yl) * cosA
			b := int(math.Floor((d + halfWidthPx) / profileBinPx))
			if b < 0 || b >= nb {
				continue
			}
			k := s*nb + b
			buckets[k] = append(buckets[k], pix[y*w+x])
			dists[k] = append(dists[k], float32(d))
			cols[k] = append(cols[k], float32(x))
		}
	}
	p.Level, p.DistPx, p.XPx = make([][]float32, ns), make([][]float32, ns), make([][]float32, ns)
	for s := range ns {
		lv, dv, xv := make([]float32, nb), make([]float32, nb), make([]float32, nb)
		have := make([]bool, nb)
		any := false
		for b := range nb {
			v := buckets[s*nb+b]
			if len(v) == 0 {
				dv[b] = float32(-halfWidthPx + (float64(b)+0.5)*profileBinPx)
				xv[b] = float32((float64(s) + 0.5) * p.SegmentPx)
				continue
			}
			slices.Sort(v)
			dd, xx := dists[s*nb+b], cols[s*nb+b]
			slices.Sort(dd)
			slices.Sort(xx)
			lv[b], dv[b], xv[b], have[b], any = v[len(v)/2], dd[len(dd)/2], xx[len(xx)/2], true, true
		}
		if !any {
			return nil, fmt.Errorf("walls: wall line y = %g + %g x does not cross the %dx%d image", l.Y0, l.Slope, w, h)
		}
		fillGaps(lv, have)
		p.Level[s], p.DistPx[s], p.XPx[s] = lv, dv, xv
	}
	return p, nil
}

// fillGaps sets the values of lv whose have is false by linear
// interpolation between the nearest set ones, holding the end values.
func fillGaps(lv []float32, have []bool) {
	last := -1
	for b := range lv {
		if !have[b] {
			continue
		}
		if last < 0 {
			for k := 0; k < b; k++ {
				lv[k] = lv[b]
			}
		} else {
			for k := last + 1; k < b; k++ {
				t := float32(k-last) / float32(b-last)
				lv[k] = lv[last] + t*(lv[b]-lv[last])
			}
		}
		last = b
	}
	for k := last + 1; k < len(lv); k++ {
		lv[k] = lv[last]
	}
}

// At returns the profile's grey level at pixel (xPx, yPx): interpolated
// linearly in distance and between segments; beyond the reach the end
// levels are held.
func (p *Profile) At(xPx, yPx float64) float64 {
	d := (yPx - p.Line.YAt(xPx)) / math.Hypot(1, p.Line.Slope)
	nb := len(p.Level[0])
	// The bin whose sample is the last at or before d: the one of the
	// uniform grid, or its neighbour, since each sample lies in its bin.
	b := int(math.Floor((d+p.HalfWidthPx)/p.BinPx - 0.5))
	b = min(max(b, 0), nb-2)
	// Between the segments, at the median columns of their bins, and
	// linearly extrapolated beyond the outer ones (vignetting falls off
	// fastest there).
	ns := len(p.Level)
	s := int(math.Floor(xPx/p.SegmentPx - 0.5))
	s = min(max(s, 0), max(0, ns-2))
	at := func(s int) (float64, float64) {
		lv, dv, xv := p.Level[s], p.DistPx[s], p.XPx[s]
		if nb == 1 {
			return float64(lv[0]), float64(xv[0])
		}
		k := b
		if k > 0 && d < float64(dv[k]) {
			k--
		} else if k < nb-2 && d > float64(dv[k+1]) {
			k++
		}
		t := (d - float64(dv[k])) / float64(dv[k+1]-dv[k])
		t = math.Max(0, math.Min(1, t))
		return float64(lv[k]) + t*float64(lv[k+1]-lv[k]), float64(xv[k]) + t*float64(xv[k+1]-xv[k])
	}
	v0, x0 := at(s)
	if ns == 1 {
		return v0
	}
	v1, x1 := at(s + 1)
	if !(x1 > x0) {
		return (v0 + v1) / 2
	}
	// Extrapolation reaches at most half a segment beyond the outer ones.
	ts := math.Max(-1, math.Min(2, (xPx-x0)/(x1-x0)))
	return v0 + ts*(v1-v0)
}
