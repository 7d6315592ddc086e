package frames_test

import (
	"errors"
	"fmt"
	"io"
	"os"
	"path/filepath"

	"gaptrace/track/frames"
	"gocv.io/x/gocv"
)

// Open a folder of 16-bit frames, read every second frame and take the
// temporal median of the whole folder as background.
func ExampleOpen() {
	dir, _ := os.MkdirTemp("", "frames-example")
	defer os.RemoveAll(dir)
	for f := 0; f < 5; f++ {
		m := gocv.NewMatWithSizeFromScalar(gocv.NewScalar(float64(1000*f), 0, 0, 0), 8, 12, gocv.MatTypeCV16U)
		gocv.IMWrite(filepath.Join(dir, fmt.Sprintf("frame%d.png", f)), m)
		m.Close()
	}

	src, err := frames.Open(dir, 50, frames.Range{First: 0, Last: -1, Step: 2})
	if err != nil {
		fmt.Println(err)
		return
	}
	defer src.Close()
	info := src.Info()
	fmt.Printf("%d frames of %dx%d px, %d bit, %g fps\n", info.Frames, info.WidthPx, info.HeightPx, info.BitDepth, info.FPS)
	img := gocv.NewMat()
	defer img.Close()
	for {
		i, err := src.Next(&img)
		if errors.Is(err, io.EOF) {
			break
		}
		if err != nil {
			fmt.Println(err)
			return
		}
		v, _ := img.DataPtrUint16()
		fmt.Println("frame", i, "grey", v[0])
	}

	all, _ := frames.Open(dir, 0, frames.All)
	defer all.Close()
	bg, _ := frames.Median(all, 100)
	defer bg.Close()
	px, _ := bg.DataPtrFloat32()
	fmt.Println("median grey", px[0])
	// Output:
	// 5 frames of 12x8 px, 16 bit, 50 fps
	// frame 0 grey 0
	// frame 2 grey 2000
	// frame 4 grey 4000
	// median grey 2000
}

// Decode the first frames of a recording once: take their median for the
// background, then read every frame, the first ones from memory.
func ExampleReadHead() {
	dir, _ := os.MkdirTemp("", "head-example")
	defer os.RemoveAll(dir)
	for f := 0; f < 6; f++ {
		m := gocv.NewMatWithSizeFromScalar(gocv.NewScalar(float64(10*f), 0, 0, 0), 8, 12, gocv.MatTypeCV8U)
		gocv.IMWrite(filepath.Join(dir, fmt.Sprintf("frame%d.png", f)), m)
		m.Close()
	}
	src, err := frames.Open(dir, 50, frames.All)
	if err != nil {
		fmt.Println(err)
		return
	}
	head, err := frames.ReadHead(src, 3)
	if err != nil {
		src.Close()
		fmt.Println(err)
		return
	}
	defer head.Close() // closes src too
	bg, _ := head.Median()
	px, _ := bg.DataPtrFloat32()
	fmt.Println("median of", head.Len(), "frames:", px[0])
	bg.Close()
	head.ReadAhead(2) // while the caller works on the median
	img := gocv.NewMat()
	defer img.Close()
	n := 0
	for {
		_, err := head.Next(&img)
		if errors.Is(err, io.EOF) {
			break
		}
		if err != nil {
			fmt.Println(err)
			return
		}
		n++
	}
	fmt.Println("frames read:", n)
	// Output:
	// median of 3 frames: 10
	// frames read: 6
}
