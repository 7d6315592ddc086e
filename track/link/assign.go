package link

import "slices"

import "math"

// assigner solves dense rectangular assignment problems by the Hungarian
// method in its shortest-augmenting-path form with potentials (Kuhn, 1955;
// Jonker and Volgenant, 1987), in O(n^2 m) for n rows <= m columns. Its
// buffers are reused between calls.
type assigner struct {
	u, v, minv []float64
	p, way     []int
	used       []bool
	rowOf      []int
}

// solve finds the assignment of each of the n rows of cost (n x m, row-major,
// n <= m) to a distinct column that minimizes the total cost, and returns,
// for each row, its column.
func (a *assigner) solve(cost []float64, n, m int) []int {
	// 1-based arrays with a virtual column 0, as in the classic formulation.
	a.u = slices.Grow(a.u[:0], n+1)[:n+1]
	a.v = slices.Grow(a.v[:0], m+1)[:m+1]
	a.minv = slices.Grow(a.minv[:0], m+1)[:m+1]
	a.p = slices.Grow(a.p[:0], m+1)[:m+1]
	a.way = slices.Grow(a.way[:0], m+1)[:m+1]
	if cap(a.used) < m+1 {
		a.used = make([]bool, m+1)
	}
	a.used = a.used[:m+1]
	clear(a.u)
	clear(a.v)
	clear(a.p)
	u, v, p, way, minv, used := a.u, a.v, a.p, a.way, a.minv, a.used
	for i := 1; i <= n; i++ {
		p[0] = i
		j0 := 0
		for j := range minv {
			minv[j] = math.Inf(1)
			used[j] = false
		}
		for {
			used[j0] = true
			i0 := p[j0]
			delta, j1 := math.Inf(1), 0
			row := cost[(i0-1)*m:]
			for j := 1; j <= m; j++ {
				if used[j] {
					continue
				}
				if cur := row[j-1] - u[i0] - v[j]; cur < minv[j] {
					minv[j], way[j] = cur, j0
				}
				if minv[j] < delta {
					delta, j1 = minv[j], j
				}
			}
			for j := 0; j <= m; j++ {
				if used[j] {
					u[p[j]] += delta
					v[j] -= delta
				} else {
					minv[j] -= delta
				}
			}
			j0 = j1
			if p[j0] == 0 {
				break
			}
		}
		for j0 != 0 {
			j1 := way[j0]
			p[j0] = p[j1]
			j0 = j1
		}
	}
	a.rowOf = slices.Grow(a.rowOf[:0], n)[:n]
	for j := 1; j <= m; j++ {
		if p[j] != 0 {
			a.rowOf[p[j]-1] = j - 1
		}
	}
	return a.rowOf
}
