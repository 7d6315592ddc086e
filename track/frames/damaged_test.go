package frames

import (
	"math/rand/v2"
	"strings"
	"testing"

	"gocv.io/x/gocv"
)

// TestJPEGDamage checks that a JPEG encoded by OpenCV passes jpegDamage
// and that the same bytes with a stretch overwritten by random bytes, or
// without their start-of-image marker, do not.
func TestJPEGDamage(t *testing.T) {
	img := gocv.NewMatWithSize(240, 320, gocv.MatTypeCV8UC1)
	defer img.Close()
	gocv.RandU(&img, gocv.NewScalar(0, 0, 0, 0), gocv.NewScalar(255, 0, 0, 0))
	buf, err := gocv.IMEncode(gocv.JPEGFileExt, img)
	if err != nil {
		t.Fatal(err)
	}
	defer buf.Close()
	good := append([]byte(nil), buf.GetBytes()...)
	if why := jpegDamage(good); why != "" {
		t.Fatalf("an undamaged JPEG: %s", why)
	}
	rng := rand.New(rand.NewPCG(3, 4))
	for trial := range 20 {
		bad := append([]byte(nil), good...)
		from := len(bad)/4 + rng.IntN(len(bad)/2)
		for i := from; i < min(len(bad)-2, from+4096); i++ {
			bad[i] = byte(rng.IntN(256))
		}
		if why := jpegDamage(bad); !strings.Contains(why, "damaged JPEG data") {
			t.Errorf("trial %d: 4 kB of random bytes from byte %d of %d not found (%q)", trial, from, len(bad), why)
		}
	}
	if why := jpegDamage(good[2:]); why == "" {
		t.Error("a JPEG without its start-of-image marker passed")
	}
}
