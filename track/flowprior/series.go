package flowprior

import (
	"fmt"
	"runtime"
	"sort"
	"sync"

	"gaptrace/calib"
	"gaptrace/track/tracks"
)

// Series is a displacement profile that changes in time: Profiles[i] holds
// for the frame pairs starting in frames Start[i] to Start[i+1]-1 (the last
// to the end). A nil profile is a window that could not be measured; Step
// then uses the nearest measured window.
type Series struct {
	Start    []int
	Profiles []*Profile
}

// Step returns the displacement per frame at yUM for the pair starting at
// frame, from the window holding frame or else the nearest window that knows
// the height.
func (s *Series) Step(frame int, yUM float64) (dxPx, dyPx float64, ok bool) {
	if s == nil || len(s.Start) == 0 {
		return 0, 0, false
	}
	i := sort.SearchInts(s.Start, frame+1) - 1
	if i < 0 {
		i = 0
	}
	for d := 0; d < len(s.Start); d++ {
		for _, k := range [2]int{i - d, i + d} {
			if k < 0 || k >= len(s.Start) || (d == 0 && k != i) {
				continue
			}
			if dx, dy, ok := s.Profiles[k].Step(frame, yUM); ok {
				return dx, dy, true
			}
		}
	}
	return 0, 0, false
}

// SeriesFromDetections runs FromDetections on consecutive windows of
// windowFrames frames (each window also holds the first frame of the next,
// so that every pair is used once).
func SeriesFromDetections(frames [][]Point, cal *calib.Calibration, opt HistOptions, windowFrames int) (*Series, error) {
	if windowFrames < 2 {
		return nil, fmt.Errorf("flowprior: a window needs at least 2 frames, got %d", windowFrames)
	}
	s := &Series{}
	for f0 := 0; f0+1 < len(frames); f0 += windowFrames {
		s.Start = append(s.Start, f0)
	}
	// The windows are independent: they are measured on all cores.
	s.Profiles = make([]*Profile, len(s.Start))
	errs := make([]error, len(s.Start))
	next := make(chan int)
	var wg sync.WaitGroup
	for range min(runtime.GOMAXPROCS(0), len(s.Start)) {
		wg.Add(1)
		go func() {
			defer wg.Done()
			for i := range next {
				f0 := s.Start[i]
				f1 := min(f0+windowFrames+1, len(frames))
				o := opt
				o.Intervals = opt.Intervals[min(f0, len(opt.Intervals)):min(f1, len(opt.Intervals))]
				s.Profiles[i], errs[i] = FromDetections(frames[f0:f1], cal, o)
			}
		}()
	}
	for i := range s.Start {
		next <- i
	}
	close(next)
	wg.Wait()
	known := 0
	var firstErr error
	for i, p := range s.Profiles {
		if errs[i] != nil && firstErr == nil {
			firstErr = errs[i]
		}
		if p != nil {
			known++
		}
	}
	if known == 0 && firstErr == nil {
		firstErr = fmt.Errorf("flowprior: %d frames are too few for a window", len(frames))
	}
	return finishSeries(s, known, firstErr)
}

// finishSeries returns s, or the first error when no window was measured.
func finishSeries(s *Series, known int, firstErr error) (*Series, error) {
	if known == 0 {
		return nil, firstErr
	}
	return s, nil
}

// SeriesFromTracks runs FromTracks on the steps starting in consecutive
// windows of windowFrames frames, from frame 0 to frames-1.
func SeriesFromTracks(pts []tracks.Point, cal *calib.Calibration, opt TrackOptions, frames, windowFrames int) (*Series, error) {
	if windowFrames < 1 {
		return nil, fmt.Errorf("flowprior: a window needs at least 1 frame, got %d", windowFrames)
	}
	if frames < 1 {
		return nil, fmt.Errorf("flowprior: need at least one frame, got %d", frames)
	}
	nw := (frames + windowFrames - 1) / windowFrames
	ss, err := trackSteps(pts, cal, windowFrames, nw, opt.NominalIntervalS)
	if err != nil {
		return nil, err
	}
	s := &Series{}
	known := 0
	var firstErr error
	for w := 0; w < nw; w++ {
		p, err := profileFromSteps(ss[w], cal, opt, len(pts))
		if err != nil && firstErr == nil {
			firstErr = err
		}
		if p != nil {
			known++
		}
		s.Start = append(s.Start, w*windowFrames)
		s.Profiles = append(s.Profiles, p)
	}
	return finishSeries(s, known, firstErr)
}
