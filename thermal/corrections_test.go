package thermal

import (
	"fmt"
	"math"
	"testing"
)

// sedimentClosedForm integrates the exponential porosity law analytically
// (Sclater & Christie 1980): ∫₀ˢ φ0 e^{−cz} dz = φ0 (1 − e^{−cS})/c, so
// Δ = [(ρm − ρg) S + (ρg − ρw) φ0 (1 − e^{−cS})/c] / (ρm − ρw).
func sedimentClosedForm(S float64, c Compaction, rm, rw float64) float64 {
	ck := c.DecayPerKm / 1000
	return ((rm-c.GrainDensityKgM3)*S + (c.GrainDensityKgM3-rw)*c.SurfacePorosity*(1-math.Exp(-ck*S))/ck) / (rm - rw)
}

// Densities used by the correction tests: mantle 3330 kg/m³ (the PSM/GDH1
// value, Stein & Stein 1992 Table 1, from memory) and sea water 1030 kg/m³
// (common practice, no source).
const testMantleKgM3, testSeaWaterKgM3 = 3330.0, 1030.0

// The published Sclater & Christie (1980) porosity–depth parameters, from
// memory: shale φ0 0.63, c 0.51 /km, grains 2720 kg/m³; sand 0.49, 0.27 /km,
// 2650 kg/m³; shaly sand 0.56, 0.39 /km, 2680 kg/m³. Exact match required
// (they are typed-in constants).
func TestCompactionPublishedValues(t *testing.T) {
	for _, tc := range []struct {
		name           string
		phi0, c, grain float64
	}{
		{"shale", 0.63, 0.51, 2720},
		{"sand", 0.49, 0.27, 2650},
		{"shaly-sand", 0.56, 0.39, 2680},
	} {
		t.Run(tc.name, func(t *testing.T) {
			c, err := CompactionByName(tc.name)
			if err != nil {
				t.Fatal(err)
			}
			if c.SurfacePorosity != tc.phi0 || c.DecayPerKm != tc.c || c.GrainDensityKgM3 != tc.grain {
				t.Errorf("%s = %+v, want φ0 %g, c %g /km, grains %g kg/m³", tc.name, c, tc.phi0, tc.c, tc.grain)
			}
		})
	}
	if n := CompactionNames(); len(n) != 3 {
		t.Errorf("CompactionNames() = %v, want the three Sclater & Christie types", n)
	}
}

// The quadrature (gonum) agrees with the closed form to 1e-6 m for every
// named law and thicknesses up to 15 km.
func TestSedimentCorrectionClosedForm(t *testing.T) {
	for _, name := range CompactionNames() {
		c, err := CompactionByName(name)
		if err != nil {
			t.Fatal(err)
		}
		for _, S := range []float64{0, 1, 100, 500, 1000, 3000, 8000, 15000} {
			t.Run(fmt.Sprintf("%s/%gm", name, S), func(t *testing.T) {
				near(t, "correction_m", SedimentCorrectionM(S, c, testMantleKgM3, testSeaWaterKgM3),
					sedimentClosedForm(S, c, testMantleKgM3, testSeaWaterKgM3), 1e-6)
			})
		}
	}
}

// Physical limits (follow from Airy isostasy; common practice, no source):
// thin sediment at its surface porosity corrects by (ρm − ρb0)/(ρm − ρw) per
// metre (about 0.7 for shale); the correction is positive and smaller than
// the thickness (the basement rebounds when unloaded); deep, compacted
// sediment adds (ρm − ρb)/(ρm − ρw) per metre, tending to (ρm − ρg)/(ρm − ρw).
func TestSedimentCorrectionLimits(t *testing.T) {
	c, _ := CompactionByName("shale")
	rm, rw := testMantleKgM3, testSeaWaterKgM3
	rb0 := c.SurfacePorosity*rw + (1-c.SurfacePorosity)*c.GrainDensityKgM3
	near(t, "thin-layer ratio", SedimentCorrectionM(1, c, rm, rw), (rm-rb0)/(rm-rw), 1e-3)
	for _, S := range []float64{10, 1000, 5000, 12000} {
		d := SedimentCorrectionM(S, c, rm, rw)
		if !(d > 0 && d < S) {
			t.Errorf("correction for %g m = %g m, want between 0 and the thickness", S, d)
		}
	}
	slope := SedimentCorrectionM(40001, c, rm, rw) - SedimentCorrectionM(40000, c, rm, rw)
	near(t, "deep slope", slope, (rm-c.GrainDensityKgM3)/(rm-rw), 1e-4)
	for _, bad := range []float64{-1, math.NaN()} {
		if v := SedimentCorrectionM(bad, c, rm, rw); !math.IsNaN(v) {
			t.Errorf("SedimentCorrectionM(%g) = %g, want NaN", bad, v)
		}
	}
}

// The tabulated corrector matches the closed form within 4 mm (its
// documented interpolation bound), in float64 and float32 form (plus float32
// rounding, 2e-7 relative).
func TestSedimentCorrector(t *testing.T) {
	for _, name := range CompactionNames() {
		c, _ := CompactionByName(name)
		sc, err := NewSedimentCorrector(c, testMantleKgM3, testSeaWaterKgM3)
		if err != nil {
			t.Fatal(err)
		}
		t.Run(name, func(t *testing.T) {
			var hs []float32
			for h := 0.0; h <= 21000; h += 37.3 {
				hs = append(hs, float32(h))
			}
			out := make([]float32, len(hs))
			sc.CorrectionsM(hs, out)
			for i, h := range hs {
				want := sedimentClosedForm(float64(h), c, testMantleKgM3, testSeaWaterKgM3)
				near(t, fmt.Sprintf("CorrectionM(%g)", h), sc.CorrectionM(float64(h)), want, 0.004)
				near(t, fmt.Sprintf("CorrectionsM(%g)", h), float64(out[i]), want, 0.004+2e-7*want)
			}
			sc.CorrectionsM([]float32{float32(math.NaN()), -5}, out)
			if !math.IsNaN(float64(out[0])) || !math.IsNaN(float64(out[1])) {
				t.Error("NaN or negative thickness did not give NaN")
			}
		})
	}
	if _, err := NewSedimentCorrector(Compaction{Name: "x", SurfacePorosity: 1.2, DecayPerKm: 0.5, GrainDensityKgM3: 2700}, 3330, 1030); err == nil {
		t.Error("porosity 1.2 accepted")
	}
}

// Names: the three Sclater & Christie (1980) types, with forgiving spelling.
func TestCompactionByName(t *testing.T) {
	for _, tc := range []struct{ in, want string }{
		{"shale", "shale"}, {"Sand", "sand"}, {"shaly sand", "shaly-sand"}, {"shaly_sand", "shaly-sand"},
	} {
		t.Run(tc.in, func(t *testing.T) {
			c, err := CompactionByName(tc.in)
			if err != nil || c.Name != tc.want {
				t.Errorf("CompactionByName(%q) = %q, %v", tc.in, c.Name, err)
			}
		})
	}
	if _, err := CompactionByName("chalk"); err == nil {
		t.Error("unknown type accepted")
	}
}

// Airy isostasy from first principles: two columns of equal mass down to a
// compensation depth D (water, crust, mantle), solved by bisection for the
// water depth of the thick-crust column. The correction that reduces it to
// the 7 km reference crust (common practice, no source) equals
// CrustCorrectionM; tolerance 1e-6 m. Inputs: sea water 1030 and crust
// 2900 kg/m³ (common practice, no source), mantle 3330 kg/m³ (Stein & Stein
// 1992, from memory); the 4000 m reference water depth and D = 100 km are
// arbitrary (the answer does not depend on them).
func TestCrustCorrectionAgainstColumnBalance(t *testing.T) {
	const rw, rc, rm, D = 1030.0, 2900.0, 3330.0, 100e3
	mass := func(water, crust float64) float64 {
		return rw*water + rc*crust + rm*(D-water-crust)
	}
	ref := mass(4000, 7000)
	for _, hc := range []float64{4, 6, 7, 8, 10, 20} {
		t.Run(fmt.Sprintf("%gkm", hc), func(t *testing.T) {
			lo, hi := 0.0, 10000.0 // mass decreases with water depth
			for i := 0; i < 200; i++ {
				mid := (lo + hi) / 2
				if mass(mid, hc*1000) > ref {
					lo = mid
				} else {
					hi = mid
				}
			}
			corr := 4000 - (lo+hi)/2 // add this to the observed depth to get the reference depth
			near(t, "crust correction", CrustCorrectionM(hc, rc, rm, rw), corr, 1e-6)
		})
	}
	// Common practice, no source: each extra kilometre of crust raises the
	// seafloor by roughly 150–200 m.
	if d := CrustCorrectionM(8, DefaultCrustDensityKgM3, 3330, 1000); d < 150 || d > 200 {
		t.Errorf("1 km of extra crust = %g m, want 150–200 m", d)
	}
	if v := CrustCorrectionM(-1, 2900, 3330, 1000); !math.IsNaN(v) {
		t.Errorf("negative crust gave %g, want NaN", v)
	}
}

// The residual-depth sign convention: positive means the seafloor is
// shallower than the model predicts, so swells have positive residual depth
// (the project's stated convention, common practice in the residual-depth
// literature; no single source). The depths are arbitrary SYNTHETIC values.
func TestResidualDepthSign(t *testing.T) {
	for _, tc := range []struct {
		name                string
		predicted, observed float64
		wantSign            float64
	}{
		{"swell shallower than model", 5000, 4600, 1},
		{"trough deeper than model", 5000, 5300, -1},
		{"on the model", 5000, 5000, 0},
	} {
		t.Run(tc.name, func(t *testing.T) {
			r := ResidualDepthM(tc.predicted, tc.observed)
			sign := 0.0
			if r > 0 {
				sign = 1
			} else if r < 0 {
				sign = -1
			}
			if sign != tc.wantSign {
				t.Errorf("residual = %g, want sign %g", r, tc.wantSign)
			}
			near(t, "size", math.Abs(r), math.Abs(tc.predicted-tc.observed), 0)
		})
	}
	// Worked chain: 100 Ma GDH1 seafloor observed at 5000 m under 500 m of
	// shale. The sediment correction makes the corrected depth deeper than
	// the observed seafloor, so the residual shrinks.
	m := mustBuiltin(t, IDGDH1)
	c, _ := CompactionByName("shale")
	corrected := 5000 + SedimentCorrectionM(500, c, testMantleKgM3, testSeaWaterKgM3)
	if r0, r1 := ResidualDepthM(m.DepthM(100), 5000), ResidualDepthM(m.DepthM(100), corrected); !(r1 < r0 && r0 > 0) {
		t.Errorf("residual before correction %g, after %g: want positive and shrinking", r0, r1)
	}
}

func TestCompactionValidate(t *testing.T) {
	for _, tc := range []struct {
		name string
		c    Compaction
	}{
		{"porosity 1", Compaction{"x", 1, 0.5, 2700}},
		{"decay 0", Compaction{"x", 0.5, 0, 2700}},
		{"grain density 5000", Compaction{"x", 0.5, 0.5, 5000}},
	} {
		t.Run(tc.name, func(t *testing.T) {
			if err := tc.c.Validate(); err == nil {
				t.Error("accepted")
			}
		})
	}
}
