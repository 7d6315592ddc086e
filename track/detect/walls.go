package detect

import (
	"fmt"
	"image"
	"math"
	"slices"

	"gaptrace/calib/robust"

	"gocv.io/x/gocv"
)

// wallInnerSlackPx is how far beyond the wall's own features (its edge and
// reflection line, whose light the optics spread over a few pixels) the
// modelled band reaches into the gap, px (common practice: 3 line-spread
// sds of 1 px).
const wallInnerSlackPx = 3

const (
	// plateCutPx is how far into the gap from a wall line the pixels of an
	// unmodelled plate are left out: the plate's light reaches a line
	// spread (about half a pixel, common practice) into the gap.
	plateCutPx = 0.5
	// plateNoiseRatio decides that a plate is not modelled by its profile:
	// the frame minus the profile varies this many times more on the
	// plate than in the gap beside it (a textured plate that moves, so
	// that the median image does not hold its texture).
	plateNoiseRatio = 2
	// plateSampleStep samples at least every few pixels of a band for that
	// test, and plateBandSamples is about the most sample positions taken
	// in one band: of them a third or so lie on the plate and as many in
	// the gap beside it, over a thousand each, whose MADs have a relative
	// sd of about 1.36/sqrt(n), 4 % (see noiseSamples), against a factor
	// plateNoiseRatio between them.
	plateSampleStep  = 3
	plateBandSamples = 4096
)

// wallInnerPx returns the reach, on either side of a wall line, of the rows
// whose band-pass and refinement see the frame with the wall's profile
// subtracted: a refinement window (and the pixel the candidate may lie
// outside the mask) plus the box mean's half-width beyond the wall's
// features.
func (d *Detector) wallInnerPx() float64 {
	return float64(d.wr+windowSlack+1) + float64(d.boxPx/2) + wallInnerSlackPx
}

// wallPadPx is how many rows beyond the inner ones are filtered so that the
// filters' kernels see real pixels.
func (d *Detector) wallPadPx() int { return max(d.khalf, d.boxPx/2) + 1 }

// WallReachPx returns how far, on either side of a wall line, the profile
// given in Options.Walls must reach for tracers of diameterPx, px.
func WallReachPx(diameterPx float64) float64 {
	d := Detector{}
	d.sigma = diameterPx / diameterSigmas
	d.wr = int(math.Ceil(kernelSigmas * d.sigma))
	d.khalf = int(math.Ceil(filterSigmas * d.sigma))
	d.boxPx = 2*int(math.Round(boxDiameters*diameterPx/2)) + 1
	return d.wallInnerPx() + float64(d.wallPadPx()) + 1
}

// wallBand is a range of frame rows next to one or both walls, processed
// with the walls' profile subtracted.
type wallBand struct {
	ra, rb int // rows filtered, [ra, rb)
	ia, ib int // rows whose band-pass and reference replace the frame's, [ia, ib)
	// model is the walls' profile on rows [ra, rb), CV32F.
	model gocv.Mat
	// Work buffers: the frame minus the model, its matched Gaussian and
	// box mean, the band-pass in float and in the frames' depth, and the
	// reference of the refinement (model plus box mean) on the inner rows.
	f, gs, bx, bp, bpT, ref gocv.Mat
	refPx                   []float32
	// side[k] is, for pixel k of the filtered rows, the index of the wall
	// on whose plate it lies beyond plateCutPx, +1, or 0 in the gap;
	// dist[k] its distance from that wall's line into the gap (negative on
	// the plate), px.
	side []int8
	dist []float32
}

func (b *wallBand) mats() []*gocv.Mat {
	return []*gocv.Mat{&b.model, &b.f, &b.gs, &b.bx, &b.bp, &b.bpT, &b.ref}
}

func (b *wallBand) close() {
	for _, m := range b.mats() {
		m.Close()
	}
}

// closeBands releases the wall bands.
func (d *Detector) closeBands() {
	for i := range d.bands {
		d.bands[i].close()
	}
	d.bands, d.bandsW, d.bandsH = nil, 0, 0
}

// buildBands sets up the wall bands of a w x h frame whose rows y0 to y1-1
// are filtered.
func (d *Detector) buildBands(w, h, y0, y1 int) error {
	d.closeBands()
	d.bandsW, d.bandsH = w, h
	inner, pad := d.wallInnerPx(), d.wallPadPx()
	type span struct{ ia, ib int }
	var spans []span
	for _, p := range d.opt.Walls {
		if p.HalfWidthPx < inner+float64(pad) {
			return fmt.Errorf("detect: wall profile reaches %g px from its line, need %g px for %g px tracers", p.HalfWidthPx, inner+float64(pad), d.opt.DiameterPx)
		}
		reach := inner * math.Hypot(1, p.Line.Slope)
		a := math.Min(p.Line.YAt(0), p.Line.YAt(float64(w-1))) - reach
		b := math.Max(p.Line.YAt(0), p.Line.YAt(float64(w-1))) + reach
		ia, ib := max(y0, int(math.Floor(a))), min(y1, int(math.Ceil(b))+1)
		if ia >= ib {
			continue
		}
		spans = append(spans, span{ia, ib})
	}
	// Merge overlapping spans (a narrow gap).
	for i := 0; i < len(spans); i++ {
		for j := i + 1; j < len(spans); j++ {
			if spans[j].ia <= spans[i].ib && spans[i].ia <= spans[j].ib {
				spans[i] = span{min(spans[i].ia, spans[j].ia), max(spans[i].ib, spans[j].ib)}
				spans = append(spans[:j], spans[j+1:]...)
				j = i
			}
		}
	}
	for _, s := range spans {
		b := wallBand{ia: s.ia, ib: s.ib, ra: max(0, s.ia-pad), rb: min(h, s.ib+pad)}
		for _, m := range b.mats() {
			*m = gocv.NewMat()
		}
		rows := b.rb - b.ra
		model := make([]float32, rows*w)
		b.side, b.dist = make([]int8, rows*w), make([]float32, rows*w)
		for r := range rows {
			y := float64(b.ra + r)
			for x := range w {
				// The profile of the nearer wall.
				best, bd, bi := 0.0, math.Inf(1), 0
				for i, p := range d.opt.Walls {
					dist := math.Abs(y - p.Line.YAt(float64(x)))
					if dist < bd {
						best, bd, bi = p.At(float64(x), y), dist, i
					}
				}
				model[r*w+x] = float32(best)
				into := d.intoGap(bi, float64(x), y)
				b.dist[r*w+x] = float32(into)
				if into < plateCutPx {
					b.side[r*w+x] = int8(bi + 1)
				}
			}
		}
		m, err := gocv.NewMatFromBytes(rows, w, gocv.MatTypeCV32F, float32Bytes(model))
		if err != nil {
			b.close()
			return err
		}
		b.model.Close()
		b.model = m.Clone() // own the data
		m.Close()
		d.bands = append(d.bands, b)
	}
	return nil
}

// intoGap returns the distance of (x, y) from wall i's line towards the
// gap (the side of the other walls; with one wall, the side of the frame's
// middle row), px, perpendicular.
func (d *Detector) intoGap(i int, x, y float64) float64 {
	l := d.opt.Walls[i].Line
	toward := float64(d.bandsH) / 2
	for j, o := range d.opt.Walls {
		if j != i {
			toward = o.Line.YAt(x)
		}
	}
	dv := (y - l.YAt(x)) / math.Hypot(1, l.Slope)
	if toward < l.YAt(x) {
		dv = -dv
	}
	return dv
}

// unmodelledPlates sets d.cutPlate[i] when wall i's plate varies, in the
// frame minus the profile, plateNoiseRatio times more than the gap beside
// it: its pixels are then left out next to the wall.
func (d *Detector) unmodelledPlates() {
	n := len(d.opt.Walls)
	if cap(d.cutPlate) < n {
		d.cutPlate = make([]bool, n)
	}
	d.cutPlate = d.cutPlate[:n]
	inner := d.wallInnerPx()
	for i := range n {
		d.plateS, d.gapS = d.plateS[:0], d.gapS[:0]
		for bi := range d.bands {
			b := &d.bands[bi]
			f, err := b.f.DataPtrFloat32()
			if err != nil {
				continue
			}
			// An odd stride, so that the rows of an even-width frame are
			// sampled at different columns.
			step := max(plateSampleStep, len(f)/plateBandSamples) | 1
			for k := 0; k < len(f); k += step {
				dv := float64(b.dist[k])
				if int(b.side[k]) == i+1 && dv < -2 && dv > -inner {
					d.plateS = append(d.plateS, f[k])
				} else if b.side[k] == 0 && dv > wallInnerSlackPx && dv < inner {
					d.gapS = append(d.gapS, f[k])
				}
			}
		}
		d.cutPlate[i] = len(d.plateS) >= minNoiseSamples && len(d.gapS) >= minNoiseSamples &&
			madOf(d.plateS) > plateNoiseRatio*madOf(d.gapS)
	}
}

// madOf returns the median absolute deviation of v, reordering it.
func madOf(v []float32) float64 {
	med := robust.SelectKth(v, len(v)/2)
	for i, x := range v {
		v[i] = abs32(x - med)
	}
	return float64(robust.SelectKth(v, len(v)/2))
}

// cut reports whether frame pixel (x, y), in a wall band, lies on a plate
// left out.
func (p *pixels) cut(x, y int) bool {
	for i := range p.bands {
		b := &p.bands[i]
		if y >= b.ra && y < b.rb {
			s := b.side[(y-b.ra)*p.w+x]
			return s > 0 && p.cutPlate[s-1]
		}
	}
	return false
}

// applyWalls replaces the band-pass of d.cand (rows y0 on) on the wall
// bands by that of the frame minus the walls' profile, and sets each band's
// refinement reference.
func (d *Detector) applyWalls(img gocv.Mat, y0 int, dark bool) error {
	w := img.Cols()
	for i := range d.bands {
		b := &d.bands[i]
		src := img.Region(image.Rect(0, b.ra, w, b.rb))
		src.ConvertTo(&b.f, gocv.MatTypeCV32F)
		src.Close()
		gocv.Subtract(b.f, b.model, &b.f)
	}
	d.unmodelledPlates()
	for i := range d.bands {
		b := &d.bands[i]
		if slices.Contains(d.cutPlate, true) {
			f, err := b.f.DataPtrFloat32()
			if err != nil {
				return err
			}
			for k, s := range b.side {
				if s > 0 && d.cutPlate[s-1] {
					f[k] = 0
				}
			}
		}
		gocv.GaussianBlur(b.f, &b.gs, image.Pt(d.ksize, d.ksize), d.sigma, d.sigma, gocv.BorderReflect101)
		gocv.Blur(b.f, &b.bx, image.Pt(d.boxPx, d.boxPx))
		if dark {
			gocv.Subtract(b.bx, b.gs, &b.bp)
		} else {
			gocv.Subtract(b.gs, b.bx, &b.bp)
		}
		b.bp.ConvertTo(&b.bpT, img.Type()) // rounds, clips at zero
		in := image.Rect(0, b.ia-b.ra, w, b.ib-b.ra)
		from := b.bpT.Region(in)
		to := d.cand.Region(image.Rect(0, b.ia-y0, w, b.ib-y0))
		from.CopyTo(&to)
		from.Close()
		to.Close()
		mi, bi := b.model.Region(in), b.bx.Region(in)
		gocv.Add(mi, bi, &b.ref)
		mi.Close()
		bi.Close()
		px, err := b.ref.DataPtrFloat32()
		if err != nil {
			return err
		}
		b.refPx = px
	}
	return nil
}

// nearWall reports whether a candidate at (x, y) is close enough to a wall
// for its refinement window to see the wall's profile: its whole window
// then lies in the wall band, whose reference it uses.
func (d *Detector) nearWall(x, y int) bool {
	lim := d.wallInnerPx() - float64(d.wr+windowSlack) - 1
	for _, p := range d.opt.Walls {
		if math.Abs(float64(y)-p.Line.YAt(float64(x))) < lim {
			return true
		}
	}
	return false
}
