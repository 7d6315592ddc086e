// Package figcheck reads back what the tests of the figures check in the
// files: the resolution a PNG declares, the page and text sizes of a PDF,
// and the text sizes and fonts of an SVG. It is written from the file
// formats' specifications, not from the code that writes the files, so a
// test that uses it checks the writer against the specification.
package figcheck

import (
	"bytes"
	"compress/zlib"
	"encoding/binary"
	"errors"
	"fmt"
	"hash/crc32"
	"io"
	"regexp"
	"strconv"
)

// MetresPerInch converts pixels per metre to dots per inch.
const MetresPerInch = 0.0254

// PHYs is the content of a PNG pHYs chunk.
type PHYs struct {
	// PerUnitX and PerUnitY are pixels per unit; Unit is 1 for the metre,
	// 0 for an unknown unit (only the aspect ratio is given).
	PerUnitX, PerUnitY uint32
	Unit               byte
}

// DPI returns the resolution in x and y in dots per inch, 0 when the unit
// is not the metre.
func (p PHYs) DPI() (x, y float64) {
	if p.Unit != 1 {
		return 0, 0
	}
	return float64(p.PerUnitX) * MetresPerInch, float64(p.PerUnitY) * MetresPerInch
}

// ReadPHYs walks the chunks of the PNG file b and returns its pHYs chunk.
// It fails when the file is not a PNG, a chunk's CRC is wrong, or the
// pHYs chunk is missing, repeated, of the wrong length or after the first
// IDAT. The chunk layout (length, type, data, CRC-32 over type and data)
// and pHYs (9 bytes: x and y pixels per unit as big-endian uint32, one
// unit byte; before IDAT) are from the PNG specification (W3C
// Recommendation, PNG 2nd ed., 2003 = ISO/IEC 15948:2004, sections 5.3 and
// 11.3.5.3).
func ReadPHYs(b []byte) (PHYs, error) {
	if !bytes.HasPrefix(b, []byte("\x89PNG\r\n\x1a\n")) {
		return PHYs{}, errors.New("not a PNG signature")
	}
	var out PHYs
	found, seenIDAT := false, false
	for off := 8; off < len(b); {
		if off+12 > len(b) {
			return PHYs{}, fmt.Errorf("truncated chunk at byte %d", off)
		}
		n := int(binary.BigEndian.Uint32(b[off:]))
		typ := string(b[off+4 : off+8])
		if off+12+n > len(b) {
			return PHYs{}, fmt.Errorf("chunk %s at byte %d runs past the end", typ, off)
		}
		data := b[off+8 : off+8+n]
		if got, want := binary.BigEndian.Uint32(b[off+8+n:]), crc32.ChecksumIEEE(b[off+4:off+8+n]); got != want {
			return PHYs{}, fmt.Errorf("chunk %s: CRC %08x, want %08x", typ, got, want)
		}
		switch typ {
		case "IDAT":
			seenIDAT = true
		case "pHYs":
			if found {
				return PHYs{}, errors.New("two pHYs chunks")
			}
			if seenIDAT {
				return PHYs{}, errors.New("pHYs after IDAT")
			}
			if n != 9 {
				return PHYs{}, fmt.Errorf("pHYs of %d bytes, want 9", n)
			}
			out = PHYs{binary.BigEndian.Uint32(data), binary.BigEndian.Uint32(data[4:]), data[8]}
			found = true
		}
		off += 12 + n
	}
	if !found {
		return PHYs{}, errors.New("no pHYs chunk")
	}
	return out, nil
}

// PDF holds what the tests check of a PDF file.
type PDF struct {
	// MediaBox is the first page's [llx lly urx ury], pt.
	MediaBox [4]float64
	// FontSizesPt are the sizes of every Tf operator in the page content.
	FontSizesPt []float64
	// Fonts counts the font descriptors, Embedded those with an embedded
	// font program (FontFile, FontFile2 or FontFile3).
	Fonts, Embedded int
}

var (
	mediaBox  = regexp.MustCompile(`/MediaBox\s*\[\s*([-0-9.]+)\s+([-0-9.]+)\s+([-0-9.]+)\s+([-0-9.]+)\s*\]`)
	stream    = regexp.MustCompile(`(?s)stream\r?\n(.*?)\r?\nendstream`)
	fontSize  = regexp.MustCompile(`/[^\s/]+\s+([0-9.]+)\s+Tf\b`)
	descr     = regexp.MustCompile(`/Type\s*/FontDescriptor\b`)
	fontFile  = regexp.MustCompile(`/FontFile[23]?\s+\d+\s+\d+\s+R`)
	objectEnd = []byte("endobj")
)

// ReadPDF reads the page size, the text sizes and the font embedding of a
// PDF file. Streams are inflated where they are Flate-compressed
// (ISO 32000-1:2008, 7.4.4); Tf is the operator that sets the text size
// (9.3.1), /MediaBox the page's boundary (7.7.3.3), /FontFile2 an embedded
// TrueType program (9.9).
func ReadPDF(b []byte) (PDF, error) {
	var out PDF
	m := mediaBox.FindSubmatch(b)
	if m == nil {
		return out, errors.New("no /MediaBox")
	}
	for i := range 4 {
		v, err := strconv.ParseFloat(string(m[i+1]), 64)
		if err != nil {
			return out, fmt.Errorf("/MediaBox: %v", err)
		}
		out.MediaBox[i] = v
	}
	for _, s := range stream.FindAllSubmatch(b, -1) {
		content := s[1]
		if r, err := zlib.NewReader(bytes.NewReader(content)); err == nil {
			if inflated, err := io.ReadAll(r); err == nil {
				content = inflated
			}
		}
		for _, f := range fontSize.FindAllSubmatch(content, -1) {
			v, err := strconv.ParseFloat(string(f[1]), 64)
			if err == nil {
				out.FontSizesPt = append(out.FontSizesPt, v)
			}
		}
	}
	// Each font descriptor object, up to its endobj.
	for _, loc := range descr.FindAllIndex(b, -1) {
		out.Fonts++
		end := bytes.Index(b[loc[0]:], objectEnd)
		if end < 0 {
			end = len(b) - loc[0]
		}
		if fontFile.Match(b[loc[0] : loc[0]+end]) {
			out.Embedded++
		}
	}
	return out, nil
}

// SVG holds what the tests check of an SVG file.
type SVG struct {
	// FontSizes are the font-size values of every text, in user units
	// (pt for gonum's SVGs, whose viewBox is in pt).
	FontSizes []float64
	// Families are the distinct font-family values.
	Families []string
	// WidthPt and HeightPt are the root element's size.
	WidthPt, HeightPt float64
}

var (
	svgSize   = regexp.MustCompile(`<svg[^>]*\swidth="([0-9.]+)pt"[^>]*\sheight="([0-9.]+)pt"`)
	svgFont   = regexp.MustCompile(`font-size:([0-9.]+)px`)
	svgFamily = regexp.MustCompile(`font-family:([^;"]+)`)
)

// ReadSVG reads the size and the text styles of an SVG file.
func ReadSVG(b []byte) (SVG, error) {
	var out SVG
	m := svgSize.FindSubmatch(b)
	if m == nil {
		return out, errors.New("no width and height in pt on the svg element")
	}
	out.WidthPt, _ = strconv.ParseFloat(string(m[1]), 64)
	out.HeightPt, _ = strconv.ParseFloat(string(m[2]), 64)
	for _, f := range svgFont.FindAllSubmatch(b, -1) {
		v, _ := strconv.ParseFloat(string(f[1]), 64)
		out.FontSizes = append(out.FontSizes, v)
	}
	seen := map[string]bool{}
	for _, f := range svgFamily.FindAllSubmatch(b, -1) {
		if s := string(f[1]); !seen[s] {
			seen[s] = true
			out.Families = append(out.Families, s)
		}
	}
	return out, nil
}
