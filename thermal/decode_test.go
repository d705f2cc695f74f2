package thermal

import (
	"encoding/json"
	"errors"
	"strings"
	"testing"
)

// A heat capacity (or diffusivity) given as 0 is refused by name; left out, the other one is
// used (the documented either/or rule of Params). Values: PSM's parameters, Parsons & Sclater
// (1977) with k, cp, ρm of Stein & Stein (1992) Table 1 (from memory).
func TestDecodeParamsZeroIsNotAbsent(t *testing.T) {
	psm := `"id":"x","name":"x","kind":"plate","plate_thickness_km":125,"mantle_temperature_c":1350,"surface_temperature_c":0,` +
		`"expansivity_per_k":3.2e-5,"conductivity_w_m_k":3.138,"mantle_density_kg_m3":3330,"water_density_kg_m3":1000,"ridge_depth_m":2500`
	// Left out: derived from cp.
	p, err := DecodeParams([]byte("{" + psm + `,"heat_capacity_j_kg_k":1171}`))
	if err != nil || p.HeatCapacityJkgK != 1171 || p.Validate() != nil {
		t.Fatalf("cp given, κ absent: %+v %v %v", p, err, p.Validate())
	}
	// cp = 0 explicitly, κ given: refused naming heat_capacity_j_kg_k (before: taken for absent).
	_, err = DecodeParams([]byte("{" + psm + `,"heat_capacity_j_kg_k":0,"diffusivity_m2_s":8e-7}`))
	var pe ParamErrors
	if !errors.As(err, &pe) || len(pe) != 1 || pe[0].Field != "heat_capacity_j_kg_k" || !errors.Is(err, ErrInvalidParams) {
		t.Fatalf("cp = 0: %v", err)
	}
	// κ = 0 explicitly.
	_, err = DecodeParams([]byte("{" + psm + `,"heat_capacity_j_kg_k":1171,"diffusivity_m2_s":0}`))
	if !errors.As(err, &pe) || pe[0].Field != "diffusivity_m2_s" {
		t.Fatalf("κ = 0: %v", err)
	}
	// Unknown fields stay refused; a stored model (both keys present, one 0, as json.Marshal
	// writes it) is still read by json.Unmarshal, which DecodeParams does not replace.
	if _, err := DecodeParams([]byte("{" + psm + `,"heat_capacity":1171}`)); err == nil || !strings.Contains(err.Error(), "unknown field") {
		t.Errorf("unknown field: %v", err)
	}
	raw, _ := json.Marshal(Params{HeatCapacityJkgK: 1171})
	var back Params
	if err := json.Unmarshal(raw, &back); err != nil || back.HeatCapacityJkgK != 1171 || back.DiffusivityM2s != 0 {
		t.Errorf("stored form: %v %+v", err, back)
	}
}
