package pipeline

import (
	"fmt"
	"math"
	"slices"

	"gocv.io/x/gocv"

	"gaptrace/profile/report"
	"gaptrace/profile/report/figure"
	"gaptrace/profile/summary"
	"gaptrace/track/frames"
	"gaptrace/track/tracks"
)

// overlayTrackWindowS is how long a stretch of the tracks the frame overlay
// draws: long enough to show the flow's direction and shape, short enough
// that the paths stay apart.
const overlayTrackWindowS = 0.25

// Report returns the data of the report of a: the figures' series, the
// detection diagnostics and, when the recording can be read, a frame with
// the walls and a stretch of the tracks drawn on it. experimentYAML is the
// experiment file as written, shown verbatim. The caller calls Close on the
// returned data's Overlay frame when done (report.Data.Close).
func (a *Analysis) Report(cfg Config, experimentYAML string) *report.Data {
	s, t := a.Summary, a.Tracked
	d := report.FromAnalysis(s, cfg.Experiment, a.Profile)
	d.ExperimentYAML = experimentYAML
	if dg := t.Diagnostics; len(dg.SNR) > 0 {
		d.Detection = &figure.Detection{SNR: dg.SNR, FracXPx: dg.FracX, FracYPx: dg.FracY, SNRThreshold: dg.MinSNR, Stride: dg.Stride}
	}
	t0, t1 := overlayWindow(s)
	frame, err := readFrame8(cfg, t.Info, (t0+t1)/2)
	if err != nil {
		s.Warnings = append(s.Warnings, fmt.Sprintf("no overlay figure: %v", err))
		return d
	}
	paths, err := trackPaths(t.Tracks, t0, t1)
	if err != nil {
		frame.Close()
		s.Warnings = append(s.Warnings, fmt.Sprintf("no overlay figure: %v", err))
		return d
	}
	d.Overlay = &figure.Overlay{Frame: frame, Calibration: t.Calibration, Tracks: paths}
	d.OverlayFrameS, d.OverlayWindowS = (t0+t1)/2, [2]float64{t0, t1}
	return d
}

// overlayWindow picks the time window whose tracks the overlay draws: the
// middle of the steady window of the first shear phase, else the start.
func overlayWindow(s *summary.Summary) (t0S, t1S float64) {
	if len(s.ShearPhases) > 0 {
		w := s.ShearPhases[0].WindowS
		mid := (w[0] + w[1]) / 2
		return mid - overlayTrackWindowS/2, mid + overlayTrackWindowS/2
	}
	return 0, overlayTrackWindowS
}

// readFrame8 reads the frame of cfg.Input nearest tS as an 8-bit grey Mat.
func readFrame8(cfg Config, info frames.Info, tS float64) (gocv.Mat, error) {
	if cfg.Input == "" {
		return gocv.Mat{}, fmt.Errorf("no recording")
	}
	f := int(math.Round(tS * info.FPS))
	if info.Frames > 0 {
		f = min(max(f, 0), info.Frames-1)
	}
	if cfg.Experiment.Camera.Fields != "" {
		f /= 2 // the frame the field is of
	}
	src, err := frames.Open(cfg.Input, cfg.Experiment.Camera.FPS, frames.Range{First: f, Last: f, Step: 1})
	if err != nil {
		return gocv.Mat{}, err
	}
	defer src.Close()
	m := gocv.NewMat()
	if _, err := src.Next(&m); err != nil {
		m.Close()
		return gocv.Mat{}, fmt.Errorf("reading frame %d: %w", f, err)
	}
	if m.Type() == gocv.MatTypeCV8UC1 {
		return m, nil
	}
	m8 := gocv.NewMat()
	// 16-bit frames: keep the top byte.
	m.ConvertToWithParams(&m8, gocv.MatTypeCV8UC1, 1.0/256, 0)
	m.Close()
	return m8, nil
}

// trackPaths returns the tracks of [t0S, t1S] as polylines in px, in
// the order of src.
func trackPaths(src tracks.Source, t0S, t1S float64) ([][]figure.PointPx, error) {
	type path struct {
		id   int
		line []figure.PointPx
	}
	var ps []path
	err := src.Each(func(tr []tracks.Point) error {
		if tr[0].Track == tracks.Unlinked {
			return nil
		}
		var line []figure.PointPx
		for _, p := range tr {
			if p.TS >= t0S && p.TS <= t1S {
				line = append(line, figure.PointPx{XPx: p.XPx, YPx: p.YPx})
			}
		}
		if len(line) >= 2 {
			ps = append(ps, path{tr[0].Track, line})
		}
		return nil
	})
	// In track id order, as drawn before the tracks were spooled.
	slices.SortFunc(ps, func(a, b path) int { return a.id - b.id })
	out := make([][]figure.PointPx, len(ps))
	for i, p := range ps {
		out[i] = p.line
	}
	return out, err
}
