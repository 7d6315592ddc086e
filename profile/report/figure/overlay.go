package figure

import (
	"fmt"
	"image"
	"image/color"
	"math"
	"strconv"

	"gocv.io/x/gocv"
	"gonum.org/v1/plot"
	"gonum.org/v1/plot/plotter"
	"gonum.org/v1/plot/vg"
	"gonum.org/v1/plot/vg/draw"

	"gaptrace/calib"
)

// PointPx is an image position, px, origin at the centre of the top-left
// pixel, y down.
type PointPx struct{ XPx, YPx float64 }

// Overlay is a video frame with what to draw on it.
type Overlay struct {
	// Frame is an 8-bit grey frame (gocv.MatTypeCV8UC1). The caller owns
	// and closes it.
	Frame gocv.Mat
	// Calibration places the walls and the gap axes.
	Calibration *calib.Calibration
	// Tracks are tracer paths of a time window, each a polyline in px.
	Tracks [][]PointPx
	// ScaleBarUM is the length of the scale bar, um (0: a round length near
	// a fifth of the image width).
	ScaleBarUM float64
}

// Drawing sizes on the frame, in frame pixels before upscaling.
const (
	// overlayTargetPx is the width the frame is enlarged towards (by an
	// integer factor) so that lines and text drawn by OpenCV stay sharp in
	// print.
	overlayTargetPx = 1280
	// overlayMaxUpscale bounds the enlargement of small frames.
	overlayMaxUpscale = 4
	// axisTicks is the number of intervals on the drawn y axis.
	axisTicks = 4
	// overlayFontScale is the Hershey font scale of the labels: about 11 px
	// high per upscale step.
	overlayFontScale = 0.45
	// axisInset is where the gap axes start, as a fraction of the width from
	// the side the flow comes from; xAxisLength and scaleBarLength are the x
	// arrow's and the scale bar's length as fractions of the width.
	axisInset      = 0.1
	xAxisLength    = 0.15
	scaleBarLength = 0.2
	// wallLabelInset is the distance of a wall's label from the wall, as a
	// fraction of the gap.
	wallLabelInset = 0.06
	// tickLenPx is the length of its ticks.
	tickLenPx = 6
	// arrowHeadPx is the length of the arrow heads of the gap axes.
	arrowHeadPx = 8
)

// arrow draws a line from a to b with a head of length headPx at b.
func arrow(img *gocv.Mat, a, b image.Point, c color.RGBA, thick, headPx int) {
	gocv.Line(img, a, b, c, thick)
	dx, dy := float64(b.X-a.X), float64(b.Y-a.Y)
	n := math.Hypot(dx, dy)
	if n == 0 {
		return
	}
	dx, dy = dx/n, dy/n
	const halfAngle = math.Pi / 7 // about 26 degrees either side of the shaft
	for _, s := range []float64{-1, 1} {
		cs, sn := math.Cos(halfAngle), s*math.Sin(halfAngle)
		hx, hy := -(dx*cs - dy*sn), -(dx*sn + dy*cs)
		gocv.Line(img, b, image.Pt(b.X+int(math.Round(hx*float64(headPx))), b.Y+int(math.Round(hy*float64(headPx)))), c, thick)
	}
}

// trackColours are the Okabe & Ito colours left after the walls' sky blue and
// orange, in an order that alternates light and dark on a grey frame.
var trackColours = []color.RGBA{Yellow, Blue, BluishGreen, ReddishPurple, Vermillion}

// Check reports the first value that makes o impossible to draw.
func (o *Overlay) Check() error {
	if o.Frame.Empty() {
		return fmt.Errorf("figure: overlay frame is empty")
	}
	if t := o.Frame.Type(); t != gocv.MatTypeCV8UC1 {
		return fmt.Errorf("figure: overlay frame has Mat type %v, want 8-bit grey (CV_8UC1)", t)
	}
	if o.Calibration == nil {
		return fmt.Errorf("figure: overlay has no calibration")
	}
	if err := o.Calibration.Check(); err != nil {
		return fmt.Errorf("figure: overlay: %w", err)
	}
	for i, tr := range o.Tracks {
		for _, q := range tr {
			if !finite(q.XPx, q.YPx) {
				return fmt.Errorf("figure: overlay track %d has point (%g, %g) px", i, q.XPx, q.YPx)
			}
		}
	}
	return nil
}

// upscale is the integer factor by which a frame w px wide is enlarged.
func upscale(w int) int {
	return max(1, min(overlayMaxUpscale, int(math.Round(float64(overlayTargetPx)/float64(w)))))
}

// DrawOverlay returns a BGR copy of the frame, enlarged by a whole factor
// (to about 1280 px wide, at most 4-fold) so lines and text stay sharp, with the walls, the gap axes (x along the flow, y across
// the gap, ticks in um), a scale bar and the tracks drawn on it with
// OpenCV. The caller closes the result; on error it is the zero Mat, which
// needs no closing.
func DrawOverlay(o *Overlay) (gocv.Mat, error) {
	if err := o.Check(); err != nil {
		return gocv.Mat{}, err
	}
	w, h := o.Frame.Cols(), o.Frame.Rows()
	k := upscale(w)
	big := gocv.NewMat()
	defer big.Close()
	gocv.Resize(o.Frame, &big, image.Pt(w*k, h*k), 0, 0, gocv.InterpolationNearestNeighbor)
	out := gocv.NewMat()
	gocv.CvtColor(big, &out, gocv.ColorGrayToBGR)

	kf := float64(k)
	// to maps a frame position to the enlarged image: pixel centres stay centres.
	to := func(xPx, yPx float64) image.Point {
		return image.Pt(int(math.Round((xPx+0.5)*kf-0.5)), int(math.Round((yPx+0.5)*kf-0.5)))
	}
	thick := max(1, k)
	text := func(s string, at image.Point, c color.RGBA) {
		scale := overlayFontScale * kf
		gocv.PutText(&out, s, at, gocv.FontHersheySimplex, scale, color.RGBA{0, 0, 0, 255}, 3*thick)
		gocv.PutText(&out, s, at, gocv.FontHersheySimplex, scale, c, thick)
	}
	white := color.RGBA{255, 255, 255, 255}

	// Tracks first, so the walls and axes stay on top.
	for i, tr := range o.Tracks {
		if len(tr) == 0 {
			continue
		}
		c := trackColours[i%len(trackColours)]
		pts := make([]image.Point, len(tr))
		for j, q := range tr {
			pts[j] = to(q.XPx, q.YPx)
		}
		pv := gocv.NewPointsVectorFromPoints([][]image.Point{pts})
		gocv.Polylines(&out, pv, false, c, thick)
		pv.Close()
		gocv.Circle(&out, pts[len(pts)-1], 2*thick, c, -1)
	}

	cal := o.Calibration
	// The gap axes start near the image side the flow comes from, so the
	// x arrow points into the image; labels and the scale bar go the other way.
	ax0, _ := cal.ToImage(0, 0)
	ax1, _ := cal.ToImage(1, 0)
	flowLeft := ax1 < ax0
	for _, wall := range []struct {
		line calib.Line
		name string
		c    color.RGBA
	}{{cal.StationaryWallPx, "stationary wall", SkyBlue}, {cal.MovingWallPx, "moving wall", Orange}} {
		a, b, ok := clipLine(wall.line, float64(w), float64(h))
		if !ok {
			continue
		}
		gocv.Line(&out, to(a.XPx, a.YPx), to(b.XPx, b.YPx), wall.c, 2*thick)
		// The label sits on the gap side of the wall, near the end away from
		// the axes.
		end := b
		if (a.XPx > b.XPx) != flowLeft {
			end = a
		}
		gx, gy := cal.ToGap(end.XPx, end.YPx)
		inward := cal.GapUM * wallLabelInset
		if wall.name == "moving wall" {
			inward = -inward
		}
		lx, ly := cal.ToImage(gx, gy+inward)
		sz := gocv.GetTextSize(wall.name, gocv.FontHersheySimplex, overlayFontScale*kf, thick)
		at := to(lx, ly)
		if flowLeft {
			at.X = max(at.X, 4*k)
		} else {
			at.X = min(at.X, w*k-sz.X-4*k)
		}
		at.Y += sz.Y / 2
		text(wall.name, at, wall.c)
	}

	// Gap axes from a point on the stationary wall a tenth of the way in.
	originPx := axisInset * float64(w)
	if flowLeft {
		originPx = (1 - axisInset) * float64(w)
	}
	ox, _ := cal.ToGap(originPx, stationaryYAt(cal, originPx))
	oPx, oPy := cal.ToImage(ox, 0)
	xAxisUM := xAxisLength * float64(w) * cal.UMPerPx
	xe, ye := cal.ToImage(ox+xAxisUM, 0)
	arrow(&out, to(oPx, oPy), to(xe, ye), white, thick, arrowHeadPx*k)
	text("x", to(xe, ye).Add(image.Pt(4*k, -4*k)), white)
	tx, ty := cal.ToImage(ox, cal.GapUM)
	arrow(&out, to(oPx, oPy), to(tx, ty), white, thick, arrowHeadPx*k)
	outer := -14 * k // the side of the y axis away from the gap's middle
	if flowLeft {
		outer = 6 * k
	}
	text("y", to(tx, ty).Add(image.Pt(outer, -2*k)), white)
	for i := 0; i <= axisTicks; i++ {
		yUM := cal.GapUM * float64(i) / axisTicks
		ax, ay := cal.ToImage(ox, yUM)
		bx, by := cal.ToImage(ox-tickLenPx*cal.UMPerPx, yUM)
		gocv.Line(&out, to(ax, ay), to(bx, by), white, thick)
		lab := strconv.FormatFloat(yUM, 'g', 4, 64)
		if i == axisTicks {
			lab += " um"
		}
		at := to(ax, ay).Add(image.Pt(5*k, 4*k))
		if flowLeft {
			at.X -= 10*k + gocv.GetTextSize(lab, gocv.FontHersheySimplex, overlayFontScale*kf, thick).X
		}
		text(lab, at, white)
	}

	// Scale bar in the lower corner away from the axes.
	barUM := o.ScaleBarUM
	if !(barUM > 0) {
		barUM = roundLength(scaleBarLength * float64(w) * cal.UMPerPx)
	}
	barPx := barUM / cal.UMPerPx * kf
	bx1, by1 := w*k-8*k, h*k-8*k
	bx0 := bx1 - int(math.Round(barPx))
	if flowLeft {
		bx0 = 8 * k
		bx1 = bx0 + int(math.Round(barPx))
	}
	gocv.Rectangle(&out, image.Rect(bx0-4*k, by1-16*k, bx1+4*k, by1+4*k), color.RGBA{0, 0, 0, 255}, -1)
	gocv.Line(&out, image.Pt(bx0, by1), image.Pt(bx1, by1), white, 2*thick)
	lab := strconv.FormatFloat(barUM, 'g', 4, 64) + " um"
	sz := gocv.GetTextSize(lab, gocv.FontHersheySimplex, overlayFontScale*kf, thick)
	text(lab, image.Pt((bx0+bx1-sz.X)/2, by1-5*k), white)
	return out, nil
}

// stationaryYAt is the image y of the stationary wall line at image x.
func stationaryYAt(c *calib.Calibration, xPx float64) float64 {
	s := c.StationaryWallPx
	if s[1][0] == s[0][0] {
		return (s[0][1] + s[1][1]) / 2
	}
	return s[0][1] + (xPx-s[0][0])*(s[1][1]-s[0][1])/(s[1][0]-s[0][0])
}

// roundLength returns 1, 2 or 5 times a power of ten, the largest not above v.
func roundLength(v float64) float64 {
	p := math.Pow(10, math.Floor(math.Log10(v)))
	for _, m := range []float64{5, 2, 1} {
		if m*p <= v {
			return m * p
		}
	}
	return p
}

// clipLine returns the part of the infinite line through l inside the image
// [-0.5, w-0.5] x [-0.5, h-0.5] px (Liang & Barsky 1984 clipping).
func clipLine(l calib.Line, w, h float64) (a, b PointPx, ok bool) {
	x0, y0 := l[0][0], l[0][1]
	dx, dy := l[1][0]-x0, l[1][1]-y0
	t0, t1 := math.Inf(-1), math.Inf(1)
	for _, e := range [][3]float64{{-dx, x0 + 0.5}, {dx, w - 0.5 - x0}, {-dy, y0 + 0.5}, {dy, h - 0.5 - y0}} {
		p, q := e[0], e[1]
		if p == 0 {
			if q < 0 {
				return a, b, false
			}
			continue
		}
		r := q / p
		if p < 0 {
			t0 = math.Max(t0, r)
		} else {
			t1 = math.Min(t1, r)
		}
	}
	if t0 > t1 {
		return a, b, false
	}
	return PointPx{x0 + t0*dx, y0 + t0*dy}, PointPx{x0 + t1*dx, y0 + t1*dy}, true
}

// flippedTicks labels a y axis that holds -y_px with y_px, so the image
// keeps its rows top to bottom while the axis reads like image rows.
type flippedTicks struct{}

// Ticks implements plot.Ticker.
func (flippedTicks) Ticks(lo, hi float64) []plot.Tick {
	ts := niceTicks{Major: 5}.Ticks(lo, hi)
	for i := range ts {
		if ts[i].Label != "" {
			v := -ts[i].Value
			if v == 0 {
				v = 0 // not "-0"
			}
			ts[i].Label = strconv.FormatFloat(v, 'g', -1, 64)
		}
	}
	return ts
}

// OverlayPlot draws the annotated frame (DrawOverlay) in a figure across
// both columns, with the image axes in px.
func OverlayPlot(o *Overlay) (*Figure, error) {
	m, err := DrawOverlay(o)
	if err != nil {
		return nil, err
	}
	img, err := m.ToImage()
	m.Close()
	if err != nil {
		return nil, fmt.Errorf("figure: overlay: %w", err)
	}
	w, h := float64(o.Frame.Cols()), float64(o.Frame.Rows())
	p := newPlot("image x (px)", "image y (px)")
	p.Add(plotter.NewImage(img, -0.5, -(h - 0.5), w-0.5, 0.5))
	p.X.Min, p.X.Max = -0.5, w-0.5
	p.Y.Min, p.Y.Max = -(h - 0.5), 0.5
	p.Y.Tick.Marker = flippedTicks{}
	p.X.Tick.Marker = niceTicks{Major: 8}

	// Choose the height so the data area has the frame's aspect ratio.
	wL := cm(DoubleColumnCM)
	hTry := cm(DoubleColumnCM * h / w)
	da := p.DataCanvas(draw.Canvas{Rectangle: vg.Rectangle{Max: vg.Point{X: wL, Y: hTry}}})
	dw, dh := da.Max.X-da.Min.X, da.Max.Y-da.Min.Y
	hCM := float64(hTry+dw*vg.Length(h/w)-dh) / float64(cm(1))
	return renderPlot(p, DoubleColumnCM, hCM)
}
