package report

import (
	"math"
	"sort"
)

// contour returns the polylines of {f = 0} over the rectangle
// [x0,x1]×[y0,y1], found by marching squares on an nx×ny grid of cells.
// Every crossing is refined by bisection along its grid edge, so each
// returned point satisfies f = 0 to within bisectIters halvings of a cell
// edge (far below what a figure can show). Cells whose four corners
// straddle the level twice (saddles) are split using f at the centre.
func contour(f func(x, y float64) float64, x0, x1, y0, y1 float64, nx, ny int) [][][2]float64 {
	gx := func(i int) float64 { return x0 + (x1-x0)*float64(i)/float64(nx) }
	gy := func(j int) float64 { return y0 + (y1-y0)*float64(j)/float64(ny) }
	v := make([]float64, (nx+1)*(ny+1))
	at := func(i, j int) float64 { return v[j*(nx+1)+i] }
	for j := 0; j <= ny; j++ {
		for i := 0; i <= nx; i++ {
			v[j*(nx+1)+i] = f(gx(i), gy(j))
		}
	}
	neg := func(a float64) bool { return a < 0 }
	// Edge ids: horizontal edge (i,j)-(i+1,j) is 2*(j*(nx+1)+i);
	// vertical edge (i,j)-(i,j+1) is 2*(j*(nx+1)+i)+1.
	hid := func(i, j int) int { return 2 * (j*(nx+1) + i) }
	vid := func(i, j int) int { return 2*(j*(nx+1)+i) + 1 }
	point := map[int][2]float64{}
	cross := func(id int) [2]float64 {
		if p, ok := point[id]; ok {
			return p
		}
		k := id / 2
		i, j := k%(nx+1), k/(nx+1)
		ax, ay := gx(i), gy(j)
		bx, by := ax, ay
		if id%2 == 0 {
			bx = gx(i + 1)
		} else {
			by = gy(j + 1)
		}
		fa := f(ax, ay)
		for range bisectIters {
			mx, my := (ax+bx)/2, (ay+by)/2
			fm := f(mx, my)
			if fm == 0 {
				ax, ay, bx, by = mx, my, mx, my
				break
			}
			if neg(fm) == neg(fa) {
				ax, ay, fa = mx, my, fm
			} else {
				bx, by = mx, my
			}
		}
		p := [2]float64{(ax + bx) / 2, (ay + by) / 2}
		point[id] = p
		return p
	}
	adj := map[int][]int{}
	link := func(a, b int) {
		adj[a] = append(adj[a], b)
		adj[b] = append(adj[b], a)
	}
	for j := 0; j < ny; j++ {
		for i := 0; i < nx; i++ {
			// corners: 0 (i,j), 1 (i+1,j), 2 (i+1,j+1), 3 (i,j+1)
			c := [4]float64{at(i, j), at(i+1, j), at(i+1, j+1), at(i, j+1)}
			if math.IsNaN(c[0] + c[1] + c[2] + c[3]) {
				continue
			}
			// edges: 0 bottom (0-1), 1 right (1-2), 2 top (3-2), 3 left (0-3)
			e := [4]int{hid(i, j), vid(i+1, j), hid(i, j+1), vid(i, j)}
			var hit []int
			for k := range 4 {
				if neg(c[k]) != neg(c[(k+1)%4]) {
					hit = append(hit, k)
				}
			}
			switch len(hit) {
			case 2:
				link(e[hit[0]], e[hit[1]])
			case 4:
				mid := f((gx(i)+gx(i+1))/2, (gy(j)+gy(j+1))/2)
				if neg(mid) == neg(c[0]) {
					// corner 0's side is joined across the centre: cut off corners 1 and 3.
					link(e[0], e[1])
					link(e[2], e[3])
				} else {
					link(e[3], e[0])
					link(e[1], e[2])
				}
			}
		}
	}
	// Walk chains, starting from open ends first, then closed loops; ids in
	// sorted order so that the output is deterministic.
	ids := make([]int, 0, len(adj))
	for id := range adj {
		ids = append(ids, id)
	}
	sort.Ints(ids)
	used := map[[2]int]bool{}
	key := func(a, b int) [2]int {
		if a > b {
			a, b = b, a
		}
		return [2]int{a, b}
	}
	var out [][][2]float64
	walk := func(start int) {
		line := [][2]float64{cross(start)}
		cur := start
		for {
			next := -1
			for _, n := range adj[cur] {
				if !used[key(cur, n)] {
					next = n
					break
				}
			}
			if next < 0 {
				break
			}
			used[key(cur, next)] = true
			line = append(line, cross(next))
			cur = next
		}
		if len(line) > 1 {
			out = append(out, line)
		}
	}
	for _, id := range ids {
		if len(adj[id]) == 1 {
			walk(id)
		}
	}
	for _, id := range ids {
		walk(id)
	}
	return out
}

// bisectIters halves a grid edge 60 times: 2^-60 of a cell is below the
// resolution of float64 coordinates of any sensible figure.
const bisectIters = 60
