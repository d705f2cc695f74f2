package thermal

// Model is one cooling model with fixed parameters. Every method is a pure
// function of its arguments; implementations are safe for concurrent use.
//
// Ages are in Ma (million years), depths below the seafloor in km, water
// depths in m (positive down), temperatures in °C and heat flow in mW/m².
//
// Predicted depths are model estimates of the average seafloor of a given
// age, not for navigation: defer to nautical charts, surveys and the local
// hydrographic authority.
type Model interface {
	// Params returns the parameter set the model was built from.
	Params() Params
	// DepthM is the predicted water depth (m, positive down) of seafloor of
	// the given age under the model's water-loaded isostasy.
	DepthM(ageMa float64) float64
	// HeatFlowMWm2 is the surface heat flow in mW/m².
	HeatFlowMWm2(ageMa float64) float64
	// TemperatureC is the temperature at depthKm below the seafloor.
	TemperatureC(depthKm, ageMa float64) float64
	// IsothermDepthKm is the depth below the seafloor (km) where the
	// temperature first reaches temperatureC; NaN when it is never reached.
	IsothermDepthKm(temperatureC, ageMa float64) float64
	// ThermalThicknessKm is the depth (km below the seafloor) where the
	// temperature has risen by ThicknessFraction (0.9) of the excess of the
	// mantle over the seafloor temperature: T = Ts + 0.9 (Tm − Ts). See
	// ThicknessDefinition.
	ThermalThicknessKm(ageMa float64) float64
	// SubsidenceRateMPerMyr is dDepth/dAge in m/Myr.
	SubsidenceRateMPerMyr(ageMa float64) float64
	// HeatFlowRateMWm2PerMyr is dHeatFlow/dAge in mW/m² per Myr.
	HeatFlowRateMWm2PerMyr(ageMa float64) float64
}
