package tracks

import (
	"bufio"
	"bytes"
	"encoding/binary"
	"errors"
	"fmt"
	"io"
	"os"
	"slices"
	"sync"
)

// SpoolPrefix begins the name of every spool file, in os.TempDir or the
// folder given to NewSpool. On systems that allow it the file is removed
// from its folder as soon as it is made, so that nothing is left behind by
// a run that is killed; elsewhere it is removed by Close.
const SpoolPrefix = "gaptrace-spool-"

// spoolBuffer is the size of the spool's write and read buffers: large
// enough that a system call moves a thousand points at a time.
const spoolBuffer = 1 << 16

// Layout of a spool record: a group header of the number of points and
// the track id (two uint32, little-endian), then each point's record
// (AppendRecord).
const (
	groupHeaderBytes = 8
	pointBytes       = RecordBytes
)

// maxGroupPoints bounds a group read back: a track longer than ten
// million points (MaxFrame) cannot come from one recording, so a larger
// count is a damaged spool.
const maxGroupPoints = MaxFrame + 1

// Spool is a Source kept in a compact binary file instead of memory: the
// tracks are appended one at a time as they end, and read back, as often
// as needed, in the order they were appended. Memory is a buffer and one
// int per track (for Count). Add must not be called while Each runs; Each
// may run in several goroutines at once.
type Spool struct {
	mu       sync.Mutex
	f        *os.File
	name     string // file name while it must be removed by Close; "" once unlinked
	w        *bufio.Writer
	size     int64 // bytes written
	lens     []int32
	points   int // points in tracks
	unlinked int
	negateX  bool
	enc      []byte
}

// NewSpool makes an empty spool whose file lives in dir (os.TempDir when
// dir is "").
func NewSpool(dir string) (*Spool, error) {
	f, name, err := TempFile(dir)
	if err != nil {
		return nil, fmt.Errorf("tracks: making a spool file: %w", err)
	}
	return &Spool{f: f, name: name, w: bufio.NewWriterSize(f, spoolBuffer)}, nil
}

// Add appends one group: the points of one track in frame order, or a
// single point with Track Unlinked. Several unlinked points may be given
// at once; each is kept as its own group. Points are copied.
func (s *Spool) Add(track []Point) error {
	if len(track) == 0 {
		return nil
	}
	if s.f == nil {
		return errors.New("tracks: spool is closed")
	}
	if track[0].Track == Unlinked {
		for i := range track {
			if track[i].Track != Unlinked {
				return fmt.Errorf("tracks: spool group mixes unlinked points with track %d", track[i].Track)
			}
			if err := s.put(track[i : i+1]); err != nil {
				return err
			}
			s.unlinked++
		}
		return nil
	}
	for i := range track {
		if track[i].Track != track[0].Track {
			return fmt.Errorf("tracks: spool group mixes tracks %d and %d", track[0].Track, track[i].Track)
		}
	}
	if err := s.put(track); err != nil {
		return err
	}
	s.lens = append(s.lens, int32(len(track)))
	s.points += len(track)
	return nil
}

// put writes one group.
func (s *Spool) put(g []Point) error {
	b := s.enc[:0]
	b = binary.LittleEndian.AppendUint32(b, uint32(len(g)))
	b = binary.LittleEndian.AppendUint32(b, uint32(int32(g[0].Track)))
	for _, p := range g {
		b = AppendRecord(b, p)
	}
	s.enc = b
	n, err := s.w.Write(b)
	s.size += int64(n)
	if err != nil {
		return fmt.Errorf("tracks: writing the spool: %w", err)
	}
	return nil
}

// NegateX makes Each give every point's XUM with its sign changed (once
// more: back), as when the flow turns out to run towards -x of the image.
func (s *Spool) NegateX() { s.negateX = !s.negateX }

// Count returns what tracks.Count returns for the points of the spool,
// without reading them.
func (s *Spool) Count() (points, tracks, medianPoints int) {
	if len(s.lens) > 0 {
		l := slices.Clone(s.lens)
		slices.Sort(l)
		medianPoints = int(l[len(l)/2])
	}
	return s.points, len(s.lens), medianPoints
}

// Points returns the number of points in the spool, linked or not.
func (s *Spool) Points() int { return s.points + s.unlinked }

// Each implements Source: the groups in the order they were added.
func (s *Spool) Each(fn func(track []Point) error) error {
	if s.f == nil {
		return errors.New("tracks: spool is closed")
	}
	s.mu.Lock()
	err := s.w.Flush()
	s.mu.Unlock()
	if err != nil {
		return fmt.Errorf("tracks: writing the spool: %w", err)
	}
	r := bufio.NewReaderSize(io.NewSectionReader(s.f, 0, s.size), spoolBuffer)
	var head [groupHeaderBytes]byte
	var rec []byte
	var pts []Point
	for {
		if _, err := io.ReadFull(r, head[:]); err == io.EOF {
			return nil
		} else if err != nil {
			return fmt.Errorf("tracks: reading the spool: %w", err)
		}
		n := binary.LittleEndian.Uint32(head[:4])
		id := int(int32(binary.LittleEndian.Uint32(head[4:])))
		if n == 0 || n > maxGroupPoints {
			return fmt.Errorf("tracks: damaged spool: a group of %d points", n)
		}
		rec = slices.Grow(rec[:0], int(n)*pointBytes)[:int(n)*pointBytes]
		if _, err := io.ReadFull(r, rec); err != nil {
			return fmt.Errorf("tracks: reading the spool: %w", err)
		}
		pts = slices.Grow(pts[:0], int(n))[:n]
		for i := range pts {
			pts[i] = DecodeRecord(rec[i*pointBytes:], id)
			if s.negateX {
				pts[i].XUM = -pts[i].XUM
			}
		}
		if err := fn(pts); err != nil {
			return err
		}
	}
}

// Close removes the spool's file. Each and Add fail afterwards; Close may
// be called more than once.
func (s *Spool) Close() error {
	if s.f == nil {
		return nil
	}
	err := CloseTemp(s.f, s.name)
	s.f = nil
	return err
}

// GobEncode writes the spool's points, so that a value holding a spool
// can be kept with encoding/gob (a test's cache of tracked recordings):
// the whole spool goes into memory.
func (s *Spool) GobEncode() ([]byte, error) {
	var buf bytes.Buffer
	neg := s.negateX
	s.negateX = false
	err := s.Each(func(tr []Point) error {
		head := binary.LittleEndian.AppendUint32(nil, uint32(len(tr)))
		buf.Write(head)
		for _, p := range tr {
			b, err := gobPoint(p)
			if err != nil {
				return err
			}
			buf.Write(b)
		}
		return nil
	})
	s.negateX = neg
	if err != nil {
		return nil, err
	}
	if neg {
		buf.WriteByte(1)
	} else {
		buf.WriteByte(0)
	}
	return buf.Bytes(), nil
}

// gobPoint encodes one point as its group record does, with its track.
func gobPoint(p Point) ([]byte, error) {
	return AppendRecord(binary.LittleEndian.AppendUint32(nil, uint32(int32(p.Track))), p), nil
}

// GobDecode reads what GobEncode wrote into a new spool file.
func (s *Spool) GobDecode(data []byte) error {
	ns, err := NewSpool("")
	if err != nil {
		return err
	}
	const rec = 4 + pointBytes
	var g []Point
	for len(data) > 1 {
		if len(data) < 4 {
			ns.Close()
			return errors.New("tracks: damaged spool encoding")
		}
		n := int(binary.LittleEndian.Uint32(data))
		data = data[4:]
		if n <= 0 || n*rec > len(data) {
			ns.Close()
			return errors.New("tracks: damaged spool encoding")
		}
		g = g[:0]
		for range n {
			g = append(g, DecodeRecord(data[4:rec], int(int32(binary.LittleEndian.Uint32(data)))))
			data = data[rec:]
		}
		if err := ns.Add(g); err != nil {
			ns.Close()
			return err
		}
	}
	if len(data) == 1 && data[0] == 1 {
		ns.negateX = true
	}
	*s = Spool{f: ns.f, name: ns.name, w: ns.w, size: ns.size, lens: ns.lens, points: ns.points, unlinked: ns.unlinked, negateX: ns.negateX}
	return nil
}

// SpoolCSV reads tracks.csv (ReadCSVEach) into a new spool in dir (see
// NewSpool), calling row, when not nil, with every row as it is read. A
// file whose tracks each stand in consecutive rows (as WriteCSV and
// WriteCSVFrom write them, in any order of the tracks) is spooled as it
// is read, one track in memory at a time; a file whose rows of one track
// are apart is held in memory once and its tracks spooled in id order.
func SpoolCSV(r io.Reader, dir string, row func(p Point)) (*Spool, error) {
	s, err := NewSpool(dir)
	if err != nil {
		return nil, err
	}
	var cur, rest []Point
	seen := map[int]bool{}
	apart := false
	flush := func() error {
		if len(cur) == 0 {
			return nil
		}
		slices.SortStableFunc(cur, func(a, b Point) int { return a.Frame - b.Frame })
		err := s.Add(cur)
		cur = cur[:0]
		return err
	}
	err = ReadCSVEach(r, func(p Point) error {
		if row != nil {
			row(p)
		}
		switch {
		case apart:
			rest = append(rest, p)
			return nil
		case p.Track == Unlinked:
			if err := flush(); err != nil {
				return err
			}
			return s.Add([]Point{p})
		case len(cur) > 0 && p.Track == cur[0].Track:
			cur = append(cur, p)
			return nil
		case seen[p.Track]:
			apart = true
			rest = append(rest, p)
			return nil
		}
		if err := flush(); err != nil {
			return err
		}
		seen[p.Track] = true
		cur = append(cur, p)
		return nil
	})
	if err == nil && !apart {
		err = flush()
	}
	if err == nil && apart {
		// Rows of a track lie apart: the whole table is sorted in memory.
		var all []Point
		if all, err = Collect(s); err == nil {
			all = append(append(all, cur...), rest...)
			s.Close()
			if s, err = NewSpool(dir); err != nil {
				return nil, err
			}
			err = Slice(all).Each(s.Add)
		}
	}
	if err != nil {
		s.Close()
		return nil, err
	}
	return s, nil
}
