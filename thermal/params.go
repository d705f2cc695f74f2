package thermal

import (
	"bytes"
	"encoding/json"
	"errors"
	"fmt"
	"math"
	"strings"
)

// Model kinds.
const (
	// KindHalfSpace is half-space cooling (Turcotte & Schubert, Geodynamics,
	// 2nd ed. 2002, §4.16 and §4.23, section numbers from memory).
	KindHalfSpace = "halfspace"
	// KindPlate is the cooling plate of constant thickness (McKenzie 1967;
	// Parsons & Sclater 1977).
	KindPlate = "plate"
)

// Physical constants used throughout the package.
const (
	// SecondsPerMyr is one million Julian years (365.25 days) in seconds.
	SecondsPerMyr = 1e6 * 365.25 * 86400
	// GravityMs2 is the acceleration of gravity used for forces (m/s²; the
	// rounded standard value, common practice).
	GravityMs2 = 9.81
	// ThicknessFraction is the fraction of the mantle temperature excess
	// (T − Ts)/(Tm − Ts) that defines the thermal thickness of the
	// lithosphere (0.9, common practice; Turcotte & Schubert §4.16).
	ThicknessFraction = 0.9
	// DiffusivityTolerance is how far (relative to k / (ρm · cp)) a given
	// diffusivity may lie from the one the conductivity, density and heat
	// capacity imply when all four are given: 5 %, enough for published sets
	// that round κ (Parsons & Sclater's 8.0e-7 m²/s against 8.05e-7 from
	// k, ρm and cp) and far below a mistyped value. Common practice, no source.
	DiffusivityTolerance = 0.05
)

// ThicknessDefinition says in words what ThermalThicknessKm measures; help
// texts and documents quote it.
const ThicknessDefinition = "the depth below the seafloor where the temperature has risen by 90 % of the difference between mantle and seafloor temperature, T = Ts + 0.9 (Tm − Ts) (Turcotte & Schubert, Geodynamics, 2nd ed. 2002, §4.16, from memory)"

// Params is a complete parameter set of a cooling model. It is the
// JSON-serialisable form custom models are stored in.
//
// Either DiffusivityM2s or HeatCapacityJkgK must be set. When only the heat
// capacity is given the diffusivity is derived as κ = k / (ρm · cp); when only
// DiffusivityM2s is given it is used as is. When both are given they must agree:
// a κ more than DiffusivityTolerance (5 %) away from k / (ρm · cp) is refused by
// Validate, and within it the given κ is used. See EffectiveDiffusivityM2s.
type Params struct {
	ID   string `json:"id"`
	Name string `json:"name"`
	// Kind is KindHalfSpace or KindPlate.
	Kind string `json:"kind"`
	// PlateThicknessKm is the plate thickness a (km); 0 for half-space.
	PlateThicknessKm float64 `json:"plate_thickness_km"`
	// MantleTemperatureC is the temperature of the mantle below (and of the
	// plate base) in °C.
	MantleTemperatureC float64 `json:"mantle_temperature_c"`
	// SurfaceTemperatureC is the temperature of the seafloor in °C.
	SurfaceTemperatureC float64 `json:"surface_temperature_c"`
	// ExpansivityPerK is the volumetric thermal expansion coefficient α (1/K).
	ExpansivityPerK float64 `json:"expansivity_per_k"`
	// ConductivityWmK is the thermal conductivity k (W/m/K).
	ConductivityWmK float64 `json:"conductivity_w_m_k"`
	// DiffusivityM2s is the thermal diffusivity κ (m²/s); 0 to derive it from
	// the heat capacity (0 is left out of JSON, and a 0 given in JSON is refused by
	// DecodeParams, so a parameter set written out reads back as it was).
	DiffusivityM2s float64 `json:"diffusivity_m2_s,omitempty"`
	// HeatCapacityJkgK is the specific heat capacity cp (J/kg/K); 0 (not given) is left
	// out of JSON like DiffusivityM2s.
	HeatCapacityJkgK float64 `json:"heat_capacity_j_kg_k,omitempty"`
	// MantleDensityKgM3 is the mantle density ρm at the mantle temperature (kg/m³).
	MantleDensityKgM3 float64 `json:"mantle_density_kg_m3"`
	// WaterDensityKgM3 is the density of sea water ρw (kg/m³).
	WaterDensityKgM3 float64 `json:"water_density_kg_m3"`
	// RidgeDepthM is the water depth at the ridge crest, age 0 (m, positive down).
	RidgeDepthM float64 `json:"ridge_depth_m"`
	// Source is a citation for the parameter values.
	Source string `json:"source"`
}

// EffectiveDiffusivityM2s returns the thermal diffusivity the model uses
// (m²/s): DiffusivityM2s when positive (Validate has checked it agrees with
// k / (ρm · cp) when cp is given too), else k / (ρm · cp).
func (p Params) EffectiveDiffusivityM2s() float64 {
	if p.DiffusivityM2s > 0 {
		return p.DiffusivityM2s
	}
	if p.HeatCapacityJkgK > 0 && p.MantleDensityKgM3 > 0 {
		return p.ConductivityWmK / (p.MantleDensityKgM3 * p.HeatCapacityJkgK)
	}
	return math.NaN()
}

// ErrInvalidParams is wrapped by every error Params.Validate returns.
var ErrInvalidParams = errors.New("invalid model parameters")

// ParamError reports one parameter outside its allowed range. Field is the
// JSON name of the parameter.
type ParamError struct {
	Field string
	Value float64
	// Msg is the complete plain-language message.
	Msg string
}

func (e *ParamError) Error() string { return e.Msg }

// Unwrap lets errors.Is(err, ErrInvalidParams) succeed.
func (e *ParamError) Unwrap() error { return ErrInvalidParams }

// paramRange is the allowed closed range of one numeric parameter.
type paramRange struct {
	field    string
	min, max float64
	unit     string
	optional bool // 0 is allowed and means "not set"
}

// Allowed ranges. They are deliberately wide: they reject unphysical or
// mistyped values (wrong units, signs), not unusual science. Common practice,
// no source: the ranges bracket every published oceanic cooling model with
// generous margins.
var (
	rangePlateKm     = paramRange{"plate_thickness_km", 20, 300, "km", false}
	rangeMantleC     = paramRange{"mantle_temperature_c", 800, 2000, "°C", false}
	rangeSurfaceC    = paramRange{"surface_temperature_c", -5, 50, "°C", false}
	rangeExpansivity = paramRange{"expansivity_per_k", 1e-5, 6e-5, "1/K", false}
	rangeConductivty = paramRange{"conductivity_w_m_k", 1, 10, "W/m/K", false}
	rangeDiffusivity = paramRange{"diffusivity_m2_s", 1e-7, 3e-6, "m²/s", true}
	rangeHeatCap     = paramRange{"heat_capacity_j_kg_k", 500, 2000, "J/kg/K", true}
	rangeMantleRho   = paramRange{"mantle_density_kg_m3", 2800, 3600, "kg/m³", false}
	rangeWaterRho    = paramRange{"water_density_kg_m3", 950, 1100, "kg/m³", false}
	rangeRidgeM      = paramRange{"ridge_depth_m", 0, 6000, "m", false}
)

func (r paramRange) check(v float64) error {
	if r.optional && v == 0 {
		return nil
	}
	if math.IsNaN(v) || math.IsInf(v, 0) || v < r.min || v > r.max {
		return &ParamError{Field: r.field, Value: v, Msg: fmt.Sprintf(
			"%s = %g is outside the allowed range %g to %g %s", r.field, v, r.min, r.max, r.unit)}
	}
	return nil
}

// MaxParamTextLen is the longest ID, Name or Source accepted (characters).
const MaxParamTextLen = 500

// ParamErrors are all the problems Validate found, in field order. errors.As
// finds the first *ParamError in it, and errors.Is(err, ErrInvalidParams)
// holds.
type ParamErrors []*ParamError

func (es ParamErrors) Error() string {
	msgs := make([]string, len(es))
	for i, e := range es {
		msgs[i] = e.Msg
	}
	return strings.Join(msgs, "; ")
}

// Unwrap gives the single problems to errors.Is and errors.As.
func (es ParamErrors) Unwrap() []error {
	out := make([]error, len(es))
	for i, e := range es {
		out[i] = e
	}
	return out
}

// Validate checks every field and returns nil or ParamErrors naming every
// problem found, each with its field, value and allowed range (so a request
// with several bad values hears of all of them at once). Ranges:
//
//	kind                  "halfspace" or "plate"
//	plate_thickness_km    20 to 300 for plate, 0 for halfspace
//	mantle_temperature_c  800 to 2000
//	surface_temperature_c −5 to 50
//	expansivity_per_k     1e-5 to 6e-5
//	conductivity_w_m_k    1 to 10
//	diffusivity_m2_s      0 (derive) or 1e-7 to 3e-6
//	heat_capacity_j_kg_k  0 or 500 to 2000 (one of these two must be set)
//	mantle_density_kg_m3  2800 to 3600
//	water_density_kg_m3   950 to 1100
//	ridge_depth_m         0 to 6000
//
// When both diffusivity_m2_s and heat_capacity_j_kg_k are given, the
// diffusivity must lie within DiffusivityTolerance of k / (ρm · cp).
func (p Params) Validate() error {
	var errs ParamErrors
	add := func(err error) {
		if err != nil {
			errs = append(errs, err.(*ParamError))
		}
	}
	for _, s := range []struct{ field, v string }{{"id", p.ID}, {"name", p.Name}, {"source", p.Source}} {
		if len(s.v) > MaxParamTextLen {
			add(&ParamError{Field: s.field, Msg: fmt.Sprintf("%s is longer than %d characters", s.field, MaxParamTextLen)})
		}
	}
	switch p.Kind {
	case KindPlate:
		add(rangePlateKm.check(p.PlateThicknessKm))
	case KindHalfSpace:
		if p.PlateThicknessKm != 0 {
			add(&ParamError{Field: "plate_thickness_km", Value: p.PlateThicknessKm,
				Msg: fmt.Sprintf("plate_thickness_km = %g must be 0 for kind %q", p.PlateThicknessKm, KindHalfSpace)})
		}
	default:
		add(&ParamError{Field: "kind", Msg: fmt.Sprintf("kind %q is not one of %q or %q", p.Kind, KindHalfSpace, KindPlate)})
	}
	bad := map[string]bool{}
	for _, c := range []struct {
		r paramRange
		v float64
	}{
		{rangeMantleC, p.MantleTemperatureC},
		{rangeSurfaceC, p.SurfaceTemperatureC},
		{rangeExpansivity, p.ExpansivityPerK},
		{rangeConductivty, p.ConductivityWmK},
		{rangeDiffusivity, p.DiffusivityM2s},
		{rangeHeatCap, p.HeatCapacityJkgK},
		{rangeMantleRho, p.MantleDensityKgM3},
		{rangeWaterRho, p.WaterDensityKgM3},
		{rangeRidgeM, p.RidgeDepthM},
	} {
		if err := c.r.check(c.v); err != nil {
			bad[c.r.field] = true
			add(err)
		}
	}
	if len(errs) > 0 && (bad["conductivity_w_m_k"] || bad["mantle_density_kg_m3"] || bad["heat_capacity_j_kg_k"] || bad["diffusivity_m2_s"]) {
		return errs // the diffusivity checks below need these in range
	}
	derived := math.NaN()
	if p.HeatCapacityJkgK > 0 {
		derived = p.ConductivityWmK / (p.MantleDensityKgM3 * p.HeatCapacityJkgK)
	}
	switch {
	case p.DiffusivityM2s == 0 && p.HeatCapacityJkgK == 0:
		add(&ParamError{Field: "diffusivity_m2_s", Msg: "either diffusivity_m2_s or heat_capacity_j_kg_k must be given"})
	case p.DiffusivityM2s == 0 && rangeDiffusivity.check(derived) != nil:
		add(&ParamError{Field: "heat_capacity_j_kg_k", Value: p.HeatCapacityJkgK, Msg: fmt.Sprintf(
			"the diffusivity derived from conductivity_w_m_k, mantle_density_kg_m3 and heat_capacity_j_kg_k is %.3g m²/s, outside the allowed range %g to %g m²/s",
			derived, rangeDiffusivity.min, rangeDiffusivity.max)})
	case p.DiffusivityM2s > 0 && p.HeatCapacityJkgK > 0 && math.Abs(p.DiffusivityM2s-derived) > DiffusivityTolerance*derived:
		add(&ParamError{Field: "diffusivity_m2_s", Value: p.DiffusivityM2s, Msg: fmt.Sprintf(
			"diffusivity_m2_s = %.4g differs by %.0f %% from conductivity_w_m_k / (mantle_density_kg_m3 · heat_capacity_j_kg_k) = %.4g m²/s; give one of the two, or values within %g %% of each other",
			p.DiffusivityM2s, 100*math.Abs(p.DiffusivityM2s-derived)/derived, derived, 100*DiffusivityTolerance)})
	}
	if len(errs) > 0 {
		return errs
	}
	return nil
}

// Built-in parameter set identifiers.
const (
	IDHalfSpace = "halfspace"
	IDPSM       = "psm"
	IDGDH1      = "gdh1"
)

// ErrUnknownModel is wrapped by the error Builtin returns for an unknown id.
var ErrUnknownModel = errors.New("unknown model")

// builtinParams returns the published parameter sets.
//
// Values marked "from memory" were recalled, not looked up in the paper
// while writing; the tests check them against the papers' own published fit
// equations, which they reproduce.
func builtinParams() []Params {
	return []Params{
		{
			// Turcotte & Schubert, Geodynamics (2nd ed. 2002), §4.16 and
			// §4.23: ρm = 3300 kg/m³, ρw = 1000 kg/m³, κ = 1 mm²/s,
			// αv = 3e-5 /K, T1 − T0 = 1300 K, k = 3.3 W/m/K (from memory).
			// cp follows from k/(ρm κ). Ridge depth 2500 m: common practice.
			ID: IDHalfSpace, Name: "Half-space cooling", Kind: KindHalfSpace,
			MantleTemperatureC: 1300, SurfaceTemperatureC: 0,
			ExpansivityPerK: 3e-5, ConductivityWmK: 3.3,
			DiffusivityM2s: 1e-6, HeatCapacityJkgK: 1000,
			MantleDensityKgM3: 3300, WaterDensityKgM3: 1000,
			RidgeDepthM: 2500,
			Source:      "Turcotte & Schubert, Geodynamics, 2nd ed. (2002), sections 4.16 and 4.23",
		},
		{
			// Parsons & Sclater (1977), J. Geophys. Res. 82, 803–827: plate
			// 125 km thick, basal temperature 1350 °C, α = 3.2e-5 /K, ridge
			// depth 2500 m (from memory). k, cp and densities as tabulated
			// for the plate models in Stein & Stein (1992) Table 1 (from
			// memory); κ = k/(ρ cp) ≈ 8.0e-7 m²/s as in the 1977 paper.
			ID: IDPSM, Name: "PSM", Kind: KindPlate,
			PlateThicknessKm:   125,
			MantleTemperatureC: 1350, SurfaceTemperatureC: 0,
			ExpansivityPerK: 3.2e-5, ConductivityWmK: 3.138,
			HeatCapacityJkgK:  1171,
			MantleDensityKgM3: 3330, WaterDensityKgM3: 1000,
			RidgeDepthM: 2500,
			Source:      "Parsons & Sclater (1977), J. Geophys. Res. 82, 803-827",
		},
		{
			// Stein & Stein (1992), Nature 359, 123–129, Table 1 (from
			// memory): a = 95 km, Tm = 1450 °C, α = 3.1e-5 /K,
			// k = 3.138 W/m/K, cp = 1.171 kJ/kg/K, ρm = 3330 kg/m³,
			// ρw = 1000 kg/m³, ridge depth 2600 m. These reproduce the
			// paper's fit equations (asymptotic depth 5651 m, 365 m/Myr^½,
			// 510 mW/m²·Myr^½, 48 mW/m² and the 0.0278 /Myr decay).
			ID: IDGDH1, Name: "GDH1", Kind: KindPlate,
			PlateThicknessKm:   95,
			MantleTemperatureC: 1450, SurfaceTemperatureC: 0,
			ExpansivityPerK: 3.1e-5, ConductivityWmK: 3.138,
			HeatCapacityJkgK:  1171,
			MantleDensityKgM3: 3330, WaterDensityKgM3: 1000,
			RidgeDepthM: 2600,
			Source:      "Stein & Stein (1992), Nature 359, 123-129",
		},
	}
}

var builtins = func() map[string]Model {
	m := make(map[string]Model)
	for _, p := range builtinParams() {
		mod, err := NewModel(p)
		if err != nil {
			panic("thermal: built-in parameter set " + p.ID + " is invalid: " + err.Error())
		}
		m[p.ID] = mod
	}
	m[IDPlateTDepMJP05] = newTDep(mjp05Params(), mjp05Props(), tdepIntervals, tdepStepFactor)
	return m
}()

// BuiltinIDs lists the built-in models: "halfspace", "psm", "gdh1" and the
// temperature-dependent plate "plate-tdep-mjp05" (solved on first use).
func BuiltinIDs() []string { return []string{IDHalfSpace, IDPSM, IDGDH1, IDPlateTDepMJP05} }

// Builtin returns the built-in model with the given id (case-insensitive,
// surrounding spaces ignored). The same Model value is returned on every call,
// so its lookup table (TableFor) is built once. An unknown id gives an error
// wrapping ErrUnknownModel that lists the known ids.
func Builtin(id string) (Model, error) {
	if m, ok := builtins[strings.ToLower(strings.TrimSpace(id))]; ok {
		return m, nil
	}
	return nil, fmt.Errorf("%w %q: choose one of %s", ErrUnknownModel, id, strings.Join(BuiltinIDs(), ", "))
}

// NewModel validates p and returns the model it describes.
func NewModel(p Params) (Model, error) {
	if err := p.Validate(); err != nil {
		return nil, err
	}
	switch p.Kind {
	case KindHalfSpace:
		return newHalfSpace(p), nil
	default:
		return newPlate(p), nil
	}
}

// DecodeParams reads a parameter set from JSON (unknown fields refused) and tells an absent
// optional field from one given as 0: diffusivity_m2_s and heat_capacity_j_kg_k may be left out
// (the other is then used, see Params), but a 0 given for either is a value outside its range
// and is refused as Validate refuses every out-of-range value (a ParamErrors naming the field).
// It does not call Validate.
func DecodeParams(data []byte) (Params, error) {
	var in struct {
		Params
		DiffusivityM2s   *float64 `json:"diffusivity_m2_s"`
		HeatCapacityJkgK *float64 `json:"heat_capacity_j_kg_k"`
	}
	dec := json.NewDecoder(bytes.NewReader(data))
	dec.DisallowUnknownFields()
	if err := dec.Decode(&in); err != nil {
		return Params{}, err
	}
	p := in.Params
	var errs ParamErrors
	for _, f := range []struct {
		r paramRange
		v *float64
		t *float64
	}{{rangeDiffusivity, in.DiffusivityM2s, &p.DiffusivityM2s}, {rangeHeatCap, in.HeatCapacityJkgK, &p.HeatCapacityJkgK}} {
		if f.v == nil {
			continue
		}
		*f.t = *f.v
		if *f.v == 0 {
			errs = append(errs, &ParamError{Field: f.r.field, Value: 0, Msg: fmt.Sprintf(
				"%s = 0 is outside the allowed range %g to %g %s (leave the field out to have it derived)", f.r.field, f.r.min, f.r.max, f.r.unit)})
		}
	}
	if len(errs) > 0 {
		return p, errs
	}
	return p, nil
}
