package tracks

import (
	"bytes"
	"encoding/gob"
	"math/rand/v2"
	"path/filepath"
	"slices"
	"strings"
	"testing"
)

// spoolTable returns a table as a linker gives it: tracks grouped in the
// order they end, unlinked points between them.
func spoolTable(tracks, perTrack int) []Point {
	rng := rand.New(rand.NewPCG(1, 2))
	var pts []Point
	for id := range tracks {
		n := 2 + rng.IntN(perTrack)
		first := rng.IntN(100)
		for k := range n {
			pts = append(pts, Point{Track: id, Frame: first + k, TS: float64(first+k) / 100, XPx: rng.Float64() * 640,
				YPx: rng.Float64() * 480, XUM: rng.NormFloat64() * 100, YUM: rng.Float64() * 800,
				Brightness: rng.Float64() * 1e4, SizePx: 1 + rng.Float64(), NearWall: rng.IntN(5) == 0})
		}
		if id%3 == 0 {
			pts = append(pts, Point{Track: Unlinked, Frame: rng.IntN(100), XPx: 1, YPx: 2})
		}
	}
	return pts
}

// spoolOf writes pts, grouped as spoolTable makes them, into a spool.
func spoolOf(t *testing.T, pts []Point) *Spool {
	t.Helper()
	s, err := NewSpool(t.TempDir())
	if err != nil {
		t.Fatal(err)
	}
	for i := 0; i < len(pts); {
		j := i + 1
		for j < len(pts) && pts[j].Track == pts[i].Track {
			j++
		}
		if err := s.Add(pts[i:j]); err != nil {
			t.Fatal(err)
		}
		i = j
	}
	return s
}

func TestSpoolRoundTrip(t *testing.T) {
	pts := spoolTable(500, 40)
	s := spoolOf(t, pts)
	defer s.Close()
	for range 2 { // re-readable
		got, err := Collect(s)
		if err != nil {
			t.Fatal(err)
		}
		if !slices.Equal(got, pts) {
			t.Fatalf("spool gave back %d points, not the %d added in order", len(got), len(pts))
		}
	}
	p, n, med := s.Count()
	wp, wn, wmed := Count(pts)
	if p != wp || n != wn || med != wmed {
		t.Errorf("Count = %d, %d, %d; tracks.Count of the points = %d, %d, %d", p, n, med, wp, wn, wmed)
	}
	var a, b bytes.Buffer
	if err := WriteCSV(&a, pts); err != nil {
		t.Fatal(err)
	}
	if err := WriteCSVFrom(&b, s); err != nil {
		t.Fatal(err)
	}
	if !bytes.Equal(a.Bytes(), b.Bytes()) {
		t.Errorf("WriteCSVFrom differs from WriteCSV of the same points (%d and %d bytes)", b.Len(), a.Len())
	}
	s.NegateX()
	got, _ := Collect(s)
	for i := range got {
		if got[i].XUM != -pts[i].XUM {
			t.Fatalf("after NegateX point %d has x_um %g, want %g", i, got[i].XUM, -pts[i].XUM)
		}
	}
	var enc bytes.Buffer
	if err := gob.NewEncoder(&enc).Encode(s); err != nil {
		t.Fatal(err)
	}
	var back Spool
	if err := gob.NewDecoder(&enc).Decode(&back); err != nil {
		t.Fatal(err)
	}
	defer back.Close()
	if g2, _ := Collect(&back); !slices.Equal(g2, got) {
		t.Errorf("gob round trip gave %d points, not the spool's %d", len(g2), len(got))
	}
}

func TestSpoolLeavesNoFile(t *testing.T) {
	dir := t.TempDir()
	s, err := NewSpool(dir)
	if err != nil {
		t.Fatal(err)
	}
	if err := s.Add([]Point{{Track: 0, Frame: 1}, {Track: 0, Frame: 2}}); err != nil {
		t.Fatal(err)
	}
	if err := s.Close(); err != nil {
		t.Fatal(err)
	}
	left, _ := filepath.Glob(filepath.Join(dir, SpoolPrefix+"*"))
	if len(left) > 0 {
		t.Errorf("closed spool left %q", left)
	}
	if err := s.Each(func([]Point) error { return nil }); err == nil {
		t.Error("Each on a closed spool gave no error")
	}
}

func TestSpoolCSV(t *testing.T) {
	pts := spoolTable(300, 30)
	var grouped bytes.Buffer
	if err := WriteCSV(&grouped, pts); err != nil {
		t.Fatal(err)
	}
	// The same rows in frame order: every track's rows lie apart.
	byFrame := slices.Clone(pts)
	slices.SortStableFunc(byFrame, func(a, b Point) int { return a.Frame - b.Frame })
	var apart bytes.Buffer
	if err := WriteCSV(&apart, byFrame); err != nil {
		t.Fatal(err)
	}
	var want bytes.Buffer
	if err := WriteCSV(&want, mustCollect(t, Slice(pts))); err != nil {
		t.Fatal(err)
	}
	for name, in := range map[string][]byte{"grouped": grouped.Bytes(), "apart": apart.Bytes()} {
		rows := 0
		s, err := SpoolCSV(bytes.NewReader(in), t.TempDir(), func(Point) { rows++ })
		if err != nil {
			t.Fatalf("%s: %v", name, err)
		}
		if rows != len(pts) {
			t.Errorf("%s: %d rows seen, want %d", name, rows, len(pts))
		}
		// As sets of tracks: both give what Slice gives, sorted.
		got := mustCollect(t, s)
		var gb bytes.Buffer
		if err := WriteCSV(&gb, mustCollect(t, Slice(got))); err != nil {
			t.Fatal(err)
		}
		if gb.String() != want.String() {
			t.Errorf("%s: spooled tracks differ from the table's", name)
		}
		s.Close()
	}
	if _, err := SpoolCSV(strings.NewReader("track,frame\n"), t.TempDir(), nil); err == nil {
		t.Error("a header without the contract's columns was spooled")
	}
}

func mustCollect(t *testing.T, src Source) []Point {
	t.Helper()
	pts, err := Collect(src)
	if err != nil {
		t.Fatal(err)
	}
	return pts
}
