package frames

import (
	"encoding/binary"
	"errors"
	"fmt"
	"io"
	"math"
	"os"
	"slices"
)

// Container facts read from an MP4 or QuickTime file's boxes (ISO/IEC
// 14496-12, the ISO base media file format): the presentation time of every
// video frame, from the decoding-time table (stts) and the composition
// offsets (ctts), and the display rotation from the track header's matrix
// (tkhd). OpenCV's reader gives the time of a frame as it decodes it, but
// not for the frames a decoder with B-frames hands out after the file has
// ended (it reports 0 for them), so the times come from the container.

// mp4Timing is what readMP4 found in the first video track.
type mp4Timing struct {
	// TimesS are the presentation times of the frames in presentation
	// order (the order decoders return them), s, from the first frame.
	TimesS []float64
	// RotationDeg is the clockwise rotation for display, 0, 90, 180 or
	// 270; -1 when the matrix is not a rotation by a multiple of 90 deg.
	RotationDeg int
}

// Bounds of readMP4: a damaged or hostile file must not make it allocate
// without bound.
const (
	// maxMoovBytes bounds the movie box read into memory. Its tables take
	// about 12 bytes per frame, so 256 MiB holds some twenty million frames,
	// more than a day at 200 frames/s.
	maxMoovBytes = 256 << 20
	// maxMP4Frames bounds the frames of the tables (the same twenty
	// million).
	maxMP4Frames = 20_000_000
	// maxBoxDepth bounds the nesting followed.
	maxBoxDepth = 8
)

// errNotMP4 is returned for a file that is not an MP4 or QuickTime file.
var errNotMP4 = errors.New("not an MP4 or QuickTime file")

// readMP4File reads the timing of the first video track of the file at
// path; errNotMP4 when it is not such a file.
func readMP4File(path string) (*mp4Timing, error) {
	f, err := os.Open(path)
	if err != nil {
		return nil, err
	}
	defer f.Close()
	st, err := f.Stat()
	if err != nil {
		return nil, err
	}
	return readMP4(f, st.Size())
}

// readMP4 reads the timing of the first video track from an MP4 file of
// size bytes.
func readMP4(r io.ReaderAt, size int64) (*mp4Timing, error) {
	var hdr [16]byte
	off := int64(0)
	first := true
	for off+8 <= size {
		if _, err := r.ReadAt(hdr[:8], off); err != nil {
			return nil, err
		}
		boxSize := int64(binary.BigEndian.Uint32(hdr[:4]))
		typ := string(hdr[4:8])
		head := int64(8)
		switch boxSize {
		case 0:
			boxSize = size - off
		case 1:
			if _, err := r.ReadAt(hdr[8:16], off+8); err != nil {
				return nil, err
			}
			boxSize = int64(binary.BigEndian.Uint64(hdr[8:16]))
			head = 16
		}
		if first {
			// The first box of an MP4 or QuickTime file is ftyp, or in old
			// QuickTime files one of these.
			switch typ {
			case "ftyp", "moov", "mdat", "wide", "free", "skip":
			default:
				return nil, errNotMP4
			}
			first = false
		}
		if boxSize < head || boxSize > size-off {
			return nil, fmt.Errorf("box %q at byte %d has size %d past the end of the file", typ, off, boxSize)
		}
		if typ == "moov" {
			n := boxSize - head
			if n > maxMoovBytes {
				return nil, fmt.Errorf("movie box of %d bytes is larger than %d", n, maxMoovBytes)
			}
			b := make([]byte, n)
			if _, err := r.ReadAt(b, off+head); err != nil {
				return nil, err
			}
			return parseMoov(b)
		}
		off += boxSize
	}
	if first {
		return nil, errNotMP4
	}
	return nil, errors.New("no movie box (moov)")
}

// box is one box inside a parent's payload.
type box struct {
	typ  string
	body []byte
}

// children splits a payload into its boxes.
func children(b []byte) ([]box, error) {
	var out []box
	for len(b) >= 8 {
		n := uint64(binary.BigEndian.Uint32(b[:4]))
		head := uint64(8)
		if n == 1 {
			if len(b) < 16 {
				return nil, errors.New("truncated box header")
			}
			n, head = binary.BigEndian.Uint64(b[8:16]), 16
		} else if n == 0 {
			n = uint64(len(b))
		}
		if n < head || n > uint64(len(b)) {
			return nil, fmt.Errorf("box %q of size %d in %d bytes", b[4:8], n, len(b))
		}
		out = append(out, box{string(b[4:8]), b[head:n]})
		b = b[n:]
	}
	return out, nil
}

// find returns the body of the first box along the path of types.
func find(b []byte, path ...string) ([]byte, bool) {
	if len(path) > maxBoxDepth {
		return nil, false
	}
	for _, p := range path {
		bs, err := children(b)
		if err != nil {
			return nil, false
		}
		found := false
		for _, c := range bs {
			if c.typ == p {
				b, found = c.body, true
				break
			}
		}
		if !found {
			return nil, false
		}
	}
	return b, true
}

// parseMoov reads the first video track of a movie box.
func parseMoov(moov []byte) (*mp4Timing, error) {
	bs, err := children(moov)
	if err != nil {
		return nil, err
	}
	for _, t := range bs {
		if t.typ != "trak" {
			continue
		}
		hdlr, ok := find(t.body, "mdia", "hdlr")
		if !ok || len(hdlr) < 12 || string(hdlr[8:12]) != "vide" {
			continue
		}
		return parseTrak(t.body)
	}
	return nil, errors.New("no video track")
}

// parseTrak reads a video track's times and rotation.
func parseTrak(trak []byte) (*mp4Timing, error) {
	mdhd, ok := find(trak, "mdia", "mdhd")
	if !ok || len(mdhd) < 4 {
		return nil, errors.New("video track without a media header")
	}
	var scale uint32
	switch mdhd[0] {
	case 0:
		if len(mdhd) < 16 {
			return nil, errors.New("short media header")
		}
		scale = binary.BigEndian.Uint32(mdhd[12:16])
	case 1:
		if len(mdhd) < 24 {
			return nil, errors.New("short media header")
		}
		scale = binary.BigEndian.Uint32(mdhd[20:24])
	default:
		return nil, fmt.Errorf("media header version %d", mdhd[0])
	}
	if scale == 0 {
		return nil, errors.New("media time scale 0")
	}
	stbl, ok := find(trak, "mdia", "minf", "stbl")
	if !ok {
		return nil, errors.New("video track without a sample table")
	}
	stts, ok := find(stbl, "stts")
	if !ok {
		return nil, errors.New("video track without a time-to-sample table")
	}
	dts, err := decodeTimes(stts)
	if err != nil {
		return nil, err
	}
	if ctts, ok := find(stbl, "ctts"); ok {
		if err := addOffsets(dts, ctts); err != nil {
			return nil, err
		}
	}
	slices.Sort(dts)
	t := &mp4Timing{TimesS: make([]float64, len(dts)), RotationDeg: 0}
	for i, d := range dts {
		t.TimesS[i] = float64(d-dts[0]) / float64(scale)
	}
	if tkhd, ok := find(trak, "tkhd"); ok {
		t.RotationDeg = rotation(tkhd)
	}
	return t, nil
}

// decodeTimes expands a time-to-sample table into each sample's decoding
// time, in the media's time scale.
func decodeTimes(stts []byte) ([]int64, error) {
	if len(stts) < 8 {
		return nil, errors.New("short time-to-sample table")
	}
	n := binary.BigEndian.Uint32(stts[4:8])
	if uint64(len(stts)-8) < uint64(n)*8 {
		return nil, fmt.Errorf("time-to-sample table of %d entries in %d bytes", n, len(stts))
	}
	total := uint64(0)
	for i := uint32(0); i < n; i++ {
		total += uint64(binary.BigEndian.Uint32(stts[8+8*i:]))
		if total > maxMP4Frames {
			return nil, fmt.Errorf("time-to-sample table of more than %d frames", maxMP4Frames)
		}
	}
	out := make([]int64, 0, total)
	t := int64(0)
	for i := uint32(0); i < n; i++ {
		count := binary.BigEndian.Uint32(stts[8+8*i:])
		delta := int64(binary.BigEndian.Uint32(stts[12+8*i:]))
		for range count {
			out = append(out, t)
			t += delta
		}
	}
	return out, nil
}

// addOffsets adds a composition-offset table to the decoding times.
func addOffsets(dts []int64, ctts []byte) error {
	if len(ctts) < 8 {
		return errors.New("short composition-offset table")
	}
	signed := ctts[0] == 1
	n := binary.BigEndian.Uint32(ctts[4:8])
	if uint64(len(ctts)-8) < uint64(n)*8 {
		return fmt.Errorf("composition-offset table of %d entries in %d bytes", n, len(ctts))
	}
	k := 0
	for i := uint32(0); i < n && k < len(dts); i++ {
		count := binary.BigEndian.Uint32(ctts[8+8*i:])
		raw := binary.BigEndian.Uint32(ctts[12+8*i:])
		off := int64(raw)
		if signed {
			off = int64(int32(raw))
		}
		for c := uint32(0); c < count && k < len(dts); c++ {
			dts[k] += off
			k++
		}
	}
	return nil
}

// rotation reads the display rotation from a track header's matrix: the
// clockwise angle by which the stored frames are turned for display.
func rotation(tkhd []byte) int {
	// Version 0: 4 bytes of version and flags, then 20 bytes of times,
	// id and duration; version 1: 32. Then 8 reserved, layer, group,
	// volume and 2 reserved (16 bytes in all) and the matrix.
	at := 4 + 20 + 16
	if len(tkhd) > 0 && tkhd[0] == 1 {
		at = 4 + 32 + 16
	}
	if len(tkhd) < at+36 {
		return 0
	}
	m := func(i int) float64 { return float64(int32(binary.BigEndian.Uint32(tkhd[at+4*i:]))) / 65536 }
	a, b, c, d := m(0), m(1), m(3), m(4)
	// The matrix maps (x, y) to (a x + c y, b x + d y); a rotation by
	// theta clockwise on screen (y down) is a = d = cos, b = sin, c = -sin.
	deg := math.Atan2(b, a) * 180 / math.Pi
	q := int(math.Round(deg/90)) * 90
	if math.Abs(deg-float64(q)) > 1 || math.Abs(a-d) > 1e-3 || math.Abs(b+c) > 1e-3 {
		return -1
	}
	return (q%360 + 360) % 360
}
