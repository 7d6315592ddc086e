package frames

import (
	"bytes"
	"errors"
	"fmt"
	"gaptrace/track/matleak"
	"io"
	"math/rand/v2"
	"os"
	"path/filepath"
	"slices"
	"strings"
	"testing"

	"gocv.io/x/gocv"
)

// TestMain fails the package when a test leaves an OpenCV Mat open.
func TestMain(m *testing.M) { matleak.Main(m) }

// pattern is the grey level of pixel (x, y) in frame f of the test inputs:
// smooth, so that a lossy codec keeps it within a few levels.
func pattern(f, x, y, maxV int) int {
	return (f*37 + x*3 + y*2) % maxV
}

func makeFrame(t *testing.T, f, w, h int, typ gocv.MatType) gocv.Mat {
	t.Helper()
	m := gocv.NewMatWithSize(h, w, typ)
	switch typ {
	case gocv.MatTypeCV8U:
		b, _ := m.DataPtrUint8()
		for y := 0; y < h; y++ {
			for x := 0; x < w; x++ {
				b[y*w+x] = uint8(pattern(f, x, y, 200))
			}
		}
	case gocv.MatTypeCV16U:
		b, _ := m.DataPtrUint16()
		for y := 0; y < h; y++ {
			for x := 0; x < w; x++ {
				b[y*w+x] = uint16(1000 + 97*pattern(f, x, y, 200))
			}
		}
	}
	return m
}

func writeStills(t *testing.T, dir string, n, w, h int, typ gocv.MatType, ext string) {
	t.Helper()
	for f := 0; f < n; f++ {
		m := makeFrame(t, f, w, h, typ)
		// Unpadded numbers: the source must order them naturally.
		if !gocv.IMWrite(filepath.Join(dir, fmt.Sprintf("img%d%s", f, ext)), m) {
			t.Fatalf("cannot write frame %d", f)
		}
		m.Close()
	}
}

func readAll(t *testing.T, s Source) (idx []int, frames [][]int) {
	t.Helper()
	m := gocv.NewMat()
	defer m.Close()
	for {
		i, err := s.Next(&m)
		if errors.Is(err, io.EOF) {
			return
		}
		if err != nil {
			t.Fatal(err)
		}
		idx = append(idx, i)
		var px []int
		switch m.Type() {
		case gocv.MatTypeCV8U:
			b, _ := m.DataPtrUint8()
			for _, v := range b {
				px = append(px, int(v))
			}
		case gocv.MatTypeCV16U:
			b, _ := m.DataPtrUint16()
			for _, v := range b {
				px = append(px, int(v))
			}
		default:
			t.Fatalf("frame %d has type %v", i, m.Type())
		}
		frames = append(frames, px)
	}
}

func TestStills(t *testing.T) {
	const w, h, n = 24, 16, 12
	for _, tc := range []struct {
		name string
		typ  gocv.MatType
		ext  string
		bits int
	}{
		{"png8", gocv.MatTypeCV8U, ".png", 8},
		{"png16", gocv.MatTypeCV16U, ".png", 16},
		{"tiff8", gocv.MatTypeCV8U, ".tif", 8},
		{"tiff16", gocv.MatTypeCV16U, ".tiff", 16},
	} {
		t.Run(tc.name, func(t *testing.T) {
			dir := t.TempDir()
			writeStills(t, dir, n, w, h, tc.typ, tc.ext)
			for _, in := range []string{dir, filepath.Join(dir, "img*"+tc.ext)} {
				s, err := Open(in, 25, Range{First: 1, Last: 10, Step: 3})
				if err != nil {
					t.Fatal(err)
				}
				info := s.Info()
				if info.Frames != n || info.WidthPx != w || info.HeightPx != h || info.BitDepth != tc.bits || info.FPS != 25 {
					t.Errorf("%s: info %+v", in, info)
				}
				idx, got := readAll(t, s)
				s.Close()
				if fmt.Sprint(idx) != "[1 4 7 10]" {
					t.Fatalf("%s: indices %v, want [1 4 7 10]", in, idx)
				}
				for k, f := range idx {
					ref := makeFrame(t, f, w, h, tc.typ)
					_, want := readAll(t, &single{m: ref})
					ref.Close()
					if fmt.Sprint(got[k]) != fmt.Sprint(want[0]) {
						t.Fatalf("%s: frame %d differs from what was written (full depth lost?)", in, f)
					}
				}
			}
		})
	}
}

// single is a Source of one Mat, to read a reference frame like the others.
type single struct {
	m    gocv.Mat
	done bool
}

func (s *single) Info() Info { return Info{} }
func (s *single) Next(dst *gocv.Mat) (int, error) {
	if s.done {
		return 0, io.EOF
	}
	s.m.CopyTo(dst)
	s.done = true
	return 0, nil
}
func (s *single) Close() error { return nil }

func TestStillsErrors(t *testing.T) {
	dir := t.TempDir()
	writeStills(t, dir, 3, 20, 10, gocv.MatTypeCV8U, ".png")
	// A frame of another size inside the sequence.
	odd := makeFrame(t, 3, 21, 10, gocv.MatTypeCV8U)
	gocv.IMWrite(filepath.Join(dir, "img3.png"), odd)
	odd.Close()
	// An unreadable frame.
	if err := os.WriteFile(filepath.Join(dir, "img4.png"), []byte("not a png"), 0o644); err != nil {
		t.Fatal(err)
	}
	for _, tc := range []struct {
		first int
		want  string
	}{
		{3, "frame 3 (" + filepath.Join(dir, "img3.png") + ") is 21x10 px, the sequence is 20x10 px"},
		{4, "cannot read frame 4 (" + filepath.Join(dir, "img4.png") + ")"},
	} {
		s, err := Open(dir, 0, All)
		if err != nil {
			t.Fatal(err)
		}
		m := gocv.NewMat()
		for {
			_, err = s.Next(&m)
			if err != nil {
				break
			}
		}
		m.Close()
		s.Close()
		if tc.first == 4 {
			s, _ = Open(dir, 0, Range{First: 4, Last: -1})
			m = gocv.NewMat()
			_, err = s.Next(&m)
			m.Close()
		}
		if err == nil || !strings.Contains(err.Error(), tc.want) {
			t.Errorf("error %v, want one containing %q", err, tc.want)
		}
	}
	for _, in := range []string{filepath.Join(dir, "missing"), filepath.Join(dir, "none*.png"), t.TempDir()} {
		if _, err := Open(in, 0, All); err == nil {
			t.Errorf("Open(%s) succeeded", in)
		}
	}
	if _, err := Open(dir, 0, Range{First: 5, Last: 2}); err == nil || !strings.Contains(err.Error(), "last frame 2 is before first frame 5") {
		t.Errorf("bad range: %v", err)
	}
}

func writeVideo(t *testing.T, path, codec string, n, w, h int) {
	t.Helper()
	vw, err := gocv.VideoWriterFile(path, codec, 40, w, h, false)
	if err != nil || !vw.IsOpened() {
		t.Skipf("cannot write %s video: %v", codec, err)
	}
	for f := 0; f < n; f++ {
		m := makeFrame(t, f, w, h, gocv.MatTypeCV8U)
		if err := vw.Write(m); err != nil {
			t.Fatal(err)
		}
		m.Close()
	}
	vw.Close()
}

func TestVideo(t *testing.T) {
	const w, h, n = 64, 48, 20
	for _, tc := range []struct {
		codec, ext string
		jpeg       bool
		tolGrey    float64 // mean absolute grey-level error the codec may make
	}{
		// Lossy JPEG at OpenCV's default quality: a few grey levels on
		// average, more at the pattern's sharp wrap-around (common practice).
		{"MJPG", ".avi", true, 2},
		{"FFV1", ".mkv", false, 0},
	} {
		t.Run(tc.codec, func(t *testing.T) {
			path := filepath.Join(t.TempDir(), "v"+tc.ext)
			writeVideo(t, path, tc.codec, n, w, h)
			s, err := Open(path, 0, Range{First: 2, Last: -1, Step: 5})
			if err != nil {
				t.Fatal(err)
			}
			defer s.Close()
			info := s.Info()
			if info.Frames != n || info.WidthPx != w || info.HeightPx != h || info.BitDepth != 8 || info.FPS != 40 {
				t.Errorf("info %+v", info)
			}
			if _, ok := s.(Packets); ok != tc.jpeg {
				t.Errorf("JPEG packet path %v, want %v", ok, tc.jpeg)
			}
			idx, got := readAll(t, s)
			if fmt.Sprint(idx) != "[2 7 12 17]" {
				t.Fatalf("indices %v, want [2 7 12 17]", idx)
			}
			for k, f := range idx {
				sum := 0
				for p, v := range got[k] {
					d := v - pattern(f, p%w, p/w, 200)
					sum += max(d, -d)
				}
				if mean := float64(sum) / float64(w*h); mean > tc.tolGrey {
					t.Errorf("frame %d: mean error %.2f grey levels, want <= %g", f, mean, tc.tolGrey)
				}
			}
			s2, err := Open(path, 100, Range{Last: 3})
			if err != nil {
				t.Fatal(err)
			}
			defer s2.Close()
			if s2.Info().FPS != 100 {
				t.Errorf("fps override: %g", s2.Info().FPS)
			}
			if idx, _ := readAll(t, s2); fmt.Sprint(idx) != "[0 1 2 3]" {
				t.Errorf("indices %v, want [0 1 2 3]", idx)
			}
		})
	}
}

// TestPackets reads an MJPEG video packet by packet, decodes the packets on
// several goroutines, and compares with Next.
func TestPackets(t *testing.T) {
	const w, h, n = 64, 48, 12
	path := filepath.Join(t.TempDir(), "v.avi")
	writeVideo(t, path, "MJPG", n, w, h)
	s, err := Open(path, 0, Range{First: 1, Last: -1, Step: 2})
	if err != nil {
		t.Fatal(err)
	}
	idx, want := readAll(t, s)
	s.Close()
	s, err = Open(path, 0, Range{First: 1, Last: -1, Step: 2})
	if err != nil {
		t.Fatal(err)
	}
	defer s.Close()
	p, ok := s.(Packets)
	if !ok {
		t.Fatal("an MJPEG video is not read as packets")
	}
	type pkt struct {
		i int
		b []byte
	}
	var pkts []pkt
	for {
		i, b, err := p.NextPacket(nil, nil)
		if errors.Is(err, io.EOF) {
			break
		}
		if err != nil {
			t.Fatal(err)
		}
		pkts = append(pkts, pkt{i, b})
	}
	if len(pkts) != len(idx) {
		t.Fatalf("%d packets, %d frames", len(pkts), len(idx))
	}
	got := make([][]int, len(pkts))
	done := make(chan error)
	for k := range pkts {
		go func() {
			m := gocv.NewMat()
			defer m.Close()
			err := p.Decode(pkts[k].i, pkts[k].b, &m)
			if err == nil {
				_, f := readAll(t, &single{m: m})
				got[k] = f[0]
			}
			done <- err
		}()
	}
	for range pkts {
		if err := <-done; err != nil {
			t.Fatal(err)
		}
	}
	for k := range pkts {
		if pkts[k].i != idx[k] || fmt.Sprint(got[k]) != fmt.Sprint(want[k]) {
			t.Errorf("packet %d (frame %d) differs from frame %d read by Next", k, pkts[k].i, idx[k])
		}
	}
	if err := p.Decode(3, []byte{0xff, 0xd8, 1, 2, 3}, new(gocv.Mat)); err == nil || !strings.Contains(err.Error(), "frame 3") {
		t.Errorf("damaged packet: %v", err)
	}
}

// truncatedVideo writes an n-frame MJPEG video cut to its first half.
func truncatedVideo(t *testing.T, n, w, h int) string {
	t.Helper()
	path := filepath.Join(t.TempDir(), "cut.avi")
	writeVideo(t, path, "MJPG", n, w, h)
	b, err := os.ReadFile(path)
	if err != nil {
		t.Fatal(err)
	}
	if err := os.WriteFile(path, b[:len(b)/2], 0o644); err != nil {
		t.Fatal(err)
	}
	return path
}

func TestVideoTruncated(t *testing.T) {
	const w, h, n = 64, 48, 30
	path := truncatedVideo(t, n, w, h)
	s, err := Open(path, 0, All)
	if err != nil {
		t.Fatal(err)
	}
	defer s.Close()
	m := gocv.NewMat()
	defer m.Close()
	for {
		_, err = s.Next(&m)
		if err != nil {
			break
		}
	}
	if errors.Is(err, io.EOF) || !strings.Contains(err.Error(), path) || !strings.Contains(err.Error(), "frame") {
		t.Errorf("truncated video: error %v, want one naming the file and the frame", err)
	}
	if _, err := Open(filepath.Join(t.TempDir(), "garbage.avi"), 0, All); err == nil {
		t.Error("missing video opened")
	}
}

func TestMedian(t *testing.T) {
	const w, h = 6, 4
	for _, bits := range []int{8, 16} {
		typ := gocv.MatTypeCV8U
		if bits == 16 {
			typ = gocv.MatTypeCV16U
		}
		dir := t.TempDir()
		// Pixel p of frame f is base(p) except for "tracers" passing in two
		// frames out of five; the median must give base(p) exactly.
		for f := 0; f < 5; f++ {
			m := gocv.NewMatWithSize(h, w, typ)
			for p := 0; p < w*h; p++ {
				v := 10 + p
				if (p+f)%5 < 2 {
					v += 100 + f
				}
				if bits == 8 {
					b, _ := m.DataPtrUint8()
					b[p] = uint8(v)
				} else {
					b, _ := m.DataPtrUint16()
					b[p] = uint16(v * 200)
				}
			}
			gocv.IMWrite(filepath.Join(dir, fmt.Sprintf("f%02d.png", f)), m)
			m.Close()
		}
		s, err := Open(dir, 0, All)
		if err != nil {
			t.Fatal(err)
		}
		med, err := Median(s, 100)
		s.Close()
		if err != nil {
			t.Fatal(err)
		}
		got, _ := med.DataPtrFloat32()
		for p, v := range got {
			want := float32(10 + p)
			if bits == 16 {
				want *= 200
			}
			if v != want {
				t.Errorf("%d bit: pixel %d median %g, want %g", bits, p, v, want)
			}
		}
		med.Close()
	}
	for _, tc := range []struct {
		v    []uint8
		want float32
	}{{[]uint8{3}, 3}, {[]uint8{4, 1}, 2.5}, {[]uint8{9, 1, 5, 5, 2, 8}, 5}, {[]uint8{7, 7, 1, 9, 2}, 7}, {[]uint8{1, 2, 3, 4, 5, 6, 7, 8}, 4.5}} {
		if got := medianOf(append([]uint8(nil), tc.v...)); got != tc.want {
			t.Errorf("medianOf(%v) = %g, want %g", tc.v, got, tc.want)
		}
		if got := medianU8(tc.v); got != tc.want {
			t.Errorf("medianU8(%v) = %g, want %g", tc.v, got, tc.want)
		}
	}
}

// TestMedianU8 compares the counting median with sorting on random stacks.
func TestMedianU8(t *testing.T) {
	rng := rand.New(rand.NewPCG(1, 1))
	for trial := 0; trial < 3000; trial++ {
		// Up to 300 values anywhere in the range; the last trials are 255
		// equal values at either end of it.
		n := 1 + rng.IntN(300)
		v := make([]uint8, n)
		spread, base := 1+rng.IntN(256), rng.IntN(256)
		for i := range v {
			v[i] = uint8(min(255, base+rng.IntN(spread)))
		}
		if trial >= 2998 {
			v = make([]uint8, 255)
			for i := range v {
				v[i] = uint8(255 * (trial - 2998))
			}
			n = len(v)
		}
		s := append([]uint8(nil), v...)
		slices.Sort(s)
		want := float32(s[n/2])
		if n%2 == 0 {
			want = (float32(s[n/2-1]) + float32(s[n/2])) / 2
		}
		if got := medianU8(v); got != want {
			t.Fatalf("medianU8(%v) = %g, want %g", v, got, want)
		}
	}
}

// BenchmarkMedian is the temporal median of 31 frames of 1024x1024 px, 8 bit.
func BenchmarkMedian(b *testing.B) {
	const n, w, h = 31, 1024, 1024
	rng := rand.New(rand.NewPCG(2, 2))
	ms := make([]gocv.Mat, n)
	for i := range ms {
		buf := make([]byte, w*h)
		for p := range buf {
			buf[p] = uint8(20 + rng.IntN(12))
		}
		ms[i], _ = gocv.NewMatFromBytes(h, w, gocv.MatTypeCV8U, buf)
	}
	defer func() {
		for i := range ms {
			ms[i].Close()
		}
	}()
	for b.Loop() {
		src := &multi{ms: ms, info: Info{Frames: n, WidthPx: w, HeightPx: h, BitDepth: 8}}
		m, err := Median(src, n)
		if err != nil {
			b.Fatal(err)
		}
		m.Close()
	}
}

// multi is a Source over Mats in memory.
type multi struct {
	ms   []gocv.Mat
	info Info
	next int
}

func (s *multi) Info() Info { return s.info }
func (s *multi) Next(dst *gocv.Mat) (int, error) {
	if s.next >= len(s.ms) {
		return 0, io.EOF
	}
	s.ms[s.next].CopyTo(dst)
	s.next++
	return s.next - 1, nil
}
func (s *multi) Close() error { return nil }

func TestNaturalOrder(t *testing.T) {
	for _, tc := range []struct {
		a, b string
		less bool
	}{{"f2.png", "f10.png", true}, {"f10.png", "f2.png", false}, {"f002.png", "f10.png", true}, {"a.png", "b.png", true}, {"f1", "f1a", true}} {
		if got := naturalLess(tc.a, tc.b); got != tc.less {
			t.Errorf("naturalLess(%q, %q) = %v", tc.a, tc.b, got)
		}
	}
}

// nextOnly hides a source's Packets methods, so Median reads it by Next.
type nextOnly struct{ Source }

// TestMedianPackets checks that the median of an MJPEG video decoded on
// several workers is the median of the same frames read one by one, also
// when the range ends before maxFrames.
func TestMedianPackets(t *testing.T) {
	const w, h, n = 64, 48, 9
	path := filepath.Join(t.TempDir(), "v.avi")
	writeVideo(t, path, "MJPG", n, w, h)
	for _, maxFrames := range []int{5, 100} {
		var meds [2][]float32
		for k, wrap := range []func(Source) Source{func(s Source) Source { return s }, func(s Source) Source { return nextOnly{s} }} {
			s, err := Open(path, 0, All)
			if err != nil {
				t.Fatal(err)
			}
			if _, ok := wrap(s).(Packets); ok != (k == 0) {
				t.Fatalf("wrapper %d: packets %v", k, ok)
			}
			m, err := Median(wrap(s), maxFrames)
			s.Close()
			if err != nil {
				t.Fatal(err)
			}
			d, err := m.DataPtrFloat32()
			if err != nil {
				t.Fatal(err)
			}
			meds[k] = append([]float32(nil), d...)
			m.Close()
		}
		if fmt.Sprint(meds[0]) != fmt.Sprint(meds[1]) {
			t.Errorf("max %d frames: median from packets differs from the median by Next", maxFrames)
		}
	}
}

// TestVideoShortByAFrame cuts an MJPEG AVI at the start of its last
// frame's chunk (its last 1 %, index included): the reader ends a frame
// early without an error, within the slack some containers need, and Short
// says one frame was lost (issue 18: a file truncated at 99 % was read
// without a word). The chunk is found by its id, 00dc, before the index,
// idx1 (Microsoft's AVI RIFF File Reference).
func TestVideoShortByAFrame(t *testing.T) {
	const w, h, n = 64, 48, 100
	path := filepath.Join(t.TempDir(), "short.avi")
	writeVideo(t, path, "MJPG", n, w, h)
	b, err := os.ReadFile(path)
	if err != nil {
		t.Fatal(err)
	}
	idx := bytes.LastIndex(b, []byte("idx1"))
	last := bytes.LastIndex(b[:max(idx, 0)], []byte("00dc"))
	if idx < 0 || last < 0 {
		t.Fatal("no index or frame chunk in the AVI file")
	}
	if err := os.WriteFile(path, b[:last], 0o644); err != nil {
		t.Fatal(err)
	}
	s, err := Open(path, 0, All)
	if err != nil {
		t.Fatal(err)
	}
	defer s.Close()
	m := gocv.NewMat()
	defer m.Close()
	read := 0
	for {
		if _, err = s.Next(&m); err != nil {
			break
		}
		read++
	}
	c, ok := s.(Counted)
	if !ok {
		t.Fatal("a video is not Counted")
	}
	t.Logf("read %d of %d frames (%v), short by %d; the container announces %d", read, n, err, c.Short(), s.Info().Frames)
	if !errors.Is(err, io.EOF) || read >= n || c.Short() != n-read {
		t.Errorf("read %d of %d frames, Short %d, want %d", read, n, c.Short(), n-read)
	}
}
