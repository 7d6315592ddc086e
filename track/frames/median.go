package frames

import (
	"fmt"
	"gaptrace/calib/robust"
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
// times the frame size (one or two bytes per pixel). A Packets source
// (Motion JPEG) is decoded on all cores.
func Median(src Source, maxFrames int) (gocv.Mat, error) {
	if maxFrames < 1 {
		return gocv.NewMat(), fmt.Errorf("frames: median of %d frames: need at least 1", maxFrames)
	}
	info := src.Info()
	held, err := readHeld(src, maxFrames)
	defer closeHeld(held)
	if err != nil {
		return gocv.NewMat(), err
	}
	if len(held) == 0 {
		return gocv.NewMat(), fmt.Errorf("frames: %s: median: %w in the range", info.Path, errEmpty)
	}
	if info.BitDepth == 16 {
		return medianOfHeld(held, info, (*gocv.Mat).DataPtrUint16)
	}
	return medianOfHeld(held, info, (*gocv.Mat).DataPtrUint8)
}

// medianOfStack returns the per-pixel median of the frames' pixels in stack
// as a CV_32F Mat, computed on GOMAXPROCS goroutines.
func medianOfStack[T uint8 | uint16](stack [][]T, info Info) gocv.Mat {
	nPx := info.WidthPx * info.HeightPx
	k := len(stack)
	out := gocv.NewMatWithSize(info.HeightPx, info.WidthPx, gocv.MatTypeCV32F)
	dst, _ := out.DataPtrFloat32() // a new continuous CV_32F Mat
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
			// One pixel's values gathered from the frames: k streams read
			// in step, so every frame is read once, in order.
			buf := make([]T, k)
			_, is8 := any(buf).([]uint8)
			for p := lo; p < hi; p++ {
				for f, fr := range stack {
					buf[f] = fr[p]
				}
				if is8 {
					dst[p] = medianU8(any(buf).([]uint8))
				} else {
					dst[p] = medianOf(buf)
				}
			}
		}()
	}
	wg.Wait()
	return out
}

// medianOf returns the median of v, reordering v.
func medianOf[T uint8 | uint16](v []T) float32 {
	n := len(v)
	h := n / 2
	hi := float32(robust.SelectKth(v, h))
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

// kthU8 returns the k-th smallest value of v (k from 0). Each histogram is
// counted in two interleaved halves, so that runs of equal values (the
// usual case: a pixel's level changes little from frame to frame) do not
// make every increment wait for the previous one.
func kthU8(v []uint8, k int) uint8 {
	var c0, c1 [16]int32
	i := 0
	for ; i+1 < len(v); i += 2 {
		c0[v[i]>>4]++
		c1[v[i+1]>>4]++
	}
	if i < len(v) {
		c0[v[i]>>4]++
	}
	b := 0
	for ; b < 15 && k >= int(c0[b]+c1[b]); b++ {
		k -= int(c0[b] + c1[b])
	}
	var f0, f1 [16]int32
	hb := uint8(b)
	// in is 1 for a value in the chosen sixteenth, else 0, without a
	// branch: the values straddle the boundary unpredictably.
	in := func(x uint8) int32 { return int32((uint32(x>>4^hb) - 1) >> 31) }
	for i = 0; i+1 < len(v); i += 2 {
		x, y := v[i], v[i+1]
		f0[x&15] += in(x)
		f1[y&15] += in(y)
	}
	if i < len(v) {
		f0[v[i]&15] += in(v[i])
	}
	f := 0
	for ; f < 15 && k >= int(f0[f]+f1[f]); f++ {
		k -= int(f0[f] + f1[f])
	}
	return uint8(b<<4 | f)
}
