package tracks_test

import (
	"bytes"
	"fmt"

	"gaptrace/track/tracks"
)

// Two frames of one track and a detection in no track, written as
// tracks.csv and read back.
func Example() {
	pts := []tracks.Point{
		{Track: 0, Frame: 0, TS: 0, XPx: 10, YPx: 20, XUM: 20, YUM: 400},
		{Track: 0, Frame: 1, TS: 0.01, XPx: 11, YPx: 20, XUM: 22, YUM: 400},
		{Track: tracks.Unlinked, Frame: 1, TS: 0.01, XPx: 50, YPx: 30},
	}
	var b bytes.Buffer
	if err := tracks.WriteCSV(&b, pts); err != nil {
		fmt.Println(err)
		return
	}
	back, err := tracks.ReadCSV(&b)
	if err != nil {
		fmt.Println(err)
		return
	}
	n, tr, med := tracks.Count(back)
	fmt.Printf("%d rows; %d points in %d track, %d per track\n", len(back), n, tr, med)
	// Output:
	// 3 rows; 2 points in 1 track, 2 per track
}
