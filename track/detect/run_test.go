package detect

import (
	"errors"
	"math/rand/v2"
	"reflect"
	"strings"
	"testing"

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
