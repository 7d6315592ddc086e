package frames

import (
	"errors"
	"io"
	"os"
	"path/filepath"
	"strings"
	"testing"

	"gocv.io/x/gocv"
)

// FuzzStills checks that no still frame, PNG or TIFF, makes the frame-
// folder reader panic, crash inside OpenCV or allocate beyond the frame
// bounds; that its errors are one line; and that a frame it accepts is
// delivered at the size and depth its Info gives, within the bounds. The
// seed corpus is the repository's reference frames, frames written here
// by OpenCV (TIFF at 8 and 16 bit, big-endian headers), headers beyond the
// bounds, and the inputs checked in under testdata/fuzz/FuzzStills (Go's
// layout), which every `go test` replays; `go test -fuzz FuzzStills
// ./track/frames` searches further. tiff chooses the file's extension.
func FuzzStills(f *testing.F) {
	for _, p := range []string{"8bit/frame_00000.png", "16bit/frame_00000.png"} {
		if b, err := os.ReadFile(filepath.Join("..", "..", "testdata", "frames", p)); err == nil {
			f.Add(b, false)
		}
	}
	seeds := f.TempDir()
	for i, typ := range []gocv.MatType{gocv.MatTypeCV8U, gocv.MatTypeCV16U} {
		m := gocv.NewMatWithSize(6, 9, typ)
		m.SetTo(gocv.NewScalar(float64(40+i), 0, 0, 0))
		p := filepath.Join(seeds, "seed.tif")
		gocv.IMWrite(p, m)
		m.Close()
		if b, err := os.ReadFile(p); err == nil {
			f.Add(b, true)
		}
	}
	f.Add(tiffHeader(MaxSidePx+1, 1), true)
	f.Add(pngHeader(100000, 100000), false)
	f.Add([]byte("MM\x00*\x00\x00\x00\x08\x00\x01\x01\x00\x00\x03\x00\x00\x00\x01\x00\x10\x00\x00"), true)
	dir := f.TempDir()
	f.Fuzz(func(t *testing.T, b []byte, tiff bool) {
		name := "frame_0.png"
		if tiff {
			name = "frame_0.tif"
		}
		sub, err := os.MkdirTemp(dir, "f")
		if err != nil {
			t.Fatal(err)
		}
		defer os.RemoveAll(sub)
		if err := os.WriteFile(filepath.Join(sub, name), b, 0o644); err != nil {
			t.Fatal(err)
		}
		oneLine := func(err error) {
			if strings.Contains(err.Error(), "\n") {
				t.Errorf("error of several lines: %q", err)
			}
		}
		src, err := Open(sub, 100, Range{Last: -1})
		if err != nil {
			oneLine(err)
			return
		}
		defer src.Close()
		info := src.Info()
		if info.WidthPx <= 0 || info.HeightPx <= 0 || checkFrameSize(info.WidthPx, info.HeightPx) != nil {
			t.Fatalf("accepted a frame of %dx%d px", info.WidthPx, info.HeightPx)
		}
		m := gocv.NewMat()
		defer m.Close()
		for {
			_, err := src.Next(&m)
			if errors.Is(err, io.EOF) {
				return
			}
			if err != nil {
				oneLine(err)
				return
			}
			depth, derr := bitDepth(m.Type())
			if m.Cols() != info.WidthPx || m.Rows() != info.HeightPx || derr != nil || depth != info.BitDepth {
				t.Fatalf("frame %dx%d px of type %v, Info says %dx%d px at %d bit", m.Cols(), m.Rows(), m.Type(), info.WidthPx, info.HeightPx, info.BitDepth)
			}
		}
	})
}
