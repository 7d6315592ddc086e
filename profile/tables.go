package profile

import (
	"bytes"
	"encoding/csv"
	"math"
	"strconv"

	"gaptrace/profile/phases"
	"gaptrace/profile/summary"
	"gaptrace/track/tracks"
)

// ProfilesHeader is the column list of profiles.csv.
var ProfilesHeader = []string{"window", "t_start_s", "t_end_s", "y_um", "v_um_per_s", "v_err_um_per_s", "n"}

// AfterStopHeader is the column list of after_stop.csv.
var AfterStopHeader = []string{"t_after_stop_s", "y_um", "dx_um", "dx_err_um", "n"}

// num formats v for a table; an unknown value is an empty field.
func num(v float64, prec int) string {
	if math.IsNaN(v) || math.IsInf(v, 0) {
		return ""
	}
	return strconv.FormatFloat(v, 'f', prec, 64)
}

// layerY is where a layer's row is placed: the mean height of its samples,
// or the layer's centre when it has none.
func layerY(y, from, to float64) float64 {
	if math.IsNaN(y) {
		return (from + to) / 2
	}
	return y
}

// ProfilesCSV returns profiles.csv: one row per window and layer, with
// empty value and error fields for layers with too few samples.
func (r *Result) ProfilesCSV() []byte {
	var b bytes.Buffer
	w := csv.NewWriter(&b)
	w.Write(ProfilesHeader)
	for _, p := range r.Profiles {
		for _, l := range p.Bins {
			w.Write([]string{p.Name, num(p.T0S, 6), num(p.T1S, 6), num(layerY(l.YUM, l.FromUM, l.ToUM), 3),
				num(l.Value, 4), num(l.Err, 4), strconv.Itoa(l.N)})
		}
	}
	w.Flush()
	return b.Bytes()
}

// AfterStopCSV returns after_stop.csv: one row per log-spaced time after
// the stop and layer (only the header when there is no after-stop
// analysis).
func (r *Result) AfterStopCSV() []byte {
	var b bytes.Buffer
	w := csv.NewWriter(&b)
	w.Write(AfterStopHeader)
	if r.Cessation != nil {
		for _, p := range r.Cessation.Profiles {
			for _, l := range p.Bins {
				w.Write([]string{num(p.TAfterS, 6), num(layerY(l.YUM, l.FromUM, l.ToUM), 3),
					num(l.Value, 4), num(l.Err, 4), strconv.Itoa(l.N)})
			}
		}
	}
	w.Flush()
	return b.Bytes()
}

// Fill writes the result into s: phases, shear phases, after stop and
// warnings (appended).
func (r *Result) Fill(s *summary.Summary) {
	s.Phases = r.Phases
	if s.Phases == nil {
		s.Phases = []phases.Phase{}
	}
	s.ShearPhases = r.ShearPhases
	s.AfterStop = r.AfterStop
	s.SlipLaw = r.SlipLaw
	s.Warnings = append(s.Warnings, r.Warnings...)
}

// TrackingCounts returns the summary's tracking counts for pts: linked
// detections, tracks and the median number of frames per track.
func TrackingCounts(pts []tracks.Point) summary.Tracking {
	n, tr, med := tracks.Count(pts)
	return summary.Tracking{Detections: n, Tracks: tr, MedianTrackFrames: med}
}
