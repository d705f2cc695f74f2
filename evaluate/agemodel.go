package evaluate

import (
	"context"
	"errors"
	"math"
	"ridgeflank/numjson"

	"ridgeflank/fault"
	"ridgeflank/thermal"
)

// Questions about a cooling model alone (no grids): the curve against age, the geotherm and
// the ridge push. The command line and the HTTP API both ask these, so their limits,
// defaults and column names are stated once here.

// CurveColumns names the columns of a curve answer, in order (field names carry their unit;
// API contract: never rename). The command line's predict answers the same columns.
var CurveColumns = []string{"age_ma", "depth_m", "heat_flow_mw_m2", "thermal_thickness_km", "depth_600c_km", "subsidence_rate_m_per_myr"}

// RidgePushColumn is the field name of the ridge push (newtons per metre of ridge).
const RidgePushColumn = "ridge_push_n_m"

// HalfSpaceGeothermMaxKm is the default deepest geotherm sample for half-space cooling, which
// has no plate base (km; common practice, no source: below 150 km a 200 Ma half-space is
// within 1 % of the mantle temperature, erfc(150/(2√(κt))) ≈ 0.01 for κ = 1 mm²/s, worked by
// hand).
const HalfSpaceGeothermMaxKm = 150.0

// GeothermMaxKm is the default deepest sample of a geotherm (km below the seafloor): the plate
// thickness for plate models (the temperature is the mantle temperature at and below the
// base), HalfSpaceGeothermMaxKm for half-space cooling.
func GeothermMaxKm(p thermal.Params) float64 {
	if p.Kind == thermal.KindPlate && p.PlateThicknessKm > 0 {
		return p.PlateThicknessKm
	}
	return HalfSpaceGeothermMaxKm
}

// CheckAges returns a fault.AgeOutOfRange about field for the first age that is not a number
// from 0 to MaxAgeMa (the span of the model tables, thermal.TableMaxAgeMa: today's oceans are
// younger than about 200 Ma), or nil. Every way in checks ages with it.
func CheckAges(field string, ages ...float64) error {
	for _, a := range ages {
		switch {
		case math.IsNaN(a) || math.IsInf(a, 0):
			return fault.New(fault.AgeOutOfRange, field, "age %g is not a number of Ma", a)
		case a < 0:
			return fault.New(fault.AgeOutOfRange, field, "age %s Ma is negative; ages count from the ridge at 0 Ma", FormatNumber(a))
		case a > MaxAgeMa:
			return fault.New(fault.AgeOutOfRange, field, "age %s Ma is outside 0 to %g Ma", FormatNumber(a), MaxAgeMa)
		}
	}
	return nil
}

// Curve evaluates m at each age and answers the columns CurveColumns names after age:
// depth (m), heat flow (mW/m²), thermal thickness (km, thermal.ThicknessDefinition), depth of
// the 600 °C isotherm (km) and subsidence rate (m/Myr), each from the model's series
// solution. Ages are checked with CheckAges(field).
func Curve(ctx context.Context, m thermal.Model, field string, ages []float64) (depth, heatFlow, thickness, depth600, rate []float64, err error) {
	if err := CheckAges(field, ages...); err != nil {
		return nil, nil, nil, nil, nil, err
	}
	n := len(ages)
	depth, heatFlow, thickness, depth600, rate = make([]float64, n), make([]float64, n), make([]float64, n), make([]float64, n), make([]float64, n)
	for i, a := range ages {
		if err := ctx.Err(); err != nil {
			return nil, nil, nil, nil, nil, err
		}
		depth[i] = m.DepthM(a)
		heatFlow[i] = m.HeatFlowMWm2(a)
		thickness[i] = m.ThermalThicknessKm(a)
		depth600[i] = m.IsothermDepthKm(600, a)
		rate[i] = m.SubsidenceRateMPerMyr(a)
	}
	return depth, heatFlow, thickness, depth600, rate, nil
}

// RidgePush is the ridge-push force per unit length of ridge (N/m) on lithosphere of each age
// under m: thermal.RidgePushNPerM, the isostatic integral of the cooling column (Parsons &
// Richter 1980, J. Geophys. Res. 85, 5957–5963; for half-space cooling the closed form
// F = g ρm α (Tm − Ts) κ t [1 + 2 ρm α (Tm − Ts)/(π (ρm − ρw))] of Turcotte & Schubert,
// Geodynamics, 2nd ed. 2002, chapter 6, from memory, equation number not checked). Ages are
// checked with CheckAges(field).
func RidgePush(ctx context.Context, m thermal.Model, field string, ages []float64) ([]float64, error) {
	if m == nil {
		return nil, errors.New("evaluate: RidgePush without a model")
	}
	if err := CheckAges(field, ages...); err != nil {
		return nil, err
	}
	out := make([]float64, len(ages))
	for i, a := range ages {
		if err := ctx.Err(); err != nil {
			return nil, err
		}
		out[i] = thermal.RidgePushNPerM(m, a)
	}
	return out, nil
}

// FormatNumber writes v for CSV and messages: numjson.CSV's rule (7 significant digits, the
// shortest form that reads back, "" for NaN and infinities), so the CLI and the API print the
// same numbers.
func FormatNumber(v float64) string { return numjson.CSV(v) }

// CheckModel validates a custom parameter set: every bad field is named, in one
// fault.InvalidModel whose Field is the first and whose Invalid lists them all.
//
// decodeErr is what thermal.DecodeParams said of the JSON the parameters came from (nil when
// they came from elsewhere): its problems are listed first, beside Validate's.
func CheckModel(p thermal.Params, decodeErr ...error) error {
	var all thermal.ParamErrors
	for _, e := range decodeErr {
		var pe thermal.ParamErrors
		if errors.As(e, &pe) {
			all = append(all, pe...)
		}
	}
	err := p.Validate()
	if err == nil && len(all) == 0 {
		return nil
	}
	var vs thermal.ParamErrors
	if err != nil && !errors.As(err, &vs) {
		return fault.New(fault.InvalidModel, "", "%v%w", err, quiet(err))
	}
	all = append(all, vs...)
	err = all
	f := fault.New(fault.InvalidModel, all[0].Field, "%v%w", err, quiet(err))
	for _, e := range all {
		f.Invalid = append(f.Invalid, fault.Invalid{Field: e.Field, Reason: e.Msg})
	}
	return f
}
