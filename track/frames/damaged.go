package frames

import (
	"bytes"
	"fmt"
)

// DamagedError is a video frame that cannot be read or decoded: the
// recording is truncated or damaged from Frame on. The frames before it
// were read.
type DamagedError struct {
	Path  string
	Frame int    // the first frame that cannot be read
	Of    int    // the frames the container announces (-1: unknown)
	Why   string // what was wrong
}

// Error says which frame of which file, and why.
func (e *DamagedError) Error() string {
	if e.Of >= 0 {
		return fmt.Sprintf("frames: %s: cannot read frame %d of %d (%s)", e.Path, e.Frame, e.Of, e.Why)
	}
	return fmt.Sprintf("frames: %s: cannot read frame %d (%s)", e.Path, e.Frame, e.Why)
}

// jpegDamage returns what is wrong with a JPEG packet whose bytes were
// overwritten (a disk or camera that failed mid-recording), or "" when
// nothing is seen. The decoder conceals such damage and returns an image
// of garbage, so the packet is checked first: it must begin with the SOI
// marker and, in its entropy-coded data after the first SOS marker, every
// 0xFF byte must be followed by a stuffed 0x00, a restart marker (RSTn),
// EOI, fill bytes or one of the markers that may stand between the scans
// of a progressive image (DHT, SOS, DQT, DRI, COM) (ITU-T T.81, 1992,
// B.1.1.2 and F.1.2.3: markers are not allowed in entropy-coded data,
// where an 0xFF byte is followed by a stuffed zero). Random bytes give a
// forbidden marker at about one 0xFF in twenty.
func jpegDamage(p []byte) string {
	if len(p) < 4 || p[0] != 0xFF || p[1] != 0xD8 {
		return "damaged JPEG data: no start-of-image marker"
	}
	i := 2
	// Marker segments up to the first start of scan.
	for {
		for i < len(p) && p[i] == 0xFF && i+1 < len(p) && p[i+1] == 0xFF {
			i++ // fill bytes
		}
		if i+4 > len(p) || p[i] != 0xFF {
			return "damaged JPEG data: broken marker segments"
		}
		m := p[i+1]
		n := int(p[i+2])<<8 | int(p[i+3])
		if n < 2 {
			return "damaged JPEG data: broken marker segments"
		}
		i += 2 + n
		if m == 0xDA {
			break
		}
	}
	for ; i+1 < len(p); i++ {
		// The next 0xFF (a vectorised search: most bytes are data).
		k := bytes.IndexByte(p[i:len(p)-1], 0xFF)
		if k < 0 {
			break
		}
		i += k
		switch b := p[i+1]; {
		case b == 0x00, b >= 0xD0 && b <= 0xD7, b == 0xFF:
		case b == 0xD9:
			return ""
		case b == 0xC4, b == 0xDA, b == 0xDB, b == 0xDD, b == 0xFE:
		default:
			return fmt.Sprintf("damaged JPEG data: marker 0x%02X inside the image data", b)
		}
	}
	return ""
}
