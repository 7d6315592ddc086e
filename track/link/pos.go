package link

// pos is a position in image pixels, with common-mode motion removed.
type pos struct {
	XPx, YPx float64
}
