package main

import (
	"sort"

	"gaptrace/profile/report/figure"
	"gaptrace/profile/summary"
	"gaptrace/track/tracks"
)

// overlayTrackWindowS is how long a stretch of the tracks the frame overlay
// draws: long enough to show the flow's direction and shape, short enough
// that the paths stay apart.
const overlayTrackWindowS = 0.25

// overlayWindow picks the time window whose tracks the overlay draws: the
// end of the steady window of the first shear phase, else the start.
func overlayWindow(s *summary.Summary) (t0S, t1S float64) {
	if len(s.ShearPhases) > 0 {
		w := s.ShearPhases[0].WindowS
		mid := (w[0] + w[1]) / 2
		return mid - overlayTrackWindowS/2, mid + overlayTrackWindowS/2
	}
	return 0, overlayTrackWindowS
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
	sort.Ints(ids)
	var out [][]figure.PointPx
	for _, id := range ids {
		tr := by[id]
		if len(tr) < 2 {
			continue
		}
		sort.Slice(tr, func(i, j int) bool { return tr[i].Frame < tr[j].Frame })
		line := make([]figure.PointPx, len(tr))
		for i, p := range tr {
			line[i] = figure.PointPx{XPx: p.XPx, YPx: p.YPx}
		}
		out = append(out, line)
	}
	return out
}
