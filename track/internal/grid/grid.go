// Package grid buckets points of the image plane into square cells, for
// look-ups of every point within a radius in time proportional to the
// points found. Its buffers are reused from one Build to the next.
package grid

import "math"

// Grid is a cell index of points in pixels. The zero value is empty.
type Grid struct {
	xs, ys     []float64
	cell       float64
	x0, y0     float64
	nx, ny     int
	start, idx []int32 // points of cell c are idx[start[c]:start[c+1]]
	pos        []int32 // fill cursor, reused
}

// Build indexes n points, point i at at(i), with cells of side cellPx.
func (g *Grid) Build(n int, at func(i int) (xPx, yPx float64), cellPx float64) {
	g.xs, g.ys = resize(g.xs, n), resize(g.ys, n)
	g.cell = cellPx
	x0, y0, x1, y1 := math.Inf(1), math.Inf(1), math.Inf(-1), math.Inf(-1)
	for i := range n {
		x, y := at(i)
		g.xs[i], g.ys[i] = x, y
		x0, y0 = math.Min(x0, x), math.Min(y0, y)
		x1, y1 = math.Max(x1, x), math.Max(y1, y)
	}
	g.x0, g.y0 = x0, y0
	g.nx = int((x1-x0)/cellPx) + 1
	g.ny = int((y1-y0)/cellPx) + 1
	// A degenerate spread (one far outlier) must not blow up memory: cap the
	// cell count at a few per point.
	for g.nx*g.ny > 4*n+16 {
		g.cell *= 2
		g.nx = int((x1-x0)/g.cell) + 1
		g.ny = int((y1-y0)/g.cell) + 1
	}
	nc := g.nx * g.ny
	g.start = resize(g.start, nc+1)
	clear(g.start)
	for i := range n {
		g.start[g.cellOf(g.xs[i], g.ys[i])+1]++
	}
	for c := 0; c < nc; c++ {
		g.start[c+1] += g.start[c]
	}
	g.idx = resize(g.idx, n)
	g.pos = resize(g.pos, nc)
	pos := g.pos
	copy(pos, g.start[:nc])
	for i := range n {
		c := g.cellOf(g.xs[i], g.ys[i])
		g.idx[pos[c]] = int32(i)
		pos[c]++
	}
}

func (g *Grid) cellOf(x, y float64) int {
	cx := int((x - g.x0) / g.cell)
	cy := int((y - g.y0) / g.cell)
	return cy*g.nx + cx
}

// Near calls fn with the index of every point within rPx of (xPx, yPx).
func (g *Grid) Near(xPx, yPx, rPx float64, fn func(i int)) {
	if len(g.xs) == 0 {
		return
	}
	cx0 := max(int(math.Floor((xPx-rPx-g.x0)/g.cell)), 0)
	cx1 := min(int(math.Floor((xPx+rPx-g.x0)/g.cell)), g.nx-1)
	cy0 := max(int(math.Floor((yPx-rPx-g.y0)/g.cell)), 0)
	cy1 := min(int(math.Floor((yPx+rPx-g.y0)/g.cell)), g.ny-1)
	r2 := rPx * rPx
	for cy := cy0; cy <= cy1; cy++ {
		for c := cy*g.nx + cx0; c <= cy*g.nx+cx1; c++ {
			for _, i := range g.idx[g.start[c]:g.start[c+1]] {
				if dx, dy := g.xs[i]-xPx, g.ys[i]-yPx; dx*dx+dy*dy <= r2 {
					fn(int(i))
				}
			}
		}
	}
}

func resize[T any](s []T, n int) []T {
	if cap(s) < n {
		return make([]T, n)
	}
	return s[:n]
}
