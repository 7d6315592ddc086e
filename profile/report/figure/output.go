package figure

import (
	"bytes"
	"encoding/binary"
	"errors"
	"fmt"
	"hash/crc32"
	"image/color"
	"image/png"
	"math"

	"gonum.org/v1/plot/vg"
	"gonum.org/v1/plot/vg/draw"
	"gonum.org/v1/plot/vg/vgimg"
	"gonum.org/v1/plot/vg/vgsvg"
)

// Figure is one rendered figure in the three formats a journal takes, and
// the data it plots.
type Figure struct {
	// PNG is a raster at DPI with a pHYs chunk saying so; SVG and PDF are
	// vector files (text as text; the PDF embeds its face).
	PNG, SVG, PDF []byte
	// CSV is the plotted data, one header row with units then one row per
	// plotted value (figure_NAME.csv beside the figure).
	CSV []byte
	// WidthCM and HeightCM are the figure's size, cm.
	WidthCM, HeightCM float64
}

const cmPerInch = 2.54

// cm converts centimetres to a vg length.
func cm(v float64) vg.Length { return vg.Length(v / cmPerInch * float64(vg.Inch)) }

// render draws with paint on a canvas of the given size, once for each
// format. gonum/plot reports bad data by panicking; the panic comes back
// as an error.
func render(wCM, hCM float64, paint func(dc draw.Canvas)) (f *Figure, err error) {
	defer func() {
		if r := recover(); r != nil {
			f, err = nil, fmt.Errorf("figure: drawing failed: %v", r)
		}
	}()
	w, h := cm(wCM), cm(hCM)
	img := vgimg.NewWith(vgimg.UseWH(w, h), vgimg.UseDPI(DPI), vgimg.UseBackgroundColor(color.White))
	paint(draw.New(img))
	var pngBuf bytes.Buffer
	// Fastest deflate: the files come out about a third larger than with the
	// default level and are written several times faster.
	enc := png.Encoder{CompressionLevel: png.BestSpeed}
	if err := enc.Encode(&pngBuf, img.Image()); err != nil {
		return nil, fmt.Errorf("figure: png: %w", err)
	}
	pngB, err := withPHYs(pngBuf.Bytes(), DPI)
	if err != nil {
		return nil, err
	}

	svg := vgsvg.NewWith(vgsvg.UseWH(w, h), vgsvg.EmbedFonts(false))
	paint(draw.New(svg))
	var svgBuf bytes.Buffer
	if _, err := svg.WriteTo(&svgBuf); err != nil {
		return nil, fmt.Errorf("figure: svg: %w", err)
	}

	pdf := newPDF(w, h)
	white(pdf, w, h)
	paint(draw.New(pdf))
	var pdfBuf bytes.Buffer
	if _, err := pdf.WriteTo(&pdfBuf); err != nil {
		return nil, fmt.Errorf("figure: pdf: %w", err)
	}
	return &Figure{PNG: pngB, SVG: svgFontList(svgBuf.Bytes()), PDF: pdfBuf.Bytes(), WidthCM: wCM, HeightCM: hCM}, nil
}

// white paints the page white, as the PNG's background.
func white(c vg.Canvas, w, h vg.Length) {
	c.SetColor(color.White)
	c.Fill(vg.Rectangle{Max: vg.Point{X: w, Y: h}}.Path())
}

// svgFontList replaces the single font family gonum's SVG writer names with
// House.SVGFontFamily.
func svgFontList(svg []byte) []byte {
	one := []byte("font-family:Liberation Sans;")
	list := []byte("font-family:" + House.SVGFontFamily + ";")
	return bytes.ReplaceAll(svg, one, list)
}

// metresPerInch converts dpi to the pixels per metre of pHYs.
const metresPerInch = 0.0254

// pngSignature is the 8-byte signature every PNG file starts with.
var pngSignature = []byte("\x89PNG\r\n\x1a\n")

// withPHYs returns the PNG file b with a pHYs chunk after its IHDR chunk:
// dpi in both directions, as pixels per metre (unit specifier 1). The
// chunk is defined in the PNG specification (W3C Recommendation, Portable
// Network Graphics (PNG) Specification, 2nd ed., 2003 = ISO/IEC
// 15948:2004, section 11.3.5.3): four bytes of pixels per unit in x, four
// in y, one byte of unit, all big-endian, before the first IDAT.
func withPHYs(b []byte, dpi float64) ([]byte, error) {
	const ihdrEnd = 8 + 4 + 4 + 13 + 4 // signature, length, type, data, CRC
	if len(b) < ihdrEnd || !bytes.Equal(b[:8], pngSignature) || string(b[12:16]) != "IHDR" {
		return nil, errors.New("figure: png: no IHDR chunk after the signature")
	}
	ppm := uint32(math.Round(dpi / metresPerInch))
	chunk := make([]byte, 4+4+9+4)
	binary.BigEndian.PutUint32(chunk[0:], 9)
	copy(chunk[4:], "pHYs")
	binary.BigEndian.PutUint32(chunk[8:], ppm)
	binary.BigEndian.PutUint32(chunk[12:], ppm)
	chunk[16] = 1 // the unit is the metre
	binary.BigEndian.PutUint32(chunk[17:], crc32.ChecksumIEEE(chunk[4:17]))
	out := make([]byte, 0, len(b)+len(chunk))
	out = append(out, b[:ihdrEnd]...)
	out = append(out, chunk...)
	return append(out, b[ihdrEnd:]...), nil
}
