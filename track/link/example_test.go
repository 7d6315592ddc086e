package link_test

import (
	"fmt"

	"gaptrace/calib"
	"gaptrace/track/link"
	"gaptrace/track/tracks"
)

// Three tracers at different heights in an 800 um gap (2 um per px, the
// moving wall on top), sheared so that the top one travels 12 px per frame,
// more than half its distance to the others' paths, linked over ten frames
// with one detection missing.
func ExampleLink() {
	cal := &calib.Calibration{UMPerPx: 2, GapUM: 800, StationaryWallPx: calib.Line{{0, 450}, {639, 450}},
		MovingWallPx: calib.Line{{0, 50}, {639, 50}}, FlowSign: 1}
	type tracer struct{ x0, y, speedPx float64 }
	ts := []tracer{{100, 400, 1.5}, {110, 250, 6}, {90, 100, 10.5}, {300, 120, 10}, {320, 420, 1}}
	frames := make([][]link.Detection, 10)
	for f := range frames {
		for i, tr := range ts {
			if i == 1 && f == 4 {
				continue // a blink
			}
			frames[f] = append(frames[f], link.Detection{XPx: tr.x0 + tr.speedPx*float64(f), YPx: tr.y, Brightness: 1000, SizePx: 1.2})
		}
	}
	pts, st, err := link.Link(frames, cal, link.Options{FPS: 100, MaxStepPx: 20, SearchPx: 3, GapFrames: link.DefaultGapFrames})
	if err != nil {
		fmt.Println(err)
		return
	}
	fmt.Printf("%d tracks, %d links, %d across a gap\n", st.Tracks, st.Links, st.GapLinks)
	for _, s := range tracks.Summarize(pts) {
		fmt.Printf("track %d: frames %d-%d, %d points, y %.0f um, v %.0f um/s\n", s.Track, s.FirstFrame, s.LastFrame, s.Points, s.MeanYUM, s.VXUMPerS)
	}
	// Output:
	// 5 tracks, 43 links, 1 across a gap
	// track 0: frames 0-9, 10 points, y 100 um, v 300 um/s
	// track 1: frames 0-9, 9 points, y 400 um, v 1200 um/s
	// track 2: frames 0-9, 10 points, y 700 um, v 2100 um/s
	// track 3: frames 0-9, 10 points, y 660 um, v 2000 um/s
	// track 4: frames 0-9, 10 points, y 60 um, v 200 um/s
}
