package flowprior

import (
	"fmt"
	"gaptrace/track/internal/grid"
	"math"
	"runtime"
	"slices"
	"sort"
	"sync"

	"gaptrace/calib"
	"gaptrace/calib/robust"
	"gaptrace/track/tracks"
)

// Point is a detected tracer position in image pixels.
type Point struct {
	XPx, YPx float64
}

// HistOptions sets how FromDetections builds the profile.
type HistOptions struct {
	// BinUM is the height of a gap bin, um. Zero means gap/DefaultBins.
	BinUM float64
	// MaxStepPx is the largest displacement per frame along the flow that
	// is looked for, px. Required.
	MaxStepPx float64
	// CrossPx is the largest displacement per frame across the flow that a
	// candidate may have, px. Zero means DefaultCrossPx.
	CrossPx float64
	// ResolutionPx is the width of a histogram bin, px. Zero means
	// DefaultResolutionPx.
	ResolutionPx float64
	// MaxPairs bounds the number of frame pairs used, spread evenly over the
	// input. Zero means all.
	MaxPairs int
	// Intervals[f], when not nil, is the time from frame f to frame f+1 of
	// the frames given, in nominal frame intervals (1 at a steady rate):
	// each pair's displacements are divided by it, so that the profile is
	// the displacement per nominal interval of a camera whose frame rate
	// varies. MaxStepPx bounds that scaled displacement. Pairs past its end
	// count as 1.
	Intervals []float64
}

// Defaults of HistOptions.
const (
	// DefaultBins is the number of gap bins when no bin height is given:
	// fine enough to follow a banded profile, coarse enough to hold a few
	// hundred tracers per bin in a short video (common practice).
	DefaultBins = 20
	// DefaultCrossPx admits the localization noise of two detections (well
	// under a pixel) plus a pixel of camera jitter or of diffusion.
	DefaultCrossPx = 2.0
	// DefaultResolutionPx is a quarter pixel: finer than the linker's search
	// radius by an order of magnitude, coarse enough for counts per bin.
	DefaultResolutionPx = 0.25
)

// peakSigmas is how far, in Poisson standard deviations, the histogram peak
// must rise above the background of accidental pairs for a bin to count as
// known; five keeps the false-peak rate per bin below one in a million.
const peakSigmas = 5.0

// FromDetections estimates the displacement profile from detections alone,
// for when no frames are at hand (relinking from tracks.csv). frames[i] holds
// the detections of frame i. For each pair of consecutive frames and each
// detection, every detection of the next frame within MaxStepPx along the
// flow and CrossPx across it is a candidate; the candidates' displacements
// along the flow are histogrammed per gap bin. The true displacement piles up
// in one histogram bin while accidental pairs spread evenly, so the peak,
// refined by the centroid of its neighbourhood above the background, is the
// estimate. Time and memory are linear in the number of detections.
func FromDetections(frames [][]Point, cal *calib.Calibration, opt HistOptions) (*Profile, error) {
	if err := cal.Check(); err != nil {
		return nil, fmt.Errorf("flowprior: %w", err)
	}
	if !(opt.MaxStepPx > 0) || math.IsInf(opt.MaxStepPx, 0) {
		return nil, fmt.Errorf("flowprior: MaxStepPx must be positive, got %g px", opt.MaxStepPx)
	}
	if opt.BinUM == 0 {
		opt.BinUM = cal.GapUM / DefaultBins
	}
	if opt.CrossPx == 0 {
		opt.CrossPx = DefaultCrossPx
	}
	if opt.ResolutionPx == 0 {
		opt.ResolutionPx = DefaultResolutionPx
	}
	if !(opt.CrossPx > 0) || !(opt.ResolutionPx > 0) {
		return nil, fmt.Errorf("flowprior: CrossPx %g px and ResolutionPx %g px must be positive", opt.CrossPx, opt.ResolutionPx)
	}
	ys, err := bins(cal.GapUM, opt.BinUM)
	if err != nil {
		return nil, err
	}
	// The cell count is checked in floating point first: a huge step
	// (issue 18: gap_um 1e308 with um_per_px 1e-300) would overflow int.
	if cells := (2*math.Ceil(opt.MaxStepPx/opt.ResolutionPx) + 1) * float64(len(ys)); !(cells <= maxHistCells) {
		return nil, fmt.Errorf("flowprior: MaxStepPx %g px at resolution %g px needs %.3g histogram cells, more than %d", opt.MaxStepPx, opt.ResolutionPx, cells, maxHistCells)
	}
	nh := 2*int(math.Ceil(opt.MaxStepPx/opt.ResolutionPx)) + 1
	if nh*len(ys) > maxHistCells {
		return nil, fmt.Errorf("flowprior: MaxStepPx %g px at resolution %g px needs %d histogram cells, more than %d", opt.MaxStepPx, opt.ResolutionPx, nh*len(ys), maxHistCells)
	}
	hist := make([]float64, nh*len(ys))
	half := nh / 2
	fx, fy := FlowDir(cal)
	ax, ay := AcrossDir(cal)

	pairs := len(frames) - 1
	stride := 1
	if opt.MaxPairs > 0 && pairs > opt.MaxPairs {
		stride = int(math.Ceil(float64(pairs) / float64(opt.MaxPairs)))
	}
	for i, d := range opt.Intervals {
		if !(d > 0) || math.IsInf(d, 0) {
			return nil, fmt.Errorf("flowprior: frame interval %d is %g nominal intervals, must be positive", i, d)
		}
	}
	var g grid.Grid
	for f := 0; f+1 < len(frames); f += stride {
		next := frames[f+1]
		if len(frames[f]) == 0 || len(next) == 0 {
			continue
		}
		iv := 1.0
		if f < len(opt.Intervals) {
			iv = opt.Intervals[f]
		}
		reach := math.Hypot(opt.MaxStepPx*iv, opt.CrossPx)
		g.Build(len(next), func(i int) (float64, float64) { return next[i].XPx, next[i].YPx }, reach)
		for _, a := range frames[f] {
			_, yUM := cal.ToGap(a.XPx, a.YPx)
			b := binOf(yUM, cal.GapUM, len(ys))
			if b < 0 {
				continue
			}
			row := hist[b*nh : (b+1)*nh]
			g.Near(a.XPx, a.YPx, reach, func(j int) {
				dx, dy := next[j].XPx-a.XPx, next[j].YPx-a.YPx
				along, across := (dx*fx+dy*fy)/iv, dx*ax+dy*ay
				if math.Abs(across) > opt.CrossPx || math.Abs(along) > opt.MaxStepPx {
					return
				}
				row[half+int(math.Round(along/opt.ResolutionPx))]++
			})
		}
	}

	p := &Profile{YUM: ys, DXPx: make([]float64, len(ys)), DYPx: make([]float64, len(ys)),
		SpreadPx: make([]float64, len(ys)), N: make([]int, len(ys))}
	for b := range ys {
		along, n, ok := histPeak(hist[b*nh:(b+1)*nh], half, opt.ResolutionPx)
		p.SpreadPx[b] = math.NaN()
		if !ok {
			continue
		}
		p.DXPx[b], p.DYPx[b] = along*fx, along*fy
		p.N[b] = n
	}
	if p.Known() == 0 {
		return nil, fmt.Errorf("flowprior: no gap bin shows a common displacement among %d frames within %g px", len(frames), opt.MaxStepPx)
	}
	return p, nil
}

// maxHistCells bounds the displacement histogram's memory (8 MB).
const maxHistCells = 1 << 20

// peakHalfWidth is the half-width, in histogram bins, of the window kept
// out of the background estimate around the peak (±1 px at quarter-pixel
// bins: the spread of two noisy localizations and a pixel of jitter).
const peakHalfWidth = 4

// peakEdgeFraction is where the peak ends: where the counts over the
// background fall below this fraction of the peak's. A fifth keeps the
// shoulders of a peak broadened by shear and drops the background's noise.
const peakEdgeFraction = 0.2

// peakPadBins widens the peak's extent by this many bins on each side for
// the centroid, so that its tails below the edge count too.
const peakPadBins = 2

// histPeak finds the peak of a displacement histogram, smoothed over three
// bins, and refines it by the background-subtracted centroid of the window
// around it. It returns the displacement, the number of pairs above the
// background in the window, and whether the peak is significant.
func histPeak(h []float64, half int, resPx float64) (alongPx float64, n int, ok bool) {
	best, bi := -1.0, -1
	for i := 1; i+1 < len(h); i++ {
		if s := h[i-1] + h[i] + h[i+1]; s > best {
			best, bi = s, i
		}
	}
	if bi < 0 {
		return 0, 0, false
	}
	// Background: the median count per bin, outside the window.
	var rest []float64
	for i, c := range h {
		if i < bi-peakHalfWidth || i > bi+peakHalfWidth {
			rest = append(rest, c)
		}
	}
	bg := robust.Median(rest)
	if math.IsNaN(bg) {
		bg = 0
	}
	if best-3*bg < peakSigmas*math.Sqrt(3*bg+1) {
		return 0, 0, false
	}
	// The peak's extent: from its top outwards while the counts stay above
	// a fraction of its height over the background (allowing single-bin
	// dips), so that a peak broadened by the shear across a coarse gap bin
	// is taken whole, then its background-subtracted centroid.
	top := h[bi] - bg
	lim := peakEdgeFraction * top
	lo, hi := bi, bi
	for lo > 0 && (h[lo-1]-bg > lim || (lo > 1 && h[lo-2]-bg > lim)) {
		lo--
	}
	for hi < len(h)-1 && (h[hi+1]-bg > lim || (hi < len(h)-2 && h[hi+2]-bg > lim)) {
		hi++
	}
	lo, hi = max(lo-peakPadBins, 0), min(hi+peakPadBins, len(h)-1)
	var sw, swx float64
	for i := lo; i <= hi; i++ {
		if w := h[i] - bg; w > 0 {
			sw += w
			swx += w * float64(i-half)
		}
	}
	if sw == 0 {
		return 0, 0, false
	}
	return swx / sw * resPx, int(math.Round(sw)), true
}

// TrackOptions sets how FromTracks bins the tracks.
type TrackOptions struct {
	// BinUM is the height of a gap bin, um. Zero means gap/DefaultBins.
	BinUM float64
	// MinSteps is the fewest steps a bin needs to be known. Zero means
	// DefaultMinSteps.
	MinSteps int
	// NominalIntervalS, when positive, is the nominal frame interval, s,
	// of a camera whose frame rate varies: each one-frame step is divided
	// by its own interval (the difference of the points' TS) over this one,
	// so that the profile is the displacement per nominal interval. Zero
	// takes the steps as they are.
	NominalIntervalS float64
}

// DefaultMinSteps is the fewest one-frame steps for a bin of FromTracks: with
// ten, the median's error is about 0.4 of one step's scatter (common
// practice: the median of n normal values has error 1.25 sigma/sqrt(n)).
const DefaultMinSteps = 10

// FromTracks estimates the displacement profile from linked tracks: the
// median, per gap bin, of the one-frame steps of all tracks, taken in gap
// coordinates (so common-mode motion already removed from XUM, YUM stays
// removed) and turned back into image pixels. pts may come in any order
// (grouped by track and in frame order, as Linker returns them, saves a
// sort).
func FromTracks(pts []tracks.Point, cal *calib.Calibration, opt TrackOptions) (*Profile, error) {
	ss, err := trackSteps(pts, cal, 0, 1, opt.NominalIntervalS)
	if err != nil {
		return nil, err
	}
	return profileFromSteps(ss[0], cal, opt, len(pts))
}

// step is one one-frame step of a track: its mean height, um, and its
// displacement along and across the flow, px.
type step struct {
	yUM, along, across float64
}

// trackSteps collects the one-frame steps of pts, split into windows of
// windowFrames by their first frame (all in one when windowFrames is 0).
// With nominalS > 0 each step is scaled to that interval (TrackOptions).
func trackSteps(pts []tracks.Point, cal *calib.Calibration, windowFrames, windows int, nominalS float64) ([][]step, error) {
	if err := cal.Check(); err != nil {
		return nil, fmt.Errorf("flowprior: %w", err)
	}
	if nominalS < 0 || math.IsNaN(nominalS) || math.IsInf(nominalS, 0) {
		return nil, fmt.Errorf("flowprior: nominal frame interval %g s must be positive or zero", nominalS)
	}
	ss := make([][]step, windows)
	eachStep(pts, func(a, b *tracks.Point) {
		scale := 1.0
		if nominalS > 0 {
			dt := b.TS - a.TS
			if !(dt > 0) || math.IsInf(dt, 0) {
				return // no usable time: the step says nothing per interval
			}
			scale = nominalS / dt
		}
		w := 0
		if windowFrames > 0 {
			w = a.Frame / windowFrames
			if a.Frame < 0 || w >= windows {
				return
			}
		}
		ss[w] = append(ss[w], step{(a.YUM + b.YUM) / 2, scale * (b.XUM - a.XUM) / cal.UMPerPx, scale * (b.YUM - a.YUM) / cal.UMPerPx})
	})
	return ss, nil
}

// profileFromSteps bins steps into a Profile.
func profileFromSteps(ss []step, cal *calib.Calibration, opt TrackOptions, npts int) (*Profile, error) {
	if opt.BinUM == 0 {
		opt.BinUM = cal.GapUM / DefaultBins
	}
	if opt.MinSteps == 0 {
		opt.MinSteps = DefaultMinSteps
	}
	ys, err := bins(cal.GapUM, opt.BinUM)
	if err != nil {
		return nil, err
	}
	along := make([][]float64, len(ys))
	across := make([][]float64, len(ys))
	for _, s := range ss {
		if bi := binOf(s.yUM, cal.GapUM, len(ys)); bi >= 0 {
			along[bi] = append(along[bi], s.along)
			across[bi] = append(across[bi], s.across)
		}
	}
	fx, fy := FlowDir(cal)
	ax, ay := AcrossDir(cal)
	p := &Profile{YUM: ys, DXPx: make([]float64, len(ys)), DYPx: make([]float64, len(ys)),
		SpreadPx: make([]float64, len(ys)), N: make([]int, len(ys))}
	for b := range ys {
		p.SpreadPx[b] = math.NaN()
		if len(along[b]) < opt.MinSteps {
			continue
		}
		u, s := medianSpread(along[b])
		v := robust.Median(across[b])
		p.DXPx[b], p.DYPx[b] = u*fx+v*ax, u*fy+v*ay
		p.SpreadPx[b] = s
		p.N[b] = len(along[b])
	}
	if p.Known() == 0 {
		return nil, fmt.Errorf("flowprior: no gap bin has %d one-frame steps among %d track points", opt.MinSteps, npts)
	}
	return p, nil
}

// byTrack returns pts grouped by track and in frame order within a track:
// pts itself when it already is, else a sorted copy.
func byTrack(pts []tracks.Point) []tracks.Point {
	less := func(a, b *tracks.Point) bool {
		return a.Track < b.Track || (a.Track == b.Track && a.Frame < b.Frame)
	}
	seen := map[int]bool{}
	ok := true
	for i := range pts {
		if i > 0 && pts[i].Track == pts[i-1].Track {
			if pts[i].Track != tracks.Unlinked && pts[i].Frame <= pts[i-1].Frame {
				ok = false
				break
			}
			continue
		}
		if seen[pts[i].Track] && pts[i].Track != tracks.Unlinked {
			ok = false
			break
		}
		seen[pts[i].Track] = true
	}
	if ok {
		return pts
	}
	c := append([]tracks.Point(nil), pts...)
	sort.SliceStable(c, func(i, j int) bool { return less(&c[i], &c[j]) })
	return c
}

// trackRuns cuts pts, grouped by track, into at most n runs of about equal
// length that do not split a track.
func trackRuns(pts []tracks.Point, n int) [][]tracks.Point {
	var runs [][]tracks.Point
	for len(pts) > 0 {
		cut := min(len(pts), (len(pts)+n-len(runs)-1)/max(1, n-len(runs)))
		for cut < len(pts) && pts[cut].Track == pts[cut-1].Track && pts[cut].Track != tracks.Unlinked {
			cut++
		}
		runs = append(runs, pts[:cut])
		pts = pts[cut:]
	}
	if len(runs) == 0 {
		runs = [][]tracks.Point{nil}
	}
	return runs
}

// eachStep calls fn for every pair of consecutive points one frame apart in
// the same track.
func eachStep(pts []tracks.Point, fn func(a, b *tracks.Point)) {
	pts = byTrack(pts)
	for i := 1; i < len(pts); i++ {
		a, b := &pts[i-1], &pts[i]
		if a.Track == tracks.Unlinked || a.Track != b.Track || b.Frame != a.Frame+1 {
			continue
		}
		fn(a, b)
	}
}

// CommonModeFromTracks measures what moved the whole image from frame to
// frame from the tracks themselves. Each track is cut into pieces of
// segmentFrames frames, and every point is modelled as its piece's own
// uniform motion plus the offset of its frame, common to all tracks:
// p = a + b f + j(f). The fit alternates between the pieces' lines (least
// squares on p - j) and the offsets (the median over all points of the
// frame of p - a - b f), so one stray track cannot move an offset. A steady
// drift cannot be told from flow by tracks alone: the linear trend of the
// offsets is removed, and it stays in the profile. The result, indexed by
// frame from 0 to frames-1, is the offset of each frame's image relative to
// frame 0, px; a frame with fewer than minCommonPoints points gets the
// offset interpolated from its neighbours. Positions are taken from the gap
// coordinates XUM, YUM (turned back into image pixels), so the offsets are
// on top of whatever correction produced them. Where the flow changes
// abruptly (the start or stop of shear) the pieces are not uniform and the
// offsets of those few frames are less certain.
func CommonModeFromTracks(pts []tracks.Point, cal *calib.Calibration, frames int) ([]Shift, error) {
	return commonMode(pts, cal, frames, nil, nil)
}

// CommonModeFromTracksCut is CommonModeFromTracks (or, with clock not nil,
// CommonModeFromTracksAt) whose pieces of track do not span the cuts:
// times, in the clock's units (frames at a steady rate), at which the
// imposed flow changes (a start or stop of shear). A piece across such a
// change is not uniform motion; when the phases are short against
// segmentFrames (a low frame rate) most pieces would cross one, the
// rejection of bad pieces would fail, and the change of flow would enter
// the offsets as camera motion. A point at a cut ends its piece; the next
// piece starts after it.
func CommonModeFromTracksCut(pts []tracks.Point, cal *calib.Calibration, frames int, clock, cuts []float64) ([]Shift, error) {
	if clock != nil {
		if len(clock) != frames {
			return nil, fmt.Errorf("flowprior: %d frame times for %d frames", len(clock), frames)
		}
		for f := range clock {
			if math.IsNaN(clock[f]) || math.IsInf(clock[f], 0) || (f > 0 && !(clock[f] > clock[f-1])) {
				return nil, fmt.Errorf("flowprior: frame %d's time %g (nominal intervals) does not follow the previous frame's", f, clock[f])
			}
		}
	}
	return commonMode(pts, cal, frames, clock, slices.Sorted(slices.Values(cuts)))
}

// CommonModeFromTracksAt is CommonModeFromTracks for a camera whose frame
// rate varies: clock[f] is the time of frame f in nominal frame intervals
// (time x nominal rate), one per frame, increasing, and the pieces' uniform
// motion and the removed trend are lines in that clock rather than in the
// frame index.
func CommonModeFromTracksAt(pts []tracks.Point, cal *calib.Calibration, clock []float64) ([]Shift, error) {
	for f := range clock {
		if math.IsNaN(clock[f]) || math.IsInf(clock[f], 0) || (f > 0 && !(clock[f] > clock[f-1])) {
			return nil, fmt.Errorf("flowprior: frame %d's time %g (nominal intervals) does not follow the previous frame's", f, clock[f])
		}
	}
	if len(clock) == 0 {
		return nil, fmt.Errorf("flowprior: need at least one frame, got 0")
	}
	return commonMode(pts, cal, len(clock), clock, nil)
}

// commonMode is CommonModeFromTracks with the frames' clock (nil: the
// frame index) and the sorted cuts of CommonModeFromTracksCut.
func commonMode(pts []tracks.Point, cal *calib.Calibration, frames int, clock, cuts []float64) ([]Shift, error) {
	if err := cal.Check(); err != nil {
		return nil, fmt.Errorf("flowprior: %w", err)
	}
	if frames < 1 {
		return nil, fmt.Errorf("flowprior: need at least one frame, got %d", frames)
	}
	if clock == nil {
		clock = make([]float64, frames)
		for f := range clock {
			clock[f] = float64(f)
		}
	}
	// Image-oriented positions from the gap coordinates.
	type obs struct {
		f     int
		x, y  float64
		piece int
	}
	var os []obs
	nPieces := 0
	pts = byTrack(pts)
	for i := 0; i < len(pts); {
		j := i
		for j < len(pts) && pts[j].Track == pts[i].Track {
			j++
		}
		if pts[i].Track != tracks.Unlinked && j-i >= minPiecePoints {
			// Stagger the pieces from track to track, so that no frame is
			// the end of every piece: otherwise the offsets would be known
			// only up to a line within each stretch of frames.
			first := (pts[i].Frame + pts[i].Track) % segmentFrames
			if first < minPiecePoints {
				first = segmentFrames
			}
			for k := i; k < j; {
				if k > i {
					first = segmentFrames
				}
				end := min(k+first, j)
				if c, ok := cutIn(cuts, clock, pts[k].Frame, pts[end-1].Frame); ok {
					// End the piece at the last point not after the cut.
					e := k
					for e < end && (pts[e].Frame < 0 || pts[e].Frame >= frames || clock[pts[e].Frame] <= c) {
						e++
					}
					if e == k {
						e = k + 1
					}
					end = e
				}
				next := end
				if end-k < minPiecePoints {
					k = next
					continue
				}
				for q := k; q < end; q++ {
					p := pts[q]
					if p.Frame < 0 || p.Frame >= frames {
						continue
					}
					x, y := cal.ToImage(p.XUM, p.YUM)
					os = append(os, obs{p.Frame, x, y, nPieces})
				}
				nPieces++
				k = next
			}
		}
		i = j
	}
	// The fit along x and along y is the same and independent, except for
	// the choice of the pieces left out: each axis runs on its own
	// goroutine. The per-piece sums of the frame numbers do not change.
	nObs := len(os)
	of, op := make([]int, nObs), make([]int, nObs)
	for i, o := range os {
		of[i], op[i] = o.f, o.piece
	}
	n, sf, sff := make([]float64, nPieces), make([]float64, nPieces), make([]float64, nPieces)
	for _, o := range os {
		f := clock[o.f]
		n[o.piece]++
		sf[o.piece] += f
		sff[o.piece] += f * f
	}
	newAxis := func(coord func(o obs) float64) *cmAxis {
		a := &cmAxis{of: of, op: op, clock: clock, n: n, sf: sf, sff: sff, v: make([]float64, nObs),
			j: make([]float64, frames), prev: make([]float64, frames),
			a: make([]float64, nPieces), b: make([]float64, nPieces),
			s: make([]float64, nPieces), sfv: make([]float64, nPieces), r: make([][]float64, frames)}
		for i, o := range os {
			a.v[i] = coord(o)
		}
		return a
	}
	ax := newAxis(func(o obs) float64 { return o.x })
	ay := newAxis(func(o obs) float64 { return o.y })
	jx, jy := ax.j, ay.j
	rms := make([]float64, nPieces)
	bad := make([]bool, nPieces)
	for round := 0; round < commonRounds; round++ {
		var wg sync.WaitGroup
		wg.Go(ay.fitLines)
		ax.fitLines()
		wg.Wait()
		if round > 0 {
			// Leave out the pieces that do not move uniformly.
			clear(rms)
			for i, k := range op {
				f, fr := clock[of[i]], of[i]
				dx := ax.v[i] - jx[fr] - ax.a[k] - ax.b[k]*f
				dy := ay.v[i] - jy[fr] - ay.a[k] - ay.b[k]*f
				rms[k] += dx*dx + dy*dy
			}
			for k := range rms {
				rms[k] = math.Sqrt(rms[k] / math.Max(n[k], 1))
			}
			lim := pieceReject * robust.Median(rms)
			for k := range bad {
				bad[k] = rms[k] > lim
			}
		}
		var cx, cy float64
		wg.Go(func() { cy = ay.offsets(bad) })
		cx = ax.offsets(bad)
		wg.Wait()
		if round > 0 && math.Max(cx, cy) < commonSettledPx {
			break
		}
	}
	out := make([]Shift, frames)
	for f := range out {
		out[f] = Shift{jx[f] - jx[0], jy[f] - jy[0]}
	}
	return out, nil
}

// cutIn returns the first cut c with clock[f0] <= c < clock[f1], the
// frames f0 and f1 clamped to the clock.
func cutIn(cuts, clock []float64, f0, f1 int) (float64, bool) {
	if len(cuts) == 0 {
		return 0, false
	}
	f0, f1 = min(max(f0, 0), len(clock)-1), min(max(f1, 0), len(clock)-1)
	for _, c := range cuts {
		if c >= clock[f0] && c < clock[f1] {
			return c, true
		}
	}
	return 0, false
}

// Settings of CommonModeFromTracks.
const (
	// segmentFrames is the length of the pieces of track modelled as
	// uniform motion. Motion common to all tracks that is smooth over a
	// piece is absorbed by the pieces' lines, so the pieces are long (half
	// a second at 100 frames/s); a piece across a change of flow is found by
	// its residuals and left out (pieceReject).
	segmentFrames = 50
	// pieceReject leaves out a piece whose RMS residual exceeds this many
	// times the median piece's: a tracer that did not move uniformly (start
	// or stop of shear, a wrong link).
	pieceReject = 3.0
	// minPiecePoints is the fewest points of a piece: with three, a line
	// through them leaves one degree of freedom for the offsets.
	minPiecePoints = 3
	// minCommonPoints is the fewest points of a frame for its offset to be
	// measured: with fewer the median is a single tracer's noise.
	minCommonPoints = 5
	// commonRounds is the most alternations; the fit settles in two or
	// three, and stops once no offset moved by more than commonSettledPx
	// in a round (after the first round with pieces left out): a fifth of
	// the offsets' own error of about 0.01 px (TestLinkCommonMode in
	// track/link). Later rounds only creep, by about 1e-3 px each (measured
	// on 200 frames of 1000 tracers).
	commonRounds    = 12
	commonSettledPx = 2e-3
)

// cmAxis is the common-mode fit of CommonModeFromTracks along one image
// axis: observation i, in frame of[i] and piece op[i], is at v[i]; piece k
// is the line a[k] + b[k] f, frame f is offset by j[f].
type cmAxis struct {
	of, op     []int
	clock      []float64 // per frame: its time, nominal intervals (f at a steady rate)
	n, sf, sff []float64 // per piece: points, sum of f, sum of f^2
	v          []float64
	j, prev    []float64 // offsets of this round and of the previous one
	a, b       []float64
	s, sfv     []float64   // per piece: sums of v - j and of f (v - j)
	r          [][]float64 // per frame: residuals from the pieces' lines
}

// fitLines fits every piece's line to its points less their frames'
// offsets.
func (c *cmAxis) fitLines() {
	clear(c.s)
	clear(c.sfv)
	for i, k := range c.op {
		f := c.clock[c.of[i]]
		x := c.v[i] - c.j[c.of[i]]
		c.s[k] += x
		c.sfv[k] += f * x
	}
	for k := range c.a {
		d := c.n[k]*c.sff[k] - c.sf[k]*c.sf[k]
		if d == 0 {
			c.a[k], c.b[k] = c.s[k]/c.n[k], 0
			continue
		}
		c.b[k] = (c.n[k]*c.sfv[k] - c.sf[k]*c.s[k]) / d
		c.a[k] = (c.s[k] - c.b[k]*c.sf[k]) / c.n[k]
	}
}

// offsets sets each frame's offset to the median residual of its points
// in the pieces not left out (NaN, then interpolated, for a frame with
// fewer than minCommonPoints), removes the linear trend, and returns the
// largest change from the previous round.
func (c *cmAxis) offsets(bad []bool) float64 {
	for f := range c.r {
		c.r[f] = c.r[f][:0]
	}
	for i, k := range c.op {
		if bad[k] {
			continue
		}
		f := c.of[i]
		c.r[f] = append(c.r[f], c.v[i]-c.a[k]-c.b[k]*c.clock[f])
	}
	for f := range c.j {
		if len(c.r[f]) >= minCommonPoints {
			c.j[f] = robust.Median(c.r[f])
		} else {
			c.j[f] = math.NaN()
		}
	}
	fillGaps(c.j)
	detrendAt(c.j, c.clock)
	change := 0.0
	for f, v := range c.j {
		change = math.Max(change, math.Abs(v-c.prev[f]))
	}
	copy(c.prev, c.j)
	return change
}

// fillGaps replaces NaN values by linear interpolation between the nearest
// known ones (held constant at the ends; all zero when none is known).
func fillGaps(v []float64) {
	last := -1
	for i := range v {
		if math.IsNaN(v[i]) {
			continue
		}
		if last < 0 {
			for k := 0; k < i; k++ {
				v[k] = v[i]
			}
		} else {
			for k := last + 1; k < i; k++ {
				w := float64(k-last) / float64(i-last)
				v[k] = v[last] + w*(v[i]-v[last])
			}
		}
		last = i
	}
	if last < 0 {
		clear(v)
		return
	}
	for k := last + 1; k < len(v); k++ {
		v[k] = v[last]
	}
}

// detrend subtracts the least-squares line through v (against its index).
func detrend(v []float64) { detrendAt(v, nil) }

// detrendAt subtracts the least-squares line through v against at (nil:
// the index).
func detrendAt(v, at []float64) {
	n := float64(len(v))
	if n < 2 {
		return
	}
	abscissa := func(i int) float64 {
		if at == nil {
			return float64(i)
		}
		return at[i]
	}
	var sf, sff, sv, sfv float64
	for i, x := range v {
		f := abscissa(i)
		sf += f
		sff += f * f
		sv += x
		sfv += f * x
	}
	b := (n*sfv - sf*sv) / (n*sff - sf*sf)
	a := (sv - b*sf) / n
	for i := range v {
		v[i] -= a + b*abscissa(i)
	}
}

// QuickCommonMode estimates cheaply the common-mode offsets that
// CommonModeFromTracks measures in the tracks pts, px, indexed by frame from
// 0 to frames-1: for each frame f, the median over all steps from frame f-1
// to f of the step less the field's step at the older point (image
// positions XPx, YPx, so pts must carry no correction), cumulated over the
// frames; a frame with fewer than minCommonPoints steps adds nothing. The
// part of the offsets that a line follows over a stretch of
// quickStretchFrames frames is removed from each stretch, as the pieces'
// lines of CommonModeFromTracks absorb motion smooth over their length. It
// is meant to tell a steady camera from a shaky one at a small fraction of
// CommonModeFromTracks' cost; it returns nil when frames < 2 or field is
// nil.
func QuickCommonMode(pts []tracks.Point, field Field, frames int) []Shift {
	if frames < 2 || field == nil {
		return nil
	}
	// Residuals of the steps, grouped by the newer point's frame: counted
	// first, so that they fill two flat arrays. The tracks are split into
	// one run per core; the runs keep the order of a single pass, so the
	// result does not depend on the number of cores.
	type res struct {
		f      int
		dx, dy float64
	}
	runs := trackRuns(byTrack(pts), runtime.GOMAXPROCS(0))
	found := make([][]res, len(runs))
	counts := make([][]int, len(runs))
	var wg sync.WaitGroup
	for k, run := range runs {
		wg.Add(1)
		go func() {
			defer wg.Done()
			cnt := make([]int, frames+1)
			var rs []res
			for i := 1; i < len(run); i++ {
				a, b := &run[i-1], &run[i]
				if a.Track == tracks.Unlinked || a.Track != b.Track || b.Frame != a.Frame+1 ||
					b.Frame < 1 || b.Frame >= frames {
					continue
				}
				px, py, ok := field.Step(a.Frame, a.YUM)
				if !ok {
					continue
				}
				rs = append(rs, res{b.Frame, b.XPx - a.XPx - px, b.YPx - a.YPx - py})
				cnt[b.Frame+1]++
			}
			found[k], counts[k] = rs, cnt
		}()
	}
	wg.Wait()
	start := make([]int, frames+1)
	for _, cnt := range counts {
		for f := range start {
			start[f] += cnt[f]
		}
	}
	for f := 1; f <= frames; f++ {
		start[f] += start[f-1]
	}
	rx, ry := make([]float64, start[frames]), make([]float64, start[frames])
	fill := append([]int(nil), start[:frames]...)
	for _, rs := range found {
		for _, r := range rs {
			rx[fill[r.f]], ry[fill[r.f]] = r.dx, r.dy
			fill[r.f]++
		}
	}
	// The frames' medians, on all cores, then their running sum.
	mx, my := make([]float64, frames), make([]float64, frames)
	perCore := (frames + len(runs) - 1) / len(runs)
	for f0 := 1; f0 < frames; f0 += perCore {
		wg.Add(1)
		go func() {
			defer wg.Done()
			for f := f0; f < min(f0+perCore, frames); f++ {
				if lo, hi := start[f], start[f+1]; hi-lo >= minCommonPoints {
					mx[f], my[f] = robust.Median(rx[lo:hi]), robust.Median(ry[lo:hi])
				}
			}
		}()
	}
	wg.Wait()
	return quickShifts(mx, my)
}

// quickShifts turns QuickCommonMode's per-frame medians of the steps'
// residuals into its offsets: cumulated, less a line over each stretch of
// quickStretchFrames.
func quickShifts(mx, my []float64) []Shift {
	frames := len(mx)
	cx, cy := make([]float64, frames), make([]float64, frames)
	for f := 1; f < frames; f++ {
		cx[f], cy[f] = cx[f-1]+mx[f], cy[f-1]+my[f]
	}
	for lo := 0; lo < frames; lo += quickStretchFrames {
		hi := min(lo+quickStretchFrames, frames)
		detrend(cx[lo:hi])
		detrend(cy[lo:hi])
	}
	out := make([]Shift, frames)
	for f := range out {
		out[f] = Shift{cx[f], cy[f]}
	}
	return out
}

// quickStretchFrames is the stretch of QuickCommonMode over which a line
// is removed from the cumulated offsets: twice segmentFrames, so that it
// removes less than the pieces of CommonModeFromTracks absorb and errs
// towards finding motion, and short enough that the medians' own noise,
// which the sum turns into a random walk, stays small (about 3e-3 px per
// frame with a thousand tracers gives about 0.01 px RMS over 100 frames).
const quickStretchFrames = 2 * segmentFrames
