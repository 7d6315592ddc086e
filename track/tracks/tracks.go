// Package tracks holds tracer trajectories as the table of the contract's
// tracks.csv: one row per detection, with its track id (-1 for a detection
// that belongs to no track), frame, time in s, image position in px, gap
// position in um, integrated brightness and size (radius of gyration) in px.
package tracks

import (
	"bufio"
	"encoding/csv"
	"errors"
	"fmt"
	"io"
	"math"
	"runtime"
	"slices"
	"strconv"
	"strings"
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
	// NearWall marks a centre closer to a wall line than half a tracer
	// radius (NearWallRadii): the tracer overlaps the wall's edge and
	// reflection line, which the detector subtracts, so its position is
	// less certain than in the bulk.
	NearWall bool
}

// NearWallRadii is the distance from a wall line, in tracer radii, within
// which a detection is flagged NearWall.
const NearWallRadii = 0.5

// Header is the contract's column list of tracks.csv.
var Header = []string{"track", "frame", "t_s", "x_px", "y_px", "x_um", "y_um", "brightness", "size_px"}

// Extra is the list of columns tracks.csv holds after Header: near_wall,
// 1 for a NearWall detection, else 0.
var Extra = []string{"near_wall"}

// csvChunk is how many rows one goroutine formats at a time: large enough
// that the hand-over costs nothing, small enough to keep both cores busy on
// a short recording.
const csvChunk = 1 << 14

// WriteCSV writes points as tracks.csv. Rows are formatted in chunks on all
// cores and written in order; the numbers hold no separators or quotes, so
// the rows are plain comma-joined fields.
func WriteCSV(w io.Writer, pts []Point) error {
	bw := bufio.NewWriterSize(w, 1<<16)
	bw.WriteString(strings.Join(append(slices.Clip(Header), Extra...), ",") + "\n")
	n := (len(pts) + csvChunk - 1) / csvChunk
	bufs := make([]chan []byte, n)
	for i := range bufs {
		bufs[i] = make(chan []byte, 1)
	}
	next := make(chan int, n)
	for i := range n {
		next <- i
	}
	close(next)
	for range min(n, runtime.GOMAXPROCS(0)) {
		go func() {
			for i := range next {
				bufs[i] <- appendRows(nil, pts[i*csvChunk:min(len(pts), (i+1)*csvChunk)])
			}
		}()
	}
	var err error
	for _, c := range bufs {
		b := <-c // drain every chunk, so no goroutine is left blocked
		if err == nil {
			_, err = bw.Write(b)
		}
	}
	if err != nil {
		return err
	}
	return bw.Flush()
}

// WriteCSVFrom writes the tracks of src as tracks.csv, in src's order,
// holding only a few chunks of rows at a time: src is read on one
// goroutine, the rows are formatted in chunks on all cores and written in
// order.
func WriteCSVFrom(w io.Writer, src Source) error {
	bw := bufio.NewWriterSize(w, 1<<16)
	bw.WriteString(strings.Join(append(slices.Clip(Header), Extra...), ",") + "\n")
	workers := runtime.GOMAXPROCS(0)
	// Each chunk carries the channel its rows come back on; the writer
	// takes the chunks in order, and at most 2*workers are in flight.
	type chunk struct {
		pts []Point
		out chan []byte
	}
	jobs := make(chan chunk)
	order := make(chan chan []byte, 2*workers)
	for range workers {
		go func() {
			for c := range jobs {
				c.out <- appendRows(nil, c.pts)
			}
		}()
	}
	readErr := make(chan error, 1)
	stop := make(chan struct{})
	go func() {
		defer close(order)
		defer close(jobs)
		buf := make([]Point, 0, csvChunk)
		send := func() bool {
			c := chunk{pts: buf, out: make(chan []byte, 1)}
			select {
			case order <- c.out:
			case <-stop:
				return false
			}
			jobs <- c
			buf = make([]Point, 0, csvChunk)
			return true
		}
		errStopped := errors.New("stopped")
		err := src.Each(func(tr []Point) error {
			buf = append(buf, tr...)
			if len(buf) >= csvChunk && !send() {
				return errStopped
			}
			return nil
		})
		if err == nil && len(buf) > 0 {
			send()
		}
		if err == errStopped {
			err = nil
		}
		readErr <- err
	}()
	var werr error
	for out := range order {
		b := <-out
		if werr == nil {
			if _, werr = bw.Write(b); werr != nil {
				close(stop)
			}
		}
	}
	if err := <-readErr; err != nil {
		return err
	}
	if werr != nil {
		return werr
	}
	return bw.Flush()
}

// appendRows appends the CSV rows of pts to b.
func appendRows(b []byte, pts []Point) []byte {
	for _, p := range pts {
		b = strconv.AppendInt(b, int64(p.Track), 10)
		b = append(b, ',')
		b = strconv.AppendInt(b, int64(p.Frame), 10)
		for _, f := range [...]struct {
			v    float64
			prec int
		}{{p.TS, 6}, {p.XPx, 4}, {p.YPx, 4}, {p.XUM, 4}, {p.YUM, 4}, {p.Brightness, 2}, {p.SizePx, 3}} {
			b = append(b, ',')
			b = strconv.AppendFloat(b, f.v, 'f', f.prec, 64)
		}
		if p.NearWall {
			b = append(b, ",1\n"...)
		} else {
			b = append(b, ",0\n"...)
		}
	}
	return b
}

// ReadCSV reads tracks.csv. Columns are found by name, so extra columns are
// allowed; every column of Header must be present, near_wall may be
// missing (then every NearWall is false).
func ReadCSV(r io.Reader) ([]Point, error) {
	var pts []Point
	err := ReadCSVEach(r, func(p Point) error {
		pts = append(pts, p)
		return nil
	})
	if err != nil {
		return nil, err
	}
	return pts, nil
}

// ReadCSVEach reads tracks.csv as ReadCSV does, calling fn with each row
// in the file's order instead of keeping them; it stops at the first error
// fn returns and returns it.
func ReadCSVEach(r io.Reader, fn func(p Point) error) error {
	cr := csv.NewReader(bufio.NewReader(r))
	cr.ReuseRecord = true
	head, err := cr.Read()
	if err != nil {
		return fmt.Errorf("tracks.csv: reading header: %w", err)
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
			return fmt.Errorf("tracks.csv: no column %q in header %q", name, head)
		}
	}
	nearCol := slices.Index(head, Extra[0])
	for line := 2; ; line++ {
		rec, err := cr.Read()
		if err == io.EOF {
			break
		}
		if err != nil {
			return fmt.Errorf("tracks.csv: %w", err)
		}
		var v [9]float64
		for i, c := range col {
			v[i], err = strconv.ParseFloat(rec[c], 64)
			if err != nil {
				return fmt.Errorf("tracks.csv line %d: column %s: %q is not a number", line, Header[i], rec[c])
			}
		}
		if err := checkRow(v); err != nil {
			return fmt.Errorf("tracks.csv line %d: %w", line, err)
		}
		p := Point{Track: int(v[0]), Frame: int(v[1]), TS: v[2], XPx: v[3], YPx: v[4],
			XUM: v[5], YUM: v[6], Brightness: v[7], SizePx: v[8]}
		if nearCol >= 0 {
			switch rec[nearCol] {
			case "0":
			case "1":
				p.NearWall = true
			default:
				return fmt.Errorf("tracks.csv line %d: column %s: %q is not 0 or 1", line, Extra[0], rec[nearCol])
			}
		}
		if err := fn(p); err != nil {
			return err
		}
	}
	return nil
}

// MaxFrame is the largest frame index ReadCSV accepts: ten million frames,
// a day at over a hundred frames/s; the stages after it keep a few numbers
// per frame, so a larger index (a damaged file) would make them allocate
// gigabytes.
const MaxFrame = 10_000_000

// checkRow reports a row of tracks.csv whose values cannot be a detection:
// a track or frame that is not a whole number in range, or a time,
// position, brightness or size that is not finite.
func checkRow(v [9]float64) error {
	whole := func(x float64) bool { return x == math.Trunc(x) }
	switch {
	case !whole(v[0]) || v[0] < Unlinked || v[0] > math.MaxInt32:
		return fmt.Errorf("column track: %g is not a track number (a whole number, %d for none)", v[0], Unlinked)
	case !whole(v[1]) || v[1] < 0 || v[1] > MaxFrame:
		return fmt.Errorf("column frame: %g is not a frame index (a whole number from 0 to %d)", v[1], MaxFrame)
	}
	for i := 2; i < len(v); i++ {
		if math.IsNaN(v[i]) || math.IsInf(v[i], 0) {
			return fmt.Errorf("column %s: %g is not a finite number", Header[i], v[i])
		}
	}
	return nil
}
