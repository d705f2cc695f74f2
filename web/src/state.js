// state.js: the page's shared selection (dataset, layer, model) with change
// notification, so modules stay independent of one another.

const listeners = new Set();

export const state = {
  datasetId: "",
  collection: null, // the EDR collection document of the chosen dataset
  layer: "residual_depth",
  model: "gdh1",
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

/** availableParameters lists the parameter ids the chosen collection offers. */
export function availableParameters() {
  const p = state.collection?.parameter_names;
  if (!p) return null;
  const keys = Object.keys(p);
  // A collection that lists only its stored grids still answers the derived
  // parameters (predicted depth, heat flow...): then ask for everything.
  return keys.includes("predicted_depth") ? keys : null;
}
