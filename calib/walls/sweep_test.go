package walls_test

import (
	"math"
	"math/rand"
	"sort"
	"testing"

	"gaptrace/calib/walls"
	"gaptrace/track/synth"
)

// BenchmarkSweepSynth renders many scenarios with random tilt, side and
// jitter and reports the distribution of the wall errors (px) as metrics:
// the acceptance sweep behind TestFindOnSynth, too slow for every test run.
func BenchmarkSweepSynth(b *testing.B) {
	r := rand.New(rand.NewSource(1))
	var errs []float64
	for k := 0; k < 24; k++ {
		name := []string{"homogeneous", "dark"}[k%2]
		s, err := synth.Builtin(name, int64(1000+k))
		if err != nil {
			b.Fatal(err)
		}
		s.TiltDeg = -3 + 6*r.Float64()
		s.MovingSide = []string{"top", "bottom"}[r.Intn(2)]
		s.JitterPx = 0.3 * r.Float64()
		s.Frames = 40
		med := medianOf(b, s, 20)
		res, err := walls.Find(med, walls.Options{})
		med.Close()
		if err != nil {
			b.Fatal(err)
		}
		truth := s.Calibration()
		top, bot := truth.StationaryWallPx, truth.MovingWallPx
		if top[0][1] > bot[0][1] {
			top, bot = bot, top
		}
		var worst float64
		for _, p := range top {
			worst = math.Max(worst, math.Abs(res.Top.YAt(p[0])-p[1]))
		}
		for _, p := range bot {
			worst = math.Max(worst, math.Abs(res.Bottom.YAt(p[0])-p[1]))
		}
		errs = append(errs, worst)
		b.Logf("%s tilt %+.2f %s jitter %.2f: worst %.3f px", name, s.TiltDeg, s.MovingSide, s.JitterPx, worst)
	}
	sort.Float64s(errs)
	b.ReportMetric(errs[len(errs)/2], "median_px")
	b.ReportMetric(errs[len(errs)*9/10], "p90_px")
	b.ReportMetric(errs[len(errs)-1], "max_px")
}
