package figure

import (
	"fmt"
	"image/color"
	"math"

	"gonum.org/v1/plot/plotter"
	"gonum.org/v1/plot/vg"
)

// Detection holds per-detection values for the detection diagnostics.
type Detection struct {
	// SNR is each detection's signal-to-noise ratio (peak over background
	// noise, dimensionless).
	SNR []float64
	// SNRThreshold is the detector's acceptance threshold (0: not drawn).
	SNRThreshold float64
	// FracXPx and FracYPx are the fractional parts of the sub-pixel centres,
	// x - floor(x), in [0, 1) px. A flat histogram shows no pixel locking.
	FracXPx, FracYPx []float64
	// Stride, when above 1, says that the values are a systematic sample
	// of the detections, every Stride-th: the histogram of the SNR counts
	// each value Stride times.
	Stride int
}

// Histogram bins of the diagnostics.
const (
	snrBins  = 40
	fracBins = 20
)

// Check reports the first value that makes d impossible to draw.
func (d *Detection) Check() error {
	if len(d.SNR) == 0 {
		return fmt.Errorf("figure: detection diagnostics have no SNR values")
	}
	if len(d.FracXPx) == 0 && len(d.FracYPx) == 0 {
		return fmt.Errorf("figure: detection diagnostics have no fractional positions")
	}
	for i, v := range d.SNR {
		if !finite(v) {
			return fmt.Errorf("figure: detection %d has SNR %g", i, v)
		}
	}
	for _, fs := range [][]float64{d.FracXPx, d.FracYPx} {
		for i, f := range fs {
			if !(f >= 0 && f < 1) {
				return fmt.Errorf("figure: fractional position %d is %g px, must be in [0, 1)", i, f)
			}
		}
	}
	return nil
}

// DetectionPlot draws the SNR histogram (panel a) and the histograms of
// the fractional pixel positions in x and y (panel b), across both
// columns.
func DetectionPlot(d *Detection) (*Figure, error) {
	if err := d.Check(); err != nil {
		return nil, err
	}
	st := House
	tab := NewTable("series", "bin_from", "bin_to", "count", "fraction")
	left := &Panel{Plot: NewPlot("signal-to-noise ratio", "detections")}
	h, err := plotter.NewHist(plotter.Values(d.SNR), snrBins)
	if err != nil {
		return nil, err
	}
	h.FillColor, h.LineStyle.Color, h.LineStyle.Width = SkyBlue, Blue, vg.Points(st.TickLinePt)
	if d.Stride > 1 {
		for i := range h.Bins {
			h.Bins[i].Weight *= float64(d.Stride)
		}
	}
	left.Plot.Add(h)
	ymax := 0.0
	for _, b := range h.Bins {
		ymax = math.Max(ymax, b.Weight)
		tab.Row("snr", b.Min, b.Max, b.Weight, b.Weight/float64(len(d.SNR)*max(d.Stride, 1)))
	}
	left.Plot.X.Min, left.Plot.X.Max = h.Bins[0].Min, h.Bins[len(h.Bins)-1].Max
	left.AddLegend("detections", swatch{fill: SkyBlue})
	if d.SNRThreshold > 0 {
		thr := lineStyle(Vermillion, st.DataLinePt, st.Dashes[dashed])
		if err := vLine(left, d.SNRThreshold, 0, ymax, thr); err != nil {
			return nil, err
		}
		left.AddLegend("threshold", lineSymbol{thr})
		tab.Row("threshold", d.SNRThreshold, d.SNRThreshold)
		// The threshold stays clear of the frame.
		lo, hi := math.Min(left.Plot.X.Min, d.SNRThreshold), left.Plot.X.Max
		left.Plot.X.Min = lo - dataMargin*(hi-lo)
	}
	left.Plot.Y.Min, left.Plot.Y.Max = 0, ymax*(1+dataMargin)

	right := &Panel{Plot: NewPlot("fractional position (px)", "fraction of detections per bin")}
	right.Plot.X.Min, right.Plot.X.Max = 0, 1
	type series struct {
		v    []float64
		name string
		c    color.RGBA
		d    []vg.Length
	}
	peak := 0.0
	for _, s := range []series{{d.FracXPx, "x", Blue, nil}, {d.FracYPx, "y", Vermillion, st.Dashes[dashed]}} {
		if len(s.v) == 0 {
			continue
		}
		counts := make([]float64, fracBins)
		for _, f := range s.v {
			counts[min(int(f*fracBins), fracBins-1)]++
		}
		// A step outline, so two histograms stay readable on top of each other.
		var pts plotter.XYs
		for i, c := range counts {
			y := c / float64(len(s.v))
			peak = math.Max(peak, y)
			x0, x1 := float64(i)/fracBins, float64(i+1)/fracBins
			pts = append(pts, plotter.XY{X: x0, Y: y}, plotter.XY{X: x1, Y: y})
			tab.Row("frac_"+s.name, x0, x1, c, y)
		}
		if err := addLine(right, pts, lineStyle(s.c, st.DataLinePt, s.d), s.name); err != nil {
			return nil, err
		}
	}
	flat := 1.0 / fracBins
	if err := addLine(right, plotter.XYs{{X: 0, Y: flat}, {X: 1, Y: flat}}, lineStyle(st.Ink, st.RefLinePt, st.Dashes[dotted]), "uniform"); err != nil {
		return nil, err
	}
	right.Plot.Y.Min, right.Plot.Y.Max = 0, math.Max(peak, flat)*(1+dataMargin)
	f, err := Compose(DoubleColumnCM, detectionHeightCM, [][]*Panel{{left, right}})
	if err != nil {
		return nil, err
	}
	f.CSV = tab.CSV()
	return f, nil
}
