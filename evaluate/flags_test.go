package evaluate

import (
	"math"
	"testing"

	"ridgeflank/geo"
	"ridgeflank/thermal"
)

// The plausibility thresholds (common practice, no source: seafloor no deeper than 12 km,
// sediment no thicker than 20 km, no negative thickness or age, ages within the model tables'
// 0–400 Ma) refuse exactly the parameters that depend on the impossible input.
func TestFlaggerRefusesDependents(t *testing.T) {
	ps := []Parameter{}
	for _, id := range []string{PSeafloorAge, PObservedDepth, PSedimentThickness, PPredictedDepth, PCorrectedDepth, PResidualDepth} {
		p, _ := ParameterByID(id)
		ps = append(ps, p)
	}
	ok := sample{age: 50, obs: 5000, sed: 500, crust: 7, corr: 5300}
	for _, c := range []struct {
		name    string
		mod     func(*sample)
		refused []string
		input   string
	}{
		{"plausible", func(*sample) {}, nil, ""},
		{"sediment 20.001 km", func(s *sample) { s.sed = 20001 }, []string{PSedimentThickness, PCorrectedDepth, PResidualDepth}, PSedimentThickness},
		{"sediment exactly 20 km", func(s *sample) { s.sed = 20000 }, nil, ""},
		{"negative sediment", func(s *sample) { s.sed = -1 }, []string{PSedimentThickness, PCorrectedDepth, PResidualDepth}, PSedimentThickness},
		{"negative crust", func(s *sample) { s.crust = -0.5 }, []string{PCorrectedDepth, PResidualDepth}, RoleCrust},
		{"age 401 Ma", func(s *sample) { s.age = 401 }, []string{PSeafloorAge, PPredictedDepth, PResidualDepth}, PSeafloorAge},
		{"negative age", func(s *sample) { s.age = -3 }, []string{PSeafloorAge, PPredictedDepth, PResidualDepth}, PSeafloorAge},
		{"observed 12.5 km", func(s *sample) { s.obs, s.corr = 12500, 12800 }, []string{PObservedDepth, PCorrectedDepth, PResidualDepth}, PObservedDepth},
		{"corrected 12.1 km", func(s *sample) { s.obs, s.corr = 11500, 12100 }, []string{PCorrectedDepth, PResidualDepth}, PObservedDepth},
		{"no data is not impossible", func(s *sample) { s.sed, s.corr = math.NaN(), math.NaN() }, nil, ""},
	} {
		t.Run(c.name, func(t *testing.T) {
			s := ok
			c.mod(&s)
			f := newFlagger(ps)
			var got []string
			f.check(s, func(i int) { got = append(got, ps[i].ID) })
			if len(got) != len(c.refused) {
				t.Fatalf("refused %v, want %v", got, c.refused)
			}
			for i := range got {
				if got[i] != c.refused[i] {
					t.Fatalf("refused %v, want %v", got, c.refused)
				}
			}
			for _, fl := range f.flags() {
				if fl.Input != c.input || fl.Count != 1 {
					t.Errorf("flag %+v, want input %q count 1", fl, c.input)
				}
			}
		})
	}
}

// corrCanExceed skips computing corrected depth only where it cannot pass 12 km: its premise is
// that the sediment unloading correction is less than the sediment thickness, checked here for
// every compaction set and both mantle densities in use (3300 kg/m³ half-space, 3330 kg/m³
// PSM/GDH1; Parsons & Sclater 1977, Stein & Stein 1992) over 0–20 km of sediment.
func TestCorrCanExceed(t *testing.T) {
	for _, name := range thermal.CompactionNames() {
		c, _ := thermal.CompactionByName(name)
		for _, rhoM := range []float64{3300, 3330} {
			sc, err := thermal.NewSedimentCorrector(c, rhoM, 1000)
			if err != nil {
				t.Fatal(err)
			}
			for s := 1.0; s <= MaxSedimentM; s *= 1.5 {
				if corr := sc.CorrectionM(s); !(corr > 0 && corr < s) {
					t.Errorf("%s, ρm %g: correction of %g m of sediment is %g m, not within (0, %g)", name, rhoM, s, corr, s)
				}
			}
		}
	}
	grid := func(v ...float32) []float32 { return v }
	nan := float32(math.NaN())
	for _, c := range []struct {
		name     string
		obs, sed []float32
		crust    bool
		want     bool
	}{
		{"shallow with sediment", grid(5000, 9000), grid(500, 2500), false, false},
		{"deep plus sediment passes 12 km", grid(5000, 11000), grid(500, 1500), false, true},
		{"observed alone beyond 12 km", grid(12500), nil, false, true},
		{"no data", grid(nan), grid(nan), false, false},
		{"negative sediment does not count", grid(11900), grid(-500), false, false},
		{"a crust grid always computes", grid(100), nil, true, true},
		{"no depth grid", nil, grid(30000), false, false},
	} {
		t.Run(c.name, func(t *testing.T) {
			if got := corrCanExceedRows(c.obs, c.sed, c.crust); got != c.want {
				t.Errorf("corrCanExceedRows = %v, want %v", got, c.want)
			}
			// The screen's own kernel call follows the rule only when corrected depth is an
			// input of the answer and not asked for itself.
			if got := screenCorrOnItsOwn(true, geo.OutResidualDepth, c.obs, c.sed, c.crust); got != c.want {
				t.Errorf("screenCorrOnItsOwn(residual) = %v, want %v", got, c.want)
			}
			if screenCorrOnItsOwn(true, geo.OutCorrectedDepth|geo.OutResidualDepth, c.obs, c.sed, c.crust) ||
				screenCorrOnItsOwn(false, geo.OutResidualDepth, c.obs, c.sed, c.crust) {
				t.Error("screenCorrOnItsOwn true when corrected depth is asked for or not needed")
			}
		})
	}
}

// TestEveryParameterFitsOneQuestion: the default parameter limit lets one question ask for every
// parameter the service answers (the page's read-out does).
func TestEveryParameterFitsOneQuestion(t *testing.T) {
	if n, lim := len(Parameters), DefaultLimits.MaxParameters; n > lim {
		t.Fatalf("%d parameters, but a question may name only %d", n, lim)
	}
}

// screenGrids passes over cells with every input possible without asking check; the cells it
// refuses and the flags it counts must be check's, cell by cell (check is held to the
// thresholds above), with or without a mask and with absent input grids. The values sit at and
// around every threshold (common practice, no source: 12 km depth, 20 km sediment, ages 0 to
// MaxAgeMa, no negative thickness), with no data among them.
func TestScreenGridsMatchesCheckPerCell(t *testing.T) {
	ps := []Parameter{}
	for _, id := range []string{PSeafloorAge, PObservedDepth, PSedimentThickness, PPredictedDepth, PCorrectedDepth, PResidualDepth} {
		p, _ := ParameterByID(id)
		ps = append(ps, p)
	}
	nan32 := float32(math.NaN())
	ages := []float32{-3, 0, 50, MaxAgeMa, MaxAgeMa + 1, nan32}
	obs := []float32{0, 5000, MaxDepthM, MaxDepthM + 1, nan32}
	seds := []float32{-1, 0, 500, MaxSedimentM, MaxSedimentM + 1, nan32}
	crusts := []float32{-0.5, 7, nan32}
	corrs := []float32{5300, MaxDepthM, MaxDepthM + 100, nan32}
	var cells [][5]float32
	for _, a := range ages {
		for _, o := range obs {
			for _, s := range seds {
				for _, c := range crusts {
					for _, k := range corrs {
						cells = append(cells, [5]float32{a, o, s, c, k})
					}
				}
			}
		}
	}
	n := len(cells)
	mk := func(j int) *geo.Grid {
		g := geo.NewGrid(n, 1, 0, 0, 1, 1, geo.CellCentre)
		for i, c := range cells {
			g.Data[i] = c[j]
		}
		return g
	}
	masks := map[string]geo.Mask{"no mask": {}, "every third cell": geo.NewMask(n)}
	for i := 0; i < n; i += 3 {
		masks["every third cell"].Set(i, true)
	}
	for name, mask := range masks {
		for _, absent := range []int{-1, 1, 2, 3, 4} { // which input grid is missing (−1: none)
			in := make([]*geo.Grid, 5)
			for j := range in {
				if j != absent {
					in[j] = mk(j)
				}
			}
			grids := make([]*geo.Grid, len(ps))
			for i := range grids {
				grids[i] = geo.NewGrid(n, 1, 0, 0, 1, 1, geo.CellCentre)
				for k := range grids[i].Data {
					grids[i].Data[k] = 1 // a value: only refusals make NaN
				}
			}
			fl := newFlagger(ps)
			screenGrids(fl, grids, mask, in[0], in[1], in[2], in[3], in[4])

			ref := newFlagger(ps)
			at := func(j, k int) float64 {
				if in[j] == nil {
					return math.NaN()
				}
				return float64(in[j].Data[k])
			}
			for k := range n {
				refused := make([]bool, len(ps))
				if mask.Len() == 0 || mask.Get(k) {
					ref.check(sample{age: at(0, k), obs: at(1, k), sed: at(2, k), crust: at(3, k), corr: at(4, k)}, func(i int) { refused[i] = true })
				}
				for i := range ps {
					if got := math.IsNaN(float64(grids[i].Data[k])); got != refused[i] {
						t.Fatalf("%s, grid %d absent: cell %v, %s refused %v, check says %v", name, absent, cells[k], ps[i].ID, got, refused[i])
					}
				}
			}
			got, want := fl.flags(), ref.flags()
			if len(got) != len(want) {
				t.Fatalf("%s, grid %d absent: flags %v, check's %v", name, absent, got, want)
			}
			for i := range got {
				if got[i] != want[i] {
					t.Fatalf("%s, grid %d absent: flag %+v, check's %+v", name, absent, got[i], want[i])
				}
			}
		}
	}
}
