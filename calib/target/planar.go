package target

import (
	"math"

	"gonum.org/v1/gonum/mat"
)

// Planar refinement of the lens: the target lies in the observed plane, so
// after undistortion its corners must form a square grid, a similarity
// transform of the board. Fitting that model directly (Levenberg-Marquardt
// on scale, rotation, shift and k1 with the focal length and principal
// point held) removes the trade-off between board tilt and radial
// distortion that a single view leaves in a general camera fit.
const (
	lmIter      = 100
	lmTolPx     = 1e-9 // stop when the RMS improves by less than this
	lmJacStep   = 1e-7 // relative step of the numeric Jacobian
	lmLambda0   = 1e-3
	lmLambdaUp  = 10
	lmLambdaDn  = 0.3
	nPlanarPars = 5 // a, b (scale x rotation), tx, ty, k1
)

// planarModel predicts distorted corner positions from the parameters.
func planarModel(p []float64, l Lens, cols, n int, out []float64) {
	l.K = [5]float64{p[4], 0, 0, 0, 0}
	for k := 0; k < n; k++ {
		i, j := float64(k%cols), float64(k/cols)
		x := p[2] + p[0]*i - p[1]*j
		y := p[3] + p[1]*i + p[0]*j
		out[2*k], out[2*k+1] = l.Distort(x, y)
	}
}

// refinePlanar fits the planar model to the corners, starting from lens l
// (whose Fx, Fy, Cx, Cy are kept), and returns the lens, the square size in
// px and the RMS residual in px.
func refinePlanar(corners [][2]float64, cols int, l Lens) (Lens, float64, float64) {
	n := len(corners)
	obs := make([]float64, 2*n)
	und := make([][2]float64, n)
	for k, c := range corners {
		obs[2*k], obs[2*k+1] = c[0], c[1]
		x, y := l.Undistort(c[0], c[1])
		und[k] = [2]float64{x, y}
	}
	a, b, tx, ty := similarity(und, cols)
	p := []float64{a, b, tx, ty, l.K[0]}
	pred := make([]float64, 2*n)
	cost := func(p []float64) float64 {
		planarModel(p, l, cols, n, pred)
		var s float64
		for i := range obs {
			d := pred[i] - obs[i]
			s += d * d
		}
		return s
	}
	cur := cost(p)
	lambda := lmLambda0
	jac := mat.NewDense(2*n, nPlanarPars, nil)
	res := mat.NewVecDense(2*n, nil)
	base := make([]float64, 2*n)
	pert := make([]float64, 2*n)
	trial := make([]float64, nPlanarPars)
	for it := 0; it < lmIter; it++ {
		planarModel(p, l, cols, n, base)
		for i := range obs {
			res.SetVec(i, obs[i]-base[i])
		}
		for j := range p {
			h := lmJacStep * math.Max(math.Abs(p[j]), 1)
			copy(trial, p)
			trial[j] += h
			planarModel(trial, l, cols, n, pert)
			for i := range obs {
				jac.Set(i, j, (pert[i]-base[i])/h)
			}
		}
		var jtj mat.Dense
		jtj.Mul(jac.T(), jac)
		var jtr mat.VecDense
		jtr.MulVec(jac.T(), res)
		improved := false
		for try := 0; try < 10; try++ {
			var aug mat.Dense
			aug.CloneFrom(&jtj)
			for d := 0; d < nPlanarPars; d++ {
				aug.Set(d, d, jtj.At(d, d)*(1+lambda))
			}
			var step mat.VecDense
			if err := step.SolveVec(&aug, &jtr); err != nil {
				lambda *= lmLambdaUp
				continue
			}
			for j := range p {
				trial[j] = p[j] + step.AtVec(j)
			}
			if c := cost(trial); c < cur {
				gain := math.Sqrt(cur/float64(n)) - math.Sqrt(c/float64(n))
				copy(p, trial)
				cur = c
				lambda *= lmLambdaDn
				improved = gain > lmTolPx
				break
			}
			lambda *= lmLambdaUp
		}
		if !improved {
			break
		}
	}
	l.K = [5]float64{p[4], 0, 0, 0, 0}
	return l, math.Hypot(p[0], p[1]), math.Sqrt(cur / float64(n))
}

// similarity fits p = t + (a -b; b a) q to the corner positions p of the
// board grid q (unit squares, cols per row) by least squares.
func similarity(p [][2]float64, cols int) (a, b, tx, ty float64) {
	n := float64(len(p))
	var mqx, mqy, mpx, mpy float64
	for k, v := range p {
		mqx += float64(k % cols)
		mqy += float64(k / cols)
		mpx += v[0]
		mpy += v[1]
	}
	mqx, mqy, mpx, mpy = mqx/n, mqy/n, mpx/n, mpy/n
	var re, im, qq float64
	for k, v := range p {
		qx, qy := float64(k%cols)-mqx, float64(k/cols)-mqy
		px, py := v[0]-mpx, v[1]-mpy
		re += qx*px + qy*py
		im += qx*py - qy*px
		qq += qx*qx + qy*qy
	}
	a, b = re/qq, im/qq
	return a, b, mpx - a*mqx + b*mqy, mpy - b*mqx - a*mqy
}

// gridResidual returns the RMS distance of p from the similarity fit.
func gridResidual(p [][2]float64, cols int) float64 {
	a, b, tx, ty := similarity(p, cols)
	var ss float64
	for k, v := range p {
		i, j := float64(k%cols), float64(k/cols)
		ex := tx + a*i - b*j - v[0]
		ey := ty + b*i + a*j - v[1]
		ss += ex*ex + ey*ey
	}
	return math.Sqrt(ss / float64(len(p)))
}
