package evaluate

import (
	"context"
	"math"

	"github.com/paulmach/orb"

	"ridgeflank/geo"
	"ridgeflank/raster"
)

// roles chooses which of a dataset's grids a window reads.
type roles uint8

const (
	roleAge roles = 1 << iota
	roleDepth
	roleSed
	roleCrust
	// roleAgeUnc reads the age-uncertainty grid (Dataset.AgeUncertainty).
	roleAgeUnc
	// roleScan reads without keeping newly read blocks in the cache (a scan larger than the
	// budget must not push out what other questions use).
	roleScan
)

// window returns a copy of d whose Age, Depth, Sediment, Crust and AgeUncertainty (those asked for in want and
// present) are read from its files for bound b: the age grid at level lvl (raster.File.Levels);
// a grid on exactly the age grid's lattice and size at the same level, so the windows coincide
// cell for cell; any other grid at the coarsest of its own levels no coarser than the age
// level, with a margin of two of its cells so bilinear sampling at the window's edge has its
// neighbours. This is the one place where a question chooses what to read.
func (s *Service) window(ctx context.Context, d *Dataset, b orb.Bound, lvl int, want roles) (*Dataset, error) {
	v, _, err := s.windowMean(ctx, d, b, lvl, want, 1, 1)
	return v, err
}

// windowMean is window with the age grid and the grids on its lattice coarsened by whole
// factors fx × fy as they are read (raster.File.WindowMean: geo.Grid.Resample's block means,
// without holding the full-resolution window), when the age level is cell-centre registered;
// coarsened reports whether it was (otherwise the grids are window's, for the caller to
// Resample). Grids on other lattices are read as window reads them.
func (s *Service) windowMean(ctx context.Context, d *Dataset, b orb.Bound, lvl int, want roles, fx, fy int) (_ *Dataset, coarsened bool, _ error) {
	v := *d
	v.Age, v.Depth, v.Sediment, v.Crust, v.AgeUncertainty = nil, nil, nil, nil, nil
	age := d.Files.Age
	coarsened = (fx > 1 || fy > 1) && lvl < len(age.Levels()) && age.Levels()[lvl].Grid.Registration == geo.CellCentre
	read := func(f *raster.File, b orb.Bound, l int) (*geo.Grid, error) {
		if want&roleScan != 0 {
			return f.Scan(ctx, b, l)
		}
		return f.Window(ctx, b, l)
	}
	readAge := func(f *raster.File) (*geo.Grid, error) {
		if coarsened {
			return f.WindowMean(ctx, b, lvl, fx, fy, want&roleScan == 0)
		}
		return read(f, b, lvl)
	}
	ag, err := readAge(age)
	if err != nil {
		return nil, false, err
	}
	v.Age = ag
	spacing := math.Max(age.Levels()[lvl].Grid.DX, age.Levels()[lvl].Grid.DY)
	companion := func(f *raster.File) (*geo.Grid, error) {
		if f == nil {
			return nil, nil
		}
		if sameFile(age, f) && lvl < len(f.Levels()) {
			return readAge(f)
		}
		l := f.LevelFor(spacing, false)
		g := f.Levels()[l].Grid
		pad := 2 * math.Max(g.DX, g.DY)
		pb := orb.Bound{Min: orb.Point{b.Min[0] - pad, math.Max(-90, b.Min[1]-pad)}, Max: orb.Point{b.Max[0] + pad, math.Min(90, b.Max[1]+pad)}}
		if b.Max[0]-b.Min[0] >= 360-1e-9 {
			pb.Min[0], pb.Max[0] = b.Min[0], b.Max[0]
		}
		w, err := read(f, pb, l)
		if err != nil {
			if isEmptyWindow(err) {
				return nil, nil // the companion does not reach here: no data
			}
			return nil, err
		}
		return w, nil
	}
	for _, c := range []struct {
		r   roles
		f   *raster.File
		dst **geo.Grid
	}{{roleDepth, d.Files.Depth, &v.Depth}, {roleSed, d.Files.Sediment, &v.Sediment}, {roleCrust, d.Files.Crust, &v.Crust},
		{roleAgeUnc, d.Files.AgeUncertainty, &v.AgeUncertainty}} {
		if want&c.r == 0 || c.f == nil {
			continue
		}
		if *c.dst, err = companion(c.f); err != nil {
			return nil, false, err
		}
	}
	return &v, coarsened, nil
}

// sameFile reports whether b's levels coincide with a's: the same full-resolution lattice and
// size (so both files have the same overview sizes).
func sameFile(a, b *raster.File) bool {
	ha, hb := a.Header(), b.Header()
	return ha.NX == hb.NX && ha.NY == hb.NY && sameLattice(&ha, &hb) &&
		math.Abs(ha.West-hb.West) < 1e-6*ha.DX && math.Abs(ha.North-hb.North) < 1e-6*ha.DY &&
		len(a.Levels()) == len(b.Levels())
}

// pointBound is the bound around positions lons, lats (degrees, already in a common longitude
// convention) padded by pad degrees, clipped to the poles.
func pointBound(lons, lats []float64, pad float64) orb.Bound {
	b := orb.Bound{Min: orb.Point{math.Inf(1), math.Inf(1)}, Max: orb.Point{math.Inf(-1), math.Inf(-1)}}
	for i := range lons {
		b.Min[0], b.Max[0] = math.Min(b.Min[0], lons[i]), math.Max(b.Max[0], lons[i])
		b.Min[1], b.Max[1] = math.Min(b.Min[1], lats[i]), math.Max(b.Max[1], lats[i])
	}
	b.Min[0] -= pad
	b.Max[0] += pad
	b.Min[1] = math.Max(-90, b.Min[1]-pad)
	b.Max[1] = math.Min(90, b.Max[1]+pad)
	return b
}
