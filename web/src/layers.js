// layers.js: the map layers a reviewer can choose. Ids are the EDR parameter
// names of the ridgeflank API; labels and fallback units are for display only
// (the legend reads units and colour stops from GET /api/colour-scales).

export const LAYERS = [
  { id: "residual_depth", label: "Residual depth", units: "m", modelDependent: true },
  { id: "seafloor_age", label: "Seafloor age", units: "Ma", modelDependent: false },
  { id: "observed_depth", label: "Observed depth", units: "m", modelDependent: false },
  { id: "predicted_depth", label: "Predicted depth", units: "m", modelDependent: true },
  { id: "heat_flow", label: "Heat flow", units: "mW/m²", modelDependent: true },
  { id: "thermal_thickness", label: "Thermal thickness", units: "km", modelDependent: true },
  { id: "depth_600c", label: "Depth of the 600 °C isotherm", units: "km", modelDependent: true },
];

/** Parameters shown in the point read-out, in order. */
export const READOUT_PARAMS = [
  { id: "seafloor_age", label: "Age", units: "Ma", digits: 2 },
  { id: "observed_depth", label: "Observed depth", units: "m", digits: 0 },
  { id: "sediment_thickness", label: "Sediment thickness", units: "m", digits: 0 },
  { id: "corrected_depth", label: "Corrected depth", units: "m", digits: 0 },
  { id: "predicted_depth", label: "Predicted depth", units: "m", digits: 0 },
  { id: "residual_depth", label: "Residual depth", units: "m", digits: 0 },
  { id: "heat_flow", label: "Heat flow", units: "mW/m²", digits: 1 },
  { id: "thermal_thickness", label: "Thermal thickness", units: "km", digits: 1 },
  { id: "depth_600c", label: "600 °C isotherm depth", units: "km", digits: 1 },
];

export function layerById(id) {
  return LAYERS.find((l) => l.id === id) || LAYERS[0];
}
