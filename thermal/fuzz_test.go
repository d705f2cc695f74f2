package thermal

import (
	"encoding/json"
	"errors"
	"math"
	"testing"
)

// paramFields are the JSON names of Params' fields, the names a ParamError may carry.
var paramFields = map[string]bool{
	"id": true, "name": true, "kind": true, "plate_thickness_km": true, "mantle_temperature_c": true,
	"surface_temperature_c": true, "expansivity_per_k": true, "conductivity_w_m_k": true,
	"diffusivity_m2_s": true, "heat_capacity_j_kg_k": true, "mantle_density_kg_m3": true,
	"water_density_kg_m3": true, "ridge_depth_m": true, "source": true,
}

// FuzzParamsValidate checks Params.Validate, the gate for every custom parameter set (POST
// /api/models, calibration results): a refusal names only real fields, each with a message; an
// accepted set builds a model whose depth and heat flow are finite over 0–400 Ma, whose depth
// starts at the ridge depth and never decreases with age, and whose heat flow never increases
// (both follow from conductive cooling: Parsons & Sclater 1977 eqs. 8 and 9; Turcotte &
// Schubert 2002 eqs. 4.125 and 4.209 for the half-space), and the set survives a JSON round trip.
//
//	go test ./thermal -run '^$' -fuzz '^FuzzParamsValidate$' -fuzztime 60s
func FuzzParamsValidate(f *testing.F) {
	for _, p := range builtinParams() {
		f.Add(p.Kind, p.PlateThicknessKm, p.MantleTemperatureC, p.SurfaceTemperatureC, p.ExpansivityPerK,
			p.ConductivityWmK, p.DiffusivityM2s, p.HeatCapacityJkgK, p.MantleDensityKgM3, p.WaterDensityKgM3, p.RidgeDepthM)
	}
	// Edges of the documented ranges, and values no range allows.
	f.Add("plate", 20.0, 2000.0, 50.0, 6e-5, 1.0, 3e-6, 0.0, 2800.0, 1100.0, 0.0)
	f.Add("plate", 300.0, 800.0, -5.0, 1e-5, 10.0, 1e-7, 0.0, 3600.0, 950.0, 6000.0)
	f.Add("halfspace", math.Copysign(0, -1), 1300.0, 0.0, 3e-5, 3.3, 0.0, 500.0, 3300.0, 1000.0, 2500.0)
	f.Add("halfspace", 0.0, math.NaN(), 0.0, 3e-5, 3.3, 1e-6, 0.0, 3300.0, 1000.0, 2500.0)
	f.Add("plate", 1e308, math.Inf(1), 5e-324, -3e-5, 0.0, 0.0, 0.0, 0.0, 0.0, -1.0)
	f.Add("Plate", 100.0, 1300.0, 0.0, 3e-5, 3.3, 1e-6, 1000.0, 3300.0, 1000.0, 2500.0)
	f.Add("\xff", 100.0, 1300.0, 0.0, 3e-5, 3.3, 1e-6, 1000.0, 3300.0, 1000.0, 2500.0)
	f.Fuzz(func(t *testing.T, kind string, plateKm, mantleC, surfaceC, alpha, k, kappa, cp, rhoM, rhoW, ridgeM float64) {
		p := Params{ID: "fuzz", Name: "fuzz", Kind: kind, PlateThicknessKm: plateKm, MantleTemperatureC: mantleC,
			SurfaceTemperatureC: surfaceC, ExpansivityPerK: alpha, ConductivityWmK: k, DiffusivityM2s: kappa,
			HeatCapacityJkgK: cp, MantleDensityKgM3: rhoM, WaterDensityKgM3: rhoW, RidgeDepthM: ridgeM}
		err := p.Validate()
		if err != nil {
			var pes ParamErrors
			if !errors.As(err, &pes) || len(pes) == 0 {
				t.Fatalf("Validate error %v (%T) is not a non-empty ParamErrors", err, err)
			}
			for _, pe := range pes {
				if !paramFields[pe.Field] || pe.Msg == "" {
					t.Fatalf("problem %+v names no real field or has no message", pe)
				}
			}
			if _, merr := NewModel(p); merr == nil {
				t.Fatal("NewModel built a model from parameters Validate refuses")
			}
			return
		}
		m, err := NewModel(p)
		if err != nil {
			t.Fatalf("NewModel refuses parameters Validate accepts: %v", err)
		}
		if d0 := m.DepthM(0); math.Abs(d0-p.RidgeDepthM) > 1e-6*math.Max(1, p.RidgeDepthM) {
			t.Fatalf("depth at 0 Ma is %v m, want the ridge depth %v m", d0, p.RidgeDepthM)
		}
		prevD, prevQ := math.Inf(-1), math.Inf(1)
		for _, age := range []float64{0.5, 1, 5, 20, 50, 100, 200, 400} {
			d, q := m.DepthM(age), m.HeatFlowMWm2(age)
			if math.IsNaN(d) || math.IsInf(d, 0) || math.IsNaN(q) || math.IsInf(q, 0) {
				t.Fatalf("at %g Ma depth %v m, heat flow %v mW/m² for %+v", age, d, q, p)
			}
			// Relative tolerance for the rounding of series sums near the asymptote.
			if d < prevD-1e-9*math.Abs(d) || q > prevQ+1e-9*math.Abs(q) {
				t.Fatalf("at %g Ma depth %v (before %v) or heat flow %v (before %v) goes the wrong way for %+v", age, d, prevD, q, prevQ, p)
			}
			prevD, prevQ = d, q
		}
		raw, err := json.Marshal(p)
		if err != nil {
			t.Fatal(err)
		}
		var back Params
		if err := json.Unmarshal(raw, &back); err != nil || back != p {
			t.Fatalf("JSON round trip gave %+v (%v), want %+v", back, err, p)
		}
	})
}
