// Package testtarget draws calibration targets for the tests of the calib
// packages: a checkerboard seen through a lens with a known distortion. It
// is a test fixture, not a renderer of experiments (that is track/synth).
package testtarget

import (
	"image"
	"math"
	"math/rand"

	"gocv.io/x/gocv"
)

// Board is a checkerboard target: Cols x Rows inner corners, squares of
// SquarePx undistorted pixels, the first inner corner at (X0, Y0), imaged
// through a lens whose inverse is Undistort (nil: no distortion). Each pixel
// is the exact box filter of the pattern along the board's axes at the
// pixel's undistorted position (the lens's change of scale inside one pixel
// is neglected), then blurred by a Gaussian of PSFPx (the optics) and given
// Gaussian noise of Noise grey levels.
type Board struct {
	W, H       int
	Cols, Rows int
	SquarePx   float64
	X0, Y0     float64
	Undistort  func(xPx, yPx float64) (float64, float64)
	Noise      float64
	PSFPx      float64
	Seed       int64
}

// Grey levels of the board's squares.
const (
	Dark  = 30
	Light = 220
)

// triangle is the integral of the square wave (-1)^floor(t) from 0 to u.
func triangle(u float64) float64 { return 1 - math.Abs(math.Mod(u, 2)-1) }

// boxAxis returns, for a pixel of width w board units centred at board
// coordinate u, the box-filtered indicator of [0, n] and the box-filtered
// square wave inside it.
func boxAxis(u, w, n float64) (in, wave float64) {
	a, b := math.Max(u-w/2, 0), math.Min(u+w/2, n)
	if b <= a {
		return 0, 0
	}
	return (b - a) / w, (triangle(b) - triangle(a)) / w
}

// Corner returns the undistorted position of inner corner k (row by row).
func (b Board) Corner(k int) (xPx, yPx float64) {
	return b.X0 + float64(k%b.Cols)*b.SquarePx, b.Y0 + float64(k/b.Cols)*b.SquarePx
}

// Render draws the board as an 8-bit grey Mat; the caller closes it.
func (b Board) Render() (gocv.Mat, error) {
	r := rand.New(rand.NewSource(b.Seed))
	pix := make([]byte, b.W*b.H)
	wb := 1 / b.SquarePx
	for y := 0; y < b.H; y++ {
		for x := 0; x < b.W; x++ {
			ux, uy := float64(x), float64(y)
			if b.Undistort != nil {
				ux, uy = b.Undistort(ux, uy)
			}
			inU, fu := boxAxis((ux-b.X0)/b.SquarePx+1, wb, float64(b.Cols+1))
			inV, fv := boxAxis((uy-b.Y0)/b.SquarePx+1, wb, float64(b.Rows+1))
			dark := (inU*inV + fu*fv) / 2
			v := Light + (Dark-Light)*dark + b.Noise*r.NormFloat64()
			pix[y*b.W+x] = uint8(math.Max(0, math.Min(255, math.Round(v))))
		}
	}
	m, err := gocv.NewMatFromBytes(b.H, b.W, gocv.MatTypeCV8U, pix)
	if err != nil {
		return m, err
	}
	if b.PSFPx > 0 {
		gocv.GaussianBlur(m, &m, image.Pt(0, 0), b.PSFPx, b.PSFPx, gocv.BorderReplicate)
	}
	return m, nil
}
