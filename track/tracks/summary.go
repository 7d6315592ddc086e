package tracks

import (
	"bufio"
	"encoding/csv"
	"io"
	"math"
	"sort"
	"strconv"
)

// Summary describes one track: its extent, its mean height and its mean
// velocity, the end-to-end displacement over the time between its first and
// last point (which averages the localization noise best for a steady
// tracer).
type Summary struct {
	Track                 int
	FirstFrame, LastFrame int
	Points                int     // detections in the track
	TStartS, TEndS        float64 // times of the first and last point, s
	MeanYUM               float64 // mean height in the gap, um
	VXUMPerS, VYUMPerS    float64 // mean velocity along and across the flow, um/s; NaN for a single point
}

// Frames returns the number of frames the track spans, gaps included.
func (s Summary) Frames() int { return s.LastFrame - s.FirstFrame + 1 }

// Summarize returns the summary of every track in pts (Unlinked points are
// skipped), in ascending track id. Points may come in any order.
func Summarize(pts []Point) []Summary {
	type acc struct {
		first, last *Point
		n           int
		sumY        float64
	}
	byID := map[int]*acc{}
	for i := range pts {
		p := &pts[i]
		if p.Track == Unlinked {
			continue
		}
		a := byID[p.Track]
		if a == nil {
			a = &acc{first: p, last: p}
			byID[p.Track] = a
		}
		if p.Frame < a.first.Frame {
			a.first = p
		}
		if p.Frame > a.last.Frame {
			a.last = p
		}
		a.n++
		a.sumY += p.YUM
	}
	out := make([]Summary, 0, len(byID))
	for id, a := range byID {
		s := Summary{Track: id, FirstFrame: a.first.Frame, LastFrame: a.last.Frame, Points: a.n,
			TStartS: a.first.TS, TEndS: a.last.TS, MeanYUM: a.sumY / float64(a.n),
			VXUMPerS: math.NaN(), VYUMPerS: math.NaN()}
		if dt := a.last.TS - a.first.TS; dt > 0 {
			s.VXUMPerS = (a.last.XUM - a.first.XUM) / dt
			s.VYUMPerS = (a.last.YUM - a.first.YUM) / dt
		}
		out = append(out, s)
	}
	sort.Slice(out, func(i, j int) bool { return out[i].Track < out[j].Track })
	return out
}

// SummaryHeader is the column list of WriteSummaryCSV (tracks_summary.csv).
var SummaryHeader = []string{"track", "first_frame", "last_frame", "points", "frames", "t_start_s", "t_end_s",
	"mean_y_um", "vx_um_per_s", "vy_um_per_s"}

// WriteSummaryCSV writes track summaries as CSV; an unknown velocity is an
// empty field.
func WriteSummaryCSV(w io.Writer, ss []Summary) error {
	bw := bufio.NewWriter(w)
	cw := csv.NewWriter(bw)
	if err := cw.Write(SummaryHeader); err != nil {
		return err
	}
	f := func(v float64, prec int) string {
		if math.IsNaN(v) || math.IsInf(v, 0) {
			return ""
		}
		return strconv.FormatFloat(v, 'f', prec, 64)
	}
	rec := make([]string, len(SummaryHeader))
	for _, s := range ss {
		rec[0], rec[1], rec[2] = strconv.Itoa(s.Track), strconv.Itoa(s.FirstFrame), strconv.Itoa(s.LastFrame)
		rec[3], rec[4] = strconv.Itoa(s.Points), strconv.Itoa(s.Frames())
		rec[5], rec[6], rec[7] = f(s.TStartS, 6), f(s.TEndS, 6), f(s.MeanYUM, 4)
		rec[8], rec[9] = f(s.VXUMPerS, 4), f(s.VYUMPerS, 4)
		if err := cw.Write(rec); err != nil {
			return err
		}
	}
	cw.Flush()
	if err := cw.Error(); err != nil {
		return err
	}
	return bw.Flush()
}

// Count returns the number of points in tracks (Unlinked points are not
// counted), the number of tracks, and the median number of points per
// track (the upper median; 0 without tracks).
func Count(pts []Point) (points, tracks, medianPoints int) {
	per := map[int]int{}
	for _, p := range pts {
		if p.Track != Unlinked {
			per[p.Track]++
			points++
		}
	}
	lens := make([]int, 0, len(per))
	for _, l := range per {
		lens = append(lens, l)
	}
	sort.Ints(lens)
	if len(lens) > 0 {
		medianPoints = lens[len(lens)/2]
	}
	return points, len(lens), medianPoints
}
