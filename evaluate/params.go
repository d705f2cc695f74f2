package evaluate

import (
	"fmt"

	"ridgeflank/geo"
)

// Parameter names of the datasets' EDR collections (API contract: never rename).
const (
	PSeafloorAge       = "seafloor_age"
	PObservedDepth     = "observed_depth"
	PSedimentThickness = "sediment_thickness"
	PPredictedDepth    = "predicted_depth"
	PHeatFlow          = "heat_flow"
	PThermalThickness  = "thermal_thickness"
	PCorrectedDepth    = "corrected_depth"
	PResidualDepth     = "residual_depth"
	PDepth600C         = "depth_600c"

	PPredictedDepthUncertainty   = "predicted_depth_uncertainty"
	PHeatFlowUncertainty         = "heat_flow_uncertainty"
	PThermalThicknessUncertainty = "thermal_thickness_uncertainty"
	PResidualDepthUncertainty    = "residual_depth_uncertainty"
	PRidgePush                   = "ridge_push"
)

// RoleCrust is the role of a dataset's crustal thickness grid (an input, not a parameter).
const RoleCrust = "crustal_thickness"

// RoleAgeUncertainty is the role of a dataset's age-uncertainty grid (Ma, one standard
// deviation; an input of survey plan checks and of the uncertainty parameters, not a parameter).
const RoleAgeUncertainty = "age_uncertainty"

// Parameter describes one parameter a dataset can answer: its unit, what it needs, and whether
// it is a model prediction (which carries the navigation caution).
type Parameter struct {
	ID          string
	Label       string
	Description string
	Unit        string // UCUM symbol
	UnitLabel   string
	NeedsDepth  bool // needs an observed depth grid
	NeedsSed    bool // needs a sediment grid
	Predicted   bool // depends on the model
	Output      geo.Outputs
}

// Parameters is the one list of parameters, in the order answers list them. The HTTP layer
// builds the collection documents (and so the page its parameter list and units) from it.
var Parameters = []Parameter{
	{PSeafloorAge, "Seafloor age", "Age of the oceanic crust from the dataset's age grid", "Ma", "million years", false, false, false, 0},
	{PObservedDepth, "Observed depth", "Observed water depth from the dataset's bathymetry grid, positive down", "m", "metre", true, false, false, 0},
	{PSedimentThickness, "Sediment thickness", "Sediment thickness from the dataset's sediment grid", "m", "metre", false, true, false, 0},
	{PPredictedDepth, "Predicted depth", "Water depth predicted by the cooling model from seafloor age, positive down. Model estimate, not for navigation", "m", "metre", false, false, true, geo.OutPredictedDepth},
	{PHeatFlow, "Heat flow", "Surface heat flow predicted by the cooling model", "mW/m2", "milliwatt per square metre", false, false, true, geo.OutHeatFlow},
	{PThermalThickness, "Thermal thickness", "Depth below the seafloor where the model reaches 90% of the mantle temperature excess", "km", "kilometre", false, false, true, geo.OutThermalThickness},
	{PCorrectedDepth, "Corrected depth", "Observed depth corrected for sediment load (and crust when a crustal thickness grid is present), positive down", "m", "metre", true, false, true, geo.OutCorrectedDepth},
	{PResidualDepth, "Residual depth", "Predicted minus corrected depth; positive means shallower than the model", "m", "metre", true, false, true, geo.OutResidualDepth},
	{PDepth600C, "Depth of the 600 °C isotherm", "Depth below the seafloor of the 600 °C isotherm in the model", "km", "kilometre", false, false, true, geo.OutDepth600C},
	{PPredictedDepthUncertainty, "Predicted depth uncertainty", "One standard deviation of the predicted depth propagated from the seafloor-age uncertainty (the dataset's age-uncertainty grid, or age-uncertainty-ma): first order through d depth/d age where the age uncertainty is at most a tenth of the age, by quadrature over the age distribution (normal, truncated at age 0) elsewhere. Model estimate, not for navigation", "m", "metre", false, false, true, geo.OutPredictedDepthSigma},
	{PHeatFlowUncertainty, "Heat flow uncertainty", "One standard deviation of the predicted heat flow propagated from the seafloor-age uncertainty (as predicted_depth_uncertainty). Where the age distribution reaches age 0 the spread is unbounded (heat flow grows like 1/√age) and the value is a lower bound", "mW/m2", "milliwatt per square metre", false, false, true, geo.OutHeatFlowSigma},
	{PThermalThicknessUncertainty, "Thermal thickness uncertainty", "One standard deviation of the thermal thickness propagated from the seafloor-age uncertainty (as predicted_depth_uncertainty)", "km", "kilometre", false, false, true, geo.OutThermalThicknessSigma},
	{PResidualDepthUncertainty, "Residual depth uncertainty", "One standard deviation of the residual depth from the seafloor-age uncertainty alone (the predicted depth's: observed depth, sediment and crust are taken as exact)", "m", "metre", true, false, true, geo.OutResidualDepthSigma},
	{PRidgePush, "Ridge push", "Ridge-push force per unit length of ridge on lithosphere of the cell's age, from the isostatic integral of the model's cooling column (Parsons & Richter 1980; Turcotte & Schubert, Geodynamics)", "N/m", "newton per metre", false, false, true, geo.OutRidgePush},
}

// NeedsAgeUncertainty reports whether p propagates the seafloor-age uncertainty (and so needs
// the dataset's age-uncertainty grid or a single value with the question).
func (p Parameter) NeedsAgeUncertainty() bool {
	return p.Output&(geo.OutPredictedDepthSigma|geo.OutHeatFlowSigma|geo.OutThermalThicknessSigma|geo.OutResidualDepthSigma) != 0
}

// ParameterByID returns the parameter with id.
func ParameterByID(id string) (Parameter, bool) {
	for _, p := range Parameters {
		if p.ID == id {
			return p, true
		}
	}
	return Parameter{}, false
}

// ParameterIDs lists the ids of Parameters in order.
func ParameterIDs() []string {
	out := make([]string, len(Parameters))
	for i, p := range Parameters {
		out[i] = p.ID
	}
	return out
}

// UnitSuffix is the suffix that names a parameter's unit in field and column names
// (depth → "m", heat flow → "mw_m2").
func UnitSuffix(ucum string) string {
	switch ucum {
	case "mW/m2":
		return "mw_m2"
	case "Ma":
		return "ma"
	case "km":
		return "km"
	case "m":
		return "m"
	}
	out := []byte{}
	for _, c := range []byte(ucum) {
		switch {
		case c == '/':
			out = append(out, '_')
		case c >= 'A' && c <= 'Z':
			out = append(out, c+'a'-'A')
		default:
			out = append(out, c)
		}
	}
	return string(out)
}

// CF standard names (CF Standard Name Table, cfconventions.org: sea_floor_depth_below_sea_surface,
// canonical unit m; upward_geothermal_heat_flux_at_sea_floor, canonical unit W m-2, to which
// mW m-2 converts). Parameters with no entry in the table get none.
const (
	cfSeaFloorDepth = "sea_floor_depth_below_sea_surface"
	cfSeaFloorHeat  = "upward_geothermal_heat_flux_at_sea_floor"
)

// CFAttributes are the netCDF variable attributes of p beyond units and long_name:
// standard_name where CF has one, positive ("down" for depths, as CF writes it for vertical
// quantities), and sign_convention in words for every signed quantity.
func (p Parameter) CFAttributes() map[string]string {
	m := map[string]string{}
	switch p.ID {
	case PObservedDepth, PPredictedDepth:
		m["standard_name"] = cfSeaFloorDepth
		m["positive"] = "down"
	case PCorrectedDepth:
		// Basement depth after sediment (and crust) correction: not the sea floor, no CF name.
		m["positive"] = "down"
	case PThermalThickness, PDepth600C:
		m["positive"] = "down"
	case PHeatFlow:
		m["standard_name"] = cfSeaFloorHeat
	}
	if sc := SignConvention(p.ID); sc != "" {
		m["sign_convention"] = sc
	}
	return m
}

// modelOutput sets the field of dst that computes the age-uncertainty or ridge-push parameter
// id into g.
func modelOutput(dst *geo.Result, id string, g *geo.Grid) error {
	switch id {
	case PPredictedDepthUncertainty:
		dst.PredictedDepthSigmaM = g
	case PHeatFlowUncertainty:
		dst.HeatFlowSigmaMWm2 = g
	case PThermalThicknessUncertainty:
		dst.ThermalThicknessSigmaKm = g
	case PResidualDepthUncertainty:
		dst.ResidualDepthSigmaM = g
	case PRidgePush:
		dst.RidgePushNPerM = g
	default:
		return fmt.Errorf("evaluate: parameter %q is not a model output", id)
	}
	return nil
}

// SignConvention states the sign of parameter id's values in words, for figures and file
// metadata ("" for a parameter with no sign to state).
func SignConvention(id string) string {
	switch id {
	case PObservedDepth, PPredictedDepth, PCorrectedDepth:
		return "depth below sea level, positive down"
	case PResidualDepth:
		return "predicted minus corrected depth; positive means shallower than the model"
	case PSedimentThickness:
		return "thickness, positive"
	case PThermalThickness, PDepth600C:
		return "depth below the seafloor, positive down"
	case PHeatFlow:
		return "heat flow out of the Earth, positive upward"
	}
	return ""
}
