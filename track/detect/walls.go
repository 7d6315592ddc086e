package detect

import (
	"fmt"
	"image"
	"math"

	"gocv.io/x/gocv"
)

// wallInnerSlackPx is how far beyond the wall's own features (its edge and
// reflection line, whose light the optics spread over a few pixels) the
// modelled band reaches into the gap, px (common practice: 3 line-spread
// sds of 1 px).
const wallInnerSlackPx = 3

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
		for r := range rows {
			y := float64(b.ra + r)
			for x := range w {
				// The profile of the nearer wall.
				best, bd := 0.0, math.Inf(1)
				for _, p := range d.opt.Walls {
					dist := math.Abs(y - p.Line.YAt(float64(x)))
					if dist < bd {
						best, bd = p.At(float64(x), y), dist
					}
				}
				model[r*w+x] = float32(best)
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
