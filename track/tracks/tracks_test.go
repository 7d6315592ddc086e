package tracks

import (
	"bytes"
	"encoding/csv"
	"math"
	"strings"
	"testing"
)

func samplePoints(n int) []Point {
	pts := make([]Point, n)
	for i := range pts {
		f := float64(i)
		pts[i] = Point{Track: i/7 - 1, Frame: i % 500, TS: f / 200, XPx: 10 + 0.123456*f, YPx: 20 - 0.001*f,
			XUM: -3.5 + f, YUM: 0.25 * f, Brightness: 1000 + f, SizePx: 1.5, NearWall: i%5 == 0}
	}
	return pts
}

// TestCSVRoundTrip writes more rows than one chunk and reads them back:
// every value comes back to the precision of its column, in order, and the
// file parses as CSV with the contract's header, then near_wall.
func TestCSVRoundTrip(t *testing.T) {
	pts := samplePoints(3*csvChunk + 17)
	var buf bytes.Buffer
	if err := WriteCSV(&buf, pts); err != nil {
		t.Fatal(err)
	}
	if first, _, _ := strings.Cut(buf.String(), "\n"); first != "track,frame,t_s,x_px,y_px,x_um,y_um,brightness,size_px,near_wall" {
		t.Errorf("header %q", first)
	}
	recs, err := csv.NewReader(bytes.NewReader(buf.Bytes())).ReadAll()
	if err != nil || len(recs) != len(pts)+1 {
		t.Fatalf("as CSV: %d records, %v", len(recs), err)
	}
	got, err := ReadCSV(&buf)
	if err != nil {
		t.Fatal(err)
	}
	if len(got) != len(pts) {
		t.Fatalf("read %d points, wrote %d", len(got), len(pts))
	}
	for i, p := range pts {
		g := got[i]
		// Columns are written with 4 decimals (positions), 6 (time), 2 and 3.
		if g.Track != p.Track || g.Frame != p.Frame || math.Abs(g.TS-p.TS) > 5e-7 ||
			math.Abs(g.XPx-p.XPx) > 5e-5 || math.Abs(g.YUM-p.YUM) > 5e-5 || math.Abs(g.Brightness-p.Brightness) > 5e-3 || g.NearWall != p.NearWall {
			t.Fatalf("row %d: read %+v, wrote %+v", i, g, p)
		}
	}
}

func TestReadCSVErrors(t *testing.T) {
	for _, c := range []struct{ in, want string }{
		{"track,frame\n1,2\n", `no column "t_s"`},
		{strings.Join(Header, ",") + "\n1,2,x,0,0,0,0,0,0\n", `line 2: column t_s: "x"`},
		{"", "header"},
		{strings.Join(Header, ",") + ",near_wall\n1,2,0,0,0,0,0,0,0,2\n", `line 2: column near_wall: "2" is not 0 or 1`},
	} {
		_, err := ReadCSV(strings.NewReader(c.in))
		if err == nil || !strings.Contains(err.Error(), c.want) {
			t.Errorf("ReadCSV(%q) = %v, want an error with %q", c.in, err, c.want)
		}
	}
}

// TestReadCSVWithoutNearWall reads a file of the contract's columns only.
func TestReadCSVWithoutNearWall(t *testing.T) {
	pts, err := ReadCSV(strings.NewReader(strings.Join(Header, ",") + "\n3,2,0.01,1,2,3,4,5,1.5\n"))
	if err != nil || len(pts) != 1 || pts[0].NearWall || pts[0].Track != 3 {
		t.Errorf("ReadCSV = %+v, %v", pts, err)
	}
}

func BenchmarkWriteCSV(b *testing.B) {
	pts := samplePoints(200_000)
	var buf bytes.Buffer
	for b.Loop() {
		buf.Reset()
		if err := WriteCSV(&buf, pts); err != nil {
			b.Fatal(err)
		}
	}
	b.SetBytes(int64(buf.Len()))
}
