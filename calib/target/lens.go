package target

import "math"

// Lens is a pinhole camera with radial and tangential distortion in the
// model of OpenCV's calib3d module (Brown-Conrady): focal lengths Fx, Fy and
// principal point Cx, Cy in pixels, and the coefficients K = (k1, k2, p1,
// p2, k3). A point at normalised position (x, y) = ((u-Cx)/Fx, (v-Cy)/Fy)
// without distortion is imaged at
//
//	x'' = x (1 + k1 r^2 + k2 r^4 + k3 r^6) + 2 p1 x y + p2 (r^2 + 2 x^2)
//	y'' = y (1 + k1 r^2 + k2 r^4 + k3 r^6) + p1 (r^2 + 2 y^2) + 2 p2 x y
//
// with r^2 = x^2 + y^2. Undistorted pixel positions use the same Fx, Fy,
// Cx, Cy, so they stay in the image's pixel frame.
type Lens struct {
	Fx, Fy, Cx, Cy float64
	K              [5]float64
}

// distortNorm applies the distortion to a normalised point.
func (l Lens) distortNorm(x, y float64) (float64, float64) {
	k1, k2, p1, p2, k3 := l.K[0], l.K[1], l.K[2], l.K[3], l.K[4]
	r2 := x*x + y*y
	rad := 1 + r2*(k1+r2*(k2+r2*k3))
	return x*rad + 2*p1*x*y + p2*(r2+2*x*x), y*rad + p1*(r2+2*y*y) + 2*p2*x*y
}

// Distort maps an undistorted pixel position to where the lens images it.
func (l Lens) Distort(xPx, yPx float64) (float64, float64) {
	x, y := l.distortNorm((xPx-l.Cx)/l.Fx, (yPx-l.Cy)/l.Fy)
	return x*l.Fx + l.Cx, y*l.Fy + l.Cy
}

// Undistortion iterations: the fixed-point iteration of OpenCV's
// undistortPoints converges geometrically for the mild distortion of a
// microscope or macro lens; stop when the step is below undistortTolNorm.
const (
	undistortIter    = 50
	undistortTolNorm = 1e-12
)

// Undistort maps a measured (distorted) pixel position to where it would be
// without lens distortion, by inverting Distort iteratively.
func (l Lens) Undistort(xPx, yPx float64) (float64, float64) {
	xd, yd := (xPx-l.Cx)/l.Fx, (yPx-l.Cy)/l.Fy
	x, y := xd, yd
	for i := 0; i < undistortIter; i++ {
		dx, dy := l.distortNorm(x, y)
		ex, ey := dx-xd, dy-yd
		x, y = x-ex, y-ey
		if math.Abs(ex)+math.Abs(ey) < undistortTolNorm {
			break
		}
	}
	return x*l.Fx + l.Cx, y*l.Fy + l.Cy
}

// IsIdentity reports whether the lens has no distortion at all.
func (l Lens) IsIdentity() bool { return l.K == [5]float64{} }
