// evaluation.js: the choices every evaluating request carries (tiles, the read-out, the track
// profile, region and view statistics, downloads, the map figure): the cooling model, the
// sediment compaction law and the single seafloor-age uncertainty. One place builds them, so a
// new choice reaches every request at once. Pure functions, no DOM.
//
// The age uncertainty (age-uncertainty-ma, Ma, one standard deviation) is, as the service
// defines it, one value for every position of the question in place of the dataset's
// age-uncertainty grid; none given means the grid. The page keeps no copy of the service's
// limit: the largest value comes from the service's OpenAPI document.

/** AGE_SIGMA_PARAM is the query parameter of the single age uncertainty. */
export const AGE_SIGMA_PARAM = "age-uncertainty-ma";

/**
 * SIGMA_PROBE is the uncertainty parameter whose presence in a collection's parameter_names
 * says that the dataset has an age-uncertainty grid (it needs nothing else: age and its
 * uncertainty).
 */
export const SIGMA_PROBE = "predicted_depth_uncertainty";

/**
 * evaluationParams is the query of the evaluating choices in s ({model, sediment,
 * ageUncertaintyMa}): {model, sediment, "age-uncertainty-ma"}, with "" for what is not chosen
 * (api.js's query leaves empty values out, so the service uses its defaults and the grid).
 */
export function evaluationParams(s) {
  const sigma = Number(s?.ageUncertaintyMa);
  return {
    model: s?.model || "",
    sediment: s?.sediment || "",
    [AGE_SIGMA_PARAM]: s?.ageUncertaintyMa !== null && s?.ageUncertaintyMa !== undefined && sigma > 0 ? String(sigma) : "",
  };
}

/**
 * ageSigmaMaxOf reads the largest age uncertainty the service accepts from its OpenAPI document
 * (the age-uncertainty-ma parameter's schema maximum), or null when the document does not say.
 */
export function ageSigmaMaxOf(openapi) {
  const params = openapi?.components?.parameters || {};
  const p = params[AGE_SIGMA_PARAM] || Object.values(params).find((x) => x?.name === AGE_SIGMA_PARAM);
  const max = Number(p?.schema?.maximum);
  return p?.schema?.maximum !== undefined && Number.isFinite(max) && max > 0 ? max : null;
}

/**
 * parseAgeSigma reads the field's text: "" (or blanks) is null, the dataset's grid; else a
 * number of Ma (a decimal comma is read) greater than 0 and at most max (null: no known limit,
 * the service checks). Anything else throws an Error whose message says what to give.
 */
export function parseAgeSigma(text, max = null) {
  const raw = String(text ?? "").trim();
  if (raw === "") return null;
  const v = /^[+-]?(\d+([.,]\d*)?|[.,]\d+)([eE][+-]?\d+)?$/.test(raw) ? Number(raw.replace(",", ".")) : NaN;
  const give = `give a number of Ma above 0${max ? ` and at most ${max}` : ""}, or leave the field empty for the dataset's grid`;
  if (!Number.isFinite(v)) throw new Error(`Age uncertainty: "${raw}" is not a number: ${give}.`);
  if (v <= 0 || (max && v > max)) throw new Error(`Age uncertainty: ${v} Ma is out of range: ${give}.`);
  return v;
}

/** hasAgeSigmaGrid reports whether the collection offers the uncertainty parameters (its dataset has an age-uncertainty grid). */
export function hasAgeSigmaGrid(collection) {
  return Boolean(collection?.parameter_names && Object.hasOwn(collection.parameter_names, SIGMA_PROBE));
}

/**
 * sigmaAskable reports whether the predicted depth's uncertainty can be asked of the service
 * with the choices in s: the dataset has an age-uncertainty grid, or one value is given.
 */
export function sigmaAskable(collection, s) {
  return hasAgeSigmaGrid(collection) || evaluationParams(s)[AGE_SIGMA_PARAM] !== "";
}

/**
 * sigmaSource says where the uncertainty comes from, for labels: "a seafloor-age uncertainty of
 * 2 Ma (1σ)" with a value, "the dataset's seafloor-age uncertainty grid" without one.
 */
export function sigmaSource(s) {
  const v = evaluationParams(s)[AGE_SIGMA_PARAM];
  return v ? `a seafloor-age uncertainty of ${v} Ma (1σ, given)` : "the dataset's seafloor-age uncertainty grid";
}
