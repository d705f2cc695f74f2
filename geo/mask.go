package geo

import (
	"cmp"
	"fmt"
	"math"
	"math/bits"
	"slices"

	"github.com/paulmach/orb"
)

// Mask is a set of grid cells stored as a bitset, one bit per cell in the grid's row-major
// order (index = row·NX + col, row 0 northernmost): 1 bit per cell instead of a byte for a
// []bool, so a 10⁷-cell mask takes 1.25 MB. Mask values share their storage (it is a small
// header around a slice); use Clone for an independent copy. The zero Mask has length 0.
type Mask struct {
	words []uint64
	n     int
}

// NewMask returns an all-false mask of n cells.
func NewMask(n int) Mask {
	if n < 0 {
		n = 0
	}
	return Mask{words: make([]uint64, (n+63)/64), n: n}
}

// MaskFromBools returns a mask with bit i set where b[i] is true.
func MaskFromBools(b []bool) Mask {
	m := NewMask(len(b))
	for i, v := range b {
		if v {
			m.words[i>>6] |= 1 << (uint(i) & 63)
		}
	}
	return m
}

// Len returns the number of cells the mask describes.
func (m Mask) Len() int { return m.n }

// Get reports whether cell i is in the mask. It panics if i is out of range.
func (m Mask) Get(i int) bool {
	if uint(i) >= uint(m.n) {
		panic(fmt.Sprintf("geo: mask index %d out of range %d", i, m.n))
	}
	return m.words[i>>6]&(1<<(uint(i)&63)) != 0
}

// Set sets or clears cell i. It panics if i is out of range.
func (m Mask) Set(i int, v bool) {
	if uint(i) >= uint(m.n) {
		panic(fmt.Sprintf("geo: mask index %d out of range %d", i, m.n))
	}
	if v {
		m.words[i>>6] |= 1 << (uint(i) & 63)
	} else {
		m.words[i>>6] &^= 1 << (uint(i) & 63)
	}
}

// Count returns the number of cells in the mask.
func (m Mask) Count() int {
	c := 0
	for _, w := range m.words {
		c += bits.OnesCount64(w)
	}
	return c
}

// FillOutside sets data[i] to v for every cell i not in the mask, a 64-cell word at a time
// (words wholly inside are passed over). data must have Len cells.
func (m Mask) FillOutside(data []float32, v float32) {
	if len(data) != m.n {
		panic(fmt.Sprintf("geo: FillOutside of %d values with a mask of %d cells", len(data), m.n))
	}
	for w, word := range m.words {
		if word == ^uint64(0) {
			continue
		}
		base := w << 6
		for out := ^word; out != 0; out &= out - 1 {
			if i := base + bits.TrailingZeros64(out); i < len(data) {
				data[i] = v
			}
		}
	}
}

// setRange sets cells lo..hi−1.
func (m Mask) setRange(lo, hi int) {
	if lo >= hi {
		return
	}
	wlo, whi := lo>>6, (hi-1)>>6
	first := ^uint64(0) << (uint(lo) & 63)
	last := ^uint64(0) >> (63 - (uint(hi-1) & 63))
	if wlo == whi {
		m.words[wlo] |= first & last
		return
	}
	m.words[wlo] |= first
	for w := wlo + 1; w < whi; w++ {
		m.words[w] = ^uint64(0)
	}
	m.words[whi] |= last
}

// maskEps is the tolerance, in cells, for matching span ends and polygon extents to sample
// positions, so that positions computed with rounding error are not lost.
const maskEps = 1e-9

type maskEdge struct {
	ylo, yhi, xlo, slope float64
}

// GridMask returns the cells of g whose sample position (cell centre, or node for node grids)
// lies inside mp, holes excluded.
//
// mp is read in longitude/latitude degrees with straight edges, as RFC 7946 §3.1 reads it; pass it
// through ParseRegion or NormalizeRegion first so that it is split at the antimeridian. The grid
// may use any longitude convention (−180..180, 0..360, or running past 180): each polygon span
// is matched against grid longitudes shifted by multiples of 360°, so regions on either side of
// the antimeridian land in the right columns, and a node grid's repeated seam column is set
// together with its twin. Overlapping polygons are united.
//
// Method: a scanline fill. For each polygon the edges are sorted by their northern end; walking
// the rows from north to south keeps an active-edge list, computes the longitudes where the
// row's latitude crosses the active edges (edges hold their southern end and not their northern
// one, the usual half-open rule), sorts them and sets the bits between successive pairs (even-odd
// rule) a word at a time. Cost is O(V log V + Σrows (crossings·log crossings) + cells/64) for V
// vertices, instead of a point-in-polygon test per cell. Sample positions exactly on an edge
// count as inside for spans in longitude (closed spans) and follow the half-open rule in latitude,
// except that a row at the polygon's northernmost latitude (such as a pole row) is evaluated just
// south of it so that it is not lost.
func GridMask(g *Grid, mp orb.MultiPolygon) (Mask, error) {
	if g == nil {
		return Mask{}, gridErr("nil grid")
	}
	if g.NX <= 0 || g.NY <= 0 || !(g.DX > 0) || !(g.DY > 0) || math.IsInf(g.DX, 0) || math.IsInf(g.DY, 0) ||
		math.IsNaN(g.West) || math.IsInf(g.West, 0) || math.IsNaN(g.North) || math.IsInf(g.North, 0) {
		return Mask{}, gridErr("%d×%d cells, spacing %g×%g°, origin (%g, %g)", g.NX, g.NY, g.DX, g.DY, g.West, g.North)
	}
	m := NewMask(g.NX * g.NY)
	var edges []maskEdge
	var active []maskEdge
	var xs []float64
	gridEast := g.West + float64(g.NX-1)*g.DX
	for _, p := range mp {
		edges = edges[:0]
		minY, maxY := math.Inf(1), math.Inf(-1)
		for _, r := range p {
			for i := 0; i+1 < len(r); i++ {
				a, b := r[i], r[i+1]
				minY = math.Min(minY, a[1])
				maxY = math.Max(maxY, a[1])
				if a[1] == b[1] {
					continue
				}
				if a[1] > b[1] {
					a, b = b, a
				}
				slope := (b[0] - a[0]) / (b[1] - a[1])
				edges = append(edges, maskEdge{ylo: a[1], yhi: b[1], xlo: a[0], slope: slope})
			}
		}
		if len(edges) == 0 {
			continue
		}
		slices.SortFunc(edges, func(a, b maskEdge) int { return cmp.Compare(b.yhi, a.yhi) }) // highest first
		r0 := int(math.Ceil((g.North-maxY)/g.DY - maskEps))
		r1 := int(math.Floor((g.North-minY)/g.DY + maskEps))
		r0 = max(r0, 0)
		r1 = min(r1, g.NY-1)
		topEval := math.Nextafter(maxY, math.Inf(-1))
		active = active[:0]
		next := 0
		for row := r0; row <= r1; row++ {
			y := math.Min(g.Lat(row), topEval)
			for next < len(edges) && edges[next].yhi > y {
				active = append(active, edges[next])
				next++
			}
			k := 0
			for _, e := range active {
				if e.ylo <= y {
					active[k] = e
					k++
				}
			}
			active = active[:k]
			if len(active) < 2 {
				continue
			}
			xs = xs[:0]
			for _, e := range active {
				xs = append(xs, e.xlo+(y-e.ylo)*e.slope)
			}
			slices.Sort(xs)
			base := row * g.NX
			for k := 0; k+1 < len(xs); k += 2 {
				a, b := xs[k], xs[k+1]
				tmin := math.Floor((g.West - b) / 360)
				tmax := math.Ceil((gridEast - a) / 360)
				for t := tmin; t <= tmax; t++ {
					c0 := int(math.Ceil((a+360*t-g.West)/g.DX - maskEps))
					c1 := int(math.Floor((b+360*t-g.West)/g.DX + maskEps))
					c0 = max(c0, 0)
					c1 = min(c1, g.NX-1)
					if c0 <= c1 {
						m.setRange(base+c0, base+c1+1)
					}
				}
			}
		}
	}
	return m, nil
}
