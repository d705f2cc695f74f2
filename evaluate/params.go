package evaluate

import "ridgeflank/geo"

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
)

// RoleCrust is the role of a dataset's crustal thickness grid (an input, not a parameter).
const RoleCrust = "crustal_thickness"

// RoleAgeUncertainty is the role of a dataset's age-uncertainty grid (Ma, one standard
// deviation; an input of survey plan checks, not a parameter).
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
