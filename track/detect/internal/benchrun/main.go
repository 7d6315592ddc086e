// Command benchrun times the stages of detection over one recording: reading
// the frames alone, then reading and detecting with detect.Run, and prints
// the times in seconds. It is the detection half of cmd/scripts/bench-track.sh.
//
// Usage: benchrun [-d DIAMETER_PX] [-workers N] [-background] [-cpuprofile FILE] INPUT
package main

import (
	"errors"
	"flag"
	"fmt"
	"io"
	"os"
	"runtime/pprof"
	"time"

	"gaptrace/track/detect"
	"gaptrace/track/frames"
	"gocv.io/x/gocv"
)

// backgroundFrames is the number of frames of the median background with
// -background: enough for a stable median, few enough to be quick.
const backgroundFrames = 50

func main() {
	diam := flag.Float64("d", 5, "tracer diameter, px")
	workers := flag.Int("workers", 0, "detection workers (0: one per core)")
	withBg := flag.Bool("background", false, "subtract a temporal median of the first frames")
	prof := flag.String("cpuprofile", "", "write a CPU profile of the detection run to this file")
	flag.Parse()
	if *prof != "" {
		f, err := os.Create(*prof)
		if err != nil {
			fmt.Fprintln(os.Stderr, "benchrun:", err)
			os.Exit(1)
		}
		pprof.StartCPUProfile(f)
		defer pprof.StopCPUProfile()
	}
	if flag.NArg() != 1 {
		fmt.Fprintln(os.Stderr, "usage: benchrun [-d DIAMETER_PX] [-workers N] [-background] INPUT")
		os.Exit(2)
	}
	if err := run(flag.Arg(0), *diam, *workers, *withBg); err != nil {
		fmt.Fprintln(os.Stderr, "benchrun:", err)
		pprof.StopCPUProfile()
		os.Exit(1)
	}
}

func run(path string, diam float64, workers int, withBg bool) error {
	// Reading alone.
	t0 := time.Now()
	src, err := frames.Open(path, 0, frames.All)
	if err != nil {
		return err
	}
	m := gocv.NewMat()
	n := 0
	for {
		if _, err := src.Next(&m); errors.Is(err, io.EOF) {
			break
		} else if err != nil {
			return err
		}
		n++
	}
	m.Close()
	src.Close()
	read := time.Since(t0)

	bg := gocv.NewMat()
	defer bg.Close()
	t1 := time.Now()
	if withBg {
		s, err := frames.Open(path, 0, frames.Range{Last: backgroundFrames - 1})
		if err != nil {
			return err
		}
		med, err := frames.Median(s, backgroundFrames)
		s.Close()
		if err != nil {
			return err
		}
		bg.Close()
		bg = med
	}
	src, err = frames.Open(path, 0, frames.All)
	if err != nil {
		return err
	}
	defer src.Close()
	dets := 0
	err = detect.Run(src, bg, detect.Options{DiameterPx: diam, Workers: workers}, func(_ int, d []detect.Detection) error {
		dets += len(d)
		return nil
	})
	if err != nil {
		return err
	}
	all := time.Since(t1)
	fmt.Printf("frames %d\nread_s %.3f\ndetect_s %.3f\ndetections %d\n", n, read.Seconds(), all.Seconds(), dets)
	return nil
}
