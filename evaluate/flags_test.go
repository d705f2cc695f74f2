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
