// Package calib turns image pixels into gap coordinates. A Calibration holds
// the two wall lines found in (or given for) the image, the scale and the
// orientation of the gap; its methods map a pixel position to (x_um, y_um)
// with x along the flow, positive in the direction the moving wall travels
// during the first shear phase, and y across the gap from the stationary wall
// (y = 0) to the moving wall (y = gap), perpendicular to the walls.
//
// Sub-packages describe the tool (geometry) and the experiment file
// (experiment), and find the walls (walls) and the scale from a target image
// (target).
package calib

import (
	"encoding/json"
	"errors"
	"fmt"
	"math"
	"os"

	"gaptrace/calib/target"
)

// Line is a wall line in image pixels, through two points.
type Line [2][2]float64

// Calibration is the calibration.json object of the contract, plus what is
// needed to map coordinates.
type Calibration struct {
	UMPerPx          float64 `json:"um_per_px"`
	GapUM            float64 `json:"gap_um"`
	TiltDeg          float64 `json:"tilt_deg"`
	ScaleSource      string  `json:"scale_source"` // experiment | gap | target
	StationaryWallPx Line    `json:"stationary_wall_px"`
	MovingWallPx     Line    `json:"moving_wall_px"`
	// Standard uncertainties (GUM, JCGM 100:2008), nil (null) when not
	// known: of the gap (um, as the experiment file states it), of the
	// scale (um/px: the file's, or for the gap-based scale propagated from
	// the gap and both walls), and of each wall line's height at the middle
	// column of the frame (px, from the wall fit's residuals).
	GapErrUM            *float64 `json:"gap_err_um"`
	UMPerPxErr          *float64 `json:"um_per_px_err"`
	StationaryWallErrPx *float64 `json:"stationary_wall_err_px"`
	MovingWallErrPx     *float64 `json:"moving_wall_err_px"`
	// FlowSign is +1 when the moving wall travels towards +x in the image
	// during the first shear phase, -1 when towards -x.
	FlowSign float64 `json:"flow_sign"`
	// GapPx is the perpendicular wall distance in pixels.
	GapPx float64 `json:"gap_px"`
	// WidthPx and HeightPx are the image size the calibration was made on.
	WidthPx    int    `json:"width_px"`
	HeightPx   int    `json:"height_px"`
	WallSource string `json:"wall_source,omitempty"` // detected | experiment
	// Distortion, when not nil, is the lens model applied to detections
	// before the mapping (from a checkerboard target). The wall lines are
	// then in undistorted pixels.
	Distortion *Distortion `json:"distortion,omitempty"`
	// Warnings are doubts about the calibration, for the summary.
	Warnings []string `json:"warnings,omitempty"`
}

// Distortion is a pinhole camera with radial and tangential distortion in
// OpenCV's convention: camera matrix fx, fy, cx, cy in pixels and
// coefficients k1, k2, p1, p2, k3 (see target.Lens for the model).
type Distortion struct {
	Fx float64    `json:"fx_px"`
	Fy float64    `json:"fy_px"`
	Cx float64    `json:"cx_px"`
	Cy float64    `json:"cy_px"`
	K  [5]float64 `json:"k"`
}

// Undistort maps a measured image position in px to where it would be
// without lens distortion.
func (d *Distortion) Undistort(xPx, yPx float64) (float64, float64) {
	return target.Lens(*d).Undistort(xPx, yPx)
}

// Distort maps an undistorted position in px to where the lens images it.
func (d *Distortion) Distort(xPx, yPx float64) (float64, float64) {
	return target.Lens(*d).Distort(xPx, yPx)
}

// Wall sources.
const (
	WallsDetected   = "detected"
	WallsExperiment = "experiment"
)

// Scale sources.
const (
	ScaleExperiment = "experiment"
	ScaleGap        = "gap"
	ScaleTarget     = "target"
)

// frame returns the unit vectors along the stationary wall (ex, oriented
// with the flow) and across the gap (ey, from the stationary to the moving
// wall), and the stationary wall's first point as origin, all in pixels.
func (c *Calibration) frame() (ox, oy, exx, exy, eyx, eyy float64) {
	s := c.StationaryWallPx
	dx, dy := s[1][0]-s[0][0], s[1][1]-s[0][1]
	n := math.Hypot(dx, dy)
	exx, exy = dx/n, dy/n
	if exx < 0 { // orient along +x of the image
		exx, exy = -exx, -exy
	}
	// Normal pointing towards the moving wall.
	eyx, eyy = -exy, exx
	m := c.MovingWallPx
	mx, my := (m[0][0]+m[1][0])/2, (m[0][1]+m[1][1])/2
	if (mx-s[0][0])*eyx+(my-s[0][1])*eyy < 0 {
		eyx, eyy = -eyx, -eyy
	}
	if c.FlowSign < 0 {
		exx, exy = -exx, -exy
	}
	return s[0][0], s[0][1], exx, exy, eyx, eyy
}

// ToGap maps an image position in pixels to gap coordinates in um: the
// lens distortion is removed first when the calibration has one; x_um is
// measured along the stationary wall from its first point, positive with
// the flow, y_um perpendicular to it towards the moving wall.
func (c *Calibration) ToGap(xPx, yPx float64) (xUM, yUM float64) {
	if c.Distortion != nil {
		xPx, yPx = c.Distortion.Undistort(xPx, yPx)
	}
	ox, oy, exx, exy, eyx, eyy := c.frame()
	dx, dy := xPx-ox, yPx-oy
	return (dx*exx + dy*exy) * c.UMPerPx, (dx*eyx + dy*eyy) * c.UMPerPx
}

// GapMapper returns ToGap with the wall frame computed once, for mapping
// many points with a calibration that does not change meanwhile: same
// results, without recomputing the frame per point.
func (c *Calibration) GapMapper() func(xPx, yPx float64) (xUM, yUM float64) {
	ox, oy, exx, exy, eyx, eyy := c.frame()
	d, s := c.Distortion, c.UMPerPx
	return func(xPx, yPx float64) (float64, float64) {
		if d != nil {
			xPx, yPx = d.Undistort(xPx, yPx)
		}
		dx, dy := xPx-ox, yPx-oy
		return (dx*exx + dy*exy) * s, (dx*eyx + dy*eyy) * s
	}
}

// ToImage maps gap coordinates in um back to image pixels (through the
// lens distortion when the calibration has one), for drawing overlays.
func (c *Calibration) ToImage(xUM, yUM float64) (xPx, yPx float64) {
	ox, oy, exx, exy, eyx, eyy := c.frame()
	u, v := xUM/c.UMPerPx, yUM/c.UMPerPx
	xPx, yPx = ox+u*exx+v*eyx, oy+u*exy+v*eyy
	if c.Distortion != nil {
		xPx, yPx = c.Distortion.Distort(xPx, yPx)
	}
	return xPx, yPx
}

// Known returns the value behind an uncertainty field and whether it is
// known (not nil, finite, not negative).
func Known(p *float64) (float64, bool) {
	if p == nil || math.IsNaN(*p) || math.IsInf(*p, 0) || *p < 0 {
		return 0, false
	}
	return *p, true
}

// Check reports the first field that makes the calibration unusable.
func (c *Calibration) Check() error {
	switch {
	case !(c.UMPerPx > 0):
		return fmt.Errorf("calibration: um_per_px must be positive, got %g", c.UMPerPx)
	case !(c.GapUM > 0):
		return fmt.Errorf("calibration: gap_um must be positive, got %g", c.GapUM)
	case c.StationaryWallPx[0] == c.StationaryWallPx[1]:
		return errors.New("calibration: stationary_wall_px has two equal points")
	case c.MovingWallPx[0] == c.MovingWallPx[1]:
		return errors.New("calibration: moving_wall_px has two equal points")
	case c.FlowSign != 1 && c.FlowSign != -1 && c.FlowSign != 0: // 0: not set, taken as +1
		return fmt.Errorf("calibration: flow_sign must be 1 or -1, got %g", c.FlowSign)
	case c.Distortion != nil && !(c.Distortion.Fx > 0 && c.Distortion.Fy > 0):
		return fmt.Errorf("calibration: distortion focal lengths must be positive, got %g, %g", c.Distortion.Fx, c.Distortion.Fy)
	}
	return nil
}

// Load reads a calibration.json file.
func Load(path string) (*Calibration, error) {
	b, err := os.ReadFile(path)
	if err != nil {
		return nil, fmt.Errorf("calibration: %w", err)
	}
	var c Calibration
	if err := json.Unmarshal(b, &c); err != nil {
		return nil, fmt.Errorf("calibration %s: %w", path, err)
	}
	if c.FlowSign == 0 {
		c.FlowSign = 1
	}
	if err := c.Check(); err != nil {
		return nil, fmt.Errorf("%s: %w", path, err)
	}
	return &c, nil
}
