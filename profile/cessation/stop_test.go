package cessation

import (
	"math"
	"math/rand/v2"
	"testing"

	"gaptrace/profile/velocity"
	"gaptrace/track/tracks"
)

// Tracers sheared at up to 4 um per frame stop between two frames; the stop
// is given two frames off, as a detection may place it. A made-up case: 200
// frames/s, 0.2 um of localization noise.
func TestRefineStop(t *testing.T) {
	const (
		dt     = 0.005
		sigma  = 0.2
		tracer = 60
	)
	for _, c := range []struct{ trueS, givenS float64 }{
		{1.0023, 1.0023 + 2*dt}, {1.0023, 1.0023 - 2*dt}, {0.5, 0.5}, {0.7541, 0.7541 + dt},
	} {
		rng := rand.New(rand.NewPCG(uint64(c.trueS*1e4), 3))
		var ts []velocity.Track
		for i := range tracer {
			v := 800 * float64(i) / tracer // um/s, a linear profile
			tr := velocity.Track{ID: i}
			for f := range int(1.5 / dt) {
				tS := float64(f) * dt
				x := v*math.Min(tS, c.trueS) + sigma*rng.NormFloat64()
				tr.Points = append(tr.Points, tracks.Point{Track: i, Frame: f, TS: tS, XUM: x, YUM: 10 * float64(i)})
			}
			ts = append(ts, tr)
		}
		got, err := RefineStop(ts, c.givenS, dt, sigma)
		if err != nil {
			t.Fatal(err)
		}
		// A tenth of a frame: tracers moving 20 noise errors per frame
		// place the kink far better (common practice).
		if math.Abs(got-c.trueS) > dt/10 {
			t.Errorf("stop given at %.4f s, true %.4f s: refined to %.4f s", c.givenS, c.trueS, got)
		}
	}
	// Nothing moves: no stop to find.
	rest := []velocity.Track{{ID: 1, Points: []tracks.Point{{Frame: 0, TS: 0}, {Frame: 1, TS: dt}}}}
	if _, err := RefineStop(rest, 0.002, dt, sigma); err == nil {
		t.Error("a stop found without moving tracers")
	}
}
