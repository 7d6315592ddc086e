package synth

import "slices"

// noiseStream is the random stream of a colour channel's noise; the blue
// channel and the Bayer mosaic use the grey camera's.
func noiseStream(c int) int {
	switch c {
	case chanG:
		return streamNoiseG
	case chanR:
		return streamNoiseR
	}
	return streamNoise
}

// bayerChannel is the colour filter over pixel (x, y) of the RGGB mosaic.
func bayerChannel(x, y int) int {
	switch {
	case y%2 == 0 && x%2 == 0:
		return chanR
	case y%2 == 1 && x%2 == 1:
		return chanB
	}
	return chanG
}

// colourFrame draws a colour camera's frame into data, an interleaved BGR
// image of the scenario's bit depth.
func (r *Renderer) colourFrame(data []byte, frame int) error {
	s := &r.s
	w, h := s.WidthPx, s.HeightPx
	img := r.Expected(frame)
	if r.scratch == nil {
		r.scratch = make([]float64, w*h)
	}
	bd, gain, tint := s.bitDepth(), s.gain(), s.Colour.Tint
	if !s.Colour.Bayer {
		for c := range 3 {
			for i, v := range img {
				r.scratch[i] = v * tint[c]
			}
			AddNoise(r.scratch, s.ReadNoise, s.rng(noiseStream(c), frame))
			quantizeStrided(data, r.scratch, bd, gain, 3, c)
		}
		return nil
	}
	for j := range h {
		row, out := img[j*w:(j+1)*w], r.scratch[j*w:(j+1)*w]
		for i, v := range row {
			out[i] = v * tint[bayerChannel(i, j)]
		}
	}
	AddNoise(r.scratch, s.ReadNoise, s.rng(streamNoise, frame))
	n := w * h
	if bd == 16 {
		n *= 2
	}
	r.plane = slices.Grow(r.plane[:0], n)[:n]
	quantizeStrided(r.plane, r.scratch, bd, gain, 1, 0)
	demosaic(data, r.plane, w, h, bd)
	return nil
}

// quantizeStrided writes round(gain x v) of each value of img, clipped to
// the bit depth's range, into channel c of an interleaved image of stride
// channels (native little-endian 16-bit words for bit depth 16).
func quantizeStrided(dst []byte, img []float64, bitDepth int, gain float64, stride, c int) {
	if bitDepth == 16 {
		for i, v := range img {
			q := uint16(quantize(gain*v, 65535))
			k := 2 * (i*stride + c)
			dst[k], dst[k+1] = byte(q), byte(q>>8)
		}
		return
	}
	for i, v := range img {
		dst[i*stride+c] = uint8(quantize(gain*v, 255))
	}
}

// demosaic fills the interleaved BGR image dst from the RGGB mosaic plane
// by bilinear interpolation: each pixel keeps its own channel, and takes
// each missing one as the rounded mean of its nearest neighbours of that
// colour (the 2 beside or above and below, or the 4 orthogonal or diagonal
// ones), mirrored at the border without repeating the edge pixel.
func demosaic(dst, plane []byte, w, h, bitDepth int) {
	at := func(x, y int) uint32 {
		x, y = reflect101(x, w), reflect101(y, h)
		if bitDepth == 16 {
			k := 2 * (y*w + x)
			return uint32(plane[k]) | uint32(plane[k+1])<<8
		}
		return uint32(plane[y*w+x])
	}
	put := func(x, y, c int, v uint32) {
		k := (y*w+x)*3 + c
		if bitDepth == 16 {
			dst[2*k], dst[2*k+1] = byte(v), byte(v>>8)
			return
		}
		dst[k] = byte(v)
	}
	cross := func(x, y int) uint32 { return (at(x-1, y) + at(x+1, y) + at(x, y-1) + at(x, y+1) + 2) / 4 }
	diag := func(x, y int) uint32 {
		return (at(x-1, y-1) + at(x+1, y-1) + at(x-1, y+1) + at(x+1, y+1) + 2) / 4
	}
	horiz := func(x, y int) uint32 { return (at(x-1, y) + at(x+1, y) + 1) / 2 }
	vert := func(x, y int) uint32 { return (at(x, y-1) + at(x, y+1) + 1) / 2 }
	for y := range h {
		for x := range w {
			own := at(x, y)
			switch bayerChannel(x, y) {
			case chanR:
				put(x, y, chanR, own)
				put(x, y, chanG, cross(x, y))
				put(x, y, chanB, diag(x, y))
			case chanB:
				put(x, y, chanB, own)
				put(x, y, chanG, cross(x, y))
				put(x, y, chanR, diag(x, y))
			default:
				put(x, y, chanG, own)
				if y%2 == 0 { // a red row: red beside, blue above and below
					put(x, y, chanR, horiz(x, y))
					put(x, y, chanB, vert(x, y))
				} else {
					put(x, y, chanB, horiz(x, y))
					put(x, y, chanR, vert(x, y))
				}
			}
		}
	}
}

// reflect101 mirrors an index into [0, n) without repeating the edge
// (-1 -> 1, n -> n-2).
func reflect101(i, n int) int {
	if n == 1 {
		return 0
	}
	for i < 0 || i >= n {
		if i < 0 {
			i = -i
		}
		if i >= n {
			i = 2*(n-1) - i
		}
	}
	return i
}
