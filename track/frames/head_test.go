package frames

import (
	"errors"
	"fmt"
	"io"
	"os"
	"path/filepath"
	"strings"
	"testing"

	"gocv.io/x/gocv"
)

// readPackets reads every frame of p through NextPacket, decoding the
// packets it returns, as detect.Run does.
func readPackets(t *testing.T, p Packets) (idx []int, frames [][]int) {
	t.Helper()
	m := gocv.NewMat()
	defer m.Close()
	for {
		i, pkt, err := p.NextPacket(nil, &m)
		if errors.Is(err, io.EOF) {
			return
		}
		if err != nil {
			t.Fatal(err)
		}
		if pkt != nil {
			if err := p.Decode(i, pkt, &m); err != nil {
				t.Fatal(err)
			}
		}
		ix, f := readAll(t, &single{m: m})
		if len(ix) != 1 {
			t.Fatalf("frame %d: %d images", i, len(ix))
		}
		idx, frames = append(idx, i), append(frames, f[0])
	}
}

// TestHead checks that a Head hands out the same frames, with the same
// indices and in the same order, as reading its source directly, through
// Next and through NextPacket, for heads shorter and longer than the input
// and any amount read ahead; and that its median is Median's.
func TestHead(t *testing.T) {
	const w, h, n = 64, 48, 12
	dir := t.TempDir()
	mjpeg := filepath.Join(dir, "v.avi")
	writeVideo(t, mjpeg, "MJPG", n, w, h)
	stills := filepath.Join(dir, "stills")
	if err := os.Mkdir(stills, 0o755); err != nil {
		t.Fatal(err)
	}
	writeStills(t, stills, n, w, h, gocv.MatTypeCV16U, ".png")
	inputs := []struct {
		name, path string
		r          Range
	}{
		{"mjpeg", mjpeg, All},
		{"mjpeg-every-other", mjpeg, Range{First: 1, Last: -1, Step: 2}},
		{"png16", stills, All},
	}
	for _, in := range inputs {
		open := func() Source {
			s, err := Open(in.path, 0, in.r)
			if err != nil {
				t.Fatal(err)
			}
			return s
		}
		s := open()
		wantIdx, want := readAll(t, s)
		s.Close()
		s = open()
		wantMed, err := Median(s, 5)
		s.Close()
		if err != nil {
			t.Fatal(err)
		}
		defer wantMed.Close()
		for _, headN := range []int{1, 5, n + 3} {
			for _, ahead := range []int{0, 1, 4, n} {
				for _, viaPackets := range []bool{false, true} {
					name := fmt.Sprintf("%s/head%d/ahead%d/packets=%v", in.name, headN, ahead, viaPackets)
					t.Run(name, func(t *testing.T) {
						hd, err := ReadHead(open(), headN)
						if err != nil {
							t.Fatal(err)
						}
						defer hd.Close()
						if got := hd.Len(); got != min(headN, len(want)) {
							t.Errorf("Len %d, want %d", got, min(headN, len(want)))
						}
						if headN == 5 {
							med, err := hd.Median()
							if err != nil {
								t.Fatal(err)
							}
							diff := gocv.NewMat()
							gocv.AbsDiff(med, wantMed, &diff)
							if mx := diffMax(diff); mx != 0 {
								t.Errorf("median of the head differs from Median by up to %g", mx)
							}
							diff.Close()
							med.Close()
						}
						hd.ReadAhead(ahead)
						var idx []int
						var got [][]int
						if viaPackets {
							idx, got = readPackets(t, hd)
						} else {
							idx, got = readAll(t, hd)
						}
						if fmt.Sprint(idx) != fmt.Sprint(wantIdx) {
							t.Fatalf("indices %v, want %v", idx, wantIdx)
						}
						for k := range got {
							if fmt.Sprint(got[k]) != fmt.Sprint(want[k]) {
								t.Errorf("frame %d differs from the source's", idx[k])
							}
						}
						late, err := hd.Median()
						late.Close()
						if err == nil {
							t.Error("median of a head already handed out: no error")
						}
					})
				}
			}
		}
	}
}

func diffMax(m gocv.Mat) float64 {
	_, mx, _, _ := gocv.MinMaxLoc(m)
	return float64(mx)
}

// TestHeadErrors checks that a damaged recording read ahead reports the
// file and the frame at the point where it fails, after the good frames;
// that an empty range is an error; and that closing a Head still reading
// ahead leaks nothing (matleak, in TestMain).
func TestHeadErrors(t *testing.T) {
	const w, h, n = 64, 48, 30
	path := filepath.Join(t.TempDir(), "v.avi")
	writeVideo(t, path, "MJPG", n, w, h)
	cut := truncatedVideo(t, n, w, h)
	s, err := Open(cut, 0, All)
	if err != nil {
		t.Fatal(err)
	}
	hd, err := ReadHead(s, 3)
	if err != nil {
		t.Fatal(err)
	}
	hd.ReadAhead(n)
	m := gocv.NewMat()
	defer m.Close()
	good := 0
	for {
		if _, err = hd.Next(&m); err != nil {
			break
		}
		good++
	}
	hd.Close()
	if errors.Is(err, io.EOF) || !strings.Contains(err.Error(), cut) || !strings.Contains(err.Error(), "frame") {
		t.Errorf("truncated video read ahead: error %v after %d frames, want one naming the file and the frame", err, good)
	}
	if good < 3 || good >= n {
		t.Errorf("%d good frames of a video cut in half (%d frames)", good, n)
	}

	s, err = Open(path, 0, Range{First: n + 5, Last: -1, Step: 1})
	if err != nil {
		t.Fatal(err)
	}
	if _, err := ReadHead(s, 3); err == nil {
		t.Error("head of an empty range: no error")
	}
	s.Close()

	// Closed while reading ahead, before any frame is handed out.
	for _, ahead := range []int{1, n} {
		s, err := Open(path, 0, All)
		if err != nil {
			t.Fatal(err)
		}
		hd, err := ReadHead(s, 2)
		if err != nil {
			t.Fatal(err)
		}
		hd.ReadAhead(ahead)
		if err := hd.Close(); err != nil {
			t.Fatal(err)
		}
		if _, err := hd.Next(&m); err == nil || errors.Is(err, io.EOF) {
			t.Errorf("read after Close: %v", err)
		}
	}
}

// TestHeadReadAheadRace reads a Head while it reads ahead, for the race
// detector (make test runs it with -race).
func TestHeadReadAheadRace(t *testing.T) {
	const w, h, n = 64, 48, 20
	path := filepath.Join(t.TempDir(), "v.avi")
	writeVideo(t, path, "MJPG", n, w, h)
	s, err := Open(path, 0, All)
	if err != nil {
		t.Fatal(err)
	}
	hd, err := ReadHead(s, 4)
	if err != nil {
		t.Fatal(err)
	}
	defer hd.Close()
	hd.ReadAhead(n)
	idx, _ := readPackets(t, hd)
	if len(idx) != n {
		t.Errorf("%d frames, want %d", len(idx), n)
	}
}
