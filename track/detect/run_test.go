package detect

import (
	"errors"
	"math/rand/v2"
	"path/filepath"
	"reflect"
	"strings"
	"testing"

	"gaptrace/track/frames"
	"gocv.io/x/gocv"
)

// parallelFrames renders frames with tracers at random places, 8 bit.
func parallelFrames(t *testing.T, n int) ([]gocv.Mat, scene) {
	sc := scene{w: 160, h: 120, bgPhotons: 30, readNoise: 2, bitDepth: 8, gain: 1}
	rng := rand.New(rand.NewPCG(6, 6))
	var imgs []gocv.Mat
	for f := 0; f < n; f++ {
		var spots []spot
		for i := 0; i < 40; i++ {
			spots = append(spots, spot{8 + rng.Float64()*144, 8 + rng.Float64()*104, 1.25, sc.photonsFor(3+20*rng.Float64(), 1.25)})
		}
		imgs = append(imgs, sc.render(t, spots, rng))
	}
	return imgs, sc
}

// TestRunParallel runs the same frames with 1, 2, 3 and 8 workers: the
// detections, and the order they come in, must be identical.
func TestRunParallel(t *testing.T) {
	imgs, sc := parallelFrames(t, 13)
	defer closeAll(imgs)
	bg := sc.background(t)
	defer bg.Close()
	var ref [][]Detection
	for _, workers := range []int{1, 2, 3, 8} {
		var got [][]Detection
		var order []int
		err := Run(newMemSource(imgs), bg, Options{DiameterPx: 5, Workers: workers}, func(f int, d []Detection) error {
			order = append(order, f)
			got = append(got, d)
			return nil
		})
		if err != nil {
			t.Fatal(err)
		}
		for i, f := range order {
			if f != i {
				t.Fatalf("%d workers: frames emitted in order %v", workers, order)
			}
		}
		if ref == nil {
			ref = got
			n := 0
			for _, d := range got {
				n += len(d)
			}
			if n < 13*30 {
				t.Fatalf("only %d detections in 13 frames of 40 tracers", n)
			}
			continue
		}
		if !reflect.DeepEqual(ref, got) {
			t.Errorf("%d workers: detections differ from 1 worker", workers)
		}
	}
}

// TestRunErrorsParallel stops Run with an error from the source and from
// emit, with several workers, and checks that the error comes back.
func TestRunErrorsParallel(t *testing.T) {
	imgs, sc := parallelFrames(t, 10)
	defer closeAll(imgs)
	bg := sc.background(t)
	defer bg.Close()
	src := newMemSource(imgs)
	src.failAt = 6
	var seen []int
	err := Run(src, bg, Options{DiameterPx: 5, Workers: 3}, func(f int, d []Detection) error { seen = append(seen, f); return nil })
	if err == nil || !strings.Contains(err.Error(), "frame 6") {
		t.Errorf("source error: got %v", err)
	}
	if len(seen) != 6 {
		t.Errorf("frames before the bad one: %v, want 0..5", seen)
	}
	stop := errors.New("stop here")
	err = Run(newMemSource(imgs), bg, Options{DiameterPx: 5, Workers: 3}, func(f int, d []Detection) error {
		if f == 4 {
			return stop
		}
		return nil
	})
	if !errors.Is(err, stop) {
		t.Errorf("emit error: got %v", err)
	}
	small := gocv.NewMatWithSize(10, 10, gocv.MatTypeCV32F)
	defer small.Close()
	if err := Run(newMemSource(imgs), small, Options{DiameterPx: 5}, func(int, []Detection) error { return nil }); err == nil || !strings.Contains(err.Error(), "background is 10x10 px") {
		t.Errorf("wrong background size: got %v", err)
	}
}

// plainSource hides the Packets methods of a source, so that Run reads
// decoded frames from it.
type plainSource struct{ frames.Source }

// TestRunPacketsParallel runs an MJPEG video, whose frames the workers
// decode from packets, with 1 and 3 workers, and as decoded frames: the
// detections must be identical.
func TestRunPacketsParallel(t *testing.T) {
	imgs, _ := parallelFrames(t, 9)
	defer closeAll(imgs)
	path := filepath.Join(t.TempDir(), "v.avi")
	vw, err := gocv.VideoWriterFile(path, "MJPG", 50, imgs[0].Cols(), imgs[0].Rows(), false)
	if err != nil {
		t.Skipf("cannot write MJPEG: %v", err)
	}
	for _, m := range imgs {
		if err := vw.Write(m); err != nil {
			t.Fatal(err)
		}
	}
	vw.Close()
	none := gocv.NewMat()
	defer none.Close()
	var ref [][]Detection
	for _, tc := range []struct {
		workers int
		plain   bool
	}{{1, false}, {3, false}, {2, true}} {
		src, err := frames.Open(path, 0, frames.All)
		if err != nil {
			t.Fatal(err)
		}
		if _, ok := src.(frames.Packets); !ok {
			t.Fatal("MJPEG video not read as packets")
		}
		var s frames.Source = src
		if tc.plain {
			s = plainSource{src}
		}
		var got [][]Detection
		err = Run(s, none, Options{DiameterPx: 5, Workers: tc.workers}, func(f int, d []Detection) error {
			if f != len(got) {
				t.Fatalf("frame %d emitted after %d frames", f, len(got))
			}
			got = append(got, d)
			return nil
		})
		src.Close()
		if err != nil {
			t.Fatal(err)
		}
		if ref == nil {
			ref = got
			if len(ref) != len(imgs) || len(ref[0]) < 30 {
				t.Fatalf("%d frames, %d detections in the first", len(ref), len(ref[0]))
			}
			continue
		}
		if !reflect.DeepEqual(ref, got) {
			t.Errorf("%d workers, decoded frames %v: detections differ", tc.workers, tc.plain)
		}
	}
}
