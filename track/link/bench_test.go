package link

import (
	"testing"

	"gaptrace/track/flowprior"
)

// benchSample is 1000 tracers per frame in the homogeneous scenario of
// package synth, the wall travelling half the mean spacing per frame.
func benchSample(b *testing.B) *sample {
	s := shearN(b, "homogeneous", 0.5, 50, 0.02, 900, 1000)
	return detect(b, s, 90)
}

// BenchmarkLink1000 streams 50 frames of 1000 tracers through one Linker
// with a flow prior measured beforehand, and reports links per second.
func BenchmarkLink1000(b *testing.B) {
	sm := benchSample(b)
	pts := make([][]flowprior.Point, len(sm.frames))
	for f, ds := range sm.frames {
		for _, d := range ds {
			pts[f] = append(pts[f], flowprior.Point{XPx: d.XPx, YPx: d.YPx})
		}
	}
	opt := sm.options()
	prior, err := flowprior.FromDetections(pts, sm.cal, flowprior.HistOptions{MaxStepPx: opt.MaxStepPx})
	if err != nil {
		b.Fatal(err)
	}
	opt.Prior = prior
	b.ResetTimer()
	links := 0
	for i := 0; i < b.N; i++ {
		l, err := NewLinker(sm.cal, opt)
		if err != nil {
			b.Fatal(err)
		}
		for f, ds := range sm.frames {
			if err := l.Add(f, ds); err != nil {
				b.Fatal(err)
			}
			l.Flush()
		}
		_, st := l.Close()
		links += st.Links + st.GapLinks
	}
	b.ReportMetric(float64(links)/b.Elapsed().Seconds(), "links/s")
	b.ReportMetric(float64(links)/float64(b.N)/float64(len(sm.frames)-1), "links/frame")
}

// BenchmarkLinkWhole1000 runs Link on the same frames: the prior from the
// detections, a first pass, the prior from its tracks and the final pass.
func BenchmarkLinkWhole1000(b *testing.B) {
	sm := benchSample(b)
	opt := sm.options()
	b.ResetTimer()
	links := 0
	for i := 0; i < b.N; i++ {
		_, st, err := Link(sm.frames, sm.cal, opt)
		if err != nil {
			b.Fatal(err)
		}
		links += st.Links + st.GapLinks
	}
	b.ReportMetric(float64(links)/b.Elapsed().Seconds(), "links/s")
}
