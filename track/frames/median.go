package frames

import (
	"errors"
	"fmt"
	"io"
	"runtime"
	"sync"

	"gocv.io/x/gocv"
)

// Median reads at most maxFrames frames from src and returns their per-pixel
// temporal median as a CV_32F Mat in the frames' grey levels (the mean of the
// two middle values for an even count). The caller closes the Mat.
//
// Over a rest phase, or over a window long enough that each pixel is crossed
// by tracers less than half of the time, the median is the static scene:
// walls, reflections, dust and stuck particles, without the moving tracers.
// To spread the frames over a long recording, open src with a Range whose
// Step is the recording's length divided by maxFrames. Memory is maxFrames
// times the frame size (one or two bytes per pixel).
func Median(src Source, maxFrames int) (gocv.Mat, error) {
	if maxFrames < 1 {
		return gocv.NewMat(), fmt.Errorf("frames: median of %d frames: need at least 1", maxFrames)
	}
	info := src.Info()
	if info.BitDepth == 16 {
		return median[uint16](src, info, maxFrames, (*gocv.Mat).DataPtrUint16)
	}
	return median[uint8](src, info, maxFrames, (*gocv.Mat).DataPtrUint8)
}

func median[T uint8 | uint16](src Source, info Info, maxFrames int, data func(*gocv.Mat) ([]T, error)) (gocv.Mat, error) {
	nPx := info.WidthPx * info.HeightPx
	n := maxFrames
	if c := info.Frames; c > 0 && c < n {
		n = c
	}
	// stack holds frame k of pixel p at p*maxFrames+k, so that the values of
	// one pixel are contiguous for the selection.
	stride := n
	stack := make([]T, nPx*stride)
	frame := gocv.NewMat()
	defer frame.Close()
	k := 0
	for k < maxFrames {
		i, err := src.Next(&frame)
		if errors.Is(err, io.EOF) {
			break
		}
		if err != nil {
			return gocv.NewMat(), err
		}
		px, err := data(&frame)
		if err != nil || len(px) != nPx {
			return gocv.NewMat(), fmt.Errorf("frames: %s: frame %d: not a %dx%d %d-bit grey image", info.Path, i, info.WidthPx, info.HeightPx, info.BitDepth)
		}
		if k == stride { // more frames than the container said
			grown := make([]T, nPx*maxFrames)
			for p := 0; p < nPx; p++ {
				copy(grown[p*maxFrames:], stack[p*stride:p*stride+stride])
			}
			stack, stride = grown, maxFrames
		}
		for p, v := range px {
			stack[p*stride+k] = v
		}
		k++
	}
	if k == 0 {
		return gocv.NewMat(), fmt.Errorf("frames: %s: median: %w in the range", info.Path, errEmpty)
	}
	out := gocv.NewMatWithSize(info.HeightPx, info.WidthPx, gocv.MatTypeCV32F)
	dst, err := out.DataPtrFloat32()
	if err != nil {
		out.Close()
		return gocv.NewMat(), err
	}
	workers := runtime.GOMAXPROCS(0)
	var wg sync.WaitGroup
	chunk := (nPx + workers - 1) / workers
	for w := 0; w < workers; w++ {
		lo, hi := w*chunk, min((w+1)*chunk, nPx)
		if lo >= hi {
			break
		}
		wg.Add(1)
		go func() {
			defer wg.Done()
			buf := make([]T, k)
			if b8, ok := any(stack).([]uint8); ok {
				for p := lo; p < hi; p++ {
					dst[p] = medianU8(b8[p*stride : p*stride+k])
				}
				return
			}
			for p := lo; p < hi; p++ {
				copy(buf, stack[p*stride:p*stride+k])
				dst[p] = medianOf(buf)
			}
		}()
	}
	wg.Wait()
	return out, nil
}

// medianOf returns the median of v, reordering v.
func medianOf[T uint8 | uint16](v []T) float32 {
	n := len(v)
	h := n / 2
	hi := float32(selectKth(v, h))
	if n%2 == 1 {
		return hi
	}
	// The lower middle is the largest value left of h after selection.
	lo := v[0]
	for _, x := range v[1:h] {
		lo = max(lo, x)
	}
	return (float32(lo) + hi) / 2
}

// selectKth reorders v so that v[k] is the k-th smallest value, smaller or
// equal values before it and larger or equal after it, and returns v[k]
// (Hoare's selection).
func selectKth[T uint8 | uint16](v []T, k int) T {
	lo, hi := 0, len(v)-1
	for lo < hi {
		pivot := v[(lo+hi)/2]
		i, j := lo, hi
		for i <= j {
			for v[i] < pivot {
				i++
			}
			for v[j] > pivot {
				j--
			}
			if i <= j {
				v[i], v[j] = v[j], v[i]
				i++
				j--
			}
		}
		switch {
		case k <= j:
			hi = j
		case k >= i:
			lo = i
		default:
			return v[k]
		}
	}
	return v[k]
}

// medianU8 returns the median of v (the mean of the two middle values for
// an even count) by counting: a histogram of the high four bits finds the
// sixteenth of the range that holds the middle, a histogram of the low four
// bits of the values in it finds the value. Two passes over v, no
// reordering: faster than selection for the 8-bit stacks of Median.
func medianU8(v []uint8) float32 {
	n := len(v)
	hi := kthU8(v, n/2)
	if n%2 == 1 {
		return float32(hi)
	}
	return (float32(kthU8(v, n/2-1)) + float32(hi)) / 2
}

// kthU8 returns the k-th smallest value of v (k from 0).
func kthU8(v []uint8, k int) uint8 {
	var coarse [16]int
	for _, x := range v {
		coarse[x>>4]++
	}
	b := 0
	for ; b < 15 && k >= coarse[b]; b++ {
		k -= coarse[b]
	}
	var fine [16]int
	for _, x := range v {
		if int(x>>4) == b {
			fine[x&15]++
		}
	}
	f := 0
	for ; f < 15 && k >= fine[f]; f++ {
		k -= fine[f]
	}
	return uint8(b<<4 | f)
}
