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
		d.Detection = &figure.Detection{SNR: dg.SNR, FracXPx: dg.FracX, FracYPx: dg.FracY, SNRThreshold: dg.MinSNR}
	}
	t0, t1 := overlayWindow(s)
	frame, err := readFrame8(cfg, t.Info, (t0+t1)/2)
	if err != nil {
		s.Warnings = append(s.Warnings, fmt.Sprintf("no overlay figure: %v", err))
		return d
	}
	d.Overlay = &figure.Overlay{Frame: frame, Calibration: t.Calibration, Tracks: trackPaths(t.Points, t0, t1)}
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

// trackPaths returns the tracks of [t0S, t1S] as polylines in px.
func trackPaths(pts []tracks.Point, t0S, t1S float64) [][]figure.PointPx {
	by := map[int][]tracks.Point{}
	for _, p := range pts {
		if p.Track != tracks.Unlinked && p.TS >= t0S && p.TS <= t1S {
			by[p.Track] = append(by[p.Track], p)
		}
	}
	ids := make([]int, 0, len(by))
	for id := range by {
		ids = append(ids, id)
	}
	slices.Sort(ids)
	var out [][]figure.PointPx
	for _, id := range ids {
		tr := by[id]
		if len(tr) < 2 {
			continue
		}
		slices.SortFunc(tr, func(a, b tracks.Point) int { return a.Frame - b.Frame })
		line := make([]figure.PointPx, len(tr))
		for i, p := range tr {
			line[i] = figure.PointPx{XPx: p.XPx, YPx: p.YPx}
		}
		out = append(out, line)
	}
	return out
}
