package tracks

import (
	"encoding/binary"
	"math"
	"os"
)

// RecordBytes is the size of a point's binary record (AppendRecord): its
// frame (uint32), seven float64 (TS, XPx, YPx, XUM, YUM, Brightness,
// SizePx) and a NearWall byte, little-endian. The track id is not in it.
const RecordBytes = 4 + 7*8 + 1

// AppendRecord appends p's binary record to b.
func AppendRecord(b []byte, p Point) []byte {
	b = binary.LittleEndian.AppendUint32(b, uint32(p.Frame))
	for _, v := range [...]float64{p.TS, p.XPx, p.YPx, p.XUM, p.YUM, p.Brightness, p.SizePx} {
		b = binary.LittleEndian.AppendUint64(b, math.Float64bits(v))
	}
	if p.NearWall {
		return append(b, 1)
	}
	return append(b, 0)
}

// DecodeRecord returns the point of track whose record (AppendRecord)
// starts b; b holds at least RecordBytes.
func DecodeRecord(b []byte, track int) Point {
	f := func(k int) float64 { return math.Float64frombits(binary.LittleEndian.Uint64(b[4+8*k:])) }
	return Point{Track: track, Frame: int(binary.LittleEndian.Uint32(b)), TS: f(0), XPx: f(1), YPx: f(2),
		XUM: f(3), YUM: f(4), Brightness: f(5), SizePx: f(6), NearWall: b[RecordBytes-1] == 1}
}

// TempFile makes an empty file named SpoolPrefix… in dir (os.TempDir when
// dir is "") and unlinks it at once where the system keeps an open file
// readable without a name, so that nothing is left for an interrupted run
// to clean. name is the file's name while the caller must still remove
// it, "" once it is unlinked.
func TempFile(dir string) (f *os.File, name string, err error) {
	f, err = os.CreateTemp(dir, SpoolPrefix+"*")
	if err != nil {
		return nil, "", err
	}
	if err := os.Remove(f.Name()); err != nil {
		return f, f.Name(), nil
	}
	return f, "", nil
}

// CloseTemp closes f, a file of TempFile, and removes it when name (as
// TempFile returned it) says it is still there.
func CloseTemp(f *os.File, name string) error {
	err := f.Close()
	if name != "" {
		if rerr := os.Remove(name); err == nil {
			err = rerr
		}
	}
	return err
}
