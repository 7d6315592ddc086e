package synth

import "math"

// defaultTextureScalePx is the texture's smoothing sd when TextureScalePx
// is 0.
const defaultTextureScalePx = 2.0

// textureKernelSigmas is the half-width of the smoothing kernel in sds
// (beyond 4 sd a Gaussian holds less than 1e-4 of its weight).
const textureKernelSigmas = 4

// plateTexture holds the two plates' textures (0: stationary, 1: moving)
// on a grid of 1 px in plate coordinates: u along the walls (periodic, with
// a period longer than the image's width, so that the moving plate's
// texture flows in and out without a seam) and d beyond the wall line.
type plateTexture struct {
	nu, nd int
	v      [2][]float32 // row-major by d, unit sd
}

// newPlateTexture draws the textures from the seed: white noise smoothed
// by a Gaussian of TextureScalePx (circularly along u), scaled to unit sd.
func (s *Scenario) newPlateTexture(g frameGeom) *plateTexture {
	sig := orDefault(s.Walls.TextureScalePx, defaultTextureScalePx)
	k := int(math.Ceil(textureKernelSigmas * sig))
	// d reaches at most the image height plus the rise of a tilted wall
	// across the width.
	nd := s.HeightPx + int(math.Ceil(float64(s.WidthPx)*math.Abs(g.ey/g.ex))) + 2
	t := &plateTexture{nu: int(math.Ceil(g.periodPx)) + 2*k, nd: nd}
	kern := make([]float64, 2*k+1)
	for i := range kern {
		x := float64(i - k)
		kern[i] = math.Exp(-x * x / (2 * sig * sig))
	}
	rng := s.rng(streamTexture, 0)
	nu := t.nu
	// Raw noise padded by k rows at both ends of d.
	raw := make([]float64, nu*(nd+2*k))
	for i := range raw {
		raw[i] = rng.NormFloat64()
	}
	tmp := make([]float64, len(raw))
	for p := range t.v {
		if p == 1 {
			for i := range raw {
				raw[i] = rng.NormFloat64()
			}
		}
		// Along u, circular.
		for j := range nd + 2*k {
			row := raw[j*nu : (j+1)*nu]
			out := tmp[j*nu : (j+1)*nu]
			for i := range nu {
				acc := 0.0
				for q, w := range kern {
					acc += w * row[((i+q-k)%nu+nu)%nu]
				}
				out[i] = acc
			}
		}
		// Along d.
		v := make([]float64, nu*nd)
		for j := range nd {
			out := v[j*nu : (j+1)*nu]
			for q, w := range kern {
				in := tmp[(j+q)*nu : (j+q+1)*nu]
				for i := range out {
					out[i] += w * in[i]
				}
			}
		}
		var sum, sum2 float64
		for _, x := range v {
			sum += x
			sum2 += x * x
		}
		n := float64(len(v))
		mean := sum / n
		sd := math.Sqrt(max(sum2/n-mean*mean, 1e-300))
		t.v[p] = make([]float32, len(v))
		for i, x := range v {
			t.v[p][i] = float32((x - mean) / sd)
		}
	}
	return t
}

// at returns plate p's texture at u px along the walls (from the
// stationary wall's point under the gap centre) and d px beyond its wall
// line (clamped to the grid), interpolated bilinearly.
func (t *plateTexture) at(p int, u, d float64) float64 {
	d = clamp(d, 0, float64(t.nd-1))
	u += float64(t.nu) / 2
	u -= float64(t.nu) * math.Floor(u/float64(t.nu))
	i0, j0 := int(u), int(d)
	fu, fd := u-float64(i0), d-float64(j0)
	i1 := i0 + 1
	if i1 >= t.nu {
		i1 = 0
	}
	if i0 >= t.nu { // u rounded up to nu
		i0 = 0
	}
	j1 := min(j0+1, t.nd-1)
	v := t.v[p]
	a := float64(v[j0*t.nu+i0])*(1-fu) + float64(v[j0*t.nu+i1])*fu
	b := float64(v[j1*t.nu+i0])*(1-fu) + float64(v[j1*t.nu+i1])*fu
	return a*(1-fd) + b*fd
}
