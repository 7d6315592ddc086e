package profile

import (
	"context"
	"gaptrace/track/tracks"
	"testing"

	"gaptrace/track/synth"
)

// BenchmarkAnalyze measures Analyze on synth's demo scenario (400 tracers,
// 400 frames), tracks observed as in the acceptance checks.
func BenchmarkAnalyze(b *testing.B) {
	s, err := synth.Builtin("demo", 1)
	if err != nil {
		b.Fatal(err)
	}
	pts := s.Observe(noisePx, breakPerFrame, 1)
	e, c := s.Experiment(), s.Calibration()
	b.ResetTimer()
	for range b.N {
		if _, err := Analyze(context.Background(), tracks.Slice(pts), e, c, Options{Seed: 1}); err != nil {
			b.Fatal(err)
		}
	}
}

// BenchmarkAnalyzeLarge measures Analyze on a long recording: the demo
// scenario with 1000 tracers over 1000 frames (about 1.4 million points).
func BenchmarkAnalyzeLarge(b *testing.B) {
	s, err := synth.Builtin("demo", 2)
	if err != nil {
		b.Fatal(err)
	}
	s.Tracers, s.Frames = 1000, 1000
	pts := s.Observe(noisePx, breakPerFrame, 2)
	e, c := s.Experiment(), s.Calibration()
	b.ResetTimer()
	for range b.N {
		if _, err := Analyze(context.Background(), tracks.Slice(pts), e, c, Options{Seed: 1}); err != nil {
			b.Fatal(err)
		}
	}
	b.ReportMetric(float64(len(pts)), "points")
}
