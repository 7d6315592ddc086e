package velocity

import (
	"math"
	"math/rand/v2"
	"testing"

	"gaptrace/track/tracks"
)

// line returns a track moving at vUMPerS along x at height yUM, one point
// per frame at dtS, with Gaussian noise of sd sigmaUM on both coordinates.
func line(id, frames int, vUMPerS, yUM, dtS, sigmaUM float64, rng *rand.Rand) Track {
	t := Track{ID: id}
	for f := range frames {
		ts := float64(f) * dtS
		t.Points = append(t.Points, tracks.Point{Track: id, Frame: f, TS: ts,
			XUM: vUMPerS*ts + sigmaUM*rng.NormFloat64(), YUM: yUM + sigmaUM*rng.NormFloat64()})
	}
	return t
}

func TestNoiseUM(t *testing.T) {
	rng := rand.New(rand.NewPCG(1, 2))
	for _, sigma := range []float64{0.05, 0.2, 1} {
		var ts []Track
		for i := range 200 {
			ts = append(ts, line(i, 50, 300*float64(i%7), 10*float64(i), 0.01, sigma, rng))
		}
		got, err := NoiseUM(ts)
		if err != nil {
			t.Fatal(err)
		}
		// The MAD of 20000 normal values is good to about 1% (from memory: Huber 1981,
		// Robust Statistics, asymptotic efficiency 37%); 5% is ample.
		if math.Abs(got/sigma-1) > 0.05 {
			t.Errorf("noise %g um estimated as %g um", sigma, got)
		}
	}
}

func TestLagRule(t *testing.T) {
	r := LagRule{SNR: 20, MaxLag: 30}
	cases := []struct {
		v, sigma, dt float64
		want         int
	}{
		{1000, 0.2, 0.005, 2},  // 20*sqrt2*0.2 = 5.66 um over 5 um/frame
		{100, 0.2, 0.005, 12},  // 5.66 / 0.5
		{10, 0.2, 0.005, 30},   // capped at MaxLag
		{0, 0.2, 0.005, 30},    // at rest: the longest lag
		{-1000, 0.2, 0.005, 2}, // the sign does not matter
		{1e6, 0.2, 0.005, 1},   // never below one frame
		{100, 0, 0.005, 1},     // no noise: one frame
	}
	for _, c := range cases {
		if got := r.Lag(c.v, c.sigma, c.dt); got != c.want {
			t.Errorf("Lag(%g um/s, %g um, %g s) = %d, want %d", c.v, c.sigma, c.dt, got, c.want)
		}
	}
}

func TestSamples(t *testing.T) {
	rng := rand.New(rand.NewPCG(3, 4))
	ts := []Track{line(1, 40, 500, 100, 0.01, 0, rng)}
	s := Samples(ts, LagRule{SNR: 20, MaxLag: 10}, 0.2, 0.01, 0.1, 0.3)
	if len(s) == 0 {
		t.Fatal("no samples")
	}
	for _, x := range s {
		if math.Abs(x.VXUMPerS-500) > 1e-9 || x.YUM != 100 || x.TS < 0.1 || x.TS > 0.3 {
			t.Fatalf("sample %+v: want v = 500 um/s at y = 100 um inside [0.1, 0.3] s", x)
		}
		// Midpoint of the step.
		if d := math.Abs(x.TS - (math.Round(x.TS/0.005) * 0.005)); d > 1e-9 {
			t.Fatalf("sample at %g s is not at the midpoint of frames", x.TS)
		}
	}
	if s[0].Lag != 2 { // 20*sqrt2*0.2/(500*0.01) = 1.13 -> 2 frames
		t.Errorf("lag %d frames, want 2", s[0].Lag)
	}
}

// A resting tracer in an interval shorter than the rule's lag still gives
// samples, over half its span, and their mean has the spread derived in
// Samples' comment: sqrt(2L)/(L+1) sigma/(L dt) for a span of 2L frames.
func TestSamplesShortInterval(t *testing.T) {
	const (
		sigma  = 0.2
		dt     = 0.01
		frames = 11 // a span of 10 frames: the lag is 5
		tracks = 4000
	)
	rng := rand.New(rand.NewPCG(9, 10))
	rule := LagRule{SNR: DefaultSNR, MaxLag: CapFrames}
	var s1, s2 float64
	for i := range tracks {
		s := Samples([]Track{line(i, frames, 0, 100, dt, sigma, rng)}, rule, sigma, dt, 0, float64(frames-1)*dt)
		if len(s) != 6 || s[0].Lag != 5 {
			t.Fatalf("%d samples of lag %d at rest over %d frames, want 6 of lag 5", len(s), s[0].Lag, frames)
		}
		var m float64
		for _, x := range s {
			m += x.VXUMPerS / float64(len(s))
		}
		s1 += m
		s2 += m * m
	}
	mean := s1 / tracks
	sd := math.Sqrt(s2/tracks - mean*mean)
	const l = 5.0
	want := math.Sqrt(2*l) / (l + 1) * sigma / (l * dt)
	// 4000 tracks give the spread to 1/sqrt(2*4000) = 1.1%; 5% is ample.
	if math.Abs(sd/want-1) > 0.05 || math.Abs(mean) > 4*want/math.Sqrt(tracks) {
		t.Errorf("mean resting speed %.3g um/s with spread %.4g um/s, want 0 and %.4g um/s", mean, sd, want)
	}
}

func TestSplit(t *testing.T) {
	rng := rand.New(rand.NewPCG(5, 6))
	tr := line(7, 60, 1000, 50, 0.005, 0.2, rng)
	for i := 30; i < 60; i++ {
		tr.Points[i].XUM -= 1300 // wraps around the field
	}
	got := Split([]Track{tr}, 0.2, 5, math.Inf(1))
	if len(got) != 2 || len(got[0].Points) != 30 || got[1].ID == 7 {
		t.Fatalf("split into %d pieces, want 2 of 30 points with a new id", len(got))
	}
	// Not cut after untilS.
	if got := Split([]Track{tr}, 0.2, 5, 0.1); len(got) != 1 {
		t.Errorf("cut after untilS: %d pieces", len(got))
	}
}

func TestFrameInterval(t *testing.T) {
	rng := rand.New(rand.NewPCG(7, 8))
	dt, err := FrameIntervalS([]Track{line(1, 10, 1, 1, 0.004, 0, rng)})
	if err != nil || math.Abs(dt-0.004) > 1e-12 {
		t.Errorf("frame interval %g s, %v; want 0.004 s", dt, err)
	}
	if _, err := FrameIntervalS([]Track{{ID: 1, Points: []tracks.Point{{Frame: 0}, {Frame: 2, TS: 1}}}}); err == nil {
		t.Error("no error without consecutive frames")
	}
}

// TestCommonOffsetErr draws windows of tracers sheared at a known rate whose
// positions all carry one shift per frame J(f), a stationary sequence of
// standard deviation sdUM and frame-to-frame correlation rho (a first-order
// autoregression), and compares the standard uncertainty CommonOffsetErr
// reports with the scatter, over the draws, of the shift's part in the
// window's mean velocity (the mean over the samples of their velocity less
// the true one): an independent simulation of what the estimate stands
// for.
func TestCommonOffsetErr(t *testing.T) {
	const (
		dtS     = 0.005
		rate    = 2.0 // 1/s
		sigmaUM = 0.1 // localization noise
		draws   = 150
		tracers = 40
		gapUM   = 400
		relTol  = 0.3 // the sd of a standard deviation from 150 draws is 6 %; the estimate's own scatter and its model (a stationary shift) take the rest
	)
	for _, c := range []struct {
		name   string
		frames int
		lag    LagRule
		sdUM   float64
		rho    float64
	}{
		{"slow wander, lags of half the window", 40, LagRule{SNR: 1e6, MaxLag: 1000}, 0.3, 0.8},
		{"white jitter, lags of 4 frames", 60, LagRule{SNR: 1e6, MaxLag: 4}, 0.3, 0},
		{"slow wander, long window, lags of 5 frames", 200, LagRule{SNR: 1e6, MaxLag: 5}, 0.3, 0.85},
	} {
		t.Run(c.name, func(t *testing.T) {
			rng := rand.New(rand.NewPCG(7, uint64(c.frames)))
			fit := func(y float64) float64 { return rate * y }
			var offs []float64
			var uSum float64
			for range draws {
				j := make([]float64, c.frames)
				for f := range j {
					e := c.sdUM * rng.NormFloat64()
					if f > 0 {
						j[f] = c.rho*j[f-1] + math.Sqrt(1-c.rho*c.rho)*e
					} else {
						j[f] = e
					}
				}
				var ts []Track
				for k := range tracers {
					y := gapUM * (float64(k) + 0.5) / tracers
					tr := Track{ID: k}
					for f := range c.frames {
						tS := float64(f) * dtS
						tr.Points = append(tr.Points, tracks.Point{Track: k, Frame: f, TS: tS,
							XUM: rate*y*tS + j[f] + sigmaUM*rng.NormFloat64(), YUM: y})
					}
					ts = append(ts, tr)
				}
				t1 := float64(c.frames) * dtS
				ss := Samples(ts, c.lag, sigmaUM, dtS, 0, t1)
				var off float64
				for _, s := range ss {
					off += (s.VXUMPerS - fit(s.YUM)) / float64(len(ss))
				}
				offs = append(offs, off)
				u := CommonOffsetErr(ss, 0, t1, dtS, fit)
				if math.IsNaN(u) {
					t.Fatalf("no estimate from %d samples", len(ss))
				}
				uSum += u
			}
			var m, v float64
			for _, o := range offs {
				m += o / draws
			}
			for _, o := range offs {
				v += (o - m) * (o - m) / (draws - 1)
			}
			// The tracers' own noise averages out over 40 tracers; what is
			// left is the shift's.
			sd, u := math.Sqrt(v), uSum/draws
			t.Logf("scatter of the shared offset %.3g um/s, mean reported %.3g um/s", sd, u)
			if math.Abs(u/sd-1) > relTol {
				t.Errorf("reported %.3g um/s for a shared offset that scatters by %.3g um/s", u, sd)
			}
		})
	}
	t.Run("no shared shift", func(t *testing.T) {
		rng := rand.New(rand.NewPCG(8, 1))
		var ts []Track
		for k := range tracers {
			tr := Track{ID: k}
			for f := range 60 {
				tr.Points = append(tr.Points, tracks.Point{Track: k, Frame: f, TS: float64(f) * dtS, XUM: sigmaUM * rng.NormFloat64(), YUM: 100})
			}
			ts = append(ts, tr)
		}
		ss := Samples(ts, LagRule{SNR: 1e6, MaxLag: 4}, sigmaUM, dtS, 0, 0.3)
		// The mean of 40 tracers' noise, sigma sqrt(2) / (4 dt) / sqrt(40)
		// = 1.1 um/s per sample, is not shared: far less is reported.
		if u := CommonOffsetErr(ss, 0, 0.3, dtS, func(float64) float64 { return 0 }); !(u < 0.3) {
			t.Errorf("no shared shift: reported %.3g um/s", u)
		}
	})
	t.Run("too few tracks", func(t *testing.T) {
		ss := []Sample{{Track: 1, TS: 0.01, Lag: 2}, {Track: 1, TS: 0.02, Lag: 2}}
		if u := CommonOffsetErr(ss, 0, 0.3, dtS, func(float64) float64 { return 0 }); !math.IsNaN(u) {
			t.Errorf("two samples: %g, want NaN", u)
		}
	})
}
