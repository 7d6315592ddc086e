package report

import (
	"bytes"
	"encoding/base64"
	"fmt"
	"html/template"
	"os"
	"path/filepath"
	"runtime"
	"sync"

	"gaptrace/calib/atomicfile"
	"gaptrace/profile/report/figure"
)

// FileName is the name of the report page in the output folder.
const FileName = "report.html"

// Figure file stems; each is written as stem.png, stem.svg and stem.pdf,
// with its plotted data in stem.csv.
const (
	profileStem   = "figure_profile_" // + shear phase number
	spaceTimeStem = "figure_space_time"
	rateMapStem   = "figure_rate_map"
	slipStem      = "figure_slip"
	startUpStem   = "figure_startup_" // + shear phase number
	afterStopStem = "figure_after_stop"
	frameStem     = "figure_frame"
	detectionStem = "figure_detection"
)

// shownFigure is a rendered figure with its place in the report.
type shownFigure struct {
	Stem    string
	Title   string
	Caption string
	Wide    bool // across both columns
	fig     *figure.Figure
}

// DataURI is the PNG as a data: URI for the page.
func (f shownFigure) DataURI() template.URL {
	// A data URI of our own PNG bytes: safe by construction.
	return template.URL("data:image/png;base64," + base64.StdEncoding.EncodeToString(f.fig.PNG))
}

// Write renders the figures of d and the report page into dir, which must
// exist: each figure as PNG, SVG and PDF with its data as CSV, then
// report.html with the figures embedded. Every file is written under a temporary name and renamed when
// complete. It returns the names of the files written, relative to dir,
// report.html last.
//
// A figure whose data is missing, or cannot be drawn (the reason goes to
// the report's warnings), is left out; Write fails only for want of a
// summary, a folder, or a file it cannot write.
func Write(dir string, d *Data) ([]string, error) {
	if err := d.check(); err != nil {
		return nil, err
	}
	if st, err := os.Stat(dir); err != nil {
		return nil, fmt.Errorf("report: output folder: %w", err)
	} else if !st.IsDir() {
		return nil, fmt.Errorf("report: output %q is not a folder", dir)
	}
	figs, notShown, failed := renderFigures(d)
	var names []string
	for _, f := range figs {
		for _, part := range []struct {
			ext string
			b   []byte
		}{{".png", f.fig.PNG}, {".svg", f.fig.SVG}, {".pdf", f.fig.PDF}, {".csv", f.fig.CSV}} {
			name := f.Stem + part.ext
			if err := atomicfile.WriteBytes(filepath.Join(dir, name), part.b); err != nil {
				return names, fmt.Errorf("report: %w", err)
			}
			names = append(names, name)
		}
	}
	page, err := renderPage(d, figs, notShown, failed)
	if err != nil {
		return names, err
	}
	if err := atomicfile.WriteBytes(filepath.Join(dir, FileName), page); err != nil {
		return names, fmt.Errorf("report: %w", err)
	}
	return append(names, FileName), nil
}

// renderFigures draws every figure d has data for, in report order, and
// lists the figures left out for want of data and those whose data could
// not be drawn, with the reason.
func renderFigures(d *Data) (figs []shownFigure, notShown, failed []string) {
	s := d.Summary
	// The figures are queued here and drawn side by side below.
	var draws []func() (*figure.Figure, error)
	add := func(stem, title, caption string, wide bool, draw func() (*figure.Figure, error)) {
		figs = append(figs, shownFigure{Stem: stem, Title: title, Caption: caption, Wide: wide})
		draws = append(draws, draw)
	}
	for i := range s.ShearPhases {
		title := fmt.Sprintf("Velocity profile, shear phase %d", i+1)
		if i >= len(d.Profiles) || d.Profiles[i] == nil {
			notShown = append(notShown, title)
			continue
		}
		sp, pp := &s.ShearPhases[i], d.Profiles[i]
		caption := fmt.Sprintf("Steady velocity across the gap in shear phase %d, averaged over %s: velocity v over the "+
			"wall speed V = %s against %s over the gap H = %s. Points: mean "+
			"of each gap layer, bars one standard uncertainty; dashed line: the fitted profile (slip at each wall plus a "+
			"uniform rate in each band); dotted line: the profile without slip; heavy sides of the frame: the walls (%s).",
			i+1, formatSpan(sp.WindowS[0], sp.WindowS[1]), formatValue(pp.WallSpeedUMPerS, unitSpeed), pp.Axis.Words(),
			formatValue(pp.GapUM, unitLen), wallSides(pp.Axis))
		if len(pp.Bands) > 1 {
			caption += " Shading: the shear bands, with the local rate of each above the frame."
		}
		add(fmt.Sprintf("%s%d", profileStem, i+1), title, caption, false,
			func() (*figure.Figure, error) { return figure.ProfilePlot(pp) })
	}
	for _, su := range d.StartUps {
		caption := fmt.Sprintf("Start-up of shear phase %d in time-resolved windows of %s, against the time since the phase's start: "+
			"(a) the height of the boundary between the two bands (none while the profile has one band), (b) the shear rate "+
			"of the band by the stationary wall and of the band by the moving wall (the one rate while there is one band) "+
			"and the nominal rate (dotted). Bars: one standard uncertainty.", su.Phase, formatTime(su.WindowS))
		if known(su.OnsetS) {
			caption += fmt.Sprintf(" Dashed line and grey band: the onset of inhomogeneity, %s after the start, and its standard uncertainty.",
				formatPM(su.OnsetS, su.OnsetErrS, "s"))
		}
		if known(su.StressPeakS) {
			caption += " Dotted line: the stress maximum in the rheometer's log."
		}
		add(fmt.Sprintf("%s%d", startUpStem, su.Phase), fmt.Sprintf("Start-up, shear phase %d", su.Phase), caption, false,
			func() (*figure.Figure, error) { return figure.StartUpPlot(su) })
	}
	type optional struct {
		have        bool
		stem, title string
		caption     func() string
		wide        bool
		draw        func() (*figure.Figure, error)
	}
	for _, o := range []optional{
		{d.Slip != nil && len(d.Slip.Points) > 0, slipStem, "Wall slip and bulk rate", func() string {
			return "(a) Slip velocity at the stationary wall (fluid speed there) and at the moving wall (wall speed " +
				"minus fluid speed there) in each time window, bars one standard uncertainty. (b) Shear rate of the bulk " +
				"and the nominal rate of the imposed motion. Dashed lines: changes of the imposed motion."
		}, false, func() (*figure.Figure, error) { return figure.SlipPlot(d.Slip) }},
		{d.AfterStop != nil && len(d.AfterStop.Profiles) > 0, afterStopStem, "Displacement after the stop", func() string {
			c := "Displacement along the flow since cessation against " + d.AfterStop.Axis.Words() + ", at several times after " +
				"the stop (legend), bars one standard uncertainty; lines: the fitted model of elastic recovery (a uniform " +
				"strain) plus a jump; grey strip: the noise floor; heavy sides of the frame: the walls (" + wallSides(d.AfterStop.Axis) + ")."
			if known(d.AfterStop.PlaneUM) {
				c += fmt.Sprintf(" Dash-dotted line: the failure plane at %s.", formatValue(d.AfterStop.PlaneUM, unitLen))
			}
			return c
		}, false, func() (*figure.Figure, error) { return figure.AfterStopPlot(d.AfterStop) }},
		{d.SpaceTime != nil, spaceTimeStem, mapTitle(d.SpaceTime, figure.LocalVelocity), func() string {
			return mapCaption(d.SpaceTime)
		}, true, func() (*figure.Figure, error) { return figure.SpaceTimePlot(d.SpaceTime) }},
		{d.RateMap != nil, rateMapStem, mapTitle(d.RateMap, figure.LocalRate), func() string {
			return mapCaption(d.RateMap)
		}, true, func() (*figure.Figure, error) { return figure.SpaceTimePlot(d.RateMap) }},
		{d.Overlay != nil, frameStem, "Frame with walls, gap axes and tracks", func() string {
			return fmt.Sprintf("The frame at %s with the walls found by the calibration, the gap axes (x along the "+
				"flow, y across the gap from the stationary wall, ticks in µm), a scale bar, and the tracks of %s drawn over it as "+
				"vector marks (dot: the latest position).", formatTime(d.OverlayFrameS), formatSpan(d.OverlayWindowS[0], d.OverlayWindowS[1]))
		}, true, func() (*figure.Figure, error) { return figure.OverlayPlot(d.Overlay) }},
		{d.Detection != nil, detectionStem, "Detection diagnostics", func() string {
			of := fmt.Sprintf("the %d detections", len(d.Detection.SNR))
			if st := d.Detection.Stride; st > 1 {
				of = fmt.Sprintf("the detections, from every %d-th of them (%d)", st, len(d.Detection.SNR))
			}
			return fmt.Sprintf("(a) Signal-to-noise ratio of %s (dashed: the acceptance threshold). "+
				"(b) The fractional part of the tracer centres in x and y, share of detections per bin; a flat "+
				"histogram (dotted) means no pull towards whole pixels (pixel locking).", of)
		}, true, func() (*figure.Figure, error) { return figure.DetectionPlot(d.Detection) }},
	} {
		if !o.have {
			notShown = append(notShown, o.title)
			continue
		}
		add(o.stem, o.title, o.caption(), o.wide, o.draw)
	}
	errs := make([]error, len(figs))
	var wg sync.WaitGroup
	sem := make(chan struct{}, runtime.GOMAXPROCS(0))
	for i := range figs {
		wg.Go(func() {
			sem <- struct{}{}
			defer func() { <-sem }()
			// A panic while drawing one figure costs that figure only.
			defer func() {
				if r := recover(); r != nil {
					figs[i].fig, errs[i] = nil, fmt.Errorf("drawing failed: %v", r)
				}
			}()
			figs[i].fig, errs[i] = draws[i]()
		})
	}
	wg.Wait()
	drawn := figs[:0]
	for i, err := range errs {
		if err != nil {
			failed = append(failed, fmt.Sprintf("%s: %v", figs[i].Title, err))
			continue
		}
		drawn = append(drawn, figs[i])
	}
	return drawn, notShown, failed
}

// wallSides says which wall is at which side of a gap axis.
func wallSides(a figure.GapAxis) string {
	switch {
	case a.Radial && a.InnerMoving:
		return "the rotating inner cylinder at 0, the stationary outer one at the gap"
	case a.Radial:
		return "the stationary inner cylinder at 0, the rotating outer one at the gap"
	}
	return "the stationary wall at 0, the moving wall at the gap"
}

// mapCaption is the caption of a space-time map.
func mapCaption(m *figure.SpaceTime) string {
	return fmt.Sprintf("The %s across the gap through the whole run, against time and %s; "+
		"each cell is one time window and gap layer; white cells had too few tracers for a value. Heavy edges of the "+
		"frame: the walls (%s). Dashed lines: changes of the imposed motion.", m.Quantity.Noun(), m.Axis.Words(), wallSides(m.Axis))
}

// mapTitle is the title of a space-time map, after the quantity it shows
// (or would show: def when m is nil).
func mapTitle(m *figure.SpaceTime, def figure.Quantity) string {
	q := def
	if m != nil {
		q = m.Quantity
	}
	return "Space-time map of the " + q.Noun()
}

// failedWarnings words the figures that could not be drawn as warnings.
func failedWarnings(failed []string) []string {
	var w []string
	for _, f := range failed {
		w = append(w, "Figure not drawn, "+f)
	}
	return w
}

// renderPage renders report.html for d with the given rendered figures.
func renderPage(d *Data, figs []shownFigure, notShown, failed []string) ([]byte, error) {
	v := newView(d, figs, notShown)
	v.Failed = failed
	v.Warnings = append(append([]string{}, v.Warnings...), failedWarnings(failed)...)
	var b bytes.Buffer
	if err := pageTemplate.Execute(&b, v); err != nil {
		return nil, fmt.Errorf("report: page: %w", err)
	}
	return b.Bytes(), nil
}
