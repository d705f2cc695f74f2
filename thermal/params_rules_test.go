package thermal

import (
	"encoding/json"
	"errors"
	"fmt"
	"math"
	"strings"
	"testing"
)

// Several bad values are all named at once (issue 12: only the first was).
func TestParamsValidateNamesEveryField(t *testing.T) {
	p := mustBuiltin(t, IDGDH1).Params()
	p.MantleTemperatureC, p.WaterDensityKgM3, p.RidgeDepthM = 2500, 1.03, -100
	err := p.Validate()
	var all ParamErrors
	if !errors.As(err, &all) || !errors.Is(err, ErrInvalidParams) {
		t.Fatalf("Validate() = %v, want ParamErrors", err)
	}
	var got []string
	for _, e := range all {
		got = append(got, e.Field)
	}
	if want := "[mantle_temperature_c water_density_kg_m3 ridge_depth_m]"; fmt.Sprint(got) != want {
		t.Errorf("fields %v, want %s", got, want)
	}
	for _, f := range []string{"mantle_temperature_c", "water_density_kg_m3", "ridge_depth_m"} {
		if !strings.Contains(err.Error(), f) {
			t.Errorf("message %q does not name %s", err, f)
		}
	}
}

// A diffusivity given together with k, ρm and cp must agree with k/(ρm cp) within
// DiffusivityTolerance (5 %, common practice, no source). GDH1's set (Stein & Stein 1992,
// from memory: k = 3.138 W/m/K, ρm = 3330 kg/m³, cp = 1171 J/kg/K) implies κ = 8.047e-7 m²/s
// (worked by hand: 3.138 / 3 899 430).
func TestDiffusivityConsistency(t *testing.T) {
	base := mustBuiltin(t, IDGDH1).Params()
	for _, tc := range []struct {
		name  string
		kappa float64
		ok    bool
	}{
		{"rounded as published, 8.0e-7 (0.6 % off)", 8.0e-7, true},
		{"4.9 % high", 8.047e-7 * 1.049, true},
		{"5.1 % low", 8.047e-7 * 0.949, false},
		{"39 % high (issue 12)", 1.12e-6, false},
		{"half", 4.0e-7, false},
	} {
		t.Run(tc.name, func(t *testing.T) {
			p := base
			p.DiffusivityM2s = tc.kappa
			err := p.Validate()
			if tc.ok {
				if err != nil {
					t.Fatalf("refused: %v", err)
				}
				near(t, "effective diffusivity (the given one is used)", p.EffectiveDiffusivityM2s(), tc.kappa, 1e-20)
				return
			}
			var pe *ParamError
			if !errors.As(err, &pe) || pe.Field != "diffusivity_m2_s" || !strings.Contains(err.Error(), "heat_capacity_j_kg_k") {
				t.Fatalf("Validate() = %v, want a diffusivity_m2_s error naming the heat capacity", err)
			}
		})
	}
	near(t, "implied diffusivity", base.ConductivityWmK/(base.MantleDensityKgM3*base.HeatCapacityJkgK), 8.047e-7, 0.001e-7)
}

// ThermalThicknessKm is where T = Ts + 0.9 (Tm − Ts), as ThicknessDefinition says (not
// 0.9 Tm: they differ by 0.1 Ts, 5 °C for Ts = 50 °C). Checked on a PSM variant with a
// 50 °C seafloor (Tm = 1350 °C: 1220 °C, not 1215 °C); tolerance 0.5 °C.
func TestThermalThicknessDefinition(t *testing.T) {
	if !strings.Contains(ThicknessDefinition, "Ts + 0.9 (Tm − Ts)") {
		t.Fatalf("definition %q", ThicknessDefinition)
	}
	p := mustBuiltin(t, IDPSM).Params()
	p.SurfaceTemperatureC = 50
	m, err := NewModel(p)
	if err != nil {
		t.Fatal(err)
	}
	for _, age := range []float64{5, 50, 150} {
		t.Run(fmt.Sprintf("%gMa", age), func(t *testing.T) {
			z := m.ThermalThicknessKm(age)
			want := p.SurfaceTemperatureC + ThicknessFraction*(p.MantleTemperatureC-p.SurfaceTemperatureC)
			got := m.TemperatureC(z, age)
			near(t, "T at the thermal thickness", got, want, 0.5)
			if math.Abs(got-ThicknessFraction*p.MantleTemperatureC) < 4 {
				t.Errorf("T = %g is 0.9 Tm, not Ts + 0.9 (Tm − Ts)", got)
			}
		})
	}
}

// A parameter set written as JSON reads back through DecodeParams unchanged, for every
// built-in model and for one whose diffusivity is derived from its heat capacity (the
// written form leaves the derived value out; a 0 written would be refused as given).
func TestParamsJSONRoundTrip(t *testing.T) {
	var sets []Params
	for _, id := range BuiltinIDs() {
		m, err := Builtin(id)
		if err != nil {
			t.Fatal(err)
		}
		sets = append(sets, m.Params())
	}
	m, _ := Builtin(IDGDH1)
	derived := m.Params()
	derived.ID, derived.DiffusivityM2s = "derived-kappa", 0
	sets = append(sets, derived)
	for _, p := range sets {
		raw, err := json.Marshal(p)
		if err != nil {
			t.Fatal(err)
		}
		got, err := DecodeParams(raw)
		if err != nil {
			t.Errorf("%s: its own JSON is refused: %v\n%s", p.ID, err, raw)
			continue
		}
		if got != p {
			t.Errorf("%s: read back %+v, wrote %+v", p.ID, got, p)
		}
	}
}
