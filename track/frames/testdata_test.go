package frames

import (
	"image"
	"image/png"
	"io"
	"os"
	"path/filepath"
	"testing"

	"gocv.io/x/gocv"
)

// TestTestdataFrames reads the project's reference still frames, 8 and 16
// bit PNG, and compares every pixel with Go's own PNG decoder (image/png,
// an implementation independent of OpenCV's).
func TestTestdataFrames(t *testing.T) {
	for _, c := range []struct {
		dir   string
		depth int
	}{{"8bit", 8}, {"16bit", 16}} {
		t.Run(c.dir, func(t *testing.T) {
			dir := filepath.Join("..", "..", "testdata", "frames", c.dir)
			src, err := Open(dir, 100, All)
			if err != nil {
				t.Fatal(err)
			}
			defer src.Close()
			if info := src.Info(); info.Frames != 4 || info.WidthPx != 160 || info.HeightPx != 120 || info.BitDepth != c.depth {
				t.Fatalf("info %+v, want 4 frames of 160x120 px at %d bit", info, c.depth)
			}
			files, _ := filepath.Glob(filepath.Join(dir, "*.png"))
			m := gocv.NewMat()
			defer m.Close()
			for i := 0; ; i++ {
				if _, err := src.Next(&m); err == io.EOF {
					if i != len(files) {
						t.Errorf("read %d frames of %d files", i, len(files))
					}
					break
				} else if err != nil {
					t.Fatal(err)
				}
				want := decodePNG(t, files[i])
				if n := differingPixels(t, m, want, c.depth); n != 0 {
					t.Errorf("frame %d: %d pixels differ from image/png", i, n)
				}
			}
		})
	}
}

func decodePNG(t *testing.T, path string) image.Image {
	t.Helper()
	f, err := os.Open(path)
	if err != nil {
		t.Fatal(err)
	}
	defer f.Close()
	img, err := png.Decode(f)
	if err != nil {
		t.Fatal(err)
	}
	return img
}

// differingPixels counts the pixels of m (grey, 8 or 16 bit) that differ
// from img's grey level.
func differingPixels(t *testing.T, m gocv.Mat, img image.Image, depth int) int {
	t.Helper()
	n := 0
	w, h := m.Cols(), m.Rows()
	var b8 []uint8
	var b16 []uint16
	var err error
	if depth == 8 {
		b8, err = m.DataPtrUint8()
	} else {
		b16, err = m.DataPtrUint16()
	}
	if err != nil {
		t.Fatal(err)
	}
	for y := range h {
		for x := range w {
			r, _, _, _ := img.At(x, y).RGBA() // 16-bit grey in every channel
			var got uint32
			if depth == 8 {
				got, r = uint32(b8[y*w+x]), r>>8
			} else {
				got = uint32(b16[y*w+x])
			}
			if got != r {
				n++
			}
		}
	}
	return n
}
