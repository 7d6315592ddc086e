package walls_test

import (
	"testing"

	"gaptrace/calib/walls"
	"gaptrace/track/synth"
)

// BenchmarkFind finds the walls in the median of a 640x480 rendered video.
func BenchmarkFind(b *testing.B) {
	s, err := synth.Builtin("dark", 1)
	if err != nil {
		b.Fatal(err)
	}
	s.Frames = 20
	med := medianOf(b, s, 20)
	defer med.Close()
	b.ResetTimer()
	for range b.N {
		if _, err := walls.Find(med, walls.Options{}); err != nil {
			b.Fatal(err)
		}
	}
}
