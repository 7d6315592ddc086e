package phases

import (
	"math"
	"testing"
)

func TestClockShift(t *testing.T) {
	const fps = 100
	sh := func(a, b float64, src string) Phase { return Phase{Kind: Shear, StartS: a, EndS: b, Source: src} }
	logged := []Phase{{Kind: Rest, StartS: 0, EndS: 0.5}, sh(0.5, 1.5, SourceLog), sh(2, 3, SourceLog)}
	cases := []struct {
		name      string
		detected  []Phase
		wantShift float64
		wantOK    bool
	}{
		{"clocks agree", []Phase{sh(0.51, 1.5, SourceDetected), sh(2, 3.01, SourceDetected)}, 0, false},
		{"log 1.25 s early", []Phase{sh(1.75, 2.75, SourceDetected), sh(3.26, 4.25, SourceDetected)}, 1.25, true},
		{"log 0.3 s late", []Phase{sh(0.2, 1.2, SourceDetected), sh(1.7, 2.7, SourceDetected)}, -0.3, true},
		{"one phase off alone", []Phase{sh(0.5, 1.5, SourceDetected), sh(2.5, 3.5, SourceDetected)}, 0, false},
		{"a phase missing", []Phase{sh(1.75, 2.75, SourceDetected)}, 0, false},
		{"nothing detected", nil, 0, false},
	}
	for _, c := range cases {
		got, ok := ClockShift(logged, c.detected, fps)
		if ok != c.wantOK || (ok && math.Abs(got-c.wantShift) > 1.0/fps) {
			t.Errorf("%s: ClockShift = %.3f, %v; want %.3f, %v", c.name, got, ok, c.wantShift, c.wantOK)
		}
	}
}
