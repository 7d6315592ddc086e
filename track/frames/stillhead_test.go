package frames

import (
	"encoding/binary"
	"os"
	"path/filepath"
	"strings"
	"testing"

	"gocv.io/x/gocv"
)

// TestStillSize reads the size of PNG and TIFF frames from their headers
// and compares it with what OpenCV decodes from the same files (libpng and
// libtiff, an independent oracle), at 8 and 16 bit.
func TestStillSize(t *testing.T) {
	dir := t.TempDir()
	for _, c := range []struct {
		w, h int
		typ  gocv.MatType
		ext  string
	}{
		{37, 21, gocv.MatTypeCV8U, ".png"},
		{37, 21, gocv.MatTypeCV16U, ".png"},
		{1093, 3, gocv.MatTypeCV8U, ".tif"},
		{300, 2, gocv.MatTypeCV16U, ".tiff"},
	} {
		p := filepath.Join(dir, "f"+c.ext)
		m := makeFrame(t, 0, c.w, c.h, c.typ)
		ok := gocv.IMWrite(p, m)
		m.Close()
		if !ok {
			t.Fatalf("writing %s", p)
		}
		f, err := os.Open(p)
		if err != nil {
			t.Fatal(err)
		}
		st, _ := f.Stat()
		w, h, err := stillSize(f, st.Size())
		f.Close()
		img := gocv.IMRead(p, gocv.IMReadAnyDepth|gocv.IMReadGrayScale)
		if err != nil || w != img.Cols() || h != img.Rows() {
			t.Errorf("%s %v: header %dx%d (%v), OpenCV %dx%d", c.ext, c.typ, w, h, err, img.Cols(), img.Rows())
		}
		img.Close()
	}
}

// tiffHeader returns a little-endian TIFF header whose one directory gives
// the width and length as LONG values.
func tiffHeader(w, h uint32) []byte {
	b := []byte{'I', 'I', 42, 0, 8, 0, 0, 0, 2, 0}
	for _, e := range [][2]uint32{{tagImageWidth, w}, {tagImageLength, h}} {
		b = binary.LittleEndian.AppendUint16(b, uint16(e[0]))
		b = binary.LittleEndian.AppendUint16(b, typeLong)
		b = binary.LittleEndian.AppendUint32(b, 1)
		b = binary.LittleEndian.AppendUint32(b, e[1])
	}
	return append(b, 0, 0, 0, 0)
}

// pngHeader returns a PNG signature and an IHDR chunk of w x h px, 8-bit
// grey (ISO/IEC 15948, 11.2.2); its CRC is left zero, as the size is read
// before any check of it.
func pngHeader(w, h uint32) []byte {
	b := append([]byte{}, pngMagic...)
	b = binary.BigEndian.AppendUint32(b, 13)
	b = append(b, "IHDR"...)
	b = binary.BigEndian.AppendUint32(b, w)
	b = binary.BigEndian.AppendUint32(b, h)
	return append(b, 8, 0, 0, 0, 0, 0, 0, 0, 0)
}

// TestStillTooLarge gives the frame reader headers of frames beyond the
// bounds, which the decoder would try to allocate (10 Gpx for the first),
// and headers that are none: each is refused with a line naming the size
// or the fault, before anything is decoded.
func TestStillTooLarge(t *testing.T) {
	dir := t.TempDir()
	for _, c := range []struct {
		name string
		b    []byte
		want string
	}{
		{"huge.png", pngHeader(100000, 100000), "100000x100000 px exceeds 65536 px a side"},
		{"area.png", pngHeader(MaxSidePx, MaxSidePx), "exceeds 67108864 pixels"},
		{"wide.tif", tiffHeader(MaxSidePx+1, 1), "65537x1 px exceeds"},
		{"cut.png", pngMagic, "without its IHDR"},
		{"cut.tif", []byte("II*\x00\xff\xff\x00\x00"), "outside the 8-byte file"},
		{"jpeg.png", []byte{0xff, 0xd8, 0xff, 0xe0, 0, 0x10, 'J', 'F', 'I', 'F'}, "neither a PNG nor a TIFF"},
	} {
		t.Run(c.name, func(t *testing.T) {
			sub := filepath.Join(dir, strings.ReplaceAll(c.name, ".", "-"))
			os.Mkdir(sub, 0o755)
			if err := os.WriteFile(filepath.Join(sub, c.name), c.b, 0o644); err != nil {
				t.Fatal(err)
			}
			src, err := Open(sub, 100, Range{Last: -1})
			if err == nil {
				src.Close()
				t.Fatal("accepted")
			}
			if !strings.Contains(err.Error(), c.want) || strings.Contains(err.Error(), "\n") {
				t.Errorf("error %q, want one line with %q", err, c.want)
			}
		})
	}
}

// TestStillBoundsOnEveryFrame checks the bound on a frame after the first:
// a sequence whose second file claims 100000x100000 px stops there.
func TestStillBoundsOnEveryFrame(t *testing.T) {
	dir := t.TempDir()
	writeStills(t, dir, 1, 16, 16, gocv.MatTypeCV8U, ".png")
	if err := os.WriteFile(filepath.Join(dir, "img1.png"), pngHeader(100000, 100000), 0o644); err != nil {
		t.Fatal(err)
	}
	src, err := Open(dir, 100, Range{Last: -1})
	if err != nil {
		t.Fatal(err)
	}
	defer src.Close()
	m := gocv.NewMat()
	defer m.Close()
	if _, err := src.Next(&m); err != nil {
		t.Fatalf("first frame: %v", err)
	}
	if _, err := src.Next(&m); err == nil || !strings.Contains(err.Error(), "exceeds") {
		t.Errorf("second frame: %v", err)
	}
}
