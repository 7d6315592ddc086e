// Package tracks holds tracer trajectories as the table of the contract's
// tracks.csv: one row per detection, with its track id (-1 for a detection
// that belongs to no track), frame, time in s, image position in px, gap
// position in um, integrated brightness and size (radius of gyration) in px.
package tracks

import (
	"bufio"
	"encoding/csv"
	"fmt"
	"io"
	"strconv"
)

// Unlinked is the track id of a detection that belongs to no track.
const Unlinked = -1

// Point is one detection in a track.
type Point struct {
	Track      int
	Frame      int
	TS         float64 // time, s
	XPx, YPx   float64 // image position, px
	XUM, YUM   float64 // gap position, um
	Brightness float64 // integrated, background-subtracted grey levels
	SizePx     float64 // radius of gyration, px
}

// Header is the column list of tracks.csv.
var Header = []string{"track", "frame", "t_s", "x_px", "y_px", "x_um", "y_um", "brightness", "size_px"}

// WriteCSV writes points as tracks.csv.
func WriteCSV(w io.Writer, pts []Point) error {
	bw := bufio.NewWriter(w)
	cw := csv.NewWriter(bw)
	if err := cw.Write(Header); err != nil {
		return err
	}
	rec := make([]string, len(Header))
	f := func(v float64, prec int) string { return strconv.FormatFloat(v, 'f', prec, 64) }
	for _, p := range pts {
		rec[0] = strconv.Itoa(p.Track)
		rec[1] = strconv.Itoa(p.Frame)
		rec[2] = f(p.TS, 6)
		rec[3], rec[4] = f(p.XPx, 4), f(p.YPx, 4)
		rec[5], rec[6] = f(p.XUM, 4), f(p.YUM, 4)
		rec[7], rec[8] = f(p.Brightness, 2), f(p.SizePx, 3)
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

// ReadCSV reads tracks.csv. Columns are found by name, so extra columns are
// allowed; every column of Header must be present.
func ReadCSV(r io.Reader) ([]Point, error) {
	cr := csv.NewReader(bufio.NewReader(r))
	cr.ReuseRecord = true
	head, err := cr.Read()
	if err != nil {
		return nil, fmt.Errorf("tracks.csv: reading header: %w", err)
	}
	col := make([]int, len(Header))
	for i, name := range Header {
		col[i] = -1
		for j, h := range head {
			if h == name {
				col[i] = j
			}
		}
		if col[i] < 0 {
			return nil, fmt.Errorf("tracks.csv: no column %q in header %v", name, head)
		}
	}
	var pts []Point
	for line := 2; ; line++ {
		rec, err := cr.Read()
		if err == io.EOF {
			break
		}
		if err != nil {
			return nil, fmt.Errorf("tracks.csv: %w", err)
		}
		var v [9]float64
		for i, c := range col {
			v[i], err = strconv.ParseFloat(rec[c], 64)
			if err != nil {
				return nil, fmt.Errorf("tracks.csv line %d: column %s: %q is not a number", line, Header[i], rec[c])
			}
		}
		pts = append(pts, Point{Track: int(v[0]), Frame: int(v[1]), TS: v[2], XPx: v[3], YPx: v[4],
			XUM: v[5], YUM: v[6], Brightness: v[7], SizePx: v[8]})
	}
	return pts, nil
}
