// state.js: the page's shared selection (dataset, layer, model, sediment law, age uncertainty,
// colour range) with change
// notification, so modules stay independent of one another.

const listeners = new Set();

export const state = {
  datasetId: "",
  collection: null, // the EDR collection document of the chosen dataset
  layer: "", // a parameter id of the collection
  model: "", // a model id from /api/models (default: the collection's ridgeflank:models.default)
  sediment: "", // a sediment compaction name from ridgeflank:models.sediment; "" = the service's default
  ageUncertaintyMa: null, // one seafloor-age uncertainty (Ma, 1σ) in place of the dataset's grid; null = the grid
  range: null, // {min, max}: the layer's colour range chosen by the user; null = the scale's default
  models: [],
};

/** update merges changes into the state and tells every listener what changed. */
export function update(changes) {
  const changed = Object.keys(changes).filter((k) => state[k] !== changes[k]);
  Object.assign(state, changes);
  if (changed.length) for (const fn of listeners) fn(changed, state);
}

/** onChange registers fn(changedKeys, state). */
export function onChange(fn) {
  listeners.add(fn);
  return () => listeners.delete(fn);
}

/**
 * availableParameters lists the parameter ids the chosen collection offers
 * (its "parameter_names"), or null when no collection is chosen.
 */
export function availableParameters() {
  const p = state.collection?.parameter_names;
  return p ? Object.keys(p) : null;
}
