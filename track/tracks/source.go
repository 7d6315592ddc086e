package tracks

import (
	"cmp"
	"slices"
)

// Source is a collection of tracks that can be read more than once, one
// track at a time, so that a consumer need not hold the whole recording
// in memory.
//
// Each calls fn once for every track, with that track's points in frame
// order, and once for every unlinked detection (Track == Unlinked), with
// that point alone. The order of the tracks is the source's own (a spool
// on disk gives them in the order they ended); a consumer that needs
// another order sorts what it keeps. The slice passed to fn is valid only
// during the call: fn copies what it keeps. Each stops at the first error
// fn returns and returns it.
type Source interface {
	Each(fn func(track []Point) error) error
}

// Slice is a Source held in memory: the points of a tracks table in any
// order. Each hands out the tracks in id order, then the unlinked points.
type Slice []Point

// Each implements Source.
func (s Slice) Each(fn func(track []Point) error) error {
	pts := slices.Clone([]Point(s))
	slices.SortStableFunc(pts, func(a, b Point) int {
		ua, ub := a.Track == Unlinked, b.Track == Unlinked
		switch {
		case ua != ub:
			if ua {
				return 1
			}
			return -1
		case ua:
			return cmp.Compare(a.Frame, b.Frame)
		}
		return cmp.Or(cmp.Compare(a.Track, b.Track), cmp.Compare(a.Frame, b.Frame))
	})
	for i := 0; i < len(pts); {
		j := i + 1
		if pts[i].Track != Unlinked {
			for j < len(pts) && pts[j].Track == pts[i].Track {
				j++
			}
		}
		if err := fn(pts[i:j:j]); err != nil {
			return err
		}
		i = j
	}
	return nil
}

// Collect returns every point of src in one table, in src's order.
func Collect(src Source) ([]Point, error) {
	var out []Point
	err := src.Each(func(t []Point) error {
		out = append(out, t...)
		return nil
	})
	return out, err
}
