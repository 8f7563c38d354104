package fit

import (
	"math"
	"math/rand/v2"
)

// envelope is the part of state space the recorded runs cover, in scaled
// coordinates z: the union of the cells of a regular grid that hold at
// least one recorded sample (grid occupancy). So every point of the
// envelope lies within one cell diagonal of a recorded sample, and holes
// the runs never visit stay outside, unlike a bounding box.
//
// The grid spans the samples' bounding box with kin cells per axis, plus
// one empty padding cell on each side, so that the envelope is always
// surrounded by non-envelope cells. kin is chosen from the sample count
// (about 20 samples a cell if they were spread evenly), between 4 and
// 40, and the grid never has more than envMaxCells cells: cheap for n up
// to 6 (4 cells an axis there, 6⁶ = 46,656 grid cells).
type envelope struct {
	n      int
	lo, h  []float64 // grid origin (padding included) and cell widths, in z
	k      []int     // cells per axis, padding included
	stride []int
	total  int
	count  []int32 // samples per cell; envFilled for a filled hole; 0 outside
	cells  []int   // occupied cells, ascending
}

const (
	envMaxCells       = 1 << 18
	envSamplesPerCell = 20
	envMinCells       = 4
	envMaxCellsAxis   = 40
	// envFilled marks, in count, a hole cell filled by the closing (it
	// holds no sample but belongs to the envelope).
	envFilled = -1
)

// newEnvelope builds the envelope of the points z (flattened, n a point).
func newEnvelope(pts []float64, n int) *envelope {
	e := &envelope{n: n, lo: make([]float64, n), h: make([]float64, n), k: make([]int, n), stride: make([]int, n)}
	npts := len(pts) / n
	mn := make([]float64, n)
	mx := make([]float64, n)
	for j := range mn {
		mn[j], mx[j] = math.Inf(1), math.Inf(-1)
	}
	for i := 0; i < npts; i++ {
		for j := 0; j < n; j++ {
			v := pts[i*n+j]
			mn[j] = math.Min(mn[j], v)
			mx[j] = math.Max(mx[j], v)
		}
	}
	kin := int(math.Floor(math.Pow(float64(npts)/envSamplesPerCell, 1/float64(n))))
	kin = min(max(kin, envMinCells), envMaxCellsAxis)
	for kin > envMinCells && math.Pow(float64(kin+2), float64(n)) > envMaxCells {
		kin--
	}
	e.total = 1
	for j := 0; j < n; j++ {
		w := mx[j] - mn[j]
		if w <= 0 {
			w = 1e-9
		}
		e.h[j] = w / float64(kin)
		e.lo[j] = mn[j] - e.h[j]
		e.k[j] = kin + 2
		e.stride[j] = e.total
		e.total *= e.k[j]
	}
	e.count = make([]int32, e.total)
	for i := 0; i < npts; i++ {
		c := e.cellOf(pts[i*n : (i+1)*n])
		if c >= 0 {
			e.count[c]++
		}
	}
	e.close()
	for c, v := range e.count {
		if v != 0 {
			e.cells = append(e.cells, c)
		}
	}
	return e
}

// close fills the holes of the occupied cells by a morphological closing
// with face neighbours: dilate (add every face neighbour of an occupied
// cell), then erode (keep a cell only if it and all its 2n face
// neighbours are in the dilation; a missing neighbour beyond the grid
// counts as outside). This fills one-cell holes and gaps between nearby
// trajectories without moving the outer edge, so every envelope point
// stays within two cells of a recorded sample. Filled cells are marked
// envFilled in count.
func (e *envelope) close() {
	dil := make([]bool, e.total)
	for c, v := range e.count {
		if v > 0 {
			dil[c] = true
			e.neighbours(c, func(nb int) { dil[nb] = true })
		}
	}
	for c := range e.count {
		if e.count[c] > 0 || !dil[c] {
			continue
		}
		keep := true
		nbs := 0
		e.neighbours(c, func(nb int) {
			nbs++
			if !dil[nb] {
				keep = false
			}
		})
		if keep && nbs == 2*e.n {
			e.count[c] = envFilled
		}
	}
}

// cellOf returns the grid cell holding z, or -1 outside the grid.
func (e *envelope) cellOf(z []float64) int {
	c := 0
	for j, v := range z {
		i := int(math.Floor((v - e.lo[j]) / e.h[j]))
		if i < 0 || i >= e.k[j] {
			return -1
		}
		c += i * e.stride[j]
	}
	return c
}

// inside reports whether z lies in the envelope.
func (e *envelope) inside(z []float64) bool {
	c := e.cellOf(z)
	return c >= 0 && e.count[c] != 0
}

// index returns the per-axis index of cell c along axis j.
func (e *envelope) index(c, j int) int { return (c / e.stride[j]) % e.k[j] }

// centerTo stores cell c's centre in dst and returns dst.
func (e *envelope) centerTo(dst []float64, c int) []float64 {
	for j := range dst {
		dst[j] = e.lo[j] + (float64(e.index(c, j))+0.5)*e.h[j]
	}
	return dst
}

// halfDiag returns half the cell diagonal.
func (e *envelope) halfDiag() float64 {
	s := 0.0
	for _, h := range e.h {
		s += h * h / 4
	}
	return math.Sqrt(s)
}

// cellVolume returns a cell's volume in z.
func (e *envelope) cellVolume() float64 {
	v := 1.0
	for _, h := range e.h {
		v *= h
	}
	return v
}

// volume returns the envelope's volume in z.
func (e *envelope) volume() float64 { return float64(len(e.cells)) * e.cellVolume() }

// neighbours calls fn for each face neighbour of c inside the grid.
func (e *envelope) neighbours(c int, fn func(int)) {
	for j := 0; j < e.n; j++ {
		i := e.index(c, j)
		if i > 0 {
			fn(c - e.stride[j])
		}
		if i < e.k[j]-1 {
			fn(c + e.stride[j])
		}
	}
}

// randomTo stores a point drawn uniformly from the envelope in dst.
func (e *envelope) randomTo(dst []float64, rng *rand.Rand) []float64 {
	c := e.cells[rng.IntN(len(e.cells))]
	for j := range dst {
		dst[j] = e.lo[j] + (float64(e.index(c, j))+rng.Float64())*e.h[j]
	}
	return dst
}
