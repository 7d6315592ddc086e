package frames

import (
	"bytes"
	"encoding/binary"
	"errors"
	"fmt"
	"io"
	"os"
)

// Bounds of the frame size gaptrace reads, checked on the file's header
// before any pixel is decoded (the README's table of limits).
const (
	// MaxSidePx bounds a frame's width and height: the largest scientific
	// sensors are near 15 000 px a side, so 65 536 px is no camera.
	MaxSidePx = 1 << 16
	// MaxFramePixels bounds a frame's area (64 Mpx, above the largest
	// scientific sensors' 50 Mpx): the head of a recording holds 31 frames
	// decoded at up to two bytes a pixel, 4 GiB at this bound.
	MaxFramePixels = 1 << 26
)

// checkFrameSize refuses a frame of w x h px beyond the bounds: a damaged
// header or an image that is no camera's frame, which would otherwise make
// the decoder allocate gigabytes. An empty size is left to the caller; the
// error does not name the file.
func checkFrameSize(w, h int) error {
	switch {
	case w > MaxSidePx || h > MaxSidePx:
		return fmt.Errorf("frame size %dx%d px exceeds %d px a side", w, h, MaxSidePx)
	case int64(w)*int64(h) > MaxFramePixels:
		return fmt.Errorf("frame size %dx%d px exceeds %d pixels", w, h, MaxFramePixels)
	}
	return nil
}

// stillHeaderBytes is how much of a still frame is read for its size: a
// PNG's IHDR lies in its first 33 bytes; a TIFF's first image directory
// may lie anywhere, and is read from where its header points.
const stillHeaderBytes = 64

// Magic numbers of the still-frame formats: PNG (ISO/IEC 15948, 5.2),
// TIFF 6.0 (section 2, "Image File Header") little- and big-endian, and
// BigTIFF (version 43).
var (
	pngMagic = []byte{0x89, 'P', 'N', 'G', '\r', '\n', 0x1a, '\n'}
	tiffII   = []byte{'I', 'I', 42, 0}
	tiffMM   = []byte{'M', 'M', 0, 42}
	bigII    = []byte{'I', 'I', 43, 0}
	bigMM    = []byte{'M', 'M', 0, 43}
)

// errNotStill is returned for a file that is neither a PNG nor a TIFF.
var errNotStill = errors.New("neither a PNG nor a TIFF image")

// checkStill reads the size of the still frame in the file name from its
// header and refuses it when it is beyond the bounds, or when the header
// is not that of a PNG or TIFF image. The error does not name the file.
func checkStill(name string) error {
	f, err := os.Open(name)
	if err != nil {
		return err
	}
	defer f.Close()
	st, err := f.Stat()
	if err != nil {
		return err
	}
	w, h, err := stillSize(f, st.Size())
	if err != nil {
		return err
	}
	return checkFrameSize(w, h)
}

// stillSize returns the width and height of the PNG or TIFF image held in
// r, of size bytes, from its header alone (for a TIFF, its first image).
func stillSize(r io.ReaderAt, size int64) (w, h int, err error) {
	head := make([]byte, stillHeaderBytes)
	n, err := r.ReadAt(head, 0)
	if err != nil && err != io.EOF {
		return 0, 0, err
	}
	head = head[:n]
	switch {
	case bytes.HasPrefix(head, pngMagic):
		return pngSize(head)
	case bytes.HasPrefix(head, tiffII), bytes.HasPrefix(head, bigII):
		return tiffSize(r, size, head, binary.LittleEndian)
	case bytes.HasPrefix(head, tiffMM), bytes.HasPrefix(head, bigMM):
		return tiffSize(r, size, head, binary.BigEndian)
	}
	return 0, 0, errNotStill
}

// pngSize reads the IHDR chunk, which must come first (ISO/IEC 15948,
// 5.6): its length (13), type, then width and height as 4-byte big-endian
// numbers of at most 2^31-1 (11.2.2).
func pngSize(head []byte) (w, h int, err error) {
	const ihdrEnd = 8 + 8 + 8 // signature, length and type, width and height
	if len(head) < ihdrEnd || string(head[12:16]) != "IHDR" {
		return 0, 0, errors.New("PNG without its IHDR header chunk")
	}
	bw, bh := binary.BigEndian.Uint32(head[16:20]), binary.BigEndian.Uint32(head[20:24])
	if bw > 1<<31-1 || bh > 1<<31-1 {
		return 0, 0, fmt.Errorf("PNG header of %dx%d px, beyond the format's 2^31-1", bw, bh)
	}
	return int(bw), int(bh), nil
}

// TIFF tags and field types read for the size (TIFF 6.0, section 8 for the
// tags, section 2 for the types; BigTIFF adds LONG8).
const (
	tagImageWidth  = 256
	tagImageLength = 257
	typeShort      = 3
	typeLong       = 4
	typeLong8      = 16
	// maxTIFFEntries bounds the first directory's entries read: a frame's
	// directory has a few dozen; the count field allows 65 535 (2^64 in
	// BigTIFF), which a damaged file would make us read.
	maxTIFFEntries = 4096
)

// tiffSize reads ImageWidth and ImageLength from the first image file
// directory of a TIFF (TIFF 6.0, section 2) or BigTIFF file.
func tiffSize(r io.ReaderAt, size int64, head []byte, bo binary.ByteOrder) (w, h int, err error) {
	big := bo.Uint16(head[2:4]) == 43
	var ifd uint64
	countLen, entryLen := 2, 12
	switch {
	case !big && len(head) >= 8:
		ifd = uint64(bo.Uint32(head[4:8]))
	case big && len(head) >= 16 && bo.Uint16(head[4:6]) == 8:
		ifd = bo.Uint64(head[8:16])
		countLen, entryLen = 8, 20
	default:
		return 0, 0, errors.New("TIFF header cut short")
	}
	if ifd < 8 || ifd >= uint64(size) {
		return 0, 0, fmt.Errorf("TIFF header points to its first directory at byte %d, outside the %d-byte file", ifd, size)
	}
	cb := make([]byte, countLen)
	if _, err := r.ReadAt(cb, int64(ifd)); err != nil {
		return 0, 0, fmt.Errorf("TIFF directory at byte %d cut short", ifd)
	}
	var count uint64
	if big {
		count = bo.Uint64(cb)
	} else {
		count = uint64(bo.Uint16(cb))
	}
	count = min(count, maxTIFFEntries, (uint64(size)-ifd)/uint64(entryLen))
	entries := make([]byte, int(count)*entryLen)
	if _, err := r.ReadAt(entries, int64(ifd)+int64(countLen)); err != nil && err != io.EOF {
		return 0, 0, err
	}
	w, h = -1, -1
	for e := entries; len(e) >= entryLen; e = e[entryLen:] {
		tag, typ := bo.Uint16(e[0:2]), bo.Uint16(e[2:4])
		val := e[8:12]
		if big {
			val = e[12:20]
		}
		var v uint64
		switch typ {
		case typeShort:
			v = uint64(bo.Uint16(val[:2]))
		case typeLong:
			v = uint64(bo.Uint32(val[:4]))
		case typeLong8:
			if !big {
				continue
			}
			v = bo.Uint64(val)
		default:
			continue
		}
		v = min(v, 1<<31-1)
		switch tag {
		case tagImageWidth:
			w = int(v)
		case tagImageLength:
			h = int(v)
		}
	}
	if w < 0 || h < 0 {
		return 0, 0, errors.New("TIFF's first directory gives no image width or length")
	}
	return w, h, nil
}
