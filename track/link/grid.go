package link

import "math"

// grid buckets points into square cells for look-ups within a radius. Its
// buffers are reused from one build to the next.
type grid struct {
	pts        []pos
	cell       float64
	x0, y0     float64
	nx, ny     int
	start, idx []int32 // points of cell c are idx[start[c]:start[c+1]]
	pos        []int32 // fill cursor, reused
}

// build buckets pts with cells of side cellPx.
func (g *grid) build(pts []pos, cellPx float64) {
	g.pts, g.cell = pts, cellPx
	x0, y0, x1, y1 := math.Inf(1), math.Inf(1), math.Inf(-1), math.Inf(-1)
	for _, p := range pts {
		x0, y0 = math.Min(x0, p.XPx), math.Min(y0, p.YPx)
		x1, y1 = math.Max(x1, p.XPx), math.Max(y1, p.YPx)
	}
	g.x0, g.y0 = x0, y0
	g.nx = int((x1-x0)/cellPx) + 1
	g.ny = int((y1-y0)/cellPx) + 1
	// A degenerate spread (one far outlier) must not blow up memory: cap the
	// cell count at a few per point.
	for g.nx*g.ny > 4*len(pts)+16 {
		g.cell *= 2
		g.nx = int((x1-x0)/g.cell) + 1
		g.ny = int((y1-y0)/g.cell) + 1
	}
	nc := g.nx * g.ny
	g.start = resize(g.start, nc+1)
	clear(g.start)
	for _, p := range pts {
		g.start[g.cellOf(p.XPx, p.YPx)+1]++
	}
	for c := 0; c < nc; c++ {
		g.start[c+1] += g.start[c]
	}
	g.idx = resize(g.idx, len(pts))
	g.pos = resize(g.pos, nc)
	pos := g.pos
	copy(pos, g.start[:nc])
	for i, p := range pts {
		c := g.cellOf(p.XPx, p.YPx)
		g.idx[pos[c]] = int32(i)
		pos[c]++
	}
}

func (g *grid) cellOf(x, y float64) int {
	cx := int((x - g.x0) / g.cell)
	cy := int((y - g.y0) / g.cell)
	return cy*g.nx + cx
}

// near calls fn with the index of every point within rPx of (x, y).
func (g *grid) near(x, y, rPx float64, fn func(i int)) {
	if len(g.pts) == 0 {
		return
	}
	cx0 := max(int(math.Floor((x-rPx-g.x0)/g.cell)), 0)
	cx1 := min(int(math.Floor((x+rPx-g.x0)/g.cell)), g.nx-1)
	cy0 := max(int(math.Floor((y-rPx-g.y0)/g.cell)), 0)
	cy1 := min(int(math.Floor((y+rPx-g.y0)/g.cell)), g.ny-1)
	r2 := rPx * rPx
	for cy := cy0; cy <= cy1; cy++ {
		for c := cy*g.nx + cx0; c <= cy*g.nx+cx1; c++ {
			for _, i := range g.idx[g.start[c]:g.start[c+1]] {
				p := g.pts[i]
				if dx, dy := p.XPx-x, p.YPx-y; dx*dx+dy*dy <= r2 {
					fn(int(i))
				}
			}
		}
	}
}

func resize(s []int32, n int) []int32 {
	if cap(s) < n {
		return make([]int32, n)
	}
	return s[:n]
}

// pos is a position in image pixels, with common-mode motion removed.
type pos struct {
	XPx, YPx float64
}
