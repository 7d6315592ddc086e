package tracks

import (
	"errors"
	"testing"
)

func TestSliceEach(t *testing.T) {
	pts := Slice{
		{Track: 2, Frame: 5}, {Track: Unlinked, Frame: 3}, {Track: 1, Frame: 2},
		{Track: 2, Frame: 4}, {Track: 1, Frame: 1}, {Track: Unlinked, Frame: 1},
	}
	type call struct{ track, first, n int }
	want := []call{{1, 1, 2}, {2, 4, 2}, {Unlinked, 1, 1}, {Unlinked, 3, 1}}
	var got []call
	err := pts.Each(func(tr []Point) error {
		for i := 1; i < len(tr); i++ {
			if tr[i].Track != tr[0].Track || tr[i].Frame <= tr[i-1].Frame {
				t.Errorf("track %v is not one track in frame order", tr)
			}
		}
		got = append(got, call{tr[0].Track, tr[0].Frame, len(tr)})
		return nil
	})
	if err != nil {
		t.Fatal(err)
	}
	if len(got) != len(want) {
		t.Fatalf("calls %v, want %v", got, want)
	}
	for i := range want {
		if got[i] != want[i] {
			t.Errorf("call %d = %v, want %v", i, got[i], want[i])
		}
	}
	if pts[0].Track != 2 || pts[0].Frame != 5 {
		t.Errorf("Each reordered the table it reads: %v", pts[0])
	}
	stop := errors.New("stop")
	n := 0
	if err := pts.Each(func([]Point) error { n++; return stop }); err != stop || n != 1 {
		t.Errorf("Each after an error: %d calls, err %v; want 1 call and the error", n, err)
	}
	all, err := Collect(pts)
	if err != nil || len(all) != len(pts) {
		t.Errorf("Collect: %d points, err %v; want %d", len(all), err, len(pts))
	}
}
