package walls_test

import (
	"fmt"
	"testing"

	"gaptrace/calib/walls"
	"gaptrace/track/synth"
)

// BenchmarkFind finds the walls in the median of a rendered video, at the
// renderer's default size and at the 1024x1024 of the throughput benchmark
// (cmd/scripts/bench-track.sh).
func BenchmarkFind(b *testing.B) {
	for _, size := range [][2]int{{0, 0}, {1024, 1024}} {
		s, err := synth.Builtin("dark", 1)
		if err != nil {
			b.Fatal(err)
		}
		if size[0] > 0 {
			s.WidthPx, s.HeightPx = size[0], size[1]
		}
		s.Frames = 20
		b.Run(fmt.Sprintf("%dx%d", s.WidthPx, s.HeightPx), func(b *testing.B) {
			med := medianOf(b, s, 20)
			defer med.Close()
			b.ResetTimer()
			for range b.N {
				if _, err := walls.Find(med, walls.Options{}); err != nil {
					b.Fatal(err)
				}
			}
		})
	}
}
