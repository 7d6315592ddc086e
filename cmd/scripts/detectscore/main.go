// Command detectscore scores the track stage against the known truth of
// track/synth's built-in scenarios: it writes each scenario in its own
// output format (MJPEG, H.264, FFV1), runs the track stage of
// profile/pipeline on it exactly as `gaptrace track` does, matches every
// detection to the true tracers of its frame, and prints one line per
// scenario:
//
//	recall      tracers of peak SNR >= 5 whose centre is in the gap and the image
//	wall        the same within 5 px of a wall line
//	edge        the same within 8 px of the image's left or right edge
//	oof         the same, out of focus
//	crowd       the same with another tracer closer than a diameter and a half
//	precision   detections that lie on a true tracer (any SNR), over all
//	pprec       the same over the detections the profile analyses: those
//	            pipeline.Analyze keeps after leaving out the still spots
//	            (package profile/stillspots); spots is their number
//	rms         per-axis RMS error of in-focus tracers of SNR >= 10, px
//	wallbias    mean shift towards the nearer wall of the wall layer's centres, px
//	trk/true    median track length over the median true passage, frames
//	trk/tr      the same over the tracks at least half of whose points lie
//	            on a true tracer (trk/true counts the short tracks of
//	            false detections too, which outnumber the tracers' on
//	            lossy recordings)
//	pass        median, over the true passages of tracers of median peak SNR
//	            >= 5, of the share of the passage in its longest track
//
// A passage is a tracer's stay in view: the renderer brings a tracer that
// leaves the frame on one side back on the other under the same track
// number, so a passage ends where a track number's position jumps by more
// than half the frame's width or skips a frame.
//
// It is a measuring tool for issue 14 (the numbers of its report), not a
// test: the acceptance tests render small videos in track/detect.
//
// A scenario may name another output than its own after a colon:
// "homogeneous:ffv1" (lossless FFV1), ":mjpeg" (OpenCV's MJPEG),
// ":h264-20" and ":h264-28" (H.264 at CRF 20 and 28). -table scores the
// conditions of issue 14's must-show table.
//
// Usage: go run ./cmd/scripts/detectscore [-seed N] [-frames N] [-dir DIR] [-table] [SCENARIO[:OUTPUT] ...]
package main

import (
	"context"
	"flag"
	"fmt"
	"maps"
	"math"
	"os"
	"path/filepath"
	"slices"
	"strings"

	"gaptrace/profile/pipeline"
	"gaptrace/track/synth"
	"gaptrace/track/tracks"
)

const (
	// matchPx is how far a detection may be from a true centre to count as
	// that tracer: half the diameter of a 5 px tracer, well beyond the
	// localization error and below the separation of distinct spots.
	matchPx = 2.5
	// minSNR, hiSNR: the recall and accuracy classes.
	minSNR = 5
	hiSNR  = 10
	// wallLayerPx and edgeLayerPx are the near-wall and edge layers.
	wallLayerPx = 5
	edgeLayerPx = 8
	// crowdDiameters: a tracer with a neighbour closer than this many
	// diameters has overlapping spots.
	crowdDiameters = 1.5
)

var defaultScenarios = []string{"homogeneous", "near-wall", "textured", "faint", "dust", "colour-hard", "blur"}

// tableScenarios are the conditions of issue 14's must-show table:
// lossless, MJPEG, H.264 at CRF 20 and 28, colour, motion blur at half the
// frame interval, faint tracers, dust; and the walls.
var tableScenarios = []string{"homogeneous:ffv1", "homogeneous:mjpeg", "homogeneous:h264-20", "homogeneous:h264-28",
	"colour-hard", "blur", "faint", "dust", "near-wall", "textured"}

// outputs are the outputs a scenario name may ask for after a colon.
var outputs = map[string]synth.Output{
	"ffv1":    {Format: synth.FormatFFV1},
	"mjpeg":   {Format: synth.FormatMJPEG},
	"h264-20": {Format: synth.FormatH264, CRF: 20, NoBFrames: true},
	"h264-28": {Format: synth.FormatH264, CRF: 28, NoBFrames: true},
}

func main() {
	seed := flag.Int64("seed", 7, "scenario seed")
	nFrames := flag.Int("frames", 0, "frames per scenario (0: the scenario's own)")
	dir := flag.String("dir", "", "folder for the renders (kept; default a temporary one, removed)")
	table := flag.Bool("table", false, "score the conditions of issue 14's must-show table")
	flag.Parse()
	names := flag.Args()
	switch {
	case *table:
		names = tableScenarios
	case len(names) == 0:
		names = defaultScenarios
	}
	base := *dir
	if base == "" {
		d, err := os.MkdirTemp("", "detectscore")
		if err != nil {
			fail(err)
		}
		defer os.RemoveAll(d)
		base = d
	}
	fmt.Printf("%-20s %7s %7s %7s %7s %7s %7s %7s %5s %7s %8s %7s %8s %6s %6s\n", "scenario", "recall", "wall", "edge", "oof", "crowd", "prec", "pprec", "spots", "rms_px", "wbias_px", "dets", "trk/true", "trk/tr", "pass")
	for _, n := range names {
		if err := score(filepath.Join(base, strings.ReplaceAll(n, ":", "-")), n, *seed, *nFrames); err != nil {
			fail(fmt.Errorf("%s: %w", n, err))
		}
	}
}

// debug prints the wall layer's recall by distance (DETECTSCORE_DEBUG=1).
var debug = os.Getenv("DETECTSCORE_DEBUG") != ""

func fail(err error) {
	fmt.Fprintln(os.Stderr, "detectscore:", err)
	os.Exit(1)
}

type frac struct{ hit, n int }

func (f *frac) add(hit bool) {
	f.n++
	if hit {
		f.hit++
	}
}

func (f frac) String() string {
	if f.n == 0 {
		return "-"
	}
	return fmt.Sprintf("%.3f", float64(f.hit)/float64(f.n))
}

func score(dir, name string, seed int64, nFrames int) error {
	scenario, variant, _ := strings.Cut(name, ":")
	s, err := synth.Builtin(scenario, seed)
	if err != nil {
		return err
	}
	if nFrames > 0 {
		s.Frames = nFrames
	}
	out, err := synth.BuiltinOutput(scenario)
	if err != nil {
		return err
	}
	if variant != "" {
		o, ok := outputs[variant]
		if !ok {
			return fmt.Errorf("unknown output %q (have %s)", variant, strings.Join(slices.Sorted(maps.Keys(outputs)), ", "))
		}
		out = o
	}
	truth, err := s.Write(dir, out)
	if err != nil {
		return err
	}
	ctx := context.Background()
	rec, err := pipeline.Open(ctx, pipeline.Config{Experiment: s.Experiment(), ExperimentDir: dir, Input: truth.Summary.Input.Path})
	if err != nil {
		return err
	}
	tr, err := rec.Track(ctx)
	rec.Close()
	if err != nil {
		return err
	}
	defer tr.Close()
	points, err := tracks.Collect(tr.Tracks)
	if err != nil {
		return err
	}
	// The detections the profile analyses, by frame and position.
	a, err := pipeline.Analyze(ctx, pipeline.Config{Experiment: s.Experiment(), Seed: uint64(seed)}, tr)
	if err != nil {
		return err
	}
	type at struct {
		frame int
		x, y  float64
	}
	analysed := map[at]bool{}
	kept, err := tracks.Collect(a.StillSpots.Source(tr.Tracks))
	if err != nil {
		return err
	}
	for _, p := range kept {
		analysed[at{p.Frame, p.XPx, p.YPx}] = true
	}
	rows := s.TruthRows()
	byFrame := map[int][]int{}
	for i, r := range rows {
		byFrame[r.Point.Frame] = append(byFrame[r.Point.Frame], i)
	}
	passOf, passage := passages(rows, float64(s.WidthPx))
	matchedTrack := make([]int, len(rows)) // the track of each row's detection
	for i := range matchedTrack {
		matchedTrack[i] = tracks.Unlinked
	}
	dets := map[int][]int{}
	trackLen := map[int]int{}
	for i, p := range points {
		dets[p.Frame] = append(dets[p.Frame], i)
		if p.Track != tracks.Unlinked {
			trackLen[p.Track]++
		}
	}
	cal := s.Calibration() // the true walls
	var all, wall, edge, oof, crowd, prec, pprec frac
	var wallBins [20]frac
	var nnWall, nnIn [12]frac     // recall by px to the nearest tracer, wall layer and beyond it
	var snrWall [8]frac           // wall-layer recall by peak SNR/5
	var fine [8]frac              // isolated recall by eighth of a px from the wall, first px
	var falseAt [12]int           // false detections by px from the nearer wall, from -1
	falseAtFrame := map[int]int{} // false detections by 25 frames
	var falseEdge [10]int         // by px from the nearer side edge
	var falseNear [20]int         // by px from the nearest tracer, +10 when it is out of focus
	var se, bias float64
	var nse, nbias int
	diam := s.DiameterPx
	for f, ti := range byFrame {
		di := dets[f]
		used := make([]bool, len(di))
		// Greedy one-to-one matching, nearest pairs first.
		type pair struct {
			d    float64
			t, k int
		}
		var pairs []pair
		for _, t := range ti {
			for k, j := range di {
				p := points[j]
				if d := math.Hypot(p.XPx-rows[t].Point.XPx, p.YPx-rows[t].Point.YPx); d < matchPx {
					pairs = append(pairs, pair{d, t, k})
				}
			}
		}
		slices.SortFunc(pairs, func(a, b pair) int {
			if a.d < b.d {
				return -1
			}
			if a.d > b.d {
				return 1
			}
			return 0
		})
		match := map[int]int{}
		for _, p := range pairs {
			if _, ok := match[p.t]; ok || used[p.k] {
				continue
			}
			match[p.t] = di[p.k]
			used[p.k] = true
		}
		for t, j := range match {
			matchedTrack[t] = points[j].Track
		}
		for k, u := range used {
			prec.add(u)
			if p := points[di[k]]; analysed[at{p.Frame, p.XPx, p.YPx}] {
				pprec.add(u)
			}
			if debug && !u {
				p := points[di[k]]
				_, y := cal.ToGap(p.XPx, p.YPx)
				dpx := math.Min(y, cal.GapUM-y) / cal.UMPerPx
				falseAt[min(len(falseAt)-1, max(0, int(dpx+1)))]++
				falseAtFrame[f/25]++
				best, bt := math.Inf(1), -1
				for _, t := range ti {
					if dd := math.Hypot(p.XPx-rows[t].Point.XPx, p.YPx-rows[t].Point.YPx); dd < best {
						best, bt = dd, t
					}
				}
				k := min(9, int(best))
				if bt >= 0 && !rows[bt].InFocus {
					k += 10
				}
				falseNear[k]++
				falseEdge[max(0, min(9, int(math.Min(p.XPx+0.5, float64(s.WidthPx)-0.5-p.XPx))))]++
			}
		}
		for _, t := range ti {
			r := rows[t]
			if r.PeakSNR < minSNR || r.DistStationaryPx < 0 || r.DistMovingPx < 0 || r.DistEdgePx < 0 {
				continue
			}
			j, hit := match[t]
			all.add(hit)
			dw := math.Min(r.DistStationaryPx, r.DistMovingPx)
			if debug {
				nn := math.Inf(1)
				for _, o := range ti {
					if o != t {
						nn = math.Min(nn, math.Hypot(rows[o].Point.XPx-r.Point.XPx, rows[o].Point.YPx-r.Point.YPx))
					}
				}
				k := min(len(nnIn)-1, int(nn))
				if dw < wallLayerPx {
					nnWall[k].add(hit)
					if nn >= crowdDiameters*diam {
						snrWall[min(len(snrWall)-1, int(r.PeakSNR/5))].add(hit)
						if dw < 1 {
							fine[int(dw*8)].add(hit)
						}
					}
				} else {
					nnIn[k].add(hit)
				}
			}
			if dw < wallLayerPx {
				wall.add(hit)
				if debug {
					iso := true
					for _, o := range ti {
						if o != t && math.Hypot(rows[o].Point.XPx-r.Point.XPx, rows[o].Point.YPx-r.Point.YPx) < crowdDiameters*diam {
							iso = false
						}
					}
					k := int(dw)
					if !iso {
						k += 10
					}
					wallBins[k].add(hit)
				}
				if hit && r.InFocus {
					// Distance of the detection from the same wall, along
					// the gap coordinate of the true calibration.
					_, yd := cal.ToGap(points[j].XPx, points[j].YPx)
					_, yt := cal.ToGap(r.Point.XPx, r.Point.YPx)
					toWall := (yt - yd) / cal.UMPerPx // positive: detection nearer the stationary wall
					if r.DistMovingPx < r.DistStationaryPx {
						toWall = -toWall
					}
					bias += toWall
					nbias++
				}
			}
			if r.DistEdgePx < edgeLayerPx {
				edge.add(hit)
			}
			if !r.InFocus {
				oof.add(hit)
			}
			crowded := false
			for _, o := range ti {
				if o != t && math.Hypot(rows[o].Point.XPx-r.Point.XPx, rows[o].Point.YPx-r.Point.YPx) < crowdDiameters*diam {
					crowded = true
					break
				}
			}
			if crowded {
				crowd.add(hit)
			}
			if hit && r.InFocus && r.PeakSNR >= hiSNR {
				p := points[j]
				se += (p.XPx-r.Point.XPx)*(p.XPx-r.Point.XPx) + (p.YPx-r.Point.YPx)*(p.YPx-r.Point.YPx)
				nse += 2
			}
		}
	}
	if debug {
		fmt.Println("wall layer recall by px from the wall (isolated 0-4, crowded 10-14):")
		for k := range wallBins {
			if wallBins[k].n > 0 {
				fmt.Printf("  %2d %s of %d\n", k, wallBins[k], wallBins[k].n)
			}
		}
	}
	if debug {
		fmt.Println("recall by px to the nearest tracer (wall layer | beyond):")
		for k := range nnWall {
			fmt.Printf("  %2d %s of %d | %s of %d\n", k, nnWall[k], nnWall[k].n, nnIn[k], nnIn[k].n)
		}
		fmt.Println("isolated recall by 1/8 px from the wall, first px:")
		for k := range fine {
			fmt.Printf("  %.3f %s of %d\n", float64(k)/8, fine[k], fine[k].n)
		}
		tc := tr.Calibration
		for k, pair := range [][2][2][2]float64{{tc.StationaryWallPx, cal.StationaryWallPx}, {tc.MovingWallPx, cal.MovingWallPx}} {
			for _, x := range []float64{0, float64(s.WidthPx - 1)} {
				fmt.Printf("wall %d at x=%g: fitted y %.3f, true %.3f\n", k, x, lineAt(pair[0], x), lineAt(pair[1], x))
			}
		}
		fmt.Println("isolated wall-layer recall by peak SNR / 5:")
		for k := range snrWall {
			fmt.Printf("  %2d %s of %d\n", k*5, snrWall[k], snrWall[k].n)
		}
		fmt.Println("false detections by px from the nearer wall (from -1 px):", falseAt)
		fmt.Println("false detections by px from the side edge:", falseEdge)
		fmt.Println("false detections by 25 frames:", falseAtFrame)
		fmt.Println("false detections by px from the nearest tracer (in focus 0-9, out of focus 10-19):", falseNear)
	}
	rms := math.NaN()
	if nse > 0 {
		rms = math.Sqrt(se / float64(nse))
	}
	wb := math.NaN()
	if nbias > 0 {
		wb = bias / float64(nbias)
	}
	fmt.Printf("%-20s %7s %7s %7s %7s %7s %7s %7s %5d %7.3f %8.3f %7d %8.3f %6.3f %6.3f\n", name, all, wall, edge, oof, crowd, prec, pprec, a.StillSpots.Len(), rms, wb,
		len(points), median(trackLen)/median(passage), median(tracerTracks(trackLen, matchedTrack))/median(passage),
		passShare(rows, passOf, matchedTrack))
	if len(tr.Warnings) > 0 {
		fmt.Printf("%-20s warnings: %s\n", "", strings.Join(tr.Warnings, "; "))
	}
	return nil
}

// passages numbers the true tracers' passages (see the package
// documentation): passOf[i] is row i's, passage[k] the frames of passage k.
func passages(rows []synth.TruthRow, widthPx float64) (passOf []int, passage map[int]int) {
	byTrack := map[int][]int{}
	for i, r := range rows {
		byTrack[r.Point.Track] = append(byTrack[r.Point.Track], i)
	}
	passOf = make([]int, len(rows))
	passage = map[int]int{}
	k := -1
	for _, id := range slices.Sorted(maps.Keys(byTrack)) {
		ix := byTrack[id]
		slices.SortFunc(ix, func(a, b int) int { return rows[a].Point.Frame - rows[b].Point.Frame })
		for n, i := range ix {
			if n == 0 || rows[i].Point.Frame != rows[ix[n-1]].Point.Frame+1 ||
				math.Abs(rows[i].Point.XPx-rows[ix[n-1]].Point.XPx) > widthPx/2 {
				k++
			}
			passOf[i] = k
			passage[k]++
		}
	}
	return passOf, passage
}

// tracerTracks returns the lengths of the tracks (of trackLen) at least
// half of whose points are a true tracer's detection (matchedTrack, the
// track of each true row's detection).
func tracerTracks(trackLen map[int]int, matchedTrack []int) map[int]int {
	onTracer := map[int]int{}
	for _, t := range matchedTrack {
		if t != tracks.Unlinked {
			onTracer[t]++
		}
	}
	out := map[int]int{}
	for t, n := range trackLen {
		if 2*onTracer[t] >= n {
			out[t] = n
		}
	}
	return out
}

// passShare returns the median, over the passages whose rows have a
// median peak SNR of minSNR or more, of the share of the passage's rows
// whose detections are in its most frequent track.
func passShare(rows []synth.TruthRow, passOf, matchedTrack []int) float64 {
	snr := map[int][]float64{}
	inTrack := map[int]map[int]int{}
	for i, r := range rows {
		k := passOf[i]
		snr[k] = append(snr[k], r.PeakSNR)
		if t := matchedTrack[i]; t != tracks.Unlinked {
			if inTrack[k] == nil {
				inTrack[k] = map[int]int{}
			}
			inTrack[k][t]++
		}
	}
	var share []float64
	for k, v := range snr {
		slices.Sort(v)
		if v[len(v)/2] < minSNR {
			continue
		}
		best := 0
		for _, n := range inTrack[k] {
			best = max(best, n)
		}
		share = append(share, float64(best)/float64(len(v)))
	}
	if len(share) == 0 {
		return math.NaN()
	}
	slices.Sort(share)
	return share[len(share)/2]
}

func median(m map[int]int) float64 {
	v := make([]float64, 0, len(m))
	for _, n := range m {
		v = append(v, float64(n))
	}
	if len(v) == 0 {
		return math.NaN()
	}
	slices.Sort(v)
	if len(v)%2 == 1 {
		return v[len(v)/2]
	}
	return (v[len(v)/2-1] + v[len(v)/2]) / 2
}

// lineAt returns the y of the line through two points at abscissa x.
func lineAt(l [2][2]float64, x float64) float64 {
	return l[0][1] + (x-l[0][0])*(l[1][1]-l[0][1])/(l[1][0]-l[0][0])
}
