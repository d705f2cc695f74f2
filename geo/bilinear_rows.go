package geo

import "math"

// BilinearSampler samples a grid bilinearly along rows at a fixed list of longitudes: the same
// values as Grid.SampleBilinear at every (lon, lat), with the work that depends only on the
// longitude (the bracketing columns and their weight) done once for all rows, since a lon/lat
// lattice's positions are separable. It is not safe for concurrent use of one Row buffer, but
// Row may be called from several goroutines with their own dst.
type BilinearSampler struct {
	g      *Grid
	c0, c1 []int
	tx     []float64
	in     []bool
}

// NewBilinearSampler prepares sampling g at longitudes lons (degrees, either convention).
func (g *Grid) NewBilinearSampler(lons []float64) *BilinearSampler {
	s := &BilinearSampler{g: g, c0: make([]int, len(lons)), c1: make([]int, len(lons)), tx: make([]float64, len(lons)), in: make([]bool, len(lons))}
	p := g.periodCols()
	for i, lon := range lons {
		fx, ok := g.colPos(lon, p)
		if !ok {
			continue
		}
		s.in[i] = true
		if p > 0 {
			f := math.Floor(fx)
			s.tx[i] = fx - f
			s.c0[i] = wrapCol(int(f), p)
			s.c1[i] = (s.c0[i] + 1) % p
		} else {
			s.c0[i], s.c1[i], s.tx[i] = gridAxisPair(fx, g.NX)
		}
	}
	return s
}

// Row fills dst (len = the number of longitudes) with the samples at latitude lat.
func (s *BilinearSampler) Row(lat float64, dst []float32) {
	g := s.g
	nan := float32(math.NaN())
	fy, ok := g.rowPos(lat)
	if !ok {
		for i := range dst {
			dst[i] = nan
		}
		return
	}
	r0, r1, ty := gridAxisPair(fy, g.NY)
	row0, row1 := g.Data[r0*g.NX:(r0+1)*g.NX], g.Data[r1*g.NX:(r1+1)*g.NX]
	for i := range dst {
		if !s.in[i] {
			dst[i] = nan
			continue
		}
		c0, c1 := s.c0[i], s.c1[i]
		dst[i] = bilinear4(row0[c0], row0[c1], row1[c0], row1[c1], s.tx[i], ty)
	}
}
