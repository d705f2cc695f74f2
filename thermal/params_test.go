package thermal

import (
	"encoding/json"
	"errors"
	"strings"
	"testing"
)

func TestBuiltinParamsValid(t *testing.T) {
	for _, p := range builtinParams() {
		t.Run(p.ID, func(t *testing.T) {
			if err := p.Validate(); err != nil {
				t.Fatal(err)
			}
		})
	}
}

// GDH1's diffusivity follows from k/(ρ cp) = 3.138/(3330·1171) ≈ 8.05e-7 m²/s
// (Stein & Stein 1992 values, from memory); tolerance 0.5 %.
func TestGDH1Diffusivity(t *testing.T) {
	k := mustBuiltin(t, IDGDH1).Params().EffectiveDiffusivityM2s()
	near(t, "diffusivity_m2_s", k, 8.05e-7, 0.005*8.05e-7)
}

func TestBuiltinLookup(t *testing.T) {
	for _, id := range []string{"gdh1", "GDH1", " psm ", "halfspace"} {
		if _, err := Builtin(id); err != nil {
			t.Errorf("Builtin(%q): %v", id, err)
		}
	}
	_, err := Builtin("gdh2")
	if !errors.Is(err, ErrUnknownModel) || !strings.Contains(err.Error(), "gdh1") {
		t.Errorf("Builtin(gdh2) error %v: want ErrUnknownModel listing the known ids", err)
	}
	a, _ := Builtin("gdh1")
	b, _ := Builtin("GDH1")
	if a != b {
		t.Error("Builtin returns a new model each call; tables would not be shared")
	}
}

// Every invalid field gives an error that names the field (its JSON name)
// and wraps ErrInvalidParams.
func TestParamsValidate(t *testing.T) {
	base := mustBuiltin(t, IDGDH1).Params()
	for _, tc := range []struct {
		name, field string
		edit        func(p *Params)
	}{
		{"bad kind", "kind", func(p *Params) { p.Kind = "slab" }},
		{"thin plate", "plate_thickness_km", func(p *Params) { p.PlateThicknessKm = 5 }},
		{"plate thickness on half-space", "plate_thickness_km", func(p *Params) { p.Kind = KindHalfSpace }},
		{"mantle in kelvin", "mantle_temperature_c", func(p *Params) { p.MantleTemperatureC = 2500 }},
		{"hot surface", "surface_temperature_c", func(p *Params) { p.SurfaceTemperatureC = 80 }},
		{"expansivity units", "expansivity_per_k", func(p *Params) { p.ExpansivityPerK = 3.1 }},
		{"negative conductivity", "conductivity_w_m_k", func(p *Params) { p.ConductivityWmK = -3 }},
		{"diffusivity in mm2/s", "diffusivity_m2_s", func(p *Params) { p.DiffusivityM2s = 1 }},
		{"heat capacity in kJ", "heat_capacity_j_kg_k", func(p *Params) { p.HeatCapacityJkgK = 1.171 }},
		{"neither diffusivity nor heat capacity", "diffusivity_m2_s", func(p *Params) { p.HeatCapacityJkgK = 0 }},
		{"light mantle", "mantle_density_kg_m3", func(p *Params) { p.MantleDensityKgM3 = 1000 }},
		{"water in g/cm3", "water_density_kg_m3", func(p *Params) { p.WaterDensityKgM3 = 1.03 }},
		{"ridge above sea level", "ridge_depth_m", func(p *Params) { p.RidgeDepthM = -100 }},
		{"NaN expansivity", "expansivity_per_k", func(p *Params) { p.ExpansivityPerK = nan() }},
		{"long name", "name", func(p *Params) { p.Name = strings.Repeat("x", MaxParamTextLen+1) }},
	} {
		t.Run(tc.name, func(t *testing.T) {
			p := base
			tc.edit(&p)
			err := p.Validate()
			var pe *ParamError
			if !errors.As(err, &pe) || pe.Field != tc.field || !errors.Is(err, ErrInvalidParams) {
				t.Fatalf("Validate() = %v, want a ParamError for %s", err, tc.field)
			}
			if !strings.Contains(err.Error(), tc.field) {
				t.Errorf("message %q does not name %s", err, tc.field)
			}
			if _, err := NewModel(p); err == nil {
				t.Error("NewModel accepted the invalid parameters")
			}
		})
	}
}

// Params round-trips through JSON with the unit-bearing field names.
func TestParamsJSON(t *testing.T) {
	p := mustBuiltin(t, IDPSM).Params()
	b, err := json.Marshal(p)
	if err != nil {
		t.Fatal(err)
	}
	for _, f := range []string{`"plate_thickness_km":125`, `"mantle_temperature_c":1350`, `"ridge_depth_m":2500`, `"kind":"plate"`} {
		if !strings.Contains(string(b), f) {
			t.Errorf("JSON %s lacks %s", b, f)
		}
	}
	var q Params
	if err := json.Unmarshal(b, &q); err != nil || q != p {
		t.Errorf("round trip gave %+v, %v", q, err)
	}
}

// A custom model with a diffusivity instead of a heat capacity works and
// differs from the built-in it was derived from.
func TestCustomModel(t *testing.T) {
	p := mustBuiltin(t, IDGDH1).Params()
	p.ID, p.Name, p.HeatCapacityJkgK, p.DiffusivityM2s, p.PlateThicknessKm = "custom-1", "thick plate", 0, 1e-6, 125
	m, err := NewModel(p)
	if err != nil {
		t.Fatal(err)
	}
	if d, g := m.DepthM(150), mustBuiltin(t, IDGDH1).DepthM(150); !(d > g) {
		t.Errorf("a thicker plate should subside more: %g vs %g", d, g)
	}
}
