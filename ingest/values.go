package ingest

import (
	"fmt"
	"math"

	"ridgeflank/fault"
	"ridgeflank/store"
)

// Stats accumulates the statistics the checks need in one pass over the values, block by
// block: Add may be called with any sequence of blocks (rows of a grid read in pieces) and
// the result does not depend on how the values were split. The zero value is ready to use.
type Stats struct {
	Cells    int64   // cells seen
	Valid    int64   // finite values
	NaN      int64   // no-data cells (NaN)
	Inf      int64   // infinite values
	Negative int64   // finite values < 0
	NonZero  int64   // finite values ≠ 0
	Min, Max float64 // range of the finite values (+Inf, -Inf while Valid == 0)
}

// Add accumulates one block of values.
func (s *Stats) Add(block []float32) {
	if s.Cells == 0 {
		s.Min, s.Max = math.Inf(1), math.Inf(-1)
	}
	s.Cells += int64(len(block))
	// Counted in float32 and locals: the comparisons are exact, and the loop is the import's
	// hottest after reading.
	lo, hi := float32(math.Inf(1)), float32(math.Inf(-1))
	var valid, nan, inf, neg, nonZero int64
	for _, v := range block {
		switch {
		case v != v:
			nan++
			continue
		case v > math.MaxFloat32 || v < -math.MaxFloat32:
			inf++
			continue
		}
		valid++
		if v != 0 {
			nonZero++
		}
		if v < 0 {
			neg++
		}
		if v < lo {
			lo = v
		}
		if v > hi {
			hi = v
		}
	}
	s.Valid += valid
	s.NaN += nan
	s.Inf += inf
	s.Negative += neg
	s.NonZero += nonZero
	if valid > 0 {
		s.Min = math.Min(s.Min, float64(lo))
		s.Max = math.Max(s.Max, float64(hi))
	}
}

// NegativeFraction is the fraction of the finite non-zero values that are negative (NaN when
// there are none), the quantity geo.SenseOfNegativeFraction classifies.
func (s *Stats) NegativeFraction() float64 {
	if s.NonZero == 0 {
		return math.NaN()
	}
	return float64(s.Negative) / float64(s.NonZero)
}

// plausibleRange is the documented range of values a grid kind may hold, in its stored unit.
type plausibleRange struct {
	lo, hi float64
	source string
}

// Plausible ranges per kind, in the stored unit (see kindUnits). A file outside them is
// refused: most often its units or its kind were declared wrongly.
var plausible = map[store.GridKind]plausibleRange{
	// The oldest ocean floor is about 180-200 Ma (from memory); 400 Ma is a generous bound that
	// still catches ages in ka or years.
	store.KindAge:            {0, 400, "ages beyond 400 Ma are not ocean floor (common practice, no source)"},
	store.KindAgeUncertainty: {0, 400, "uncertainties are bounded like ages (common practice, no source)"},
	// The deepest sounding, Challenger Deep, is about 10.9 km (from memory); the highest summit
	// 8.8 km (from memory).
	store.KindDepth:     {-12000, 12000, "depth magnitudes beyond 12 km are not on Earth (from memory: Challenger Deep ≈ 10.9 km)"},
	store.KindElevation: {-12000, 12000, "elevation magnitudes beyond 12 km are not on Earth (from memory: Challenger Deep ≈ 10.9 km)"},
	// The thickest sedimentary basins hold about 15-20 km (from memory).
	store.KindSedimentThickness: {0, 20000, "sediment thicker than 20 km is not known (from memory)"},
	// Continental crust reaches about 70-80 km under the thickest orogens (from memory).
	store.KindCrustalThickness: {0, 100, "crust thicker than 100 km is not known (from memory)"},
}

// PlausibleRange returns the range of values accepted for kind k in its stored unit; ok is
// false for kinds without one (KindOther: only finiteness is checked).
func PlausibleRange(k store.GridKind) (lo, hi float64, ok bool) {
	r, ok := plausible[k]
	return r.lo, r.hi, ok
}

// checkValues refuses grids with no data, infinite values, or values outside the plausible
// range of kind k (in unit, the stored unit). converted names the units the file's values
// were converted from ("" when none), to point at a likely wrong declaration.
func checkValues(s Stats, k store.GridKind, unit, converted string) error {
	if s.Valid == 0 && s.Inf == 0 {
		return fault.New(fault.InvalidGrid, "file", "the grid holds no data (every cell is no-data)")
	}
	return checkRange(s, k, unit, converted)
}

// checkRange is checkValues without the test for a grid with no data, so that it can judge
// the statistics of part of a grid (a block of rows).
func checkRange(s Stats, k store.GridKind, unit, converted string) error {
	if s.Inf > 0 {
		return fault.New(fault.InvalidGrid, "file", "the grid holds %d infinite values; mark missing cells as no-data", s.Inf)
	}
	r, ok := plausible[k]
	if !ok {
		return nil
	}
	bad := s.Min
	if s.Min >= r.lo {
		if s.Max <= r.hi {
			return nil
		}
		bad = s.Max
	}
	hint := "check the kind and the units"
	if converted != "" {
		hint = fmt.Sprintf("the values were converted from %s; check the kind and the units", converted)
	}
	return fault.New(fault.InvalidGrid, "file", "%s values must lie between %g and %g %s, but the grid holds %g %s (%s)",
		k, r.lo, r.hi, unit, bad, unit, hint)
}
