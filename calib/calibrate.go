package calib

import (
	"errors"
	"fmt"
	"math"
	"path/filepath"

	"gocv.io/x/gocv"

	"gaptrace/calib/experiment"
	"gaptrace/calib/target"
	"gaptrace/calib/walls"
)

// Options tunes Calibrate. The zero value is usable.
type Options struct {
	// Walls tunes the wall detection; its Undistort is set by Calibrate when
	// a checkerboard gives the lens distortion.
	Walls walls.Options
	// BaseDir is the folder camera.target.image is relative to: the
	// experiment file's folder. Empty means the working directory.
	BaseDir string
	// FlowSign is +1 or -1 when the direction of the moving wall in the
	// image is known (from the video, see profile/phases); 0 means +1.
	FlowSign float64
}

// ScaleMismatchFrac: when the scale from the experiment file or a target
// and the gap over the wall distance disagree by more than this fraction,
// the calibration carries a warning. Two per cent is several pixels across
// a typical gap of a few hundred pixels, well beyond the wall error
// (common practice).
const ScaleMismatchFrac = 0.02

// MaxScaleMismatchFrac: beyond this relative difference between the walls'
// distance at the stated scale and the geometry's gap, the lines found are
// not the tool's walls (an edge of the frame, a reflection, a pattern in
// the image) or the scale or gap is wrong: a tilt of the camera, the
// spread of a focus or a lens shortens the distance by a few per cent, not
// by a quarter. The recording is refused rather than analysed with walls
// that cannot be right.
const MaxScaleMismatchFrac = 0.25

// Calibrate builds the calibration of a recording from its median image
// (see frames.Median) and the experiment file: the walls (from
// walls.stationary_px and walls.moving_px when given, else detected), the
// tilt, which wall moves (walls.moving), and the scale, from
// camera.um_per_px, else from camera.target, else from the gap over the
// detected wall distance. A checkerboard target also gives the lens
// distortion, which is then applied to the wall points and to every
// detection mapped with ToGap.
func Calibrate(median gocv.Mat, e *experiment.Experiment, opt Options) (*Calibration, error) {
	if median.Empty() {
		return nil, errors.New("calibration: empty median image")
	}
	if e == nil {
		return nil, errors.New("calibration: no experiment")
	}
	w, h := median.Cols(), median.Rows()
	var lens *Distortion
	var tgtScale float64
	if t := e.Camera.Target; t != nil {
		var err error
		tgtScale, lens, err = measureTarget(t, opt.BaseDir)
		if err != nil {
			return nil, err
		}
	}
	var top, bot walls.Line
	topErr, botErr := math.NaN(), math.NaN()
	source := WallsDetected
	if e.Walls.StationaryPx != nil {
		var err error
		top, bot, err = manualWalls(e, w, h, lens)
		if err != nil {
			return nil, err
		}
		source = WallsExperiment
		if e.Walls.Moving == "" {
			// Without walls.moving the given lines say which side moves.
			ec := *e
			ec.Walls.Moving = experiment.Bottom
			if e.Walls.MovingPx[0][1]+e.Walls.MovingPx[1][1] < e.Walls.StationaryPx[0][1]+e.Walls.StationaryPx[1][1] {
				ec.Walls.Moving = experiment.Top
			}
			e = &ec
		}
	} else {
		wo := opt.Walls
		if lens != nil {
			wo.Undistort = lens.Undistort
		}
		r, err := walls.Find(median, wo)
		if err != nil {
			return nil, err
		}
		top, bot = r.Top.Line, r.Bottom.Line
		xc := float64(w-1) / 2
		topErr = math.Hypot(r.Top.HeightErrPx(xc), walls.EdgeModelErrPx)
		botErr = math.Hypot(r.Bottom.HeightErrPx(xc), walls.EdgeModelErrPx)
	}
	c, err := FromWalls(top, bot, w, h, e, lens, tgtScale, opt.FlowSign)
	if err != nil {
		return nil, err
	}
	c.WallSource = source
	c.setErrors(e, topErr, botErr)
	return c, nil
}

// setErrors fills in the calibration's standard uncertainties from the
// experiment file's stated ones and the wall fits' (topErrPx, botErrPx at
// the middle column; NaN when unknown): the gap's as stated; the scale's as
// stated, or for the gap-based scale s = H / d from the gap H and the wall
// distance d, u(s)/s = sqrt((u(H)/H)^2 + u(d)^2/d^2), u(d)^2 the sum of the
// walls' variances (GUM eq. 10, uncorrelated inputs).
func (c *Calibration) setErrors(e *experiment.Experiment, topErrPx, botErrPx float64) {
	num := func(v float64) *float64 {
		if math.IsNaN(v) || math.IsInf(v, 0) {
			return nil
		}
		return &v
	}
	moving, stationary := topErrPx, botErrPx
	if e.MovingSide() == experiment.Bottom {
		moving, stationary = botErrPx, topErrPx
	}
	c.MovingWallErrPx, c.StationaryWallErrPx = num(moving), num(stationary)
	gapErr := math.NaN()
	if e.Geometry.GapErrUM > 0 {
		gapErr = e.Geometry.GapErrUM
	}
	c.GapErrUM = num(gapErr)
	switch c.ScaleSource {
	case ScaleExperiment:
		if e.Camera.UMPerPxErr > 0 {
			c.UMPerPxErr = num(e.Camera.UMPerPxErr)
		}
	case ScaleGap:
		rel2 := (topErrPx*topErrPx + botErrPx*botErrPx) / (c.GapPx * c.GapPx)
		if !math.IsNaN(gapErr) {
			rel2 += (gapErr / c.GapUM) * (gapErr / c.GapUM)
		}
		c.UMPerPxErr = num(c.UMPerPx * math.Sqrt(rel2))
	}
}

// FromWalls builds the calibration from the top and bottom wall lines of a
// w x h image (in undistorted pixels when lens is not nil), the
// experiment file and, when positive, a scale from a target in um/px.
// flowSign 0 means +1.
func FromWalls(top, bottom walls.Line, w, h int, e *experiment.Experiment, lens *Distortion, targetUMPerPx, flowSign float64) (*Calibration, error) {
	xc := float64(w-1) / 2
	if top.YAt(xc) > bottom.YAt(xc) {
		top, bottom = bottom, top
	}
	for _, l := range []struct {
		name string
		l    walls.Line
	}{{"calibration: top wall", top}, {"calibration: bottom wall", bottom}} {
		if err := walls.CheckInside(l.name, l.l, w, h); err != nil {
			return nil, err
		}
	}
	th := math.Atan((top.Slope + bottom.Slope) / 2)
	gapPx := (bottom.YAt(xc) - top.YAt(xc)) * math.Cos(th)
	minGap := float64(walls.MinGapPx)
	if gapPx < minGap {
		return nil, fmt.Errorf("calibration: gap of %.1f px between the walls at y=%.1f and y=%.1f is implausible, need at least %g px",
			gapPx, top.YAt(xc), bottom.YAt(xc), minGap)
	}
	gapUM := e.Geometry.Gap()
	if !(gapUM > 0) {
		return nil, fmt.Errorf("calibration: the geometry gives no gap (%g um)", gapUM)
	}
	if flowSign == 0 {
		flowSign = 1
	}
	if flowSign != 1 && flowSign != -1 {
		return nil, fmt.Errorf("calibration: flow sign must be +1 or -1, got %g", flowSign)
	}
	c := &Calibration{GapUM: gapUM, GapPx: gapPx, WidthPx: w, HeightPx: h, FlowSign: flowSign, Distortion: lens}
	c.TiltDeg = th * 180 / math.Pi
	moving, stationary := top, bottom
	if e.MovingSide() == experiment.Bottom {
		moving, stationary = bottom, top
	}
	c.MovingWallPx = Line(moving.Points(w))
	c.StationaryWallPx = Line(stationary.Points(w))
	fromGap := gapUM / gapPx
	switch {
	case e.Camera.UMPerPx > 0:
		c.UMPerPx, c.ScaleSource = e.Camera.UMPerPx, ScaleExperiment
	case targetUMPerPx > 0:
		c.UMPerPx, c.ScaleSource = targetUMPerPx, ScaleTarget
	default:
		c.UMPerPx, c.ScaleSource = fromGap, ScaleGap
	}
	if d := c.UMPerPx/fromGap - 1; math.Abs(d) > MaxScaleMismatchFrac && len(e.Walls.MovingPx) == 0 {
		return nil, fmt.Errorf("calibration: the walls found are %.1f px apart, %.0f um at the %s scale of %.4g um/px, but the geometry's gap is %.0f um (%+.0f%%, more than %.0f%%): "+
			"they are not the tool's walls, or camera.um_per_px or the geometry is wrong; check them, or give the wall lines in the experiment file",
			gapPx, gapPx*c.UMPerPx, c.ScaleSource, c.UMPerPx, gapUM, 100*d, 100*MaxScaleMismatchFrac)
	}
	if d := c.UMPerPx/fromGap - 1; math.Abs(d) > ScaleMismatchFrac {
		c.Warnings = append(c.Warnings, fmt.Sprintf(
			"calibration: the walls are %.1f px apart, %.0f um at the %s scale of %.4g um/px, but the geometry's gap is %.0f um (%+.1f%%)",
			gapPx, gapPx*c.UMPerPx, c.ScaleSource, c.UMPerPx, gapUM, 100*d))
	}
	return c, c.Check()
}

// manualWalls returns the walls given in the experiment file as top and
// bottom lines in undistorted pixels.
func manualWalls(e *experiment.Experiment, w, h int, lens *Distortion) (top, bottom walls.Line, err error) {
	line := func(key string, pts [][2]float64) (walls.Line, error) {
		p, q := pts[0], pts[1]
		for _, pt := range []*[2]float64{&p, &q} {
			if pt[0] > float64(w)-0.5 || pt[1] > float64(h)-0.5 {
				return walls.Line{}, fmt.Errorf("%s: point %v lies outside the %dx%d image", key, *pt, w, h)
			}
			if lens != nil {
				pt[0], pt[1] = lens.Undistort(pt[0], pt[1])
			}
		}
		l, err := walls.LineThrough(p, q)
		if err != nil {
			return walls.Line{}, fmt.Errorf("%s: %w", key, err)
		}
		if err := walls.CheckInside(key, l, w, h); err != nil {
			return walls.Line{}, err
		}
		return l, nil
	}
	st, err := line("walls.stationary_px", e.Walls.StationaryPx)
	if err != nil {
		return top, bottom, err
	}
	mv, err := line("walls.moving_px", e.Walls.MovingPx)
	if err != nil {
		return top, bottom, err
	}
	xc := float64(w-1) / 2
	movingOnTop := mv.YAt(xc) < st.YAt(xc)
	switch {
	case e.Walls.Moving == experiment.Top && !movingOnTop:
		return top, bottom, fmt.Errorf("walls.moving_px lies below walls.stationary_px, but walls.moving is %q", e.Walls.Moving)
	case e.Walls.Moving == experiment.Bottom && movingOnTop:
		return top, bottom, fmt.Errorf("walls.moving_px lies above walls.stationary_px, but walls.moving is %q", e.Walls.Moving)
	}
	if movingOnTop {
		return mv, st, nil
	}
	return st, mv, nil
}

// measureTarget reads the experiment's target image and returns its scale
// in um/px and, for a checkerboard, the lens distortion.
func measureTarget(t *experiment.Target, baseDir string) (float64, *Distortion, error) {
	path := t.Image
	if !filepath.IsAbs(path) {
		path = filepath.Join(baseDir, path)
	}
	img := gocv.IMRead(path, gocv.IMReadAnyDepth|gocv.IMReadGrayScale)
	defer img.Close()
	if img.Empty() {
		return 0, nil, fmt.Errorf("camera.target.image: cannot read %s as an image", path)
	}
	switch t.Kind {
	case experiment.Checkerboard:
		c, err := target.Checkerboard(img, t.Corners[0], t.Corners[1], t.PitchUM)
		if err != nil {
			return 0, nil, fmt.Errorf("camera.target %s: %w", path, err)
		}
		d := Distortion(c.Lens)
		return c.UMPerPx, &d, nil
	case experiment.Ruler:
		r, err := target.MeasureRuler(img, t.PitchUM)
		if err != nil {
			return 0, nil, fmt.Errorf("camera.target %s: %w", path, err)
		}
		return r.UMPerPx, nil, nil
	}
	return 0, nil, fmt.Errorf("camera.target.kind: %q is not checkerboard or ruler", t.Kind)
}
