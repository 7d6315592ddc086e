package layers

import (
	"math"
	"math/rand/v2"
	"slices"
	"testing"
)

func TestErrorIndependentSamples(t *testing.T) {
	// One sample per track: the bootstrap error must match the normal-theory
	// standard error of the Huber mean, sigma / sqrt(0.95 n) (Huber 1981,
	// Robust Statistics: 95% efficiency at k = 1.345; from memory).
	rng := rand.New(rand.NewPCG(1, 1))
	const n, sigma = 400, 2.0
	var obs []Obs
	for i := range n {
		obs = append(obs, Obs{Group: i, YUM: 5, Value: 10 + sigma*rng.NormFloat64()})
	}
	b, err := Profile(obs, Options{GapUM: 10, Bins: 1, MinSamples: 10, MinGroups: 3, Replicates: 400})
	if err != nil {
		t.Fatal(err)
	}
	want := sigma / math.Sqrt(0.95*n)
	// 400 replicates give the error to about 4%; allow 15%.
	if e := b[0].Err / want; e < 0.85 || e > 1.15 {
		t.Errorf("bootstrap error %.4f, normal theory %.4f", b[0].Err, want)
	}
	if math.Abs(b[0].Value-10) > 4*want {
		t.Errorf("value %.4f, want 10 within %.4f", b[0].Value, 4*want)
	}
}

func TestErrorCorrelatedTrack(t *testing.T) {
	// Twenty samples per track sharing the track's own offset: the error is
	// that of the track means, sd / sqrt(tracks), not of all samples.
	rng := rand.New(rand.NewPCG(2, 2))
	const tracks, per, sd = 100, 20, 1.0
	var obs []Obs
	for g := range tracks {
		off := sd * rng.NormFloat64()
		for range per {
			obs = append(obs, Obs{Group: g, YUM: 1, Value: off + 0.01*rng.NormFloat64()})
		}
	}
	b, _ := Profile(obs, Options{GapUM: 2, Bins: 1, MinSamples: 10, MinGroups: 3, Replicates: 400})
	want := sd / math.Sqrt(0.95*tracks)
	if e := b[0].Err / want; e < 0.8 || e > 1.25 {
		t.Errorf("error %.4f with correlated samples, want about %.4f (the naive %.4f would be wrong)", b[0].Err, want, sd/math.Sqrt(tracks*per))
	}
}

func TestRobustAndSparse(t *testing.T) {
	rng := rand.New(rand.NewPCG(3, 3))
	var obs []Obs
	for i := range 300 {
		v := 5 + 0.1*rng.NormFloat64()
		if i%10 == 0 {
			v = 500 // a mislinked tracer
		}
		obs = append(obs, Obs{Group: i, YUM: 2, Value: v})
	}
	obs = append(obs, Obs{Group: 1000, YUM: 7, Value: 1}, Obs{Group: 1001, YUM: 7.5, Value: 2})
	b, err := Profile(obs, Options{GapUM: 10, Bins: 2, MinSamples: DefaultMinSamples, MinGroups: DefaultMinGroups})
	if err != nil {
		t.Fatal(err)
	}
	if math.Abs(b[0].Value-5) > 0.05 {
		t.Errorf("10%% outliers moved the layer to %.4f, want 5", b[0].Value)
	}
	if b[1].Known() || b[1].N != 2 || b[1].Groups != 2 || math.Abs(b[1].YUM-7.25) > 1e-12 {
		t.Errorf("a layer of 2 samples gave %+v; want NaN with its counts", b[1])
	}
}

func TestTrendRemoved(t *testing.T) {
	// A steep profile inside one layer: the value belongs to the mean height
	// and the error reflects the noise, not the spread of heights.
	rng := rand.New(rand.NewPCG(4, 4))
	var obs []Obs
	for i := range 500 {
		y := 10 * rng.Float64()
		obs = append(obs, Obs{Group: i, YUM: y, Value: 100*y + 0.1*rng.NormFloat64()})
	}
	b, _ := Profile(obs, Options{GapUM: 10, Bins: 1, MinSamples: 10, MinGroups: 3})
	if math.Abs(b[0].Value-100*b[0].YUM) > 0.05 || b[0].Err > 0.02 || math.Abs(b[0].Slope-100) > 0.1 {
		t.Errorf("layer %+v: want 100 * YUM, error about 0.1/sqrt(500), slope 100", b[0])
	}
}

func TestOptionsErrors(t *testing.T) {
	for _, o := range []Options{{GapUM: 0, Bins: 4}, {GapUM: 10, Bins: 0}} {
		if _, err := Profile(nil, o); err == nil {
			t.Errorf("options %+v accepted", o)
		}
	}
}

// A layer of a few tracks at different heights, its own trend removed, each
// track's samples scattered about its own offset as much as the offsets
// scatter (as resting tracers' overlapping samples are):
// the error must allow for the two degrees of freedom the mean and the
// trend take. The pull (value - truth) / error then follows Student's t
// with tracks-2 degrees of freedom, whose median |t| for 4 degrees is
// 0.741 (Student's t table, e.g. Abramowitz & Stegun 1964, table 26.10;
// from memory); without the correction it would be 0.741 sqrt(6/4) = 0.91.
func TestErrorFewTracks(t *testing.T) {
	const tracks, per, runs = 6, 8, 2000
	rng := rand.New(rand.NewPCG(5, 5))
	abs := make([]float64, 0, runs)
	for run := range runs {
		var obs []Obs
		for g := range tracks {
			y := 10 * rng.Float64()
			off := rng.NormFloat64()
			for range per {
				obs = append(obs, Obs{Group: g, YUM: y, Value: off + rng.NormFloat64()})
			}
		}
		b, err := Profile(obs, Options{GapUM: 10, Bins: 1, MinSamples: 10, MinGroups: 3, Seed: uint64(run)})
		if err != nil {
			t.Fatal(err)
		}
		abs = append(abs, math.Abs(b[0].Value/b[0].Err))
	}
	slices.Sort(abs)
	// 2000 runs give the median to about 3%; the bootstrap's own noise
	// (100 replicates) widens the t a little.
	med := abs[runs/2]
	t.Logf("median |pull| %.3f over %d layers of %d tracks (Student 0.741)", med, runs, tracks)
	if med < 0.66 || med > 0.84 {
		t.Errorf("median |pull| %.3f over %d layers of %d tracks, want about 0.741", med, runs, tracks)
	}
}
