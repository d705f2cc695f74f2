package evaluate

import (
	"math"
	"testing"
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
