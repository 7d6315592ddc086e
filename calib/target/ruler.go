package target

import (
	"fmt"
	"math"

	"gocv.io/x/gocv"

	"gaptrace/calib/robust"
)

// Ruler is the result of a ruler calibration.
type Ruler struct {
	UMPerPx float64
	// PitchPx is the line pitch in pixels.
	PitchPx float64
	// Along is "x" when the ruler's lines cross the image's x axis (the
	// lines are vertical), "y" when they cross the y axis.
	Along string
	// Periods is the number of line periods the measurement spans.
	Periods float64
	// Contrast is the spectral peak's height over the median of the
	// spectrum: how clearly periodic the profile was.
	Contrast float64
}

// Ruler search limits.
const (
	minPitchPx = 3 // finer lines are not resolved as a periodic profile
	// minPeriods: fewer than this many periods in the image make the
	// pitch too uncertain to be a scale.
	minPeriods = 5
	// minRulerContrast: a periodic profile's spectral peak stands far
	// above the spectrum's median; noise alone gives a few times.
	minRulerContrast = 20
	pitchGoldenIter  = 60
)

// MeasureRuler finds the line pitch of a ruler in img (grey or colour, 8
// or 16 bit) with lines pitchUM apart, crossing either image axis. The
// image is averaged along the lines into a profile; the strongest peak of
// the profile's Hann-windowed power spectrum gives the pitch to one
// frequency bin and a golden-section search of the continuous spectrum
// refines it to a small fraction of a pixel.
func MeasureRuler(img gocv.Mat, pitchUM float64) (*Ruler, error) {
	if !(pitchUM > 0) {
		return nil, fmt.Errorf("ruler: line pitch must be positive, got %g um", pitchUM)
	}
	g, err := grey8(img)
	if err != nil {
		return nil, fmt.Errorf("ruler: %w", err)
	}
	defer g.Close()
	f := gocv.NewMat()
	defer f.Close()
	g.ConvertTo(&f, gocv.MatTypeCV32F)
	pix, err := f.DataPtrFloat32()
	if err != nil {
		return nil, fmt.Errorf("ruler: %w", err)
	}
	w, h := f.Cols(), f.Rows()
	colProf := make([]float64, w)
	rowProf := make([]float64, h)
	for y := 0; y < h; y++ {
		for x, v := range pix[y*w : (y+1)*w] {
			colProf[x] += float64(v)
			rowProf[y] += float64(v)
		}
	}
	var best *Ruler
	for _, c := range []struct {
		along string
		prof  []float64
	}{{"x", colProf}, {"y", rowProf}} {
		p, contrast, ok := profilePitch(c.prof)
		if !ok {
			continue
		}
		if best == nil || contrast > best.Contrast {
			best = &Ruler{PitchPx: p, Along: c.along, Contrast: contrast, Periods: float64(len(c.prof)) / p}
		}
	}
	if best == nil || best.Contrast < minRulerContrast {
		seen := 0.0
		if best != nil {
			seen = best.Contrast
		}
		return nil, fmt.Errorf("ruler not found: no periodic line profile in the %dx%d target image (spectral peak %.1f x the median, need %d)", w, h, seen, minRulerContrast)
	}
	best.UMPerPx = pitchUM / best.PitchPx
	return best, nil
}

// profilePitch returns the period in samples of the strongest periodic
// component of prof, and its spectral contrast.
func profilePitch(prof []float64) (float64, float64, bool) {
	n := len(prof)
	if n < minPeriods*minPitchPx {
		return 0, 0, false
	}
	var mean float64
	for _, v := range prof {
		mean += v
	}
	mean /= float64(n)
	z := make([]float64, n)
	for i, v := range prof {
		hann := 0.5 - 0.5*math.Cos(2*math.Pi*float64(i)/float64(n-1))
		z[i] = (v - mean) * hann
	}
	power := func(freq float64) float64 { // freq in cycles per sample
		var re, im float64
		for i, v := range z {
			s, c := math.Sincos(2 * math.Pi * freq * float64(i))
			re += v * c
			im -= v * s
		}
		return re*re + im*im
	}
	// Bins k = n/period for periods from n/minPeriods down to minPitchPx.
	kLo, kHi := minPeriods, n/minPitchPx
	spec := make([]float64, 0, kHi-kLo+1)
	bestK, bestP := 0, 0.0
	for k := kLo; k <= kHi; k++ {
		p := power(float64(k) / float64(n))
		spec = append(spec, p)
		if p > bestP {
			bestK, bestP = k, p
		}
	}
	if bestP == 0 {
		return 0, 0, false
	}
	med := robust.Median(spec)
	// Refine between the neighbouring bins by golden-section search.
	a, b := (float64(bestK)-1)/float64(n), (float64(bestK)+1)/float64(n)
	phi := (math.Sqrt(5) - 1) / 2
	c, d := b-phi*(b-a), a+phi*(b-a)
	pc, pd := power(c), power(d)
	for i := 0; i < pitchGoldenIter; i++ {
		if pc > pd {
			b, d, pd = d, c, pc
			c = b - phi*(b-a)
			pc = power(c)
		} else {
			a, c, pc = c, d, pd
			d = a + phi*(b-a)
			pd = power(d)
		}
	}
	freq := (a + b) / 2
	contrast := math.Inf(1)
	if med > 0 {
		contrast = math.Max(pc, pd) / med
	}
	return 1 / freq, contrast, true
}
