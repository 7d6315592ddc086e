// Package target measures the image scale from a calibration image filmed
// with the experiment's optics: a checkerboard of known square size, which
// also gives the lens distortion, or a ruler of known line pitch.
//
// Positions are in image pixels (origin at the top-left pixel's centre),
// lengths in um where the name says so.
package target

import (
	"errors"
	"fmt"
	"image"

	"gocv.io/x/gocv"
)

// Checker is the result of a checkerboard calibration.
type Checker struct {
	// UMPerPx is the scale in the undistorted image.
	UMPerPx float64
	// SquarePx is the board's square size in undistorted pixels.
	SquarePx float64
	// Lens is the fitted camera and distortion.
	Lens Lens
	// ReprojectionPx is the RMS reprojection error of the camera fit.
	ReprojectionPx float64
	// PlanarPx is the RMS reprojection error of the planar refinement: the
	// corners imaged as a square grid (a similarity transform of the board)
	// through the lens. Large when the board was not square to the camera.
	PlanarPx float64
	// Corners are the detected inner corners, row by row, in image pixels.
	Corners [][2]float64
}

// OpenCV's cv::calibrateCamera flags (calib3d.hpp, enum in OpenCV 4.6).
// gocv's CalibFlag constants follow the fisheye module's numbering, which
// differs, so the plain values are used here.
const (
	cvCalibUseIntrinsicGuess = 0x00001
	cvCalibFixAspectRatio    = 0x00002
	cvCalibFixPrincipalPoint = 0x00004
	cvCalibZeroTangentDist   = 0x00008
	cvCalibFixFocalLength    = 0x00010
	cvCalibFixK2             = 0x00040
	cvCalibFixK3             = 0x00080
	checkerCalibFlags        = cvCalibUseIntrinsicGuess | cvCalibFixAspectRatio | cvCalibFixPrincipalPoint | cvCalibZeroTangentDist | cvCalibFixFocalLength | cvCalibFixK2 | cvCalibFixK3
	subPixWinPx              = 5    // half-size of the corner refinement window
	subPixIter               = 50   // corner refinement iterations
	subPixEpsPx              = 1e-3 // corner refinement stops when a step is below this
	maxPlanarPx              = 1.0  // a board square to the camera fits a grid to better than this
)

// Checkerboard finds the inner corners (cols x rows) of a checkerboard with
// squares of squareUM in img (grey or colour, 8 or 16 bit), refines them to
// sub-pixel positions and fits a pinhole camera with radial distortion: first
// OpenCV's calibrateCamera with one radial term, then a planar refinement
// with the same term in which the undistorted corners form a square grid (the
// target lies in the observed plane). A single view of a flat board cannot
// separate the focal length from the distance, so the focal length is held
// at the image's larger side and the principal point at the image centre:
// the undistortion in pixels does not depend on that choice.
func Checkerboard(img gocv.Mat, cols, rows int, squareUM float64) (*Checker, error) {
	if cols < 2 || rows < 2 {
		return nil, fmt.Errorf("checkerboard: need at least 2x2 inner corners, got %dx%d", cols, rows)
	}
	if !(squareUM > 0) {
		return nil, fmt.Errorf("checkerboard: square size must be positive, got %g um", squareUM)
	}
	grey, err := grey8(img)
	if err != nil {
		return nil, fmt.Errorf("checkerboard: %w", err)
	}
	defer grey.Close()
	w, h := grey.Cols(), grey.Rows()
	corners := gocv.NewMat()
	defer corners.Close()
	size := image.Pt(cols, rows)
	if !gocv.FindChessboardCorners(grey, size, &corners, gocv.CalibCBAdaptiveThresh|gocv.CalibCBNormalizeImage) || corners.Empty() {
		return nil, fmt.Errorf("checkerboard not found: no pattern of %dx%d inner corners in the %dx%d target image", cols, rows, w, h)
	}
	crit := gocv.NewTermCriteria(gocv.Count|gocv.EPS, subPixIter, subPixEpsPx)
	gocv.CornerSubPix(grey, &corners, image.Pt(subPixWinPx, subPixWinPx), image.Pt(-1, -1), crit)
	pv := gocv.NewPoint2fVectorFromMat(corners)
	defer pv.Close()
	pts := pv.ToPoints()
	if len(pts) != cols*rows {
		return nil, fmt.Errorf("checkerboard: found %d corners, want %d", len(pts), cols*rows)
	}
	obj := make([]gocv.Point3f, 0, cols*rows)
	for j := 0; j < rows; j++ {
		for i := 0; i < cols; i++ {
			obj = append(obj, gocv.Point3f{X: float32(i), Y: float32(j)})
		}
	}
	objV := gocv.NewPoints3fVectorFromPoints([][]gocv.Point3f{obj})
	defer objV.Close()
	imgV := gocv.NewPoints2fVectorFromPoints([][]gocv.Point2f{pts})
	defer imgV.Close()
	f := float64(max(w, h))
	cam := gocv.NewMatWithSize(3, 3, gocv.MatTypeCV64F)
	defer cam.Close()
	for i, v := range []float64{f, 0, float64(w-1) / 2, 0, f, float64(h-1) / 2, 0, 0, 1} {
		cam.SetDoubleAt(i/3, i%3, v)
	}
	dist := gocv.NewMatWithSize(1, 5, gocv.MatTypeCV64F)
	defer dist.Close()
	dist.SetTo(gocv.NewScalar(0, 0, 0, 0))
	rv, tv := gocv.NewMat(), gocv.NewMat()
	defer rv.Close()
	defer tv.Close()
	rms := gocv.CalibrateCamera(objV, imgV, image.Pt(w, h), &cam, &dist, &rv, &tv, gocv.CalibFlag(checkerCalibFlags))
	camV, err := cam.DataPtrFloat64()
	if err != nil {
		return nil, fmt.Errorf("checkerboard: camera matrix: %w", err)
	}
	distV, err := dist.DataPtrFloat64()
	if err != nil || len(distV) < 5 {
		return nil, fmt.Errorf("checkerboard: distortion coefficients: %v", err)
	}
	c := &Checker{ReprojectionPx: rms}
	c.Lens = Lens{Fx: camV[0], Fy: camV[4], Cx: camV[2], Cy: camV[5]}
	copy(c.Lens.K[:], distV[:5])
	c.Corners = make([][2]float64, len(pts))
	for k, p := range pts {
		c.Corners[k] = [2]float64{float64(p.X), float64(p.Y)}
	}
	c.Lens, c.SquarePx, c.PlanarPx = refinePlanar(c.Corners, cols, c.Lens)
	if c.PlanarPx > maxPlanarPx {
		return nil, fmt.Errorf("checkerboard: the corners are %.2f px (RMS) off a square grid seen through the lens, need below %g: is the board square to the camera?", c.PlanarPx, float64(maxPlanarPx))
	}
	c.UMPerPx = squareUM / c.SquarePx
	return c, nil
}

// grey8 returns an 8-bit one-channel copy of img.
func grey8(img gocv.Mat) (gocv.Mat, error) {
	if img.Empty() {
		return gocv.Mat{}, errors.New("empty image")
	}
	g := gocv.NewMat()
	switch img.Channels() {
	case 1:
		img.CopyTo(&g)
	case 3:
		gocv.CvtColor(img, &g, gocv.ColorBGRToGray)
	case 4:
		gocv.CvtColor(img, &g, gocv.ColorBGRAToGray)
	default:
		g.Close()
		return gocv.Mat{}, fmt.Errorf("image with %d channels", img.Channels())
	}
	if g.Type() != gocv.MatTypeCV8U {
		o := gocv.NewMat()
		gocv.Normalize(g, &o, 0, 255, gocv.NormMinMax)
		o.ConvertTo(&g, gocv.MatTypeCV8U)
		o.Close()
	}
	return g, nil
}
