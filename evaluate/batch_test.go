package evaluate

import (
	"context"
	"math"
	"slices"
	"testing"

	"ridgeflank/geo"
)

// memRows is a RowReader over a grid in memory.
type memRows struct{ g *geo.Grid }

func (m memRows) Header() geo.Grid { h := *m.g; h.Data = nil; return h }

func (m memRows) ReadRows(row0 int, dst []float32) error {
	copy(dst, m.g.Data[row0*m.g.NX:])
	return nil
}

// memRangeRows is memRows reporting the extremes of the rows it read (a RangeReader).
type memRangeRows struct{ memRows }

func (m memRangeRows) ReadRowsRange(row0 int, dst []float32) (lo, hi float32, err error) {
	err = m.ReadRows(row0, dst)
	lo, hi = float32(math.Inf(1)), float32(math.Inf(-1))
	for _, v := range dst {
		if v == v {
			lo, hi = min(lo, v), max(hi, v)
		}
	}
	return lo, hi, err
}

// TestEvaluateGridScreenSkipped: the per-block shortcut of the plausibility screen (extremes
// from a RangeReader) answers exactly as the per-cell screen does (plain RowReaders), cell by
// cell and flag by flag, for residual, corrected and observed depth on a SYNTHETIC grid whose
// blocks of 4 rows are clean except one each with an age beyond the model's range, a negative
// sediment thickness, an elevation deeper than 12 km, and a depth plus sediment beyond 12 km
// with every value in range (a corrected depth beyond 12 km, by Airy unloading of the sediment,
// Sclater & Christie 1980: at least the depth plus the sediment less its unloading correction).
// The thresholds are the screen's (MaxAgeMa, MaxSedimentM, MaxDepthM).
func TestEvaluateGridScreenSkipped(t *testing.T) {
	const nx, ny, rows = 12, 20, 4
	mk := func(f func(c, r int) float32) *geo.Grid {
		g := geo.NewGrid(nx, ny, -10, 5, 0.1, 0.1, geo.CellCentre)
		for r := range ny {
			for c := range nx {
				g.Data[r*nx+c] = f(c, r)
			}
		}
		return g
	}
	age := mk(func(c, r int) float32 {
		if r == 5 && c == 3 {
			return float32(MaxAgeMa + 10)
		}
		return float32(5 + 7*c + r)
	})
	elev := mk(func(c, r int) float32 {
		switch {
		case r == 9 && c == 1:
			return -12500 // deeper than MaxDepthM
		case r == 14 && c == 2:
			return -11900 // with 9000 m of sediment: corrected depth beyond MaxDepthM
		}
		return float32(-3000 - 40*c - 30*r)
	})
	sed := mk(func(c, r int) float32 {
		switch {
		case r == 6 && c == 7:
			return -5
		case r == 14 && c == 2:
			return 9000
		}
		return float32(100 + 10*c)
	})
	svc := New(Config{})
	for _, param := range []string{PResidualDepth, PCorrectedDepth, PObservedDepth} {
		var answers [2][]float32
		var flags [2][]Flag
		for k, ranged := range []bool{false, true} {
			in := GridInputs{Name: "synthetic", DepthSense: geo.ElevationPositiveUp, Workers: 2}
			if ranged {
				in.Age, in.Depth, in.Sediment = memRangeRows{memRows{age}}, memRangeRows{memRows{elev}}, memRangeRows{memRows{sed}}
			} else {
				in.Age, in.Depth, in.Sediment = memRows{age}, memRows{elev}, memRows{sed}
			}
			q, err := svc.ResolveGrid(context.Background(), in, Options{Model: DefaultModel, Sediment: DefaultSediment, Parameters: []string{param}})
			if err != nil {
				t.Fatal(err)
			}
			out := make([]float32, nx*ny)
			fl, err := svc.EvaluateGrid(context.Background(), q, in, rows, func(row0 int, v []float32) error {
				copy(out[row0*nx:], v)
				return nil
			})
			if err != nil {
				t.Fatal(err)
			}
			answers[k], flags[k] = out, fl
		}
		for i := range answers[0] {
			if math.Float32bits(answers[0][i]) != math.Float32bits(answers[1][i]) {
				t.Errorf("%s cell %d: per-cell screen %g, with extremes %g", param, i, answers[0][i], answers[1][i])
			}
		}
		if !slices.Equal(flags[0], flags[1]) {
			t.Errorf("%s flags: per-cell screen %v, with extremes %v", param, flags[0], flags[1])
		}
		if len(flags[0]) == 0 {
			t.Errorf("%s: no value refused; the grid must exercise the screen", param)
		}
		if param == PResidualDepth && len(flags[0]) < 4 {
			t.Errorf("residual depth: flags %v, want the age, sediment, observed and corrected depth causes", flags[0])
		}
	}
}
