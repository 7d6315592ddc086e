package report

import (
	"fmt"

	"gaptrace/calib/experiment"
	"gaptrace/profile/report/figure"
	"gaptrace/profile/summary"
)

// Data is everything a report shows: the run's summary and the data of its
// figures, in physical units. Only Summary is required; a figure whose data
// is nil (or empty) is left out and the report says so.
type Data struct {
	// Summary is the run's summary.json.
	Summary *summary.Summary
	// Experiment is the experiment file, for its geometry and motion
	// program (optional).
	Experiment *experiment.Experiment
	// ExperimentName is the experiment's name (when empty: Experiment.Name,
	// then Summary.Experiment).
	ExperimentName string
	// ExperimentYAML is the experiment file as written, shown verbatim.
	ExperimentYAML string
	// Profiles holds the steady velocity profile of each shear phase, in
	// the order of Summary.ShearPhases; a nil entry has no figure.
	Profiles []*figure.PhaseProfile
	// SpaceTime is the map of the local velocity over the whole run, and
	// RateMap that of the local shear rate (either may be nil; each
	// figure shows the quantity its Quantity names).
	SpaceTime, RateMap *figure.SpaceTime
	// Slip is the slip at each wall and the bulk rate against time.
	Slip *figure.SlipSeries
	// StartUps holds the band boundary and rates through each shear phase
	// with time-resolved windows (--every), in phase order.
	StartUps []*figure.StartUp
	// AfterStop is the displacement since cessation at several times.
	AfterStop *figure.AfterStop
	// Overlay is a frame with the walls, the gap axes and the tracks of a
	// time window; the caller owns and closes its Mat.
	Overlay *figure.Overlay
	// OverlayFrameS is the time of the overlay's frame and OverlayWindowS
	// the time window of its tracks, s, for the caption.
	OverlayFrameS  float64
	OverlayWindowS [2]float64
	// Detection holds the detection diagnostics.
	Detection *figure.Detection
	// Cautions are run-specific limits of the measurement, added to the
	// report's general cautions.
	Cautions []string
	// Record is the lab record: the input's digest, the command line, when
	// (optional).
	Record *Record
}

// check reports the first thing that makes d impossible to report.
func (d *Data) check() error {
	switch {
	case d == nil:
		return fmt.Errorf("report: no data")
	case d.Summary == nil:
		return fmt.Errorf("report: no summary")
	case len(d.Profiles) > len(d.Summary.ShearPhases):
		return fmt.Errorf("report: %d velocity profiles for %d shear phases", len(d.Profiles), len(d.Summary.ShearPhases))
	}
	return nil
}

// name is the experiment's name for the title.
func (d *Data) name() string {
	switch {
	case d.ExperimentName != "":
		return d.ExperimentName
	case d.Experiment != nil && d.Experiment.Name != "":
		return d.Experiment.Name
	case d.Summary.Experiment != "":
		return d.Summary.Experiment
	}
	return "unnamed experiment"
}

// Close releases the overlay's frame, if any.
func (d *Data) Close() {
	if d != nil && d.Overlay != nil {
		d.Overlay.Frame.Close()
	}
}
